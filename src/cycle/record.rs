//! What one simulated cycle leaves behind: a trace of the fast state and per-step summaries.
//! Aging laws integrate over the trace; reports print it.

/// The fast state at the end of one time step (SI units; stresses positive in tension).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct TracePoint {
    pub time_s: f64,
    /// Length of the time step that ended here, s (0 for the first point).
    pub dt_s: f64,
    /// Current held over that step, A, positive on discharge.
    pub current_a: f64,
    pub voltage_v: f64,
    pub temperature_k: f64,
    pub soc: f64,
    pub neg_surface_stoich: f64,
    pub pos_surface_stoich: f64,
    /// Negative electrode potential against Li/Li⁺ at its surface, U_n + η_n, V.
    pub neg_potential_v: f64,
    /// Part of the current carried by lithium metal at the negative over the step, A: negative
    /// while lithium plates, positive while it strips (the rest intercalates).
    pub plating_current_a: f64,
    /// Positive electrode potential against Li/Li⁺ at its surface, U_p + η_p, V.
    pub pos_potential_v: f64,
    /// Lithium plated on the negative at the step's end (reversible and dead), C.
    pub plated_coulomb: f64,
    /// Mean stoichiometry of each particle.
    pub neg_mean_stoich: f64,
    pub pos_mean_stoich: f64,
    pub neg_surface_stress_pa: f64,
    pub pos_surface_stress_pa: f64,
    /// Index of the step (0-based, into the expanded step list; 0 for a time series).
    pub step: usize,
    /// Heat generated in the cell at the step's end, W (Bernardi's, with what neighbours pass).
    pub heat_w: f64,
    /// Where the current moved linearly over the step that ended here, the currents it started
    /// from; none where it was held constant at `current_a` and `plating_current_a`.
    pub ramp_start: Option<RampStart>,
}

/// The currents at the start of a time step over which the current moves linearly to its end
/// value (within a held voltage or power, and the plating split of a cell that plates), A.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct RampStart {
    pub current_a: f64,
    pub plating_current_a: f64,
}

impl TracePoint {
    /// Charge passed over the step that ended here, C (positive on discharge).
    pub fn charge_coulomb(&self) -> f64 {
        step_charge(self.ramp_start.map(|s| s.current_a), self.current_a, self.dt_s)
    }

    /// Lithium deposited and stripped over the step that ended here, C (both ≥ 0).
    pub fn plating_exchange_coulomb(&self) -> (f64, f64) {
        signed_areas(self.ramp_start.map(|s| s.plating_current_a), self.plating_current_a, self.dt_s)
    }
}

/// Charge passed over a step of `dt` whose current is held at `end`, or moves linearly to it
/// from `start`, C.
pub(crate) fn step_charge(start: Option<f64>, end: f64, dt: f64) -> f64 {
    match start {
        None => end * dt,
        Some(start) => 0.5 * (start + end) * dt,
    }
}

/// Areas below and above nil of a value held at `end` over `dt`, or moving linearly to it from
/// `start`: (below, above), both ≥ 0. A ramp that crosses nil is split where it crosses.
pub(crate) fn signed_areas(start: Option<f64>, end: f64, dt: f64) -> (f64, f64) {
    match start {
        None => ((-end).max(0.0) * dt, end.max(0.0) * dt),
        Some(a) if a * end < 0.0 => {
            let half_over_span = 0.5 * dt / (end - a).abs();
            (a.min(end).powi(2) * half_over_span, a.max(end).powi(2) * half_over_span)
        }
        Some(a) => {
            let mean = 0.5 * (a + end) * dt;
            ((-mean).max(0.0), mean.max(0.0))
        }
    }
}

/// Why a step ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EndReason {
    Voltage,
    Current,
    Time,
    Soc,
    Charge,
    /// The cell's own voltage window, which always ends a step.
    VoltageLimit,
    /// An electrode surface reached empty or full.
    ElectrodeLimit,
    /// A time series ran out of samples.
    SeriesEnd,
    /// A cell of a pack reached its highest temperature.
    TemperatureLimit,
}

impl EndReason {
    pub fn describe(self) -> &'static str {
        match self {
            EndReason::Voltage => "end voltage",
            EndReason::Current => "taper current",
            EndReason::Time => "time",
            EndReason::Soc => "state of charge",
            EndReason::Charge => "charge passed",
            EndReason::VoltageLimit => "cell voltage limit",
            EndReason::ElectrodeLimit => "electrode empty/full",
            EndReason::SeriesEnd => "end of series",
            EndReason::TemperatureLimit => "cell temperature limit",
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct StepSummary {
    pub index: usize,
    pub label: String,
    pub end: EndReason,
    pub duration_s: f64,
    /// Net charge out of the cell during the step, C (negative when charging).
    pub charge_coulomb: f64,
}

/// The hoop-stress profile of one particle at every trace point, kept compactly as the
/// particle's modal state (the stress is linear in it): σ_t(ρ_j, t) for the radii
/// ρ_j = 0, 1/n, …, 1, the last (surface) value being the trace point's own.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct StressHistory {
    /// σ_t per unit stoichiometry at ρ_j = j/n, j < n, from the modal state (row-major n × n).
    rows: std::sync::Arc<[f64]>,
    /// Stress coefficient ΩE c_max/(3(1−ν)), Pa per unit stoichiometry.
    coefficient_pa: f64,
    /// Modal state after every trace point, n per point.
    modes: Vec<f64>,
}

impl StressHistory {
    /// Starts an empty history for a particle model's rows, keeping the stored allocation.
    pub(crate) fn reset(&mut self, rows: &std::sync::Arc<[f64]>, coefficient_pa: f64) {
        if !std::sync::Arc::ptr_eq(&self.rows, rows) {
            self.rows = rows.clone();
        }
        self.coefficient_pa = coefficient_pa;
        self.modes.clear();
    }

    /// Shells of the particle model (profile radii are j/n, j = 0…n).
    pub fn shells(&self) -> usize {
        (self.rows.len() as f64).sqrt().round() as usize
    }

    /// Profile radii as fractions of the particle radius, centre to surface.
    pub fn radii(&self) -> Vec<f64> {
        let n = self.shells();
        (0..=n).map(|j| j as f64 / n as f64).collect()
    }

    pub(crate) fn push(&mut self, modes: &[f64]) {
        self.modes.extend_from_slice(modes);
    }

    /// Σ_j w_j σ_t(ρ_j, t) at every trace point, Pa·(unit of w), for weights at [`Self::radii`];
    /// `surface_pa` gives the surface value of each point. Empty when no profile was stored.
    pub fn weighted(&self, weights: &[f64], surface_pa: impl Iterator<Item = f64>, out: &mut Vec<f64>) {
        out.clear();
        let n = self.shells();
        if n == 0 || self.modes.is_empty() {
            return;
        }
        debug_assert_eq!(weights.len(), n + 1);
        // Collapse the weights onto the modes once, then one short dot product per point.
        let mut per_mode = vec![0.0; n];
        for (j, w) in weights[..n].iter().enumerate() {
            if *w != 0.0 {
                for (k, m) in per_mode.iter_mut().enumerate() {
                    *m += w * self.rows[j * n + k];
                }
            }
        }
        let surface_weight = weights[n];
        for (modes, surface) in self.modes.chunks_exact(n).zip(surface_pa) {
            let inner: f64 = per_mode.iter().zip(modes).map(|(w, q)| w * q).sum();
            out.push(self.coefficient_pa * inner + surface_weight * surface);
        }
    }
}

/// One simulated cycle.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CycleRecord {
    pub trace: Vec<TracePoint>,
    /// Hoop-stress profiles of each particle, one per trace point.
    pub neg_stress: StressHistory,
    pub pos_stress: StressHistory,
    pub steps: Vec<StepSummary>,
    pub duration_s: f64,
    /// Charge into / out of the cell, C (both positive).
    pub charge_in_coulomb: f64,
    pub charge_out_coulomb: f64,
    /// Energy into / out of the cell at the terminals, J (both positive).
    pub energy_in_j: f64,
    pub energy_out_j: f64,
    pub peak_temperature_k: f64,
    pub min_temperature_k: f64,
    pub neg_stress_max_pa: f64,
    pub neg_stress_min_pa: f64,
    pub pos_stress_max_pa: f64,
    pub pos_stress_min_pa: f64,
    /// Lithium deposited as metal on the negative over the cycle, C.
    pub plated_coulomb: f64,
    /// Plated lithium stripped back over the cycle, C.
    pub stripped_coulomb: f64,
    /// Plated lithium isolated (dead) over the cycle, C.
    pub dead_coulomb: f64,
    /// Reversible plated lithium left at the cycle's end (it re-intercalates while idle), C.
    pub reintercalated_coulomb: f64,
    /// Lowest negative-electrode potential against Li/Li⁺ over the cycle, V.
    pub neg_potential_min_v: f64,
    /// Largest current magnitudes on charge and discharge, A.
    pub peak_charge_current_a: f64,
    pub peak_discharge_current_a: f64,
    /// Time a measured series was held back at a voltage limit (derated), s.
    pub voltage_limited_s: f64,
    /// Time steps taken (the trace length minus one).
    pub time_steps: usize,
    /// Warm-up cycles run before this one to reach the periodic state.
    pub warmup_cycles: usize,
    /// Largest change of the start state over the last warm-up cycle (stoichiometry).
    pub periodic_residual: f64,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn signed_areas_of_held_values_and_ramps_that_cross_nil() {
        assert_eq!(signed_areas(None, -2.0, 3.0), (6.0, 0.0));
        assert_eq!(signed_areas(None, 2.0, 3.0), (0.0, 6.0));
        assert_eq!(signed_areas(Some(1.0), 3.0, 2.0), (0.0, 4.0));
        assert_eq!(signed_areas(Some(-1.0), -3.0, 2.0), (4.0, 0.0));
        // From −1 to 3 over 4 s: nil at 1 s; triangles of 1·1/2 below and 3·3/2 above.
        assert_eq!(signed_areas(Some(-1.0), 3.0, 4.0), (0.5, 4.5));
        assert_eq!(signed_areas(Some(3.0), -1.0, 4.0), (0.5, 4.5));
    }
}
