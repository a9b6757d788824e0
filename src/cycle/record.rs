//! What one simulated cycle leaves behind: a trace of the fast state and per-step summaries.
//! Aging laws integrate over the trace; reports print it.

use super::diffusion::SphereModes;

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

/// The extreme over one time step of a quantity known with its rate of change at both ends:
/// the extreme of the cubic Hermite interpolant through them (its ends included); the larger
/// when `maximum`, else the smaller. The state moves smoothly within a step, so the cubic
/// follows it to fourth order in the step.
fn step_extreme([t0, t1]: [f64; 2], [y0, y1]: [f64; 2], [m0, m1]: [f64; 2], maximum: bool) -> f64 {
    let h = t1 - t0;
    // y(s) = y0 + a1 s + a2 s² + a3 s³ on s ∈ [0, 1].
    let (a1, a2, a3) = (h * m0, 3.0 * (y1 - y0) - h * (2.0 * m0 + m1), 2.0 * (y0 - y1) + h * (m0 + m1));
    let at = |s: f64| y0 + s * (a1 + s * (a2 + s * a3));
    let better = |a: f64, b: f64| if maximum { a.max(b) } else { a.min(b) };
    let mut extreme = better(y0, y1);
    // Roots of y′(s) = a1 + 2 a2 s + 3 a3 s².
    let (qa, qb, qc) = (3.0 * a3, 2.0 * a2, a1);
    let roots = if qa.abs() <= 1e-12 * (qb.abs() + qc.abs()) {
        [-qc / qb, f64::NAN]
    } else {
        let discriminant = qb * qb - 4.0 * qa * qc;
        if discriminant < 0.0 {
            [f64::NAN; 2]
        } else {
            let root = discriminant.sqrt();
            [(-qb - root) / (2.0 * qa), (-qb + root) / (2.0 * qa)]
        }
    };
    for s in roots {
        if s > 0.0 && s < 1.0 {
            extreme = better(extreme, at(s));
        }
    }
    extreme
}

/// Whether the drive carried on smoothly from `previous` through the time step that ended at
/// `point`: its current moved linearly from the previous point's, or stayed the same constant.
/// A step's first time step, which may jump to a new drive, does not (a series sample neither,
/// unless its current repeats).
fn continues_from(previous: &TracePoint, point: &TracePoint) -> bool {
    point.ramp_start.is_some() || point.current_a == previous.current_a
}

/// Replaces each strict turning point of `values` (one per trace point, with its rate of change
/// in `rates`) by the extreme of the quantity over the time steps on either side of it through
/// which the drive runs smoothly ([`step_extreme`]), so what counts cycles over the history sees
/// the extremes between the points. Sampled at the points alone, a smooth peak is cut by about
/// |y″|·h²/8: a peak early in the tug demo's 2C discharge came out 0.45 % low at the default
/// steps. Across a change of drive the extreme is a kink at the point itself and stays.
/// Values without rates (a history stored without them) are left as they are.
pub fn sharpen_turning_points(values: &mut [f64], rates: &[f64], trace: &[TracePoint]) {
    if values.len() != trace.len() || rates.len() != trace.len() {
        return;
    }
    let Some(&first) = values.first() else { return };
    let mut before = first;
    for k in 1..values.len().saturating_sub(1) {
        let here = values[k];
        let after = values[k + 1];
        let maximum = here > before && here > after;
        if maximum || (here < before && here < after) {
            let mut extreme = here;
            for (a, b, y) in [(k - 1, k, [before, here]), (k, k + 1, [here, after])] {
                if continues_from(&trace[a], &trace[b]) && trace[b].time_s > trace[a].time_s {
                    let within = step_extreme([trace[a].time_s, trace[b].time_s], y, [rates[a], rates[b]], maximum);
                    extreme = if maximum { extreme.max(within) } else { extreme.min(within) };
                }
            }
            values[k] = extreme;
        }
        before = here;
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
    /// What the modal state's rate of change is made of: the modes' terms (shared, see
    /// [`crate::cycle::diffusion::SphereModes::rate_terms`]) and each point's scales. With the
    /// surface hoop stress's rate (Pa/s), they place an extreme between two points
    /// ([`sharpen_turning_points`]).
    rate_terms: std::sync::Arc<[f64]>,
    rate_scales: Vec<[f64; 2]>,
    surface_rates_pa_s: Vec<f64>,
}

impl StressHistory {
    /// Starts an empty history for a particle model's rows, keeping the stored allocation.
    pub(crate) fn reset(&mut self, [rows, rate_terms]: [&std::sync::Arc<[f64]>; 2], coefficient_pa: f64) {
        if !std::sync::Arc::ptr_eq(&self.rows, rows) {
            self.rows = rows.clone();
        }
        if !std::sync::Arc::ptr_eq(&self.rate_terms, rate_terms) {
            self.rate_terms = rate_terms.clone();
        }
        self.coefficient_pa = coefficient_pa;
        self.modes.clear();
        self.rate_scales.clear();
        self.surface_rates_pa_s.clear();
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

    /// Stores a trace point's modal state with the scales of its rate of change
    /// ([`crate::cycle::diffusion::SphereModes::rate_scales`]) and the surface stress's rate.
    pub(crate) fn push(&mut self, modes: &[f64], rate_scales: [f64; 2], surface_rate_pa_s: f64) {
        self.modes.extend_from_slice(modes);
        self.rate_scales.push(rate_scales);
        self.surface_rates_pa_s.push(surface_rate_pa_s);
    }

    /// Rate of change of the surface hoop stress at every trace point, Pa/s.
    pub fn surface_rates_pa_s(&self) -> &[f64] {
        &self.surface_rates_pa_s
    }

    /// Σ_j w_j σ_t(ρ_j, t) at every trace point, Pa·(unit of w), for weights at [`Self::radii`];
    /// `surface_pa` gives the surface value of each point. Empty when no profile was stored.
    pub fn weighted(&self, weights: &[f64], surface_pa: impl Iterator<Item = f64>, out: &mut Vec<f64>) {
        out.clear();
        let Some(per_mode) = self.per_mode(weights) else { return };
        let n = per_mode.len();
        for (modes, surface) in self.modes.chunks_exact(n).zip(surface_pa) {
            let inner: f64 = per_mode.iter().zip(modes).map(|(w, q)| w * q).sum();
            out.push(self.coefficient_pa * inner + weights[n] * surface);
        }
    }

    /// The rate of change of [`Self::weighted`] at every trace point, Pa/s·(unit of w).
    pub fn weighted_rates(&self, weights: &[f64], out: &mut Vec<f64>) {
        out.clear();
        let Some(per_mode) = self.per_mode(weights) else { return };
        let n = per_mode.len();
        if self.rate_terms.len() != 2 * n {
            return;
        }
        let points = self.modes.chunks_exact(n).zip(&self.rate_scales).zip(&self.surface_rates_pa_s);
        for ((modes, &scales), surface_rate) in points {
            let inner = SphereModes::row_rate(&per_mode, &self.rate_terms, modes, scales);
            out.push(self.coefficient_pa * inner + weights[n] * surface_rate);
        }
    }

    /// The weights at the interior radii collapsed onto the modes; none without a profile.
    fn per_mode(&self, weights: &[f64]) -> Option<Vec<f64>> {
        let n = self.shells();
        if n == 0 || self.modes.is_empty() {
            return None;
        }
        debug_assert_eq!(weights.len(), n + 1);
        let mut per_mode = vec![0.0; n];
        for (j, w) in weights[..n].iter().enumerate() {
            if *w != 0.0 {
                for (k, m) in per_mode.iter_mut().enumerate() {
                    *m += w * self.rows[j * n + k];
                }
            }
        }
        Some(per_mode)
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

    fn point(time_s: f64, current_a: f64) -> TracePoint {
        TracePoint { time_s, current_a, ..TracePoint::default() }
    }

    #[test]
    fn turning_points_move_to_the_extreme_between_the_points() {
        // y = sin t sampled every 0.9 (peak at π/2 and trough at 3π/2 between points): the
        // cubic through the values and slopes puts each within h⁴/384·max|y⁗| ≈ 2e-3 of ±1
        // (the Hermite error bound; common practice, no source), where the samples alone miss
        // by up to h²/8 ≈ 0.1.
        let times: Vec<f64> = (0..12).map(|i| 0.2 + 0.9 * i as f64).collect();
        let trace: Vec<TracePoint> = times.iter().map(|&t| point(t, 1.0)).collect();
        let mut values: Vec<f64> = times.iter().map(|t| t.sin()).collect();
        let rates: Vec<f64> = times.iter().map(|t| t.cos()).collect();
        let sampled_peak = values.iter().copied().fold(f64::MIN, f64::max);
        assert!(1.0 - sampled_peak > 1e-2, "the samples miss the peak: {sampled_peak}");
        sharpen_turning_points(&mut values, &rates, &trace);
        let (peak, trough) = values.iter().fold((f64::MIN, f64::MAX), |(a, b), &v| (a.max(v), b.min(v)));
        assert!((peak - 1.0).abs() < 2e-3 && (trough + 1.0).abs() < 2e-3, "{peak} {trough}");
        // Points that are not turning points keep their values.
        assert_eq!(values[1], times[1].sin());
    }

    #[test]
    fn a_turning_point_at_a_change_of_drive_stays() {
        // The current jumps on both sides of the middle point: the peak is a kink there.
        // The step before it runs smoothly and the slope there says the peak passed within it.
        let trace = [point(0.0, 1.0), point(1.0, 1.0), point(2.0, -1.0)];
        let mut values = [0.0, 1.0, 0.0];
        sharpen_turning_points(&mut values, &[2.0, -1.0, -5.0], &trace);
        assert!(values[1] > 1.0, "the smooth side still counts: {}", values[1]);
        let trace = [point(0.0, 2.0), point(1.0, 1.0), point(2.0, -1.0)];
        let mut values = [0.0, 1.0, 0.0];
        sharpen_turning_points(&mut values, &[5.0, 5.0, -5.0], &trace);
        assert_eq!(values[1], 1.0);
    }
}
