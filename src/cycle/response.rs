//! The cell's response over one time step: given the fast state, the conditions of the step
//! and what sets the current (a current, or the equation a constant-voltage or constant-power
//! step imposes), the current, terminal voltage, overpotentials, heat, temperature, surface and
//! mean stoichiometries and surface stress at the step's end.
//!
//! Within a step the current is held at its end value or, where the stepper says so
//! ([`StepConditions::ramp_from`]), moves linearly to it from fixed start values; the heat
//! likewise ([`StepConditions::heat_from`]); the temperature-dependent properties follow the
//! temperature predicted over the step ([`CellModel::step_conditions`]). Diffusion is
//! integrated exactly for either input
//! ([`super::diffusion`]), so each particle's surface and mean stoichiometry at the step's end
//! are affine in the end current; the terminal voltage, overpotentials and heat are evaluated at
//! the end of the step (implicit, so constant-voltage and constant-power steps are stable at
//! any step length). A constant-voltage or constant-power step solves a scalar equation for
//! its current: Newton's method with a forward-difference slope, each iterate kept inside a
//! bracket of the root that widens by one current scale while only one side is known and is
//! bisected when a Newton step would leave it.
//!
//! With plating on, the negative's current splits at every step into intercalation and
//! lithium-metal deposition or stripping ([`super::kinetics::PlatingKinetics`]), both driven by
//! the electrode's potential φ at the step's end: the intercalation current I_int solves
//! I_int + A·i_Li(φ(I_int)) = I, where φ(I_int) = U(x_surf(I_int)) + η(I_int), a residual that
//! rises with I_int, so the root is bracketed from the first evaluation and found by false
//! position. Stripping is capped by the reversible lithium on the surface. Only the
//! intercalation current enters the negative particle; the positive takes the whole current.
//!
//! The stepper ([`super::stepper`]) chooses the step lengths and decides when a step ends.

use super::balance::Balance;
use super::diffusion::{Boundary, ModeStep, SphereModes};
use super::kinetics::{exchange_current_density, lithium_metal_current_density, overpotential};
use super::record::{signed_areas, step_charge, RampStart, TracePoint};
use super::stress::surface_hoop_stress;
use super::thermal::{advance_temperature, advance_temperature_ramp, bernardi_heat};
use super::{Cell, Electrode};
use crate::material::constants::FARADAY;
use crate::material::constants::GAS_CONSTANT;

/// The slow (aging) state as the cycle model sees it. `Health::fresh` is beginning of life.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Health {
    /// Cyclable lithium held in both electrodes, as charge, C.
    pub lithium_inventory_coulomb: f64,
    /// Fraction of each electrode's active material still connected, 0–1.
    pub neg_active_scale: f64,
    pub pos_active_scale: f64,
    /// Series resistance added by aging (film growth, contact loss), Ω.
    pub added_resistance_ohm: f64,
}

impl Health {
    pub fn fresh(cell: &Cell) -> Health {
        Health {
            lithium_inventory_coulomb: cell.lithium_inventory_coulomb(),
            neg_active_scale: 1.0,
            pos_active_scale: 1.0,
            added_resistance_ohm: 0.0,
        }
    }
}

/// The fast state: modal coordinates of each particle (stoichiometry units) and temperature.
#[derive(Debug, Clone, PartialEq)]
pub struct CellState {
    pub neg_modes: Vec<f64>,
    pub pos_modes: Vec<f64>,
    pub temperature_k: f64,
    /// Heat generated at the end of the last accepted step (W) and its rate of change over that
    /// step (W/s). The next step predicts its temperature from them
    /// ([`CellModel::step_conditions`]).
    pub heat_w: f64,
    pub heat_rate_w_s: f64,
    /// Lithium plated on the negative this cycle that can still strip, C.
    pub plated_coulomb: f64,
    /// Lithium plated this cycle and isolated at once (dead), C. The slow state takes it out of
    /// the inventory between cycles, so the cycle's end hands it back to the particle with any
    /// reversible remainder ([`CellModel::end_cycle`]).
    pub dead_coulomb: f64,
}

/// One electrode with its precomputed diffusion modes.
#[derive(Debug, Clone)]
struct ParticleModel {
    modes: SphereModes,
    radius_m: f64,
    max_concentration: f64,
    surface_area_m2: f64,
    stress_coefficient: f64,
    /// The modes' hoop-stress rows and rate terms, shared with every cycle record.
    hoop_rows: std::sync::Arc<[f64]>,
    rate_terms: std::sync::Arc<[f64]>,
    /// The response rows (outer, second-outer, mean) times each mode's decay rate, and their
    /// products with the input weights: d(row·q)/dt = (D/R²)·(row∘λ)·q + s·u·(row·g).
    rate_rows: [Vec<f64>; 3],
    row_gains: [f64; 3],
}

impl ParticleModel {
    fn new(electrode: &Electrode, shells: usize) -> ParticleModel {
        let modes = SphereModes::new(shells, Boundary::Flux);
        let terms = modes.rate_terms();
        let (decay, gain) = terms.split_at(shells);
        let (outer, second) = modes.outer_rows();
        let rows = [outer, second, modes.mean_row()];
        let rate_rows = rows.map(|row| row.iter().zip(decay).map(|(r, l)| r * l).collect());
        let row_gains = rows.map(|row| row.iter().zip(gain).map(|(r, g)| r * g).sum());
        ParticleModel {
            hoop_rows: modes.hoop_rows().into(),
            rate_terms: terms.into(),
            rate_rows,
            row_gains,
            modes,
            radius_m: electrode.particle_radius_m,
            max_concentration: electrode.max_concentration_mol_m3,
            surface_area_m2: electrode.surface_area_m2(),
            stress_coefficient: electrode.stress_coefficient_pa_m3_mol(),
        }
    }

    /// Stores the modal state at the end of a step with its rates of change there and the
    /// surface hoop stress's, Pa/s. The surface value carries the flux over the diffusivity,
    /// whose rate comes from the step's ramp of the flux and drift of the diffusivity.
    fn record(&self, modes: &[f64], at: ParticleInstant, dt: f64, history: &mut super::record::StressHistory) {
        let end_diffusivity = at.diffusivity / at.drift.end_weight;
        let start_diffusivity = at.diffusivity / at.drift.start_weight;
        let scales = self.modes.rate_scales(self.radius_m, end_diffusivity, at.flux);
        let relaxing = SphereModes::dots(self.rate_rows.each_ref().map(|r| &r[..]), modes);
        let [outer, second, mean]: [f64; 3] =
            std::array::from_fn(|j| scales[0] * relaxing[j] + scales[1] * self.row_gains[j]);
        let (flux_rate, diffusivity_rate) = if dt > 0.0 {
            ((at.flux - at.start_flux.unwrap_or(at.flux)) / dt, (end_diffusivity - start_diffusivity) / dt)
        } else {
            (0.0, 0.0)
        };
        // d(u/D)/dt, fed to the surface's linear map with D = 1.
        let boundary_rate =
            flux_rate / end_diffusivity - at.flux * diffusivity_rate / (end_diffusivity * end_diffusivity);
        let surface = self.modes.surface_from_outer(outer, second, boundary_rate, self.radius_m, 1.0);
        let surface_rate = surface_hoop_stress(self.stress_coefficient * self.max_concentration, mean, surface);
        history.push(modes, scales, surface_rate);
    }

    /// The rows a trial projects the state on: outer shell, second-outer shell, mean.
    fn response_rows(&self) -> [&[f64]; 3] {
        let (outer, second) = self.modes.outer_rows();
        [outer, second, self.modes.mean_row()]
    }
}

/// A particle's diffusivity and boundary flux at the end of a step, with the flux it ramped
/// from (none when held).
#[derive(Debug, Clone, Copy)]
struct ParticleInstant {
    diffusivity: f64,
    drift: DiffusivityDrift,
    flux: f64,
    start_flux: Option<f64>,
}

/// A cell prepared for simulation (diffusion modes computed once); reuse it across cycles.
#[derive(Debug, Clone)]
pub struct CellModel {
    pub cell: Cell,
    neg: ParticleModel,
    pos: ParticleModel,
    /// −E_a/R of each Arrhenius property, K, so a step's factors take one division per
    /// temperature instead of three per factor.
    slopes: ArrheniusSlopes,
}

/// −E_a/R of the properties the cycle model moves with temperature, K.
#[derive(Debug, Clone, Copy)]
struct ArrheniusSlopes {
    neg_diffusivity: f64,
    pos_diffusivity: f64,
    neg_rate: f64,
    pos_rate: f64,
    ohmic: f64,
}

impl ArrheniusSlopes {
    fn of(cell: &Cell) -> ArrheniusSlopes {
        let slope = |activation_j_mol: f64| -activation_j_mol / GAS_CONSTANT;
        let (n, p) = (&cell.negative, &cell.positive);
        ArrheniusSlopes {
            neg_diffusivity: slope(n.diffusivity_activation_j_mol),
            pos_diffusivity: slope(p.diffusivity_activation_j_mol),
            neg_rate: slope(n.rate_constant_activation_j_mol),
            pos_rate: slope(p.rate_constant_activation_j_mol),
            ohmic: slope(cell.ohmic_activation_j_mol),
        }
    }
}

/// Everything a trial step needs that stays fixed within it.
#[derive(Debug, Clone, Copy)]
pub(super) struct StepConditions {
    /// Temperature at the step's end (predicted), where the kinetics, resistance, plating and
    /// heat are evaluated, K. The diffusivities are the step's mean, at its predicted middle.
    temperature_k: f64,
    /// Temperature at the step's start, where the thermal balance starts, K.
    start_temperature_k: f64,
    ambient_k: f64,
    neg_diffusivity: f64,
    pos_diffusivity: f64,
    /// How each particle's diffusivity moves from the step's start to its predicted end.
    neg_drift: DiffusivityDrift,
    pos_drift: DiffusivityDrift,
    neg_rate: f64,
    pos_rate: f64,
    series_resistance_ohm: f64,
    neg_area_m2: f64,
    pos_area_m2: f64,
    /// Lithium-metal exchange current density at this temperature (A/m²) and cathodic transfer
    /// coefficient, when plating is on.
    plating: Option<(f64, f64)>,
    /// The currents the step starts from when its current moves linearly within it (the
    /// stepper's choice, [`StepConditions::ramp_from`]); none when it is held constant.
    pub(super) ramp: Option<RampStart>,
    /// Heat at the step's start when it moves linearly within the step (any step after its
    /// first trial), W; none when the end's heat is held over the step.
    pub(super) start_heat_w: Option<f64>,
}

impl StepConditions {
    /// The same step with its current moving linearly from `start` to the end value solved for.
    pub(super) fn ramp_from(self, start: RampStart) -> StepConditions {
        StepConditions { ramp: Some(start), ..self }
    }

    /// The same step with its heat moving linearly from `start_heat_w` to the end's.
    pub(super) fn heat_from(self, start_heat_w: f64) -> StepConditions {
        StepConditions { start_heat_w: Some(start_heat_w), ..self }
    }
}

/// A particle's diffusivity over a step whose temperature moves: the step's (middle) value over
/// its value at the start and at the predicted end, the weights of the input there
/// ([`ModeStep::apply_drifting_ramp`]). Taken as the middle's throughout instead, a mode that
/// relaxes within the step ends where D̄, not the end's D, puts it: in the winter demo's cold
/// discharge, warming by about 1 K per step, the negative's stress peak came out 0.7 % high and
/// the stress-driven losses 1–2.4 % high (with an exact temperature, 0.004 %). Both weights are
/// 1 when the temperature holds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct DiffusivityDrift {
    start_weight: f64,
    end_weight: f64,
}

impl DiffusivityDrift {
    const NONE: DiffusivityDrift = DiffusivityDrift { start_weight: 1.0, end_weight: 1.0 };

    /// For an Arrhenius diffusivity with slope −E_a/R, the step's properties taken at its
    /// middle temperature, between its start and end temperatures (given as 1/T).
    fn of(slope_k: f64, [start, middle, end]: [f64; 3]) -> DiffusivityDrift {
        if start == middle && middle == end {
            return Self::NONE;
        }
        DiffusivityDrift {
            start_weight: arrhenius(slope_k, middle - start),
            end_weight: arrhenius(slope_k, middle - end),
        }
    }

    /// True when the diffusivity holds over the step (both weights 1; equal weights other than
    /// 1 still drift within the step).
    fn is_flat(self) -> bool {
        self == Self::NONE
    }

    /// The input's weights at the step's start and end.
    fn weights(self) -> [f64; 2] {
        [self.start_weight, self.end_weight]
    }
}

/// [`crate::material::arrhenius_factor`] with the cycle model's exponential, from the slope
/// −E_a/R and 1/T − 1/T_ref: the same expression, computed for every trial step (five factors
/// each), with the divisions done once per temperature.
fn arrhenius(slope_k: f64, inverse_gap_per_k: f64) -> f64 {
    crate::material::fast_exp::exp(slope_k * inverse_gap_per_k)
}

/// The state at the end of a trial step of length `dt`.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct Trial {
    pub(super) dt: f64,
    pub(super) current: f64,
    pub(super) voltage: f64,
    pub(super) temperature_k: f64,
    pub(super) neg_surface: f64,
    pub(super) pos_surface: f64,
    pub(super) neg_mean: f64,
    pub(super) pos_mean: f64,
    pub(super) neg_potential: f64,
    /// Part of the current carried by lithium metal at the negative, A: negative while lithium
    /// deposits, positive while it strips (the rest intercalates).
    pub(super) plating_current: f64,
    /// Positive electrode potential against Li/Li⁺, V.
    pub(super) pos_potential: f64,
    /// The currents the step started from, when its current moved linearly within it.
    pub(super) ramp_start: Option<RampStart>,
    /// Heat generated at the step's end, W.
    pub(super) heat_w: f64,
}

impl Trial {
    /// Charge passed over the step, C: the end current's, or the trapezoid over a ramp.
    pub(super) fn charge_coulomb(&self) -> f64 {
        step_charge(self.ramp_start.map(|s| s.current_a), self.current, self.dt)
    }
}

/// Surface and mean stoichiometry after a step, both affine in the current.
#[derive(Debug, Clone, Copy)]
struct Affine {
    at_zero: f64,
    per_amp: f64,
}

impl Affine {
    fn at(self, current: f64) -> f64 {
        self.at_zero + self.per_amp * current
    }
}

/// A trial's responses to the current, for evaluating several currents against one step.
#[derive(Debug, Clone, Copy)]
pub(super) struct StepMaps {
    maps: [Affine; 4],
    strip_limit: f64,
    dt: f64,
    /// The currents the step ramps from, with stripping capped by the lithium left to strip.
    ramp: Option<RampStart>,
}

/// One particle's factors over a step and its outer-shell, second-outer-shell and mean
/// responses to a unit flux, to a flux rising from nil to one, and the conserved mode's share
/// of both: they depend on the step's factors only, not on the state.
#[derive(Debug, Default)]
struct ParticleStep {
    factors: ModeStep,
    unit: [f64; 3],
    ramp: [f64; 3],
    conserved_unit: [f64; 3],
    conserved_ramp: [f64; 3],
}

impl ParticleStep {
    fn prepare(&mut self, particle: &ParticleModel, diffusivity: f64, dt: f64) {
        particle.modes.step_factors(particle.radius_m, diffusivity, dt, &mut self.factors);
        let rows = particle.response_rows();
        (self.unit, self.ramp) = self.factors.input_and_ramp_responses(rows);
        (self.conserved_unit, self.conserved_ramp) = self.factors.conserved_responses(rows);
    }
}

/// Reused buffers, so a cycle allocates nothing per step.
#[derive(Debug, Default)]
pub(super) struct Scratch {
    neg: ParticleStep,
    pos: ParticleStep,
    /// (dt, negative D, positive D) the steps above were prepared for: a step that is committed
    /// right after its trial reuses them instead of recomputing every exponential.
    factors_for: Option<(f64, f64, f64)>,
}

impl Scratch {
    fn prepare(&mut self, neg: &ParticleModel, pos: &ParticleModel, cond: &StepConditions, dt: f64) {
        let key = (dt, cond.neg_diffusivity, cond.pos_diffusivity);
        if self.factors_for == Some(key) {
            return;
        }
        self.neg.prepare(neg, cond.neg_diffusivity, dt);
        self.pos.prepare(pos, cond.pos_diffusivity, dt);
        self.factors_for = Some(key);
    }
}

/// What the current is set by during a trial.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Control {
    Current(f64),
    Voltage(f64),
    Power(f64),
}

impl CellModel {
    pub fn new(cell: &Cell) -> CellModel {
        CellModel {
            cell: cell.clone(),
            neg: ParticleModel::new(&cell.negative, cell.shells),
            pos: ParticleModel::new(&cell.positive, cell.shells),
            slopes: ArrheniusSlopes::of(cell),
        }
    }

    /// Uniform particles at equilibrium at the given state of charge.
    pub fn rest_state(&self, balance: &Balance, health: &Health, soc: f64, temperature_k: f64) -> CellState {
        let (x, y) = balance.stoich_at_soc(soc, health);
        CellState {
            neg_modes: self.neg.modes.uniform(x),
            pos_modes: self.pos.modes.uniform(y),
            temperature_k,
            heat_w: 0.0,
            heat_rate_w_s: 0.0,
            plated_coulomb: 0.0,
            dead_coulomb: 0.0,
        }
    }

    /// Lithium held in both particles and plated on the negative, as charge, C.
    pub fn lithium_coulomb(&self, state: &CellState, balance: &Balance) -> f64 {
        self.neg.modes.mean(&state.neg_modes) * balance.neg_capacity_coulomb
            + self.pos.modes.mean(&state.pos_modes) * balance.pos_capacity_coulomb
            + state.plated_coulomb
            + state.dead_coulomb
    }

    /// Closes a cycle's books on plated lithium: what is still plated re-intercalates during the
    /// idle time after the cycle, and the dead share goes back too, because the slow state (not
    /// the cycle) takes it out of the inventory between cycles. Returns the reversible lithium
    /// that was still plated, C.
    pub fn end_cycle(&self, state: &mut CellState, balance: &Balance) -> f64 {
        let remaining = state.plated_coulomb;
        let returned = remaining + state.dead_coulomb;
        if returned != 0.0 {
            let uniform = self.neg.modes.uniform(returned / balance.neg_capacity_coulomb);
            for (q, u) in state.neg_modes.iter_mut().zip(uniform) {
                *q += u;
            }
        }
        state.plated_coulomb = 0.0;
        state.dead_coulomb = 0.0;
        remaining
    }

    /// Carries a cycle's end state, run at balance `from` in ambient `from_ambient_k`, over to
    /// `to` (the health's balance after the slow state moved) in `to_ambient_k`: both particles
    /// keep their concentration profiles but shift uniformly to the new balance's
    /// stoichiometries at the same state of charge, which hold exactly the health's lithium
    /// inventory, and the temperature keeps its excess over the ambient (the periodic
    /// temperature rides on the ambient). Keeping the state of charge keeps the cycle's start
    /// where the duty left it, so one cycle from here is close to periodic even where the duty
    /// never resets the state of charge (a measured series). False when a shift leaves 0–1.
    pub fn carry_over(
        &self,
        state: &mut CellState,
        (from, from_ambient_k): (&Balance, f64),
        (to, to_ambient_k): (&Balance, f64),
        health: &Health,
    ) -> bool {
        let (neg_mean, pos_mean) = (self.neg.modes.mean(&state.neg_modes), self.pos.modes.mean(&state.pos_modes));
        let soc = from.soc_of_neg_stoich(neg_mean);
        let (x, y) = to.stoich_at_soc(soc, health);
        if !(0.0..=1.0).contains(&x) || !(0.0..=1.0).contains(&y) {
            return false;
        }
        for (particle, modes, shift) in
            [(&self.neg, &mut state.neg_modes, x - neg_mean), (&self.pos, &mut state.pos_modes, y - pos_mean)]
        {
            for (q, u) in modes.iter_mut().zip(particle.modes.uniform(shift)) {
                *q += u;
            }
        }
        state.temperature_k += to_ambient_k - from_ambient_k;
        true
    }

    /// DC resistance from a current pulse applied to a rested cell, Ω: the voltage drop after
    /// `duration_s` over the current (ohmic, film, kinetic and early diffusion polarisation).
    pub fn pulse_resistance(
        &self,
        health: &Health,
        balance: &Balance,
        soc: f64,
        temperature_k: f64,
        current_a: f64,
        duration_s: f64,
    ) -> Option<f64> {
        let state = self.rest_state(balance, health, soc, temperature_k);
        let cond = self.conditions(health, temperature_k, temperature_k);
        let mut scratch = Scratch::default();
        let rest = self.trial(&state, &cond, Control::Current(0.0), 0.0, 0.0, &mut scratch)?;
        let loaded = self.trial(&state, &cond, Control::Current(current_a), duration_s, current_a, &mut scratch)?;
        Some((rest.voltage - loaded.voltage) / current_a)
    }

    /// Shell stoichiometries of each particle, centre outwards (for inspection and tests).
    pub fn shell_stoichiometries(&self, state: &CellState) -> (Vec<f64>, Vec<f64>) {
        (self.neg.modes.shells(&state.neg_modes), self.pos.modes.shells(&state.pos_modes))
    }

    /// Conditions of a step of length `dt` from `state`, at the temperatures predicted for the
    /// step's middle and end by the thermal balance solved exactly for the heat extrapolated
    /// linearly from the last step. What the end of the step evaluates (kinetics, resistance,
    /// plating, heat) is taken at the end; the diffusivities at the middle, with their drift
    /// over the step ([`DiffusivityDrift`]). Each choice removes an error first order in the
    /// step (measured on the winter demo at the default steps against 32× finer ones):
    /// - the diffusivity taken at the start: stress peak early in a discharge 0.75 % high;
    /// - the temperature extrapolated from the last step's mean rate instead of its heat: the
    ///   stress peak 0.4 % off;
    /// - the kinetics taken at the middle: plated lithium 2.7 % low (now 0.7 % high).
    pub(super) fn step_conditions(
        &self,
        health: &Health,
        state: &CellState,
        dt: f64,
        ambient_k: f64,
    ) -> StepConditions {
        let start_k = state.temperature_k;
        let cell = &self.cell;
        let (capacity, conductance) = (cell.heat_capacity_j_k(), cell.convective_conductance_w_k);
        let after = |t: f64| {
            let heat = [state.heat_w, state.heat_w + state.heat_rate_w_s * t];
            advance_temperature_ramp(start_k, ambient_k, heat, capacity, conductance, t)
        };
        let temperatures = [start_k, after(0.5 * dt), after(dt)];
        let at_end = self.conditions(health, temperatures[2], ambient_k);
        let inverse_temperatures = temperatures.map(|t| 1.0 / t);
        let neg_drift = DiffusivityDrift::of(self.slopes.neg_diffusivity, inverse_temperatures);
        let pos_drift = DiffusivityDrift::of(self.slopes.pos_diffusivity, inverse_temperatures);
        StepConditions {
            start_temperature_k: start_k,
            neg_diffusivity: at_end.neg_diffusivity * neg_drift.end_weight,
            pos_diffusivity: at_end.pos_diffusivity * pos_drift.end_weight,
            neg_drift,
            pos_drift,
            ..at_end
        }
    }

    /// Conditions with every property at `temperature_k`, which is also where the step starts.
    pub(super) fn conditions(&self, health: &Health, temperature_k: f64, ambient_k: f64) -> StepConditions {
        let cell = &self.cell;
        let gap = 1.0 / temperature_k - 1.0 / cell.reference_temperature_k;
        let (n, p, slopes) = (&cell.negative, &cell.positive, &self.slopes);
        StepConditions {
            temperature_k,
            start_temperature_k: temperature_k,
            ambient_k,
            neg_diffusivity: n.diffusivity_m2_s * arrhenius(slopes.neg_diffusivity, gap),
            pos_diffusivity: p.diffusivity_m2_s * arrhenius(slopes.pos_diffusivity, gap),
            neg_drift: DiffusivityDrift::NONE,
            pos_drift: DiffusivityDrift::NONE,
            neg_rate: n.rate_constant_m_s * arrhenius(slopes.neg_rate, gap),
            pos_rate: p.rate_constant_m_s * arrhenius(slopes.pos_rate, gap),
            // Conductances rise with temperature, so resistance falls by the inverse factor.
            series_resistance_ohm: cell.ohmic_resistance_ohm / arrhenius(slopes.ohmic, gap)
                + cell.film_resistance_ohm
                + health.added_resistance_ohm,
            neg_area_m2: self.neg.surface_area_m2 * health.neg_active_scale,
            pos_area_m2: self.pos.surface_area_m2 * health.pos_active_scale,
            plating: cell.plating.map(|p| (p.exchange_current_at(temperature_k), p.transfer_coefficient)),
            ramp: None,
            start_heat_w: None,
        }
    }

    /// Affine maps current at the step's end → surface and mean stoichiometry after `dt`, per
    /// electrode (the negative's in its intercalation current). With a ramp the start currents
    /// are fixed and only the end current is free.
    fn responses(
        &self,
        state: &CellState,
        cond: &StepConditions,
        ramp: Option<RampStart>,
        dt: f64,
        scratch: &mut Scratch,
    ) -> [Affine; 4] {
        let neg = &self.neg;
        let pos = &self.pos;
        scratch.prepare(neg, pos, cond, dt);
        let (neg_flux_per_amp, pos_flux_per_amp) = self.flux_per_amp(cond);
        // Each particle's flux at the step's start when it ramps.
        let start_flux =
            ramp.map(|r| (neg_flux_per_amp * (r.current_a - r.plating_current_a), pos_flux_per_amp * r.current_a));
        let respond = |p: &ParticleModel,
                       step: &ParticleStep,
                       start: Option<f64>,
                       modes: &[f64],
                       (d, drift): (f64, DiffusivityDrift),
                       per_amp: f64| {
            let free = step.factors.free_responses(p.response_rows(), modes);
            let ParticleStep { unit, ramp, conserved_unit, conserved_ramp, .. } = step;
            // Response to the end flux u: free + u·unit held, or free + u₀·(unit − ramp) + u·ramp;
            // a drifting diffusivity weights the start's input by a and the end's by b, except in
            // the conserved mode (ModeStep::apply_drifting_ramp).
            let DiffusivityDrift { start_weight: a, end_weight: b } = drift;
            let per_start: [f64; 3] =
                std::array::from_fn(|j| a * (unit[j] - ramp[j]) + (1.0 - a) * (conserved_unit[j] - conserved_ramp[j]));
            let per_end: [f64; 3] = std::array::from_fn(|j| b * ramp[j] + (1.0 - b) * conserved_ramp[j]);
            let (base, weight) = match start {
                None if drift.is_flat() => (free, *unit),
                None => (free, std::array::from_fn(|j| per_start[j] + per_end[j])),
                Some(u0) if drift.is_flat() => (std::array::from_fn(|j| free[j] + u0 * (unit[j] - ramp[j])), *ramp),
                Some(u0) => (std::array::from_fn(|j| free[j] + u0 * per_start[j]), per_end),
            };
            let [o_base, s_base, m_base] = base;
            let [o_weight, s_weight, m_weight] = weight;
            // The surface gradient the end's flux sets is u/D at the end.
            let end_d = d / b;
            let value =
                |u: f64| p.modes.surface_from_outer(o_base + u * o_weight, s_base + u * s_weight, u, p.radius_m, end_d);
            let at_zero = value(0.0);
            let surface = Affine { at_zero, per_amp: (value(1.0) - at_zero) * per_amp };
            (surface, Affine { at_zero: m_base, per_amp: m_weight * per_amp })
        };
        let neg_diffusion = (cond.neg_diffusivity, cond.neg_drift);
        let (neg_surface, neg_mean) =
            respond(neg, &scratch.neg, start_flux.map(|f| f.0), &state.neg_modes, neg_diffusion, neg_flux_per_amp);
        let pos_diffusion = (cond.pos_diffusivity, cond.pos_drift);
        let (pos_surface, pos_mean) =
            respond(pos, &scratch.pos, start_flux.map(|f| f.1), &state.pos_modes, pos_diffusion, pos_flux_per_amp);
        [neg_surface, pos_surface, neg_mean, pos_mean]
    }

    /// Flux into each particle per ampere (negative, positive), in stoichiometry units:
    /// discharge empties the negative and fills the positive.
    fn flux_per_amp(&self, cond: &StepConditions) -> (f64, f64) {
        (
            -1.0 / (FARADAY * cond.neg_area_m2 * self.neg.max_concentration),
            1.0 / (FARADAY * cond.pos_area_m2 * self.pos.max_concentration),
        )
    }

    /// An electrode's potential against Li/Li⁺ at surface stoichiometry θ while
    /// `current_density` (A/m², anodic positive) crosses its surface: U(θ, T) + η.
    fn electrode_potential(
        &self,
        electrode: &Electrode,
        particle: &ParticleModel,
        rate_constant: f64,
        theta: f64,
        current_density: f64,
        temperature_k: f64,
    ) -> f64 {
        let open_circuit = electrode.ocp.potential(theta)
            + (temperature_k - self.cell.reference_temperature_k) * electrode.entropic_coefficient_v_k;
        let i0 = exchange_current_density(
            rate_constant,
            particle.max_concentration,
            theta,
            self.cell.electrolyte_concentration_mol_m3,
        );
        open_circuit + overpotential(current_density, i0, temperature_k)
    }

    /// The negative's surface stoichiometry and potential against Li/Li⁺ at the end of the step
    /// when `intercalation` amperes leave its particle (discharge is anodic at the negative).
    fn negative_at(&self, cond: &StepConditions, maps: &[Affine; 4], intercalation: f64) -> (f64, f64) {
        let x = maps[0].at(intercalation);
        let density = intercalation / cond.neg_area_m2;
        (x, self.electrode_potential(&self.cell.negative, &self.neg, cond.neg_rate, x, density, cond.temperature_k))
    }

    /// The current carried by lithium metal at negative potential φ, A (module docs): deposition
    /// below 0 V, stripping above it only while reversible lithium is left, at most
    /// `strip_limit_a`.
    fn plating_current(cond: &StepConditions, potential_v: f64, strip_limit_a: f64) -> f64 {
        let Some((i0, alpha)) = cond.plating else { return 0.0 };
        // Above 0 V with nothing plated there is nothing to strip (the common case): skip the
        // exponentials.
        if potential_v >= 0.0 && strip_limit_a <= 0.0 {
            return 0.0;
        }
        let current = cond.neg_area_m2 * lithium_metal_current_density(i0, alpha, potential_v, cond.temperature_k);
        current.min(strip_limit_a)
    }

    /// Splits the current at the negative: (intercalation current, surface stoichiometry,
    /// potential, plating current) with intercalation + plating = `current` (module docs).
    fn split_negative(&self, cond: &StepConditions, maps: &[Affine; 4], current: f64, strip_limit_a: f64) -> Split {
        let (x, phi) = self.negative_at(cond, maps, current);
        let plating = Self::plating_current(cond, phi, strip_limit_a);
        if plating == 0.0 || !phi.is_finite() {
            return Split { intercalation: current, x, potential: phi, plating: 0.0 };
        }
        // g(I_int) = I_pl(φ(I_int)) + I_int − I rises with I_int; g(I) = I_pl(φ(I)), and moving
        // I_int by −I_pl(φ(I)) changes its sign, so [I, I − I_pl] (in order) brackets the root.
        let residual = |i_int: f64| {
            let (x, phi) = self.negative_at(cond, maps, i_int);
            (Self::plating_current(cond, phi, strip_limit_a) + i_int - current, x, phi)
        };
        let (mut lo, mut hi) = if plating < 0.0 { (current, current - plating) } else { (current - plating, current) };
        let (mut g_lo, mut g_hi) = (residual(lo).0, residual(hi).0);
        let tolerance = PLATING_SPLIT_TOLERANCE * (current.abs() + plating.abs());
        let mut best = (current, x, phi);
        let mut side = 0i8;
        for _ in 0..PLATING_SPLIT_MAX_ITERATIONS {
            // Illinois false position: halve the weight of an end kept twice in a row.
            let mid = if g_hi > g_lo { (lo * g_hi - hi * g_lo) / (g_hi - g_lo) } else { 0.5 * (lo + hi) };
            let mid = if mid > lo && mid < hi { mid } else { 0.5 * (lo + hi) };
            let (g, x, phi) = residual(mid);
            best = (mid, x, phi);
            if g.abs() <= tolerance || !g.is_finite() {
                break;
            }
            if g < 0.0 {
                lo = mid;
                g_lo = g;
                if side == -1 {
                    g_hi *= 0.5;
                }
                side = -1;
            } else {
                hi = mid;
                g_hi = g;
                if side == 1 {
                    g_lo *= 0.5;
                }
                side = 1;
            }
        }
        let (intercalation, x, potential) = best;
        Split { intercalation, x, potential, plating: current - intercalation }
    }

    /// Terminal voltage, the negative's split, the positive's surface stoichiometry and its
    /// potential against Li/Li⁺ at the end of the step for a current.
    fn voltage(
        &self,
        cond: &StepConditions,
        maps: &[Affine; 4],
        current: f64,
        strip_limit_a: f64,
    ) -> (f64, Split, f64, f64) {
        let negative = self.split_negative(cond, maps, current, strip_limit_a);
        let y = maps[1].at(current);
        // Discharge is cathodic at the positive.
        let density = -current / cond.pos_area_m2;
        let positive =
            self.electrode_potential(&self.cell.positive, &self.pos, cond.pos_rate, y, density, cond.temperature_k);
        let voltage = positive - negative.potential - current * cond.series_resistance_ohm;
        (voltage, negative, y, positive)
    }

    /// Solves for the current meeting the control and returns the end-of-step state.
    pub(super) fn trial(
        &self,
        state: &CellState,
        cond: &StepConditions,
        control: Control,
        dt: f64,
        guess: f64,
        scratch: &mut Scratch,
    ) -> Option<Trial> {
        let maps = self.step_maps(state, cond, dt, scratch);
        let current = match control {
            Control::Current(i) => i,
            // V(I) falls with I; I·V(I) rises with I on the branch a cell operates on.
            Control::Voltage(target) => solve_decreasing(|i| self.terminal_voltage(cond, &maps, i) - target, guess)?,
            Control::Power(target) => solve_decreasing(|i| target - i * self.terminal_voltage(cond, &maps, i), guess)?,
        };
        self.finish_trial(cond, &maps, current, 0.0)
    }

    /// What a trial of length `dt` from `state` maps a current to (the particles' responses and
    /// the stripping limit), for evaluating several currents against the same step.
    pub(super) fn step_maps(
        &self,
        state: &CellState,
        cond: &StepConditions,
        dt: f64,
        scratch: &mut Scratch,
    ) -> StepMaps {
        // Stripping can return at most the reversible lithium on the surface within the step.
        // Over a ramp the start's stripping comes first: where it alone would take more than
        // is left (the lithium runs out within the step), it is cut to take exactly that, and
        // the end's stripping gets what the start's leaves.
        let (strip_limit, ramp) = match cond.ramp {
            _ if dt <= 0.0 => (0.0, cond.ramp),
            None => (state.plated_coulomb / dt, None),
            Some(start) => {
                let room = 2.0 * state.plated_coulomb / dt;
                let start_strip = start.plating_current_a.max(0.0).min(room);
                let start = RampStart { plating_current_a: start.plating_current_a.min(start_strip), ..start };
                (room - start_strip, Some(start))
            }
        };
        StepMaps { maps: self.responses(state, cond, ramp, dt, scratch), strip_limit, dt, ramp }
    }

    /// Terminal voltage at the step's end for a current.
    pub(super) fn terminal_voltage(&self, cond: &StepConditions, maps: &StepMaps, current: f64) -> f64 {
        self.voltage(cond, &maps.maps, current, maps.strip_limit).0
    }

    /// The end-of-step state for a current; `exchanged_heat_w` is heat flowing in from
    /// neighbouring cells over the step (0 for a lone cell).
    pub(super) fn finish_trial(
        &self,
        cond: &StepConditions,
        maps: &StepMaps,
        current: f64,
        exchanged_heat_w: f64,
    ) -> Option<Trial> {
        let evaluation = self.evaluate(cond, maps, current);
        self.finish_evaluated(cond, maps, &evaluation, exchanged_heat_w)
    }

    /// The terminal voltage and electrode states at the step's end for a current, kept so a
    /// trial can be finished from it without evaluating the same current again.
    pub(super) fn evaluate(&self, cond: &StepConditions, maps: &StepMaps, current: f64) -> Evaluation {
        let (voltage, negative, pos_surface, pos_potential) = self.voltage(cond, &maps.maps, current, maps.strip_limit);
        Evaluation { current, voltage, negative, pos_surface, pos_potential }
    }

    /// [`CellModel::finish_trial`] from an evaluation of the same step.
    pub(super) fn finish_evaluated(
        &self,
        cond: &StepConditions,
        maps: &StepMaps,
        evaluation: &Evaluation,
        exchanged_heat_w: f64,
    ) -> Option<Trial> {
        let dt = maps.dt;
        let Evaluation { current, voltage, negative, pos_surface, pos_potential } = *evaluation;
        if !voltage.is_finite() {
            return None;
        }
        let ramp_start = maps.ramp;
        let maps = &maps.maps;
        let (neg_potential, neg_surface) = (negative.potential, negative.x);
        let neg_mean = maps[2].at(negative.intercalation);
        let pos_mean = maps[3].at(current);
        let cell = &self.cell;
        let ocv = cell.positive.ocp.potential(pos_mean) - cell.negative.ocp.potential(neg_mean)
            + (cond.temperature_k - cell.reference_temperature_k) * self.entropic_v_k();
        let heat = bernardi_heat(current, ocv, voltage, cond.temperature_k, self.entropic_v_k()) + exchanged_heat_w;
        let (capacity, conductance) = (cell.heat_capacity_j_k(), cell.convective_conductance_w_k);
        let temperature_k = match cond.start_heat_w {
            None => advance_temperature(cond.start_temperature_k, cond.ambient_k, heat, capacity, conductance, dt),
            Some(start) => advance_temperature_ramp(
                cond.start_temperature_k,
                cond.ambient_k,
                [start, heat],
                capacity,
                conductance,
                dt,
            ),
        };
        Some(Trial {
            dt,
            current,
            voltage,
            temperature_k,
            neg_surface,
            pos_surface,
            neg_mean,
            pos_mean,
            neg_potential,
            plating_current: negative.plating,
            pos_potential,
            ramp_start,
            heat_w: heat,
        })
    }

    /// dU_ocv/dT of the cell, V/K.
    fn entropic_v_k(&self) -> f64 {
        self.cell.positive.entropic_coefficient_v_k - self.cell.negative.entropic_coefficient_v_k
    }

    /// Moves the state to the end of an accepted trial.
    pub(super) fn commit(&self, state: &mut CellState, cond: &StepConditions, trial: &Trial, scratch: &mut Scratch) {
        scratch.prepare(&self.neg, &self.pos, cond, trial.dt);
        // Only the intercalation part of the current enters or leaves the negative particle.
        let intercalation = trial.current - trial.plating_current;
        match trial.ramp_start {
            None if cond.neg_drift.is_flat() && cond.pos_drift.is_flat() => {
                let neg_flux = -intercalation / (FARADAY * cond.neg_area_m2 * self.neg.max_concentration);
                let pos_flux = trial.current / (FARADAY * cond.pos_area_m2 * self.pos.max_concentration);
                scratch.neg.factors.apply(&mut state.neg_modes, neg_flux);
                scratch.pos.factors.apply(&mut state.pos_modes, pos_flux);
            }
            ramp_start => {
                let (neg_flux_per_amp, pos_flux_per_amp) = self.flux_per_amp(cond);
                // A current held over the step starts where it ends.
                let (start_current, start_intercalation) = ramp_start
                    .map_or((trial.current, intercalation), |s| (s.current_a, s.current_a - s.plating_current_a));
                let neg_fluxes = [neg_flux_per_amp * start_intercalation, neg_flux_per_amp * intercalation];
                scratch.neg.factors.apply_drifting_ramp(&mut state.neg_modes, neg_fluxes, cond.neg_drift.weights());
                let pos_fluxes = [pos_flux_per_amp * start_current, pos_flux_per_amp * trial.current];
                scratch.pos.factors.apply_drifting_ramp(&mut state.pos_modes, pos_fluxes, cond.pos_drift.weights());
            }
        }
        // A step whose heat was held (the first of a protocol step, which may jump to a new
        // drive) says nothing of how the heat moves.
        state.heat_rate_w_s = match cond.start_heat_w {
            Some(start) if trial.dt > 0.0 => (trial.heat_w - start) / trial.dt,
            _ => 0.0,
        };
        state.heat_w = trial.heat_w;
        state.temperature_k = trial.temperature_k;
        let (deposited, stripped) =
            signed_areas(trial.ramp_start.map(|s| s.plating_current_a), trial.plating_current, trial.dt);
        if deposited > 0.0 || stripped > 0.0 {
            let dead_share = self.cell.plating.map_or(0.0, |p| p.irreversible_fraction);
            state.plated_coulomb = (state.plated_coulomb + (1.0 - dead_share) * deposited - stripped).max(0.0);
            state.dead_coulomb += dead_share * deposited;
        }
    }

    /// Prepares the record's stress histories for a new cycle (their rows set once per model).
    pub(super) fn start_stress_histories(&self, record: &mut super::CycleRecord) {
        for (history, particle) in [(&mut record.neg_stress, &self.neg), (&mut record.pos_stress, &self.pos)] {
            let coefficient = particle.stress_coefficient * particle.max_concentration;
            history.reset([&particle.hoop_rows, &particle.rate_terms], coefficient);
        }
    }

    /// Stores the particles' modal states beside the trace point just pushed (the end of
    /// `trial`, run under `cond`), with their rates of change there.
    pub(super) fn record_profiles(
        &self,
        state: &CellState,
        cond: &StepConditions,
        trial: &Trial,
        record: &mut super::CycleRecord,
    ) {
        let (neg_flux_per_amp, pos_flux_per_amp) = self.flux_per_amp(cond);
        let intercalation = trial.current - trial.plating_current;
        let start = trial.ramp_start.map(|s| (s.current_a - s.plating_current_a, s.current_a));
        let neg = ParticleInstant {
            diffusivity: cond.neg_diffusivity,
            drift: cond.neg_drift,
            flux: neg_flux_per_amp * intercalation,
            start_flux: start.map(|s| neg_flux_per_amp * s.0),
        };
        let pos = ParticleInstant {
            diffusivity: cond.pos_diffusivity,
            drift: cond.pos_drift,
            flux: pos_flux_per_amp * trial.current,
            start_flux: start.map(|s| pos_flux_per_amp * s.1),
        };
        self.neg.record(&state.neg_modes, neg, trial.dt, &mut record.neg_stress);
        self.pos.record(&state.pos_modes, pos, trial.dt, &mut record.pos_stress);
    }

    pub(super) fn trace_point(&self, time_s: f64, trial: &Trial, balance: &Balance, step: usize) -> TracePoint {
        TracePoint {
            time_s,
            dt_s: trial.dt,
            current_a: trial.current,
            voltage_v: trial.voltage,
            temperature_k: trial.temperature_k,
            soc: balance.soc_of_neg_stoich(trial.neg_mean),
            neg_surface_stoich: trial.neg_surface,
            pos_surface_stoich: trial.pos_surface,
            neg_potential_v: trial.neg_potential,
            plating_current_a: trial.plating_current,
            pos_potential_v: trial.pos_potential,
            ramp_start: trial.ramp_start,
            heat_w: trial.heat_w,
            // The stepper fills in the lithium on the surface once the step is committed.
            plated_coulomb: 0.0,
            neg_mean_stoich: trial.neg_mean,
            pos_mean_stoich: trial.pos_mean,
            neg_surface_stress_pa: surface_hoop_stress(
                self.neg.stress_coefficient * self.neg.max_concentration,
                trial.neg_mean,
                trial.neg_surface,
            ),
            pos_surface_stress_pa: surface_hoop_stress(
                self.pos.stress_coefficient * self.pos.max_concentration,
                trial.pos_mean,
                trial.pos_surface,
            ),
            step,
        }
    }
}

/// A current's terminal voltage and electrode states at a step's end.
#[derive(Debug, Clone, Copy)]
pub(super) struct Evaluation {
    pub(super) current: f64,
    pub(super) voltage: f64,
    negative: Split,
    pos_surface: f64,
    pos_potential: f64,
}

/// The negative's current split at a step's end (module docs).
#[derive(Debug, Clone, Copy)]
struct Split {
    /// Current into or out of the particle, A (positive on discharge).
    intercalation: f64,
    /// Surface stoichiometry.
    x: f64,
    /// Electrode potential against Li/Li⁺, V.
    potential: f64,
    /// Current carried by lithium metal, A (negative while depositing).
    plating: f64,
}

/// The split's residual counts as met below this fraction of the currents involved (1e-13: far
/// inside the 1e-9 current balance the tests ask for, above round-off).
const PLATING_SPLIT_TOLERANCE: f64 = 1e-13;
/// False-position iterations of the split; it converges superlinearly in far fewer.
const PLATING_SPLIT_MAX_ITERATIONS: usize = 100;

/// Solving for the current of a constant-voltage or constant-power step: the residual (V for
/// a voltage, W for a power) counts as met below [`CONTROL_RESIDUAL`], or below
/// [`CONTROL_RESIDUAL_LAST_RESORT`] after [`CONTROL_MAX_ITERATIONS`] iterations; the solve also
/// ends when an iterate moves the current by less than [`CONTROL_CURRENT_STEP_RELATIVE`] of
/// the current scale (the guess's magnitude, at least [`CONTROL_MIN_CURRENT_SCALE_A`]). The
/// slope is a forward difference over [`CONTROL_SLOPE_STEP_RELATIVE`] of that scale.
const CONTROL_RESIDUAL: f64 = 1e-10;
const CONTROL_RESIDUAL_LAST_RESORT: f64 = 1e-6;
const CONTROL_MAX_ITERATIONS: usize = 60;
const CONTROL_CURRENT_STEP_RELATIVE: f64 = 1e-12;
const CONTROL_MIN_CURRENT_SCALE_A: f64 = 1.0;
const CONTROL_SLOPE_STEP_RELATIVE: f64 = 1e-6;

/// Root of a decreasing function by Newton steps kept inside an expanding bracket: while the
/// root is bracketed on one side only the bracket grows by one current scale, and a Newton
/// step that would leave the bracket is replaced by bisection.
pub(super) fn solve_decreasing(mut f: impl FnMut(f64) -> f64, guess: f64) -> Option<f64> {
    let scale = guess.abs().max(CONTROL_MIN_CURRENT_SCALE_A);
    let mut x = guess;
    let mut fx = f(x);
    let (mut lo, mut hi) = (f64::NEG_INFINITY, f64::INFINITY);
    for _ in 0..CONTROL_MAX_ITERATIONS {
        if !fx.is_finite() {
            return None;
        }
        if fx > 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        if fx.abs() < CONTROL_RESIDUAL {
            return Some(x);
        }
        let h = CONTROL_SLOPE_STEP_RELATIVE * scale;
        let slope = (f(x + h) - fx) / h;
        let mut next = if slope < 0.0 { x - fx / slope } else { f64::NAN };
        if !next.is_finite() || next <= lo || next >= hi {
            next = match (lo.is_finite(), hi.is_finite()) {
                (true, true) => 0.5 * (lo + hi),
                (true, false) => x + scale,
                (false, true) => x - scale,
                (false, false) => return None,
            };
        }
        if (next - x).abs() < CONTROL_CURRENT_STEP_RELATIVE * scale {
            return Some(next);
        }
        x = next;
        fx = f(x);
    }
    (fx.abs() < CONTROL_RESIDUAL_LAST_RESORT).then_some(x)
}
