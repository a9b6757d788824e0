//! Protocol stepping: runs a duty cycle through the particle, kinetic and thermal models.
//!
//! Within a time step the current is constant. Diffusion is integrated exactly for that current
//! ([`super::diffusion`]); the terminal voltage, overpotentials and heat are evaluated at the
//! end of the step (implicit, so constant-voltage and constant-power steps are stable at any
//! step length). Constant-voltage and constant-power steps solve for the current that meets
//! their target at the step's end. Step ends are located by bisection inside the step that
//! crosses them, so a voltage end is met within `voltage_end_tolerance_v`.

use super::balance::{balance_cell, Balance};
use super::diffusion::{Boundary, ModeStep, SphereModes};
use super::kinetics::{exchange_current_density, overpotential};
use super::protocol::{Drive, DutyCycle, SeriesSignal, Step, StepEnd};
use super::record::{CycleRecord, EndReason, StepSummary, TracePoint};
use super::stress::surface_hoop_stress;
use super::thermal::{advance_temperature, bernardi_heat};
use super::{Cell, Electrode, Scenario};
use crate::material::arrhenius_factor;
use crate::material::constants::FARADAY;
use thiserror::Error;

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

/// Step-size and tolerance settings; the defaults suit cycle-life work.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolverSettings {
    /// Largest change of state of charge in one time step.
    pub max_soc_step: f64,
    /// Largest change of terminal voltage in one time step under an unchanged drive, V.
    pub max_voltage_step_v: f64,
    /// Largest temperature change in one time step, K.
    pub max_temperature_step_k: f64,
    /// First time step after a change of drive, s.
    pub first_dt_s: f64,
    /// Longest time step under load and at rest, s.
    pub max_dt_load_s: f64,
    pub max_dt_rest_s: f64,
    /// Tolerance on a located voltage end, V.
    pub voltage_end_tolerance_v: f64,
    /// A step running longer than this never ends, s.
    pub max_step_duration_s: f64,
    /// Warm-up cycles allowed to reach the periodic state, and the largest change of any
    /// shell stoichiometry over a cycle that counts as periodic.
    pub max_warmup_cycles: usize,
    pub periodic_tolerance: f64,
}

impl Default for SolverSettings {
    fn default() -> Self {
        SolverSettings {
            max_soc_step: 0.01,
            max_voltage_step_v: 0.01,
            max_temperature_step_k: 0.5,
            first_dt_s: 2.0,
            max_dt_load_s: 300.0,
            max_dt_rest_s: 900.0,
            voltage_end_tolerance_v: 2e-4,
            max_step_duration_s: 7.0 * 86_400.0,
            max_warmup_cycles: 8,
            periodic_tolerance: 1e-4,
        }
    }
}

/// Why a cycle could not be simulated; carries where it stopped.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum CycleError {
    #[error("step {step} ({label}) at t = {time_s:.1} s: {detail}")]
    Failed { step: usize, label: String, time_s: f64, detail: String },
    #[error("no charge can be cycled in the voltage window: the cell has no usable lithium or active material")]
    Unbalanced,
}

/// The fast state: modal coordinates of each particle (stoichiometry units) and temperature.
#[derive(Debug, Clone, PartialEq)]
pub struct CellState {
    pub neg_modes: Vec<f64>,
    pub pos_modes: Vec<f64>,
    pub temperature_k: f64,
}

/// One electrode with its precomputed diffusion modes.
#[derive(Debug, Clone)]
struct ParticleModel {
    modes: SphereModes,
    radius_m: f64,
    max_concentration: f64,
    surface_area_m2: f64,
    stress_coefficient: f64,
}

impl ParticleModel {
    fn new(electrode: &Electrode, shells: usize) -> ParticleModel {
        ParticleModel {
            modes: SphereModes::new(shells, Boundary::Flux),
            radius_m: electrode.particle_radius_m,
            max_concentration: electrode.max_concentration_mol_m3,
            surface_area_m2: electrode.surface_area_m2(),
            stress_coefficient: electrode.stress_coefficient_pa_m3_mol(),
        }
    }
}

/// A cell prepared for simulation (diffusion modes computed once); reuse it across cycles.
#[derive(Debug, Clone)]
pub struct CellModel {
    pub cell: Cell,
    neg: ParticleModel,
    pos: ParticleModel,
}

/// Everything a trial step needs that stays fixed within it.
#[derive(Debug, Clone, Copy)]
struct StepConditions {
    temperature_k: f64,
    ambient_k: f64,
    neg_diffusivity: f64,
    pos_diffusivity: f64,
    neg_rate: f64,
    pos_rate: f64,
    series_resistance_ohm: f64,
    neg_area_m2: f64,
    pos_area_m2: f64,
}

/// The state at the end of a trial step of length `dt`.
#[derive(Debug, Clone, Copy, Default)]
struct Trial {
    dt: f64,
    current: f64,
    voltage: f64,
    temperature_k: f64,
    neg_surface: f64,
    pos_surface: f64,
    neg_mean: f64,
    pos_mean: f64,
    neg_potential: f64,
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

/// Reused buffers, so a cycle allocates nothing per step.
#[derive(Debug, Default)]
struct Scratch {
    neg: ModeStep,
    pos: ModeStep,
    /// (dt, negative D, positive D) the factors above were computed for: a step that is
    /// committed right after its trial reuses them instead of recomputing every exponential.
    factors_for: Option<(f64, f64, f64)>,
}

impl Scratch {
    fn prepare(&mut self, neg: &ParticleModel, pos: &ParticleModel, cond: &StepConditions, dt: f64) {
        let key = (dt, cond.neg_diffusivity, cond.pos_diffusivity);
        if self.factors_for == Some(key) {
            return;
        }
        neg.modes.step_factors(neg.radius_m, cond.neg_diffusivity, dt, &mut self.neg);
        pos.modes.step_factors(pos.radius_m, cond.pos_diffusivity, dt, &mut self.pos);
        self.factors_for = Some(key);
    }
}

/// What the current is set by during a trial.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Control {
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
        }
    }

    /// Uniform particles at equilibrium at the given state of charge.
    pub fn rest_state(&self, balance: &Balance, health: &Health, soc: f64, temperature_k: f64) -> CellState {
        let (x, y) = balance.stoich_at_soc(soc, health);
        CellState { neg_modes: self.neg.modes.uniform(x), pos_modes: self.pos.modes.uniform(y), temperature_k }
    }

    /// Lithium held in both particles, as charge, C.
    pub fn lithium_coulomb(&self, state: &CellState, balance: &Balance) -> f64 {
        self.neg.modes.mean(&state.neg_modes) * balance.neg_capacity_coulomb
            + self.pos.modes.mean(&state.pos_modes) * balance.pos_capacity_coulomb
    }

    /// Shifts the negative particle's concentration uniformly so the state holds exactly the
    /// health's lithium inventory (the slow state moves lithium into films and plating between
    /// cycles; the fast state must follow). Returns false when no shift keeps it inside 0–1.
    pub fn align_lithium(&self, state: &mut CellState, balance: &Balance, health: &Health) -> bool {
        let held = self.lithium_coulomb(state, balance);
        let shift = (health.lithium_inventory_coulomb - held) / balance.neg_capacity_coulomb;
        let mean = self.neg.modes.mean(&state.neg_modes);
        if !(0.0..=1.0).contains(&(mean + shift)) {
            return false;
        }
        let uniform = self.neg.modes.uniform(shift);
        for (q, u) in state.neg_modes.iter_mut().zip(uniform) {
            *q += u;
        }
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

    fn conditions(&self, health: &Health, temperature_k: f64, ambient_k: f64) -> StepConditions {
        let cell = &self.cell;
        let t_ref = cell.reference_temperature_k;
        let (n, p) = (&cell.negative, &cell.positive);
        StepConditions {
            temperature_k,
            ambient_k,
            neg_diffusivity: n.diffusivity_m2_s
                * arrhenius_factor(n.diffusivity_activation_j_mol, temperature_k, t_ref),
            pos_diffusivity: p.diffusivity_m2_s
                * arrhenius_factor(p.diffusivity_activation_j_mol, temperature_k, t_ref),
            neg_rate: n.rate_constant_m_s * arrhenius_factor(n.rate_constant_activation_j_mol, temperature_k, t_ref),
            pos_rate: p.rate_constant_m_s * arrhenius_factor(p.rate_constant_activation_j_mol, temperature_k, t_ref),
            // Conductances rise with temperature, so resistance falls by the inverse factor.
            series_resistance_ohm: cell.ohmic_resistance_ohm
                / arrhenius_factor(cell.ohmic_activation_j_mol, temperature_k, t_ref)
                + cell.film_resistance_ohm
                + health.added_resistance_ohm,
            neg_area_m2: self.neg.surface_area_m2 * health.neg_active_scale,
            pos_area_m2: self.pos.surface_area_m2 * health.pos_active_scale,
        }
    }

    /// Affine maps current → surface and mean stoichiometry after `dt`, per electrode.
    fn responses(&self, state: &CellState, cond: &StepConditions, dt: f64, scratch: &mut Scratch) -> [Affine; 4] {
        let neg = &self.neg;
        let pos = &self.pos;
        scratch.prepare(neg, pos, cond, dt);
        // Flux into each particle per ampere, in stoichiometry units: discharge empties the
        // negative and fills the positive.
        let neg_flux_per_amp = -1.0 / (FARADAY * cond.neg_area_m2 * neg.max_concentration);
        let pos_flux_per_amp = 1.0 / (FARADAY * cond.pos_area_m2 * pos.max_concentration);
        let surface = |p: &ParticleModel, step: &ModeStep, modes: &[f64], d: f64, per_amp: f64| {
            let (outer, second) = p.modes.outer_rows();
            let (o_free, o_unit) = step.project(outer, modes);
            let (s_free, s_unit) = step.project(second, modes);
            let value = |u: f64| p.modes.surface_from_outer(o_free + u * o_unit, s_free + u * s_unit, u, p.radius_m, d);
            let at_zero = value(0.0);
            Affine { at_zero, per_amp: (value(1.0) - at_zero) * per_amp }
        };
        let mean = |p: &ParticleModel, step: &ModeStep, modes: &[f64], per_amp: f64| {
            let (free, unit) = step.project(p.modes.mean_row(), modes);
            Affine { at_zero: free, per_amp: unit * per_amp }
        };
        [
            surface(neg, &scratch.neg, &state.neg_modes, cond.neg_diffusivity, neg_flux_per_amp),
            surface(pos, &scratch.pos, &state.pos_modes, cond.pos_diffusivity, pos_flux_per_amp),
            mean(neg, &scratch.neg, &state.neg_modes, neg_flux_per_amp),
            mean(pos, &scratch.pos, &state.pos_modes, pos_flux_per_amp),
        ]
    }

    /// Terminal voltage and negative potential vs Li at the end of the step for a current.
    fn voltage(&self, cond: &StepConditions, maps: &[Affine; 4], current: f64) -> (f64, f64, f64, f64) {
        let cell = &self.cell;
        let t = cond.temperature_k;
        let dt_ref = t - cell.reference_temperature_k;
        let x = maps[0].at(current);
        let y = maps[1].at(current);
        let u_neg = cell.negative.ocp.potential(x) + dt_ref * cell.negative.entropic_coefficient_v_k;
        let u_pos = cell.positive.ocp.potential(y) + dt_ref * cell.positive.entropic_coefficient_v_k;
        let ce = cell.electrolyte_concentration_mol_m3;
        let i0_neg = exchange_current_density(cond.neg_rate, self.neg.max_concentration, x, ce);
        let i0_pos = exchange_current_density(cond.pos_rate, self.pos.max_concentration, y, ce);
        // Discharge is anodic (lithium out) at the negative and cathodic at the positive.
        let eta_neg = overpotential(current / cond.neg_area_m2, i0_neg, t);
        let eta_pos = overpotential(-current / cond.pos_area_m2, i0_pos, t);
        let voltage = u_pos + eta_pos - u_neg - eta_neg - current * cond.series_resistance_ohm;
        (voltage, u_neg + eta_neg, x, y)
    }

    /// Solves for the current meeting the control and returns the end-of-step state.
    fn trial(
        &self,
        state: &CellState,
        cond: &StepConditions,
        control: Control,
        dt: f64,
        guess: f64,
        scratch: &mut Scratch,
    ) -> Option<Trial> {
        let maps = self.responses(state, cond, dt, scratch);
        let current = match control {
            Control::Current(i) => i,
            // V(I) falls with I; I·V(I) rises with I on the branch a cell operates on.
            Control::Voltage(target) => solve_decreasing(|i| self.voltage(cond, &maps, i).0 - target, guess)?,
            Control::Power(target) => solve_decreasing(|i| target - i * self.voltage(cond, &maps, i).0, guess)?,
        };
        let (voltage, neg_potential, neg_surface, pos_surface) = self.voltage(cond, &maps, current);
        if !voltage.is_finite() {
            return None;
        }
        let neg_mean = maps[2].at(current);
        let pos_mean = maps[3].at(current);
        let cell = &self.cell;
        let ocv = cell.positive.ocp.potential(pos_mean) - cell.negative.ocp.potential(neg_mean)
            + (cond.temperature_k - cell.reference_temperature_k) * self.entropic_v_k();
        let heat = bernardi_heat(current, ocv, voltage, cond.temperature_k, self.entropic_v_k());
        let temperature_k = advance_temperature(
            cond.temperature_k,
            cond.ambient_k,
            heat,
            cell.heat_capacity_j_k(),
            cell.convective_conductance_w_k,
            dt,
        );
        Some(Trial { dt, current, voltage, temperature_k, neg_surface, pos_surface, neg_mean, pos_mean, neg_potential })
    }

    /// dU_ocv/dT of the cell, V/K.
    fn entropic_v_k(&self) -> f64 {
        self.cell.positive.entropic_coefficient_v_k - self.cell.negative.entropic_coefficient_v_k
    }

    /// Moves the state to the end of an accepted trial.
    fn commit(&self, state: &mut CellState, cond: &StepConditions, trial: &Trial, scratch: &mut Scratch) {
        scratch.prepare(&self.neg, &self.pos, cond, trial.dt);
        let neg_flux = -trial.current / (FARADAY * cond.neg_area_m2 * self.neg.max_concentration);
        let pos_flux = trial.current / (FARADAY * cond.pos_area_m2 * self.pos.max_concentration);
        scratch.neg.apply(&mut state.neg_modes, neg_flux);
        scratch.pos.apply(&mut state.pos_modes, pos_flux);
        state.temperature_k = trial.temperature_k;
    }

    fn trace_point(&self, time_s: f64, trial: &Trial, balance: &Balance, step: usize) -> TracePoint {
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

/// Root of a decreasing function by Newton steps kept inside an expanding bracket.
fn solve_decreasing(f: impl Fn(f64) -> f64, guess: f64) -> Option<f64> {
    let scale = guess.abs().max(1.0);
    let mut x = guess;
    let mut fx = f(x);
    let (mut lo, mut hi) = (f64::NEG_INFINITY, f64::INFINITY);
    for _ in 0..60 {
        if !fx.is_finite() {
            return None;
        }
        if fx > 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        if fx.abs() < 1e-10 {
            return Some(x);
        }
        let h = 1e-6 * scale;
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
        if (next - x).abs() < 1e-12 * scale {
            return Some(next);
        }
        x = next;
        fx = f(x);
    }
    (fx.abs() < 1e-6).then_some(x)
}

/// Stoichiometry margin kept from empty and full at the particle surface.
const SURFACE_GUARD: f64 = 1e-4;

/// A step as the stepper runs it: its control, its ends and which way lithium moves.
struct ActiveStep<'a> {
    index: usize,
    label: &'a str,
    drive: Drive,
    ends: &'a [StepEnd],
}

/// How far a step has run at the end of a trial.
#[derive(Debug, Clone, Copy)]
struct Progress {
    soc: f64,
    elapsed_s: f64,
    charge_passed_coulomb: f64,
}

/// Distance to each end, scaled by its tolerance: positive before, ≤ 0 once reached.
fn end_margins(
    step: &ActiveStep,
    cell: &Cell,
    trial: &Trial,
    progress: Progress,
    tolerance_v: f64,
    out: &mut Vec<(EndReason, f64)>,
) {
    out.clear();
    // Direction of travel: +1 discharge, −1 charge; a hold follows its current.
    let direction = match step.drive {
        Drive::Current(i) => i.signum(),
        Drive::Power(p) => p.signum(),
        Drive::Voltage(_) => trial.current.signum(),
        Drive::Rest => 0.0,
    };
    for end in step.ends {
        let margin = match *end {
            StepEnd::Voltage(v) => direction * (trial.voltage - v) / tolerance_v,
            StepEnd::CurrentBelow(i) => (trial.current.abs() - i) / (1e-4 * i),
            StepEnd::Time(t) => (t - progress.elapsed_s) / 1e-9 - 1.0,
            StepEnd::Soc(s) => {
                if direction == 0.0 {
                    continue;
                }
                direction * (progress.soc - s) / 1e-6
            }
            StepEnd::Charge(q) => (q - progress.charge_passed_coulomb.abs()) / (1e-6 * q),
        };
        out.push((reason_of(end), margin));
    }
    if !matches!(step.drive, Drive::Voltage(_) | Drive::Rest) {
        let window =
            if direction > 0.0 { trial.voltage - cell.voltage_min_v } else { cell.voltage_max_v - trial.voltage };
        out.push((EndReason::VoltageLimit, window / tolerance_v));
    }
    let surface_room = [trial.neg_surface, trial.pos_surface]
        .iter()
        .map(|&x| (x - SURFACE_GUARD).min(1.0 - SURFACE_GUARD - x))
        .fold(f64::INFINITY, f64::min);
    out.push((EndReason::ElectrodeLimit, surface_room / 1e-6));
}

fn reason_of(end: &StepEnd) -> EndReason {
    match end {
        StepEnd::Voltage(_) => EndReason::Voltage,
        StepEnd::CurrentBelow(_) => EndReason::Current,
        StepEnd::Time(_) => EndReason::Time,
        StepEnd::Soc(_) => EndReason::Soc,
        StepEnd::Charge(_) => EndReason::Charge,
    }
}

/// Which ends a trial reached: (some end other than time, the time end).
fn ends_reached(margins: &[(EndReason, f64)]) -> (bool, bool) {
    let reached = |time: bool| margins.iter().any(|(r, m)| (*r == EndReason::Time) == time && *m <= 0.0);
    (reached(false), reached(true))
}

/// What one cycle runs: the duty, the ambient it runs in, and the cell's health with the
/// balance that goes with it.
#[derive(Debug, Clone, Copy)]
pub struct CycleRun<'a> {
    pub duty: &'a DutyCycle,
    pub ambient_k: f64,
    pub health: &'a Health,
    pub balance: &'a Balance,
}

/// Runs one cycle of the duty from `state`, filling `record`.
pub fn simulate_cycle(
    model: &CellModel,
    run: &CycleRun,
    state: &mut CellState,
    settings: &SolverSettings,
    record: &mut CycleRecord,
) -> Result<(), CycleError> {
    let (health, balance) = (run.health, run.balance);
    let mut stepper = Stepper {
        model,
        health,
        balance,
        settings,
        ambient_k: run.ambient_k,
        scratch: Scratch::default(),
        margins: Vec::new(),
        time_s: 0.0,
        current_guess: 0.0,
    };
    record.trace.clear();
    record.steps.clear();
    let cond = model.conditions(health, state.temperature_k, run.ambient_k);
    let start = model.trial(state, &cond, Control::Current(0.0), 0.0, 0.0, &mut stepper.scratch).ok_or_else(|| {
        CycleError::Failed {
            step: 0,
            label: "start".into(),
            time_s: 0.0,
            detail: "the starting state has no finite voltage".into(),
        }
    })?;
    record.trace.push(model.trace_point(0.0, &start, balance, 0));
    let mut voltage_limited_s = 0.0;
    match run.duty {
        DutyCycle::Steps(profile) => {
            for (index, step) in profile.steps.iter().enumerate() {
                let summary = stepper.run_step(index, step, state, record)?;
                record.steps.push(summary);
            }
        }
        DutyCycle::Series(series) => {
            voltage_limited_s = stepper.run_series(series, state, record)?;
        }
    }
    summarise(record, stepper.time_s, voltage_limited_s);
    Ok(())
}

/// Simulates the scenario's duty cycle at the given health from the periodic state: warm-up
/// cycles run from the profile's start until the cycle returns to the state it started from.
pub fn simulate_periodic_cycle(
    scenario: &Scenario,
    health: &Health,
    settings: &SolverSettings,
) -> Result<CycleRecord, CycleError> {
    let model = CellModel::new(&scenario.cell);
    simulate_periodic_with(&model, scenario, health, settings).map(|(record, _)| record)
}

/// [`simulate_periodic_cycle`] with a prepared model; also returns the periodic end state.
pub fn simulate_periodic_with(
    model: &CellModel,
    scenario: &Scenario,
    health: &Health,
    settings: &SolverSettings,
) -> Result<(CycleRecord, CellState), CycleError> {
    let balance = balance_cell(&model.cell, health).ok_or(CycleError::Unbalanced)?;
    let mut state = model.rest_state(&balance, health, scenario.start_soc, scenario.ambient_k);
    let mut record = CycleRecord::default();
    let mut residual;
    let mut warmups = 0;
    loop {
        let start = state.clone();
        let run = CycleRun { duty: &scenario.duty, ambient_k: scenario.ambient_k, health, balance: &balance };
        simulate_cycle(model, &run, &mut state, settings, &mut record)?;
        residual = state_change(model, &start, &state);
        if residual <= settings.periodic_tolerance || warmups >= settings.max_warmup_cycles {
            break;
        }
        warmups += 1;
    }
    record.warmup_cycles = warmups;
    record.periodic_residual = residual;
    Ok((record, state))
}

/// Largest change between two states: any shell stoichiometry, or temperature in units of
/// 100 K (so 1e-4 means 0.01 K).
fn state_change(model: &CellModel, a: &CellState, b: &CellState) -> f64 {
    let (an, ap) = model.shell_stoichiometries(a);
    let (bn, bp) = model.shell_stoichiometries(b);
    let shells = an.iter().zip(&bn).chain(ap.iter().zip(&bp)).map(|(x, y)| (x - y).abs()).fold(0.0, f64::max);
    shells.max((a.temperature_k - b.temperature_k).abs() / 100.0)
}

/// Totals and extremes of a finished cycle, from its trace.
fn summarise(record: &mut CycleRecord, duration_s: f64, voltage_limited_s: f64) {
    let mut r = CycleRecord {
        trace: std::mem::take(&mut record.trace),
        steps: std::mem::take(&mut record.steps),
        duration_s,
        peak_temperature_k: f64::NEG_INFINITY,
        min_temperature_k: f64::INFINITY,
        neg_stress_max_pa: f64::NEG_INFINITY,
        neg_stress_min_pa: f64::INFINITY,
        pos_stress_max_pa: f64::NEG_INFINITY,
        pos_stress_min_pa: f64::INFINITY,
        neg_potential_min_v: f64::INFINITY,
        voltage_limited_s,
        ..CycleRecord::default()
    };
    for p in &r.trace {
        let charge = p.current_a * p.dt_s;
        let energy = charge * p.voltage_v;
        if charge > 0.0 {
            r.charge_out_coulomb += charge;
            r.energy_out_j += energy;
            r.peak_discharge_current_a = r.peak_discharge_current_a.max(p.current_a);
        } else {
            r.charge_in_coulomb -= charge;
            r.energy_in_j -= energy;
            r.peak_charge_current_a = r.peak_charge_current_a.max(-p.current_a);
        }
        r.peak_temperature_k = r.peak_temperature_k.max(p.temperature_k);
        r.min_temperature_k = r.min_temperature_k.min(p.temperature_k);
        r.neg_stress_max_pa = r.neg_stress_max_pa.max(p.neg_surface_stress_pa);
        r.neg_stress_min_pa = r.neg_stress_min_pa.min(p.neg_surface_stress_pa);
        r.pos_stress_max_pa = r.pos_stress_max_pa.max(p.pos_surface_stress_pa);
        r.pos_stress_min_pa = r.pos_stress_min_pa.min(p.pos_surface_stress_pa);
        r.neg_potential_min_v = r.neg_potential_min_v.min(p.neg_potential_v);
    }
    r.time_steps = r.trace.len().saturating_sub(1);
    r.warmup_cycles = record.warmup_cycles;
    r.periodic_residual = record.periodic_residual;
    *record = r;
}

/// Runs steps and series against one cell state.
struct Stepper<'a> {
    model: &'a CellModel,
    health: &'a Health,
    balance: &'a Balance,
    settings: &'a SolverSettings,
    ambient_k: f64,
    scratch: Scratch,
    margins: Vec<(EndReason, f64)>,
    time_s: f64,
    current_guess: f64,
}

impl Stepper<'_> {
    fn fail(&self, step: usize, label: &str, detail: impl Into<String>) -> CycleError {
        CycleError::Failed { step: step + 1, label: label.to_string(), time_s: self.time_s, detail: detail.into() }
    }

    fn control(&self, drive: Drive) -> Control {
        match drive {
            Drive::Current(i) => Control::Current(i),
            Drive::Power(p) => Control::Power(p),
            Drive::Voltage(v) => Control::Voltage(v),
            Drive::Rest => Control::Current(0.0),
        }
    }

    fn soc(&self, trial: &Trial) -> f64 {
        self.balance.soc_of_neg_stoich(trial.neg_mean)
    }

    /// True when a trial moved the state more than the settings allow (with 50 % slack).
    fn too_coarse(&self, previous: &TracePoint, trial: &Trial, check_voltage: bool) -> bool {
        let s = self.settings;
        (self.soc(trial) - previous.soc).abs() > 1.5 * s.max_soc_step
            || (trial.temperature_k - previous.temperature_k).abs() > 1.5 * s.max_temperature_step_k
            || (check_voltage && (trial.voltage - previous.voltage_v).abs() > 1.5 * s.max_voltage_step_v)
    }

    /// Next step length from how much the accepted step changed the state.
    fn next_dt(&self, previous: &TracePoint, trial: &Trial, check_voltage: bool, max_dt: f64) -> f64 {
        let s = self.settings;
        let ratio = |change: f64, limit: f64| if change > 1e-12 { limit / change } else { f64::INFINITY };
        let mut r = ratio((self.soc(trial) - previous.soc).abs(), s.max_soc_step)
            .min(ratio((trial.temperature_k - previous.temperature_k).abs(), s.max_temperature_step_k));
        if check_voltage {
            r = r.min(ratio((trial.voltage - previous.voltage_v).abs(), s.max_voltage_step_v));
        }
        (trial.dt * r.clamp(0.5, 2.0)).min(max_dt)
    }

    fn run_step(
        &mut self,
        index: usize,
        step: &Step,
        state: &mut CellState,
        record: &mut CycleRecord,
    ) -> Result<StepSummary, CycleError> {
        let active = ActiveStep { index, label: &step.label, drive: step.drive, ends: &step.ends };
        let control = self.control(step.drive);
        let max_dt = if step.drive == Drive::Rest { self.settings.max_dt_rest_s } else { self.settings.max_dt_load_s };
        let time_end = step
            .ends
            .iter()
            .filter_map(|e| if let StepEnd::Time(t) = e { Some(*t) } else { None })
            .fold(f64::INFINITY, f64::min);
        let mut elapsed = 0.0;
        let mut charge = 0.0;
        let mut dt = self.settings.first_dt_s;
        let mut first = true;
        self.current_guess = match step.drive {
            Drive::Current(i) => i,
            Drive::Power(p) => p / record.trace.last().map_or(3.0, |p| p.voltage_v.max(0.5)),
            _ => record.trace.last().map_or(0.0, |p| p.current_a),
        };
        loop {
            if elapsed > self.settings.max_step_duration_s {
                return Err(self.fail(
                    index,
                    &step.label,
                    format!(
                        "did not end within {:.0} h; check its end conditions",
                        self.settings.max_step_duration_s / 3600.0
                    ),
                ));
            }
            dt = dt.min(time_end - elapsed).max(1e-9);
            let previous = *record.trace.last().expect("trace starts with the initial point");
            let cond = self.model.conditions(self.health, state.temperature_k, self.ambient_at(None));
            let Some(trial) = self.model.trial(state, &cond, control, dt, self.current_guess, &mut self.scratch) else {
                if dt < 1e-3 {
                    return Err(self.fail(index, &step.label, describe_failure(step.drive)));
                }
                dt *= 0.25;
                continue;
            };
            if dt > self.settings.first_dt_s * 0.25 && self.too_coarse(&previous, &trial, !first) {
                dt *= 0.5;
                continue;
            }
            let soc = self.soc(&trial);
            let passed = charge + trial.current * trial.dt;
            end_margins(
                &active,
                &self.model.cell,
                &trial,
                Progress { soc, elapsed_s: elapsed + dt, charge_passed_coulomb: passed },
                self.settings.voltage_end_tolerance_v,
                &mut self.margins,
            );
            let (other_end, time_end_reached) = ends_reached(&self.margins);
            if other_end || time_end_reached {
                // An end inside the step is located; the time end is met exactly by the clamp.
                let (trial, reason) = if other_end {
                    self.locate(&active, state, &cond, control, elapsed, charge, dt)?
                } else {
                    (trial, EndReason::Time)
                };
                self.accept(state, &cond, &trial, index, record);
                charge += trial.current * trial.dt;
                elapsed += trial.dt;
                return Ok(StepSummary {
                    index,
                    label: step.label.clone(),
                    end: reason,
                    duration_s: elapsed,
                    charge_coulomb: charge,
                });
            }
            self.accept(state, &cond, &trial, index, record);
            charge = passed;
            elapsed += dt;
            dt = self.next_dt(&previous, &trial, !first, max_dt);
            first = false;
        }
    }

    fn ambient_at(&self, series_value: Option<f64>) -> f64 {
        series_value.unwrap_or(self.ambient_k)
    }

    fn accept(
        &mut self,
        state: &mut CellState,
        cond: &StepConditions,
        trial: &Trial,
        step: usize,
        record: &mut CycleRecord,
    ) {
        self.model.commit(state, cond, trial, &mut self.scratch);
        self.time_s += trial.dt;
        self.current_guess = trial.current;
        record.trace.push(self.model.trace_point(self.time_s, trial, self.balance, step));
    }

    /// Finds the step length inside (0, dt] at which the first end is met, by the Illinois
    /// variant of false position on the smallest scaled margin (target: within tolerance).
    #[allow(clippy::too_many_arguments)]
    fn locate(
        &mut self,
        step: &ActiveStep,
        state: &CellState,
        cond: &StepConditions,
        control: Control,
        elapsed: f64,
        charge: f64,
        dt: f64,
    ) -> Result<(Trial, EndReason), CycleError> {
        // Scaled margins are ≤ 0 once an end is reached; accept anything in [−1, 0].
        let evaluate = |this: &mut Self, h: f64| -> Option<(Trial, EndReason, f64)> {
            let trial = this.model.trial(state, cond, control, h, this.current_guess, &mut this.scratch)?;
            let soc = this.soc(&trial);
            end_margins(
                step,
                &this.model.cell,
                &trial,
                Progress { soc, elapsed_s: elapsed + h, charge_passed_coulomb: charge + trial.current * h },
                this.settings.voltage_end_tolerance_v,
                &mut this.margins,
            );
            let (reason, margin) = this.margins.iter().copied().min_by(|a, b| a.1.total_cmp(&b.1))?;
            Some((trial, reason, margin))
        };
        let (mut lo, mut f_lo) = (0.0, 1.0_f64);
        let (mut best, mut best_reason, f_dt) =
            evaluate(self, dt).ok_or_else(|| self.fail(step.index, step.label, "solver failed near a step end"))?;
        let (mut hi, mut f_hi) = (dt, f_dt + 0.5);
        if f_dt >= -1.0 {
            return Ok((best, best_reason));
        }
        // f(h) = margin + ½: positive before the end, negative past it.
        f_lo += 0.5;
        let mut side = 0;
        for _ in 0..60 {
            let h = if f_lo.is_finite() && f_hi.is_finite() && f_lo > f_hi {
                (lo * f_hi - hi * f_lo) / (f_hi - f_lo)
            } else {
                0.5 * (lo + hi)
            };
            let h = if h <= lo || h >= hi { 0.5 * (lo + hi) } else { h };
            let Some((trial, reason, margin)) = evaluate(self, h) else {
                hi = h;
                continue;
            };
            let f = margin + 0.5;
            if margin <= 0.0 {
                best = trial;
                best_reason = reason;
                if margin >= -1.0 {
                    return Ok((best, best_reason));
                }
                hi = h;
                f_hi = f;
                if side == -1 {
                    f_lo *= 0.5;
                }
                side = -1;
            } else {
                lo = h;
                f_lo = f;
                if side == 1 {
                    f_hi *= 0.5;
                }
                side = 1;
            }
            if hi - lo < 1e-6 {
                break;
            }
        }
        Ok((best, best_reason))
    }

    /// Runs a measured series; returns the time the current was held back at a voltage limit.
    fn run_series(
        &mut self,
        series: &super::TimeSeries,
        state: &mut CellState,
        record: &mut CycleRecord,
    ) -> Result<f64, CycleError> {
        let cell = &self.model.cell;
        let mut limited = 0.0;
        for k in 0..series.time_s.len() - 1 {
            let duration = series.time_s[k + 1] - series.time_s[k];
            let value = series.value[k];
            let ambient = series.ambient_k.as_ref().map(|a| a[k]);
            let control = match series.signal {
                SeriesSignal::CurrentA => Control::Current(value),
                SeriesSignal::PowerW => Control::Power(value),
            };
            if let Control::Power(p) = control {
                self.current_guess = p / record.trace.last().map_or(3.0, |t| t.voltage_v.max(0.5));
            }
            let mut elapsed = 0.0;
            let mut dt = duration.min(self.settings.max_dt_load_s);
            let mut first = true;
            while elapsed < duration - 1e-9 {
                dt = dt.min(duration - elapsed);
                let previous = *record.trace.last().expect("trace starts with the initial point");
                let cond = self.model.conditions(self.health, state.temperature_k, self.ambient_at(ambient));
                let trial = self.model.trial(state, &cond, control, dt, self.current_guess, &mut self.scratch);
                // A battery management system would derate a current that drives the voltage
                // out of the window: hold the limit with a current of the same sign, smaller.
                let trial = match trial {
                    Some(t)
                        if (t.voltage > cell.voltage_max_v && t.current < 0.0)
                            || (t.voltage < cell.voltage_min_v && t.current > 0.0) =>
                    {
                        let limit = if t.current < 0.0 { cell.voltage_max_v } else { cell.voltage_min_v };
                        limited += dt;
                        let held = self.model.trial(
                            state,
                            &cond,
                            Control::Voltage(limit),
                            dt,
                            0.5 * t.current,
                            &mut self.scratch,
                        );
                        match held {
                            Some(h) if h.current * t.current >= 0.0 && h.current.abs() <= t.current.abs() => Some(h),
                            _ => self.model.trial(state, &cond, Control::Current(0.0), dt, 0.0, &mut self.scratch),
                        }
                    }
                    other => other,
                };
                let Some(trial) = trial else {
                    if dt < 1e-3 {
                        return Err(self.fail(
                            0,
                            &series.name,
                            format!("sample {} at t = {:.0} s cannot be run", k + 2, series.time_s[k]),
                        ));
                    }
                    dt *= 0.25;
                    continue;
                };
                if dt > self.settings.first_dt_s * 0.25 && self.too_coarse(&previous, &trial, !first) {
                    dt *= 0.5;
                    continue;
                }
                self.accept(state, &cond, &trial, 0, record);
                elapsed += trial.dt;
                dt = self.next_dt(&previous, &trial, !first, self.settings.max_dt_load_s);
                first = false;
            }
        }
        let duration = series.time_s[series.time_s.len() - 1] - series.time_s[0];
        let charge = record.trace.iter().map(|p| p.current_a * p.dt_s).sum();
        record.steps.push(StepSummary {
            index: 0,
            label: series.name.clone(),
            end: EndReason::SeriesEnd,
            duration_s: duration,
            charge_coulomb: charge,
        });
        Ok(limited)
    }
}

fn describe_failure(drive: Drive) -> String {
    match drive {
        Drive::Power(p) => format!("the cell cannot deliver {:.1} W here", p.abs()),
        Drive::Voltage(v) => format!("no current holds {v:.3} V"),
        _ => "the cell model has no finite state here".to_string(),
    }
}
