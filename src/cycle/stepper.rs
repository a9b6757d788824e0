//! Protocol stepping: runs a duty cycle through the cell's response ([`super::response`]),
//! choosing step lengths, detecting and locating step ends, holding a measured series inside
//! the voltage window, and repeating the cycle until it returns to its own start.
//!
//! Step length follows the change of state of charge, terminal voltage and temperature over
//! the last accepted step (limits in [`SolverSettings`]); a trial that changes more than
//! [`COARSE_STEP_SLACK`] times a limit is retried at half the length. Each end condition of a
//! step is measured by a scaled margin: positive before the end, ≤ 0 once it is reached, −1 at
//! one tolerance past it. When a trial passes an end, the step length at which the first end is
//! met is located by the Illinois variant of false position (regula falsi that halves the
//! retained endpoint's value when the same endpoint is kept twice, so neither end of the
//! bracket stalls) on the smallest margin plus ½, i.e. aiming at the middle of the accepted
//! band [−1, 0]; an iterate outside the bracket or a trial that fails falls back to bisection.
//! A voltage end is thereby met to within `voltage_end_tolerance_v` past it
//! ([`END_TOLERANCE_V`] by default).

use super::balance::{balance_cell, Balance};
use super::protocol::{Drive, DutyCycle, SeriesSignal, Step, StepEnd};
use super::record::{sharpen_turning_points, CycleRecord, EndReason, RampStart, StepSummary, TracePoint};
use super::response::{CellModel, CellState, Control, Health, Scratch, StepConditions, Trial};
use super::{Cell, Scenario};
use crate::material::constants::SECONDS_PER_HOUR;
use thiserror::Error;

/// Default largest change of state of charge in one time step (fraction of full: 4 %).
/// Diffusion is integrated exactly over a step, so the state-of-charge, voltage and temperature
/// limits serve only what the aging laws sum over the trace and the temperature-dependent
/// properties. With the temperature predicted over the step, the diffusivity's drift within it,
/// stress extremes taken between the points, and the held current and plating potential limited
/// separately, 4 % / 40 mV / 1 K keep every cycling demo's 3000-cycle forecast within 0.08 pp of
/// state of health of a run with 1/4 % / 2.5 mV / 0.125 K steps (winter fast charge 0.077 pp,
/// the others ≤ 0.04 pp) at 119 steps per lab cycle. 3 % / 30 mV took 141 steps for 0.056 pp;
/// 5 % / 50 mV, 106 steps for 0.082 pp; with 2 K as well, the winter demo went to 0.2 pp.
/// Before the temperature was followed within a step, 3 % / 30 mV left the winter demo
/// 0.34 pp off (tests/step_accuracy.rs).
pub const MAX_SOC_CHANGE_PER_STEP: f64 = 0.04;
/// Default largest change of terminal voltage in one time step under an unchanged drive, V.
pub const MAX_VOLTAGE_CHANGE_V: f64 = 0.04;
/// Default largest change of temperature in one time step, K.
pub const MAX_TEMPERATURE_CHANGE_K: f64 = 1.0;
/// Default largest relative change of the current in one time step while a voltage is held.
/// The current moves linearly within a step ([`within_step`]), so a taper is followed to second
/// order: at 20 % the lab demo's hold is within 0.4 % of its length with four times finer steps
/// and every cycling demo's forecast within 0.005 pp of the 5 % used before, at 23 % fewer steps
/// per lab cycle (184 → 141). Held at its end value over the step, as before, the current
/// needed 5 % to keep the hold within 2 % (12 % long with no limit).
pub const MAX_HELD_CURRENT_CHANGE: f64 = 0.2;
/// Default largest change of the negative's potential in one time step while it is within
/// [`PLATING_WATCH_V`] of lithium (cells that plate only), V. Plating and stripping grow
/// exponentially with this potential (about 5 % per mV at 0 °C) while a step carries them as a
/// linear ramp between its ends, so where they run the step follows the potential itself.
pub const MAX_PLATING_POTENTIAL_CHANGE_V: f64 = 1e-3;
/// Potential of the negative against lithium below which [`MAX_PLATING_POTENTIAL_CHANGE_V`]
/// applies, V.
pub const PLATING_WATCH_V: f64 = 0.03;
/// Default first time step after a change of drive, s.
pub const FIRST_STEP_S: f64 = 2.0;
/// Default longest time step under load, s.
pub const MAX_STEP_UNDER_LOAD_S: f64 = 300.0;
/// Default longest time step at rest, s.
pub const MAX_STEP_AT_REST_S: f64 = 900.0;
/// Default tolerance on a located voltage end (how far past it the step may end), V.
pub const END_TOLERANCE_V: f64 = 2e-4;
/// Default duration after which a step is taken never to end: a week, s.
pub const MAX_STEP_DURATION_S: f64 = 7.0 * 86_400.0;
/// Simulated time one cycle may span: a year. Longer is no duty cycle (usage repeats it at
/// least once a year) and only multiplies work.
pub const MAX_CYCLE_DURATION_S: f64 = 366.0 * 86_400.0;
/// Default number of warm-up cycles allowed to reach the periodic state.
pub const MAX_WARMUP_CYCLES: usize = 8;
/// Time steps one cycle may take. A usual cycle takes a few hundred and a day of a measured
/// series a few tens of thousands; inputs that make every step tiny (an absurd temperature or
/// current) stop here with an error instead of growing the trace until memory runs out
/// (each step keeps about 400 bytes, so the cap bounds a trace near 200 MB).
pub const MAX_TIME_STEPS_PER_CYCLE: usize = 500_000;
/// Default largest change over a cycle that counts as periodic (see [`state_change`]).
pub const PERIODIC_TOLERANCE: f64 = 1e-4;

/// A trial may change state of charge, voltage or temperature by this many times its limit
/// before it is retried at [`COARSE_TRIAL_SHRINK`] of its length.
pub(super) const COARSE_STEP_SLACK: f64 = 1.5;
pub(super) const COARSE_TRIAL_SHRINK: f64 = 0.5;
/// Steps shorter than this fraction of the first step are accepted however much they change.
pub(super) const SHORTEST_REFINED_STEP_FRACTION: f64 = 0.25;
/// The next step is between these multiples of the last accepted one.
pub(super) const MIN_STEP_RATIO: f64 = 0.5;
pub(super) const MAX_STEP_RATIO: f64 = 2.0;
/// A change below this (in the unit of its quantity) does not limit the next step.
pub(super) const NEGLIGIBLE_CHANGE: f64 = 1e-12;
/// Shortest time step, s.
pub(super) const MIN_STEP_S: f64 = 1e-9;
/// A trial the cell model cannot evaluate is retried at this fraction of its length, down to
/// [`SHORTEST_RETRY_STEP_S`]; a shorter failing step fails the cycle.
pub(super) const FAILED_TRIAL_SHRINK: f64 = 0.25;
pub(super) const SHORTEST_RETRY_STEP_S: f64 = 1e-3;
/// First guess of the current of a constant-power step, from the last terminal voltage (at
/// least the minimum) or, at the start of a cycle, the fallback voltage, V.
pub(super) const POWER_GUESS_FALLBACK_V: f64 = 3.0;
pub(super) const POWER_GUESS_MIN_V: f64 = 0.5;
/// First guess of a derated current, as a fraction of the current asked for.
pub(super) const DERATED_CURRENT_GUESS_FRACTION: f64 = 0.5;

/// Tolerances of the end conditions other than voltage: each end's margin is its distance
/// to the end divided by these. Current and charge ends are relative to their threshold.
pub(super) const CURRENT_END_TOLERANCE_RELATIVE: f64 = 1e-4;
pub(super) const TIME_END_TOLERANCE_S: f64 = 1e-9;
pub(super) const SOC_END_TOLERANCE: f64 = 1e-6;
pub(super) const CHARGE_END_TOLERANCE_RELATIVE: f64 = 1e-6;
/// Tolerance of the electrode-limit end on the surface stoichiometry.
pub(super) const SURFACE_END_TOLERANCE: f64 = 1e-6;
/// Stoichiometry margin kept from empty and full at the particle surface.
pub(super) const SURFACE_GUARD: f64 = 1e-4;

/// Locating an end: a step end is accepted with its smallest margin in [−1, 0] (up to one
/// tolerance past the end); the root finder aims at the middle of that band, and takes the
/// margin at the start of the step as one tolerance before the end.
pub(super) const LOCATE_LOWEST_MARGIN: f64 = -1.0;
pub(super) const LOCATE_AIM_OFFSET: f64 = 0.5;
pub(super) const LOCATE_START_MARGIN: f64 = 1.0;
pub(super) const LOCATE_MAX_ITERATIONS: usize = 60;
/// The search stops when the bracket of step lengths is narrower than this, s.
pub(super) const LOCATE_BRACKET_S: f64 = 1e-6;
/// Temperature scale of the periodic check: a change of this many kelvin counts as much as a
/// change of 1 in shell stoichiometry, K.
pub(super) const PERIODIC_TEMPERATURE_SCALE_K: f64 = 100.0;

/// Step-size and tolerance settings; the defaults suit cycle-life work.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolverSettings {
    /// Largest change of state of charge in one time step.
    pub max_soc_step: f64,
    /// Largest change of terminal voltage in one time step under an unchanged drive, V.
    pub max_voltage_step_v: f64,
    /// Largest temperature change in one time step, K.
    pub max_temperature_step_k: f64,
    /// Largest relative change of the current in one time step while a voltage is held.
    pub max_held_current_step: f64,
    /// Largest change of the negative's potential in one time step near lithium's, V.
    pub max_plating_potential_step_v: f64,
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
    /// Time steps one cycle may take before it is abandoned with an error.
    pub max_time_steps: usize,
    /// Simulated time one cycle may span before it is abandoned with an error, s.
    pub max_cycle_duration_s: f64,
}

impl Default for SolverSettings {
    fn default() -> Self {
        SolverSettings {
            max_soc_step: MAX_SOC_CHANGE_PER_STEP,
            max_voltage_step_v: MAX_VOLTAGE_CHANGE_V,
            max_temperature_step_k: MAX_TEMPERATURE_CHANGE_K,
            max_held_current_step: MAX_HELD_CURRENT_CHANGE,
            max_plating_potential_step_v: MAX_PLATING_POTENTIAL_CHANGE_V,
            first_dt_s: FIRST_STEP_S,
            max_dt_load_s: MAX_STEP_UNDER_LOAD_S,
            max_dt_rest_s: MAX_STEP_AT_REST_S,
            voltage_end_tolerance_v: END_TOLERANCE_V,
            max_step_duration_s: MAX_STEP_DURATION_S,
            max_warmup_cycles: MAX_WARMUP_CYCLES,
            max_time_steps: MAX_TIME_STEPS_PER_CYCLE,
            max_cycle_duration_s: MAX_CYCLE_DURATION_S,
            periodic_tolerance: PERIODIC_TOLERANCE,
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
            StepEnd::CurrentBelow(i) => (trial.current.abs() - i) / (CURRENT_END_TOLERANCE_RELATIVE * i),
            StepEnd::Time(t) => (t - progress.elapsed_s) / TIME_END_TOLERANCE_S - 1.0,
            StepEnd::Soc(s) => {
                if direction == 0.0 {
                    continue;
                }
                direction * (progress.soc - s) / SOC_END_TOLERANCE
            }
            StepEnd::Charge(q) => (q - progress.charge_passed_coulomb.abs()) / (CHARGE_END_TOLERANCE_RELATIVE * q),
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
    out.push((EndReason::ElectrodeLimit, surface_room / SURFACE_END_TOLERANCE));
}

pub(super) fn reason_of(end: &StepEnd) -> EndReason {
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
    model.start_stress_histories(record);
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
    model.record_profiles(state, &cond, &start, record);
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
    record.dead_coulomb = state.dead_coulomb;
    record.reintercalated_coulomb = model.end_cycle(state, balance);
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
/// [`PERIODIC_TEMPERATURE_SCALE_K`] (100 K, so 1e-4 means 0.01 K).
pub(super) fn state_change(model: &CellModel, a: &CellState, b: &CellState) -> f64 {
    let (an, ap) = model.shell_stoichiometries(a);
    let (bn, bp) = model.shell_stoichiometries(b);
    let shells = an.iter().zip(&bn).chain(ap.iter().zip(&bp)).map(|(x, y)| (x - y).abs()).fold(0.0, f64::max);
    shells.max((a.temperature_k - b.temperature_k).abs() / PERIODIC_TEMPERATURE_SCALE_K)
}

/// Totals and extremes of a finished cycle, from its trace.
pub(super) fn summarise(record: &mut CycleRecord, duration_s: f64, voltage_limited_s: f64) {
    let mut r = CycleRecord {
        trace: std::mem::take(&mut record.trace),
        neg_stress: std::mem::take(&mut record.neg_stress),
        pos_stress: std::mem::take(&mut record.pos_stress),
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
        let charge = p.charge_coulomb();
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
        let (plated, stripped) = p.plating_exchange_coulomb();
        r.plated_coulomb += plated;
        r.stripped_coulomb += stripped;
    }
    // Stress extremes between the points, where the drive runs smoothly through a turning point.
    let mut stress = Vec::with_capacity(r.trace.len());
    for (history, of, extremes) in [
        (
            &r.neg_stress,
            (|p| p.neg_surface_stress_pa) as fn(&TracePoint) -> f64,
            (&mut r.neg_stress_max_pa, &mut r.neg_stress_min_pa),
        ),
        (&r.pos_stress, |p| p.pos_surface_stress_pa, (&mut r.pos_stress_max_pa, &mut r.pos_stress_min_pa)),
    ] {
        stress.clear();
        stress.extend(r.trace.iter().map(of));
        sharpen_turning_points(&mut stress, history.surface_rates_pa_s(), &r.trace);
        for &x in &stress {
            *extremes.0 = extremes.0.max(x);
            *extremes.1 = extremes.1.min(x);
        }
    }
    r.time_steps = r.trace.len().saturating_sub(1);
    r.warmup_cycles = record.warmup_cycles;
    r.periodic_residual = record.periodic_residual;
    *record = r;
}

/// Which changes besides state of charge and temperature limit a step: the terminal voltage
/// under an unchanged drive (not on a step's first trial, which carries the jump to the new
/// drive), the current while a voltage is held (likewise).
#[derive(Debug, Clone, Copy)]
pub(super) struct StepChecks {
    pub(super) voltage: bool,
    pub(super) held_current: bool,
    /// The negative's potential near lithium's (a cell that plates, not on a first trial).
    pub(super) plating: bool,
}

impl StepChecks {
    pub(super) fn of(drive: Option<Drive>, first: bool, plates: bool) -> StepChecks {
        StepChecks {
            voltage: !first,
            held_current: !first && matches!(drive, Some(Drive::Voltage(_))),
            plating: !first && plates,
        }
    }
}

/// Change of the negative's potential over a trial where plating may run (either end within
/// [`PLATING_WATCH_V`] of lithium), V; nil elsewhere.
pub(super) fn plating_potential_change(potential_v: f64, previous_v: f64) -> f64 {
    if potential_v.min(previous_v) < PLATING_WATCH_V {
        (potential_v - previous_v).abs()
    } else {
        0.0
    }
}

/// Relative change of a current from `previous`; nil from zero (nothing to scale it by).
pub(super) fn relative_current_change(current: f64, previous: f64) -> f64 {
    if previous == 0.0 {
        0.0
    } else {
        ((current - previous) / previous).abs()
    }
}

/// The largest changes over a trial that limit the step (of any cell, for a pack): state of
/// charge, terminal voltage (V), temperature (K), relative current and the negative's potential
/// near lithium (V). One judgement and one next step for the lone cell and the pack.
#[derive(Debug, Clone, Copy, Default)]
pub(super) struct StepChanges {
    soc: f64,
    voltage: f64,
    temperature: f64,
    current: f64,
    plating_potential: f64,
}

impl StepChanges {
    /// From the last accepted point to a trial that ends at state of charge `soc`.
    pub(super) fn between(previous: &TracePoint, trial: &Trial, soc: f64) -> StepChanges {
        StepChanges {
            soc: (soc - previous.soc).abs(),
            voltage: (trial.voltage - previous.voltage_v).abs(),
            temperature: (trial.temperature_k - previous.temperature_k).abs(),
            current: relative_current_change(trial.current, previous.current_a),
            plating_potential: plating_potential_change(trial.neg_potential, previous.neg_potential_v),
        }
    }

    /// The larger of each change.
    pub(super) fn max(self, other: StepChanges) -> StepChanges {
        StepChanges {
            soc: self.soc.max(other.soc),
            voltage: self.voltage.max(other.voltage),
            temperature: self.temperature.max(other.temperature),
            current: self.current.max(other.current),
            plating_potential: self.plating_potential.max(other.plating_potential),
        }
    }

    /// True when a change the checks cover exceeds its limit by more than [`COARSE_STEP_SLACK`].
    pub(super) fn too_coarse(&self, checks: StepChecks, s: &SolverSettings) -> bool {
        self.soc > COARSE_STEP_SLACK * s.max_soc_step
            || self.temperature > COARSE_STEP_SLACK * s.max_temperature_step_k
            || (checks.voltage && self.voltage > COARSE_STEP_SLACK * s.max_voltage_step_v)
            || (checks.held_current && self.current > COARSE_STEP_SLACK * s.max_held_current_step)
            || (checks.plating && self.plating_potential > COARSE_STEP_SLACK * s.max_plating_potential_step_v)
    }

    /// The next step's length as a multiple of this one's: each covered change brought to its
    /// limit, within [`MIN_STEP_RATIO`]–[`MAX_STEP_RATIO`].
    pub(super) fn step_ratio(&self, checks: StepChecks, s: &SolverSettings) -> f64 {
        let ratio = |change: f64, limit: f64| if change > NEGLIGIBLE_CHANGE { limit / change } else { f64::INFINITY };
        let mut r = ratio(self.soc, s.max_soc_step).min(ratio(self.temperature, s.max_temperature_step_k));
        if checks.voltage {
            r = r.min(ratio(self.voltage, s.max_voltage_step_v));
        }
        if checks.held_current {
            r = r.min(ratio(self.current, s.max_held_current_step));
        }
        if checks.plating {
            r = r.min(ratio(self.plating_potential, s.max_plating_potential_step_v));
        }
        r.clamp(MIN_STEP_RATIO, MAX_STEP_RATIO)
    }
}

/// First guess of a controlled current after `dt` (a held voltage's or power's; a current
/// drive ignores it): a held current decays nearly geometrically, so the last two accepted
/// points of the step (the same sign) extrapolate it far closer than the last value alone,
/// which saves the solver an iteration; `otherwise` when the step has no two such points.
fn held_current_guess(record: &CycleRecord, step: usize, dt: f64, otherwise: f64) -> f64 {
    let [.., before, last] = record.trace.as_slice() else { return otherwise };
    let ratio = last.current_a / before.current_a;
    if last.step != step || before.step != step || last.dt_s <= 0.0 || !(ratio > 0.0 && ratio.is_finite()) {
        return otherwise;
    }
    last.current_a * ratio.powf(dt / last.dt_s)
}

/// How the current and heat move within a trial step after the first of a protocol step (which
/// may jump to a new drive): from the last accepted point to the trial's end, linearly. Held
/// constant at their end values instead, a held voltage's falling current runs long by about
/// half its fall per step and the temperature lags the heat: errors first order in the step
/// (lab hold 1.9 % long at the default steps, end-of-discharge temperature 0.12 K high in the
/// winter demo); as ramps they are second order. The current ramps only where it changes
/// within a step ([`current_varies`]); a constant current stays constant.
pub(super) fn within_step(
    cond: StepConditions,
    first: bool,
    current_varies: bool,
    previous: &TracePoint,
) -> StepConditions {
    if first {
        return cond;
    }
    let cond = cond.heat_from(previous.heat_w);
    if current_varies {
        cond.ramp_from(RampStart { current_a: previous.current_a, plating_current_a: previous.plating_current_a })
    } else {
        cond
    }
}

/// Whether a cell's current changes within a step: under a held voltage or power, and in a
/// cell that plates (its current splits between the particle and lithium metal).
pub(super) fn current_varies(drive: Drive, plates: bool) -> bool {
    matches!(drive, Drive::Voltage(_) | Drive::Power(_)) || plates
}

/// What becomes of a trial step.
enum Judged {
    Accept(Trial),
    /// Try again with this step length, s.
    Retry(f64),
    GiveUp,
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

    /// How much a trial moved the state since the last accepted point.
    fn changes(&self, previous: &TracePoint, trial: &Trial) -> StepChanges {
        StepChanges::between(previous, trial, self.soc(trial))
    }

    /// Whether a trial of length `dt` (None: the cell model could not evaluate it) is accepted,
    /// retried shorter, or cannot be shortened further.
    fn judge(&self, dt: f64, trial: Option<Trial>, previous: &TracePoint, checks: StepChecks) -> Judged {
        match trial {
            None if dt < SHORTEST_RETRY_STEP_S => Judged::GiveUp,
            None => Judged::Retry(dt * FAILED_TRIAL_SHRINK),
            Some(trial)
                if dt > self.settings.first_dt_s * SHORTEST_REFINED_STEP_FRACTION
                    && self.changes(previous, &trial).too_coarse(checks, self.settings) =>
            {
                Judged::Retry(dt * COARSE_TRIAL_SHRINK)
            }
            Some(trial) => Judged::Accept(trial),
        }
    }

    /// Next step length from how much the accepted step changed the state.
    fn next_dt(&self, previous: &TracePoint, trial: &Trial, checks: StepChecks, max_dt: f64) -> f64 {
        (trial.dt * self.changes(previous, trial).step_ratio(checks, self.settings)).min(max_dt)
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
        let plates = self.model.cell.plating.is_some();
        self.current_guess = match step.drive {
            Drive::Current(i) => i,
            Drive::Power(p) => {
                p / record.trace.last().map_or(POWER_GUESS_FALLBACK_V, |p| p.voltage_v.max(POWER_GUESS_MIN_V))
            }
            _ => record.trace.last().map_or(0.0, |p| p.current_a),
        };
        loop {
            if elapsed > self.settings.max_step_duration_s {
                return Err(self.fail(
                    index,
                    &step.label,
                    format!(
                        "did not end within {:.0} h; check its end conditions",
                        self.settings.max_step_duration_s / SECONDS_PER_HOUR
                    ),
                ));
            }
            dt = dt.min(time_end - elapsed).max(MIN_STEP_S);
            let previous = *record.trace.last().expect("trace starts with the initial point");
            let (model, health, ambient_k) = (self.model, self.health, self.ambient_at(None));
            let varies = current_varies(step.drive, plates);
            // The conditions depend on the step's length (the temperature predicted over it).
            let conditions = |state: &CellState, dt: f64| {
                within_step(model.step_conditions(health, state, dt, ambient_k), first, varies, &previous)
            };
            let cond = conditions(state, dt);
            let guess =
                if first { self.current_guess } else { held_current_guess(record, index, dt, self.current_guess) };
            let trial = self.model.trial(state, &cond, control, dt, guess, &mut self.scratch);
            let checks = StepChecks::of(Some(step.drive), first, plates);
            let trial = match self.judge(dt, trial, &previous, checks) {
                Judged::Accept(trial) => trial,
                Judged::Retry(shorter) => {
                    dt = shorter;
                    continue;
                }
                Judged::GiveUp => return Err(self.fail(index, &step.label, describe_failure(step.drive))),
            };
            let soc = self.soc(&trial);
            let passed = charge + trial.charge_coulomb();
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
                    self.locate(&active, state, &conditions, control, elapsed, charge, dt)?
                } else {
                    (trial, EndReason::Time)
                };
                let cond = if trial.dt == dt { cond } else { conditions(state, trial.dt) };
                self.accept(state, &cond, &trial, (index, &step.label), record)?;
                charge += trial.charge_coulomb();
                elapsed += trial.dt;
                return Ok(StepSummary {
                    index,
                    label: step.label.clone(),
                    end: reason,
                    duration_s: elapsed,
                    charge_coulomb: charge,
                });
            }
            self.accept(state, &cond, &trial, (index, &step.label), record)?;
            charge = passed;
            elapsed += dt;
            dt = self.next_dt(&previous, &trial, checks, max_dt);
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
        (step, label): (usize, &str),
        record: &mut CycleRecord,
    ) -> Result<(), CycleError> {
        if record.trace.len() > self.settings.max_time_steps {
            let detail = format!(
                "the cycle needs more than {} time steps (the cap on one cycle); the inputs make every step tiny — check temperatures, currents and powers for a slip of units",
                self.settings.max_time_steps
            );
            return Err(self.fail(step, label, detail));
        }
        if self.time_s + trial.dt > self.settings.max_cycle_duration_s {
            let detail = format!(
                "the cycle runs past {} days of simulated time (the cap on one cycle); shorten its steps or repeats",
                self.settings.max_cycle_duration_s / 86_400.0
            );
            return Err(self.fail(step, label, detail));
        }
        self.model.commit(state, cond, trial, &mut self.scratch);
        self.time_s += trial.dt;
        self.current_guess = trial.current;
        let mut point = self.model.trace_point(self.time_s, trial, self.balance, step);
        point.plated_coulomb = state.plated_coulomb + state.dead_coulomb;
        record.trace.push(point);
        self.model.record_profiles(state, cond, trial, record);
        Ok(())
    }

    /// Finds the step length inside (0, dt] at which the first end is met: Illinois false
    /// position on f(h) = smallest scaled margin + ½ (see the module docs), bisecting when an
    /// iterate leaves the bracket or a trial fails; stops once the margin is within [−1, 0] or
    /// the bracket is narrower than [`LOCATE_BRACKET_S`].
    #[allow(clippy::too_many_arguments)]
    fn locate(
        &mut self,
        step: &ActiveStep,
        state: &CellState,
        conditions: &dyn Fn(&CellState, f64) -> StepConditions,
        control: Control,
        elapsed: f64,
        charge: f64,
        dt: f64,
    ) -> Result<(Trial, EndReason), CycleError> {
        // Scaled margins are ≤ 0 once an end is reached; accept anything in [−1, 0].
        let evaluate = |this: &mut Self, h: f64| -> Option<(Trial, EndReason, f64)> {
            let cond = conditions(state, h);
            let trial = this.model.trial(state, &cond, control, h, this.current_guess, &mut this.scratch)?;
            let soc = this.soc(&trial);
            end_margins(
                step,
                &this.model.cell,
                &trial,
                Progress { soc, elapsed_s: elapsed + h, charge_passed_coulomb: charge + trial.charge_coulomb() },
                this.settings.voltage_end_tolerance_v,
                &mut this.margins,
            );
            let (reason, margin) = this.margins.iter().copied().min_by(|a, b| a.1.total_cmp(&b.1))?;
            Some((trial, reason, margin))
        };
        let (mut lo, mut f_lo) = (0.0, LOCATE_START_MARGIN);
        let (mut best, mut best_reason, f_dt) =
            evaluate(self, dt).ok_or_else(|| self.fail(step.index, step.label, "solver failed near a step end"))?;
        let (mut hi, mut f_hi) = (dt, f_dt + LOCATE_AIM_OFFSET);
        if f_dt >= LOCATE_LOWEST_MARGIN {
            return Ok((best, best_reason));
        }
        // f(h) = margin + ½: positive before the end, negative past it.
        f_lo += LOCATE_AIM_OFFSET;
        let mut side = 0;
        for _ in 0..LOCATE_MAX_ITERATIONS {
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
            let f = margin + LOCATE_AIM_OFFSET;
            if margin <= 0.0 {
                best = trial;
                best_reason = reason;
                if margin >= LOCATE_LOWEST_MARGIN {
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
            if hi - lo < LOCATE_BRACKET_S {
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
                self.current_guess =
                    p / record.trace.last().map_or(POWER_GUESS_FALLBACK_V, |t| t.voltage_v.max(POWER_GUESS_MIN_V));
            }
            let mut elapsed = 0.0;
            let mut dt = duration.min(self.settings.max_dt_load_s);
            let mut first = true;
            while elapsed < duration - TIME_END_TOLERANCE_S {
                dt = dt.min(duration - elapsed);
                let previous = *record.trace.last().expect("trace starts with the initial point");
                let cond = self.model.step_conditions(self.health, state, dt, self.ambient_at(ambient));
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
                            DERATED_CURRENT_GUESS_FRACTION * t.current,
                            &mut self.scratch,
                        );
                        match held {
                            Some(h) if h.current * t.current >= 0.0 && h.current.abs() <= t.current.abs() => Some(h),
                            _ => self.model.trial(state, &cond, Control::Current(0.0), dt, 0.0, &mut self.scratch),
                        }
                    }
                    other => other,
                };
                let checks = StepChecks::of(None, first, self.model.cell.plating.is_some());
                let trial = match self.judge(dt, trial, &previous, checks) {
                    Judged::Accept(trial) => trial,
                    Judged::Retry(shorter) => {
                        dt = shorter;
                        continue;
                    }
                    Judged::GiveUp => {
                        let detail = format!("sample {} at t = {:.0} s cannot be run", k + 2, series.time_s[k]);
                        return Err(self.fail(0, &series.name, detail));
                    }
                };
                self.accept(state, &cond, &trial, (0, &series.name), record)?;
                elapsed += trial.dt;
                dt = self.next_dt(&previous, &trial, checks, self.settings.max_dt_load_s);
                first = false;
            }
        }
        let duration = series.time_s[series.time_s.len() - 1] - series.time_s[0];
        let charge = record.trace.iter().map(TracePoint::charge_coulomb).sum();
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
