//! Cycle jumping: the slow state is integrated over the cycle count by an adaptive
//! Bogacki–Shampine integrator ([`super::integrator`]); every evaluation of the rates simulates one
//! duty cycle at the health the integrator asks about, warm-started from the last simulated
//! cycle so it starts from (nearly) the periodic state. The warm state is carried to the new
//! health at its state of charge, both particles moved to the new balance ([`CellModel::carry_over`]),
//! and with its temperature excess over the ambient kept: a cycle's rates then depend on the
//! health and the day, not on where the integrator evaluated last. Taking lithium only from the
//! negative and keeping the absolute temperature left the measured-day demo's rates 5·10⁻⁴ and
//! the ferry's (monthly ambient) 7 % off their periodic values after a jump, which the error
//! estimate took for curvature. Where the fade curve bends the error
//! estimate grows and the integrator shortens its steps by itself. The reference mode
//! simulates every cycle and advances the state by each cycle's rates.
//!
//! References: P. Bogacki, L. F. Shampine, Appl. Math. Lett. 2 (1989) 321; E. Hairer,
//! S. P. Nørsett, G. Wanner, *Solving Ordinary Differential Equations I*, Springer (1993).

use super::integrator::{integrate, DenseSolution, IntegratorSettings, SlowSystem};
use super::plan::{Ambient, Horizon, Plan};
use super::result::*;
use super::ForecastOptions;
use crate::aging::state::{crack_film_mean_thickness_m, lithium_only};
use crate::aging::CalibrationRange;
use crate::aging::{
    health_of, mechanisms_for, AgingContext, AgingParams, AgingState, Component, Mechanism, COMPONENTS,
    COMPONENT_COUNT, STATE_LEN,
};
use crate::cycle::cell::LIMIT_SLACK;
use crate::cycle::Cell;
use crate::cycle::{
    balance_cell, simulate_cycle, simulate_periodic_with, Balance, CellModel, CellState, CycleRecord, CycleRun, Health,
    Scenario, SolverSettings,
};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use nalgebra::DVector;
use std::cell::RefCell;

pub(super) const SECONDS_PER_DAY: f64 = 86_400.0;
/// How far past its share of the day the fresh cell's cycle may run before the usage is
/// refused: a rounding margin, not a licence.
pub(super) const USAGE_DAY_TOLERANCE: f64 = 1e-3;
pub(super) const DAYS_PER_YEAR: f64 = 365.25;
/// Length and C-rate of the resistance pulse.
pub(super) const PULSE_S: f64 = 10.0;
pub(super) const PULSE_C_RATE: f64 = 1.0;
/// Integrator settings of cycle jumping (see `integrate_jumping`).
pub(super) const ABSOLUTE_TOLERANCE: f64 = 1e-7;
pub(super) const FIRST_STEP: f64 = 1.0;
/// Largest growth of the integrator's step from one step to the next. The usual 10 lets a step
/// after a smooth stretch overshoot into a bend and be thrown away; with 3 the airport tug's
/// 5000 cycles simulated 266 cycles instead of 314 (Dormand–Prince), and the smooth demos no
/// more.
pub(super) const STEP_GROWTH_MAX: f64 = 3.0;
/// The step controller's safety factor, β of its PI control, and the most a rejected step
/// shrinks (1/5): the usual values (Hairer, Nørsett & Wanner, §II.4).
const STEP_SAFETY: f64 = 0.9;
const STEP_PI_BETA: f64 = 0.04;
const STEP_SHRINK_MIN: f64 = 0.2;
/// Steps allowed per integration: far more than any horizon takes (tens), a bound on time.
const STEP_LIMIT: usize = 100_000;
/// Cycling horizons up to this many cycles are simulated cycle by cycle: jumping simulates at
/// least 14 cycles on every demo whatever the horizon (its first evaluation and four steps of
/// three; 14 for 25 or 40 cycles), so there every cycle is no dearer and is the reference
/// itself.
pub(super) const EVERY_CYCLE_UP_TO_CYCLES: f64 = 13.0;

/// What one simulated cycle showed, kept for reporting between the integrator's points.
#[derive(Debug, Clone, Copy)]
pub(super) struct CycleSnapshot {
    pub(super) x: f64,
    pub(super) duty_capacity_ah: f64,
    pub(super) peak_temperature_k: f64,
    pub(super) min_temperature_k: f64,
    pub(super) min_neg_potential_v: f64,
    pub(super) peak_charge_a: f64,
    /// Step (0-based) where the charge current peaked.
    pub(super) peak_charge_step: usize,
    pub(super) peak_discharge_a: f64,
    pub(super) peak_discharge_step: usize,
    /// Time a measured series was held at a voltage limit in this cycle, s.
    pub(super) voltage_limited_s: f64,
}

/// Why a rate evaluation could not be made.
#[derive(Debug, Clone, PartialEq)]
pub(super) enum RateFailure {
    /// No charge can be cycled in the voltage window any more: the cell is used up.
    Exhausted,
    Failed(ForecastFailure),
}

/// A cycle that could not be simulated.
pub(super) fn cycle_failure(error: impl std::fmt::Display) -> RateFailure {
    RateFailure::Failed(ForecastFailure::Cycle { detail: error.to_string() })
}

/// Everything one forecast needs, with the mutable parts behind RefCells because the
/// integrator calls the rate function through a shared reference.
struct Forecaster<'a> {
    scenario: &'a Scenario,
    plan: &'a Plan,
    aging: &'a AgingParams,
    model: CellModel,
    mechanisms: Vec<Box<dyn Mechanism>>,
    settings: SolverSettings,
    lithium_fresh_coulomb: f64,
    /// The last simulated cycle's end state, the ambient it ran in (K) and the balance then.
    warm: RefCell<Option<(CellState, f64, Balance)>>,
    record: RefCell<CycleRecord>,
    log: RefCell<Vec<CycleSnapshot>>,
    failure: RefCell<Option<(f64, RateFailure)>>,
    simulated: RefCell<usize>,
}

impl<'a> Forecaster<'a> {
    fn new(scenario: &'a Scenario, plan: &'a Plan, settings: &SolverSettings) -> Forecaster<'a> {
        Forecaster {
            scenario,
            plan,
            aging: &plan.aging,
            model: CellModel::new(&scenario.cell),
            mechanisms: mechanisms_for(&plan.aging),
            settings: *settings,
            lithium_fresh_coulomb: scenario.cell.lithium_inventory_coulomb(),
            warm: RefCell::new(None),
            record: RefCell::new(CycleRecord::default()),
            log: RefCell::new(Vec::new()),
            failure: RefCell::new(None),
            simulated: RefCell::new(0),
        }
    }

    fn cycling(&self) -> bool {
        self.plan.usage.cycles_per_day > 0.0
    }

    /// Calendar day at a value of the integration variable (cycles, or days when storing).
    fn day(&self, x: f64) -> f64 {
        if self.cycling() {
            x / self.plan.usage.cycles_per_day
        } else {
            x
        }
    }

    /// Ambient temperature on a day: monthly values are interpolated linearly between month
    /// midpoints (periodic over the year), so the rates stay continuous for the integrator.
    fn ambient_k(&self, day: f64) -> f64 {
        ambient_on_day(self.plan, day)
    }

    /// Rates of change of the slow state per cycle (per day when storing) at `x`.
    fn rates(&self, x: f64, state: &AgingState) -> Result<AgingState, RateFailure> {
        let cell = &self.scenario.cell;
        let health = health_of(cell, self.aging, state);
        let balance = balance_cell(cell, &health).ok_or(RateFailure::Exhausted)?;
        let ambient = self.ambient_k(self.day(x));
        let mut record = self.record.borrow_mut();
        let (cycle, idle_s) = if self.cycling() {
            self.simulate(x, &health, &balance, ambient, &mut record)?;
            let period = SECONDS_PER_DAY / self.plan.usage.cycles_per_day;
            // Checked on the fresh cell's cycle: the usage is the user's, a cycle that later
            // lengthens with age is the forecast's business.
            if x == 0.0 && record.duration_s > period * (1.0 + USAGE_DAY_TOLERANCE) {
                return Err(RateFailure::Failed(ForecastFailure::UsageExceedsDay {
                    cycles_per_day: self.plan.usage.cycles_per_day,
                    cycle_duration_s: record.duration_s,
                }));
            }
            (Some(&*record), (period - record.duration_s).max(0.0))
        } else {
            (None, SECONDS_PER_DAY)
        };
        let (rest_stoich, rest_pos_stoich) = balance.stoich_at_soc(self.plan.usage.rest_soc, &health);
        let negative = &cell.negative;
        let idle_potential = negative.ocp.potential(rest_stoich)
            + (ambient - cell.reference_temperature_k) * negative.entropic_coefficient_v_k;
        let positive = &cell.positive;
        let idle_pos_potential = positive.ocp.potential(rest_pos_stoich)
            + (ambient - cell.reference_temperature_k) * positive.entropic_coefficient_v_k;
        let context = AgingContext {
            cell,
            aging: self.aging,
            record: cycle,
            idle_s,
            idle_temperature_k: ambient,
            idle_neg_potential_v: idle_potential,
            idle_pos_potential_v: idle_pos_potential,
            idle_pos_stoich: rest_pos_stoich,
            lithium_fresh_coulomb: self.lithium_fresh_coulomb,
        };
        let mut rate = AgingState::default();
        for mechanism in &self.mechanisms {
            mechanism.add_rates(&context, state, &mut rate);
        }
        rate[Component::ThroughputAh] = cycle.map_or(0.0, |r| r.charge_out_coulomb / SECONDS_PER_HOUR);
        rate[Component::EnergyWh] = cycle.map_or(0.0, |r| r.energy_out_j / SECONDS_PER_HOUR);
        Ok(rate)
    }

    /// Simulates one duty cycle at this health, from the last cycle's end state.
    fn simulate(
        &self,
        x: f64,
        health: &Health,
        balance: &Balance,
        ambient_k: f64,
        record: &mut CycleRecord,
    ) -> Result<(), RateFailure> {
        let mut warm = self.warm.borrow_mut();
        let scenario = self.scenario;
        let aligned = warm.take().and_then(|(mut s, then_k, then_balance)| {
            self.model.carry_over(&mut s, (&then_balance, then_k), (balance, ambient_k), health).then_some(s)
        });
        let mut state = match aligned {
            Some(s) => s,
            None => {
                // First cycle (or the last end state no longer fits): reach the periodic state.
                let mut start = scenario.clone();
                start.ambient_k = ambient_k;
                let (first, end) =
                    simulate_periodic_with(&self.model, &start, health, &self.settings).map_err(cycle_failure)?;
                *self.simulated.borrow_mut() += first.warmup_cycles;
                end
            }
        };
        let run = CycleRun { duty: &scenario.duty, ambient_k, health, balance };
        simulate_cycle(&self.model, &run, &mut state, &self.settings, record).map_err(cycle_failure)?;
        *self.simulated.borrow_mut() += 1;
        let step_of_peak = |current: fn(f64) -> f64| {
            record
                .trace
                .iter()
                .max_by(|a, b| current(a.current_a).total_cmp(&current(b.current_a)))
                .map_or(0, |p| p.step)
        };
        self.log.borrow_mut().push(CycleSnapshot {
            x,
            duty_capacity_ah: record.charge_out_coulomb / SECONDS_PER_HOUR,
            peak_temperature_k: record.peak_temperature_k,
            min_temperature_k: record.min_temperature_k,
            min_neg_potential_v: record.neg_potential_min_v,
            peak_charge_a: record.peak_charge_current_a,
            peak_charge_step: step_of_peak(|i| -i),
            peak_discharge_a: record.peak_discharge_current_a,
            peak_discharge_step: step_of_peak(|i| i),
            voltage_limited_s: record.voltage_limited_s,
        });
        *warm = Some((state, ambient_k, *balance));
        Ok(())
    }

    /// The reported quantities of a state at `x`.
    fn point(&self, x: f64, state: &AgingState, fresh: (f64, f64)) -> Option<FadePoint> {
        let cell = &self.scenario.cell;
        let health = health_of(cell, self.aging, state);
        let balance = balance_cell(cell, &health)?;
        let capacity_ah = balance.capacity_coulomb / SECONDS_PER_HOUR;
        // The fresh electrodes with only the lithium left: what lithium loss alone costs.
        let lithium_health = health_of(cell, self.aging, &lithium_only(state, self.aging));
        let lithium_capacity_ah = balance_cell(cell, &lithium_health)?.capacity_coulomb / SECONDS_PER_HOUR;
        let pulse = PULSE_C_RATE * cell.nominal_capacity_coulomb / SECONDS_PER_HOUR;
        let resistance =
            self.model.pulse_resistance(&health, &balance, 0.5, cell.reference_temperature_k, pulse, PULSE_S)?;
        let snapshot = self.snapshot_at(x);
        let (fresh_capacity_ah, fresh_resistance) = fresh;
        let throughput_ah = state[Component::ThroughputAh];
        Some(FadePoint {
            cycle: if self.cycling() { x } else { 0.0 },
            day: self.day(x),
            efc: equivalent_full_cycles(throughput_ah, cell.nominal_capacity_coulomb / SECONDS_PER_HOUR),
            throughput_ah,
            energy_wh: state[Component::EnergyWh],
            capacity_ah,
            duty_capacity_ah: snapshot.map_or(0.0, |s| s.duty_capacity_ah),
            soh_pct: 100.0 * capacity_ah / fresh_capacity_ah,
            resistance_mohm: resistance * 1e3,
            resistance_growth_pct: 100.0 * (resistance / fresh_resistance - 1.0),
            fade_lithium_ah: fresh_capacity_ah - lithium_capacity_ah,
            fade_active_material_ah: lithium_capacity_ah - capacity_ah,
            film_crack_nm: crack_film_mean_thickness_m(cell, self.aging, state) * 1e9,
            peak_temperature_c: snapshot.map_or(self.ambient_k(self.day(x)), |s| s.peak_temperature_k) - ZERO_CELSIUS_K,
            state: *state,
        })
    }

    /// The last simulated cycle at or before `x`.
    fn snapshot_at(&self, x: f64) -> Option<CycleSnapshot> {
        let log = self.log.borrow();
        log.iter().filter(|s| s.x <= x + 1e-9).max_by(|a, b| a.x.total_cmp(&b.x)).or_else(|| log.first()).copied()
    }
}

/// Ambient temperature on a day: monthly values are interpolated linearly between month
/// midpoints (periodic over the year), so the rates stay continuous for the integrator.
pub(super) fn ambient_on_day(plan: &Plan, day: f64) -> f64 {
    match &plan.usage.ambient_k {
        Ambient::Constant(t) => *t,
        Ambient::Monthly(months) => {
            let month_length = DAYS_PER_YEAR / 12.0;
            let position = (plan.usage.start_month as f64 - 1.0) + day / month_length - 0.5;
            let wrapped = position.rem_euclid(12.0);
            let lower = wrapped.floor() as usize % 12;
            let w = wrapped - wrapped.floor();
            months[lower] * (1.0 - w) + months[(lower + 1) % 12] * w
        }
    }
}

/// The integrator's view of the forecaster. It integrates in s = √(N + N₀) − √N₀ rather than
/// the cycle count N itself: film growth that slows as √N is close to linear in s, so the
/// steps stay long through the early, fast part of the fade.
struct RateSystem<'f, 'a>(&'f Forecaster<'a>);

/// N₀ of the stretched variable, in cycles (days when storing).
pub(super) const STRETCH_OFFSET: f64 = 1.0;

pub(super) fn stretched(x: f64) -> f64 {
    (x + STRETCH_OFFSET).sqrt() - STRETCH_OFFSET.sqrt()
}

pub(super) fn unstretched(s: f64) -> f64 {
    (s + STRETCH_OFFSET.sqrt()).powi(2) - STRETCH_OFFSET
}

impl SlowSystem for RateSystem<'_, '_> {
    fn derivative(&self, s: f64, y: &DVector<f64>, dy: &mut DVector<f64>) {
        let x = unstretched(s);
        let dx_ds = 2.0 * (s + STRETCH_OFFSET.sqrt());
        let state = from_integrator(y.as_slice());
        match self.0.rates(x, &state) {
            Ok(rate) => {
                for (d, r) in dy.iter_mut().zip(to_integrator(&rate)) {
                    *d = r * dx_ds;
                }
            }
            Err(detail) => {
                dy.fill(0.0);
                self.0.failure.borrow_mut().get_or_insert((x, detail));
            }
        }
    }

    fn stop(&self) -> bool {
        self.0.failure.borrow().is_some()
    }
}

/// Scale of a component in the integrator's vector: components that are parts of another are
/// carried scaled down by 2⁻¹⁰⁰ (exact in binary), so their error estimates are nil and they do
/// not steer the step size; every other component steers as it is.
pub(super) fn integrator_scale(component: usize) -> f64 {
    // The crack-film bins after the components sum to a steering component: they ride along.
    if component >= COMPONENT_COUNT || COMPONENTS[component].part_of.is_some() {
        2f64.powi(-100)
    } else {
        1.0
    }
}

/// Components that steer the integrator's step size (all but the parts of others).
pub(super) const STEERING: usize = {
    let mut count = 0;
    let mut i = 0;
    while i < COMPONENT_COUNT {
        if COMPONENTS[i].part_of.is_none() {
            count += 1;
        }
        i += 1;
    }
    count
};

/// Length of the integrator's vector. Its error norm is a root mean square over the vector, so
/// carrying a part apart would lengthen it and move every step. Padding with zero slots to
/// sixteen times the steering components and quartering the tolerances keeps the norm over the
/// steering components exactly (powers of two scale without rounding): adding a reported part
/// changes no number of the forecast.
pub(super) const INTEGRATOR_LEN: usize = 16 * STEERING;
const _: () = assert!(INTEGRATOR_LEN >= STATE_LEN);
/// The tolerance factor that goes with the padding: √(STEERING / INTEGRATOR_LEN).
pub(super) const STEERING_TOLERANCE_FACTOR: f64 = 0.25;

pub(super) fn to_integrator(state: &AgingState) -> [f64; INTEGRATOR_LEN] {
    let vector = state.to_vector();
    std::array::from_fn(|i| if i < STATE_LEN { vector[i] * integrator_scale(i) } else { 0.0 })
}

pub(super) fn from_integrator(values: &[f64]) -> AgingState {
    AgingState::from_vector(&std::array::from_fn(|i| values[i] / integrator_scale(i)))
}

/// End of the integration variable for a horizon: cycles when cycling, days when storing.
pub(super) fn horizon_end(plan: &Plan, horizon: Horizon) -> Result<f64, ForecastFailure> {
    let cpd = plan.usage.cycles_per_day;
    match horizon {
        Horizon::Cycles(n) if cpd > 0.0 => Ok(n),
        Horizon::Cycles(_) => Err(ForecastFailure::HorizonNeedsYears),
        Horizon::Years(y) if cpd > 0.0 => Ok(y * DAYS_PER_YEAR * cpd),
        Horizon::Years(y) => Ok(y * DAYS_PER_YEAR),
    }
}

/// The reported points of a forecast as (cycle, day) pairs: the same for every sample of an
/// ensemble that shares the plan's usage. Err when the horizon does not suit the usage.
pub fn report_grid(
    plan: &Plan,
    horizon: Horizon,
    options: &ForecastOptions,
) -> Result<Vec<(f64, f64)>, ForecastFailure> {
    let x_end = horizon_end(plan, horizon)?;
    let points = options.report_points.max(1);
    let spacing = x_end / points as f64;
    let cpd = plan.usage.cycles_per_day;
    Ok((0..=points)
        .map(|k| {
            // The same arithmetic as the integrators' report points.
            let x = (k as f64 * spacing).min(x_end);
            if cpd > 0.0 {
                (x, x / cpd)
            } else {
                (0.0, x)
            }
        })
        .collect())
}

/// Forecasts the scenario's fade over the horizon. Failures do not discard work: the result
/// holds the points computed before the failure and says where and why it stopped.
pub fn run_forecast(scenario: &Scenario, plan: &Plan, horizon: Horizon, options: &ForecastOptions) -> Forecast {
    if let Some(layout) = &scenario.pack {
        return super::pack::run_pack_forecast(scenario, layout, plan, horizon, options);
    }
    run_cell_forecast(scenario, plan, horizon, options, &SolverSettings::default())
}

/// [`run_forecast`] of a lone cell with the cycle model's step settings given: the accuracy
/// checks compare the defaults with finer steps.
pub fn run_cell_forecast(
    scenario: &Scenario,
    plan: &Plan,
    horizon: Horizon,
    options: &ForecastOptions,
    settings: &SolverSettings,
) -> Forecast {
    let forecaster = Forecaster::new(scenario, plan, settings);
    let cell = &scenario.cell;
    let fresh_state = AgingState::fresh(&plan.aging);
    let fresh_health = health_of(cell, &plan.aging, &fresh_state);
    let mut forecast = Forecast {
        points: Vec::new(),
        end_of_life: Vec::new(),
        stop: StopReason::Horizon,
        simulated_cycles: 0,
        accepted_steps: 0,
        rejected_steps: 0,
        every_cycle: options.every_cycle,
        fresh_capacity_ah: 0.0,
        fresh_resistance_mohm: 0.0,
        scale: ReportScale::default(),
        warnings: Vec::new(),
        final_state: None,
        interface_rise: None,
        pack: None,
    };
    let fail = |mut f: Forecast, failure: ForecastFailure| {
        f.stop = StopReason::Failed { at: 0.0, last_soh_pct: None, failure };
        f
    };
    let Some(balance) = balance_cell(cell, &fresh_health) else {
        return fail(forecast, ForecastFailure::FreshCellEmpty);
    };
    let pulse = PULSE_C_RATE * cell.nominal_capacity_coulomb / SECONDS_PER_HOUR;
    let Some(fresh_resistance) =
        forecaster.model.pulse_resistance(&fresh_health, &balance, 0.5, cell.reference_temperature_k, pulse, PULSE_S)
    else {
        return fail(forecast, ForecastFailure::FreshPulse);
    };
    let fresh = (balance.capacity_coulomb / SECONDS_PER_HOUR, fresh_resistance);
    forecast.fresh_capacity_ah = fresh.0;
    forecast.fresh_resistance_mohm = fresh_resistance * 1e3;
    forecast.scale = ReportScale {
        lithium_fresh_ah: cell.lithium_inventory_coulomb() / SECONDS_PER_HOUR,
        fresh_capacity_ah: fresh.0,
        neg_radius_nm: cell.negative.particle_radius_m * 1e9,
        pos_radius_nm: cell.positive.particle_radius_m * 1e9,
    };
    let x_end = match horizon_end(plan, horizon) {
        Ok(x) => x,
        Err(failure) => return fail(forecast, failure),
    };
    let spacing = x_end / options.report_points.max(1) as f64;
    forecast.every_cycle = options.every_cycle || (forecaster.cycling() && x_end <= EVERY_CYCLE_UP_TO_CYCLES);
    let (xs, ys) = if forecast.every_cycle {
        integrate_every_cycle(&forecaster, fresh_state, x_end, spacing)
    } else {
        integrate_jumping(&forecaster, fresh_state, x_end, spacing, options, &mut forecast)
    };
    for (x, y) in xs.iter().zip(&ys) {
        match forecaster.point(*x, y, fresh) {
            Some(p) => forecast.points.push(p),
            None => {
                forecaster.failure.borrow_mut().get_or_insert((*x, RateFailure::Exhausted));
                break;
            }
        }
    }
    forecast.final_state = ys.get(forecast.points.len().saturating_sub(1)).copied();
    forecast.interface_rise = forecast.final_state.map(|state| crate::aging::interface_rise(cell, &plan.aging, &state));
    if let Some((at, failure)) = forecaster.failure.borrow().clone() {
        let last_soh_pct = forecast.points.last().map(|p| p.soh_pct);
        forecast.stop = match failure {
            RateFailure::Exhausted => StopReason::Exhausted { at, last_soh_pct },
            RateFailure::Failed(failure) => StopReason::Failed { at, last_soh_pct, failure },
        };
    }
    forecast.end_of_life = end_of_life(&forecast.points, plan, forecaster.cycling(), plan.usage.cycles_per_day);
    forecast.simulated_cycles = *forecaster.simulated.borrow();
    forecast.warnings = warnings(&forecaster, &forecast);
    forecast
}

/// Cycle jumping; returns the states on the report grid (read from the integrator's dense
/// output, which is accurate up to the last step).
fn integrate_jumping(
    forecaster: &Forecaster,
    start: AgingState,
    x_end: f64,
    spacing: f64,
    options: &ForecastOptions,
    forecast: &mut Forecast,
) -> (Vec<f64>, Vec<AgingState>) {
    let jump = Jump {
        x_end,
        spacing,
        tolerance_factor: STEERING_TOLERANCE_FACTOR,
        step_growth_max: STEP_GROWTH_MAX,
        failure: &forecaster.failure,
    };
    jump.on_grid(RateSystem(forecaster), to_integrator(&start).to_vec(), start, options, forecast, from_integrator)
}

/// One cycle-jumping run, shared by the lone cell and the pack: the integration's end, the
/// report grid's spacing, the factor on both tolerances (for the vector's padding or length),
/// the step growth allowed, and where a rate evaluation records its failure.
pub(super) struct Jump<'a> {
    pub x_end: f64,
    pub spacing: f64,
    pub tolerance_factor: f64,
    pub step_growth_max: f64,
    pub failure: &'a RefCell<Option<(f64, RateFailure)>>,
}

impl Jump<'_> {
    /// Integrates `system` from `y0` (the integrator's form of `start`) and returns the start and
    /// the states on the report grid, decoded by `decode`, up to where the integration reached.
    pub(super) fn on_grid<S: SlowSystem, T>(
        &self,
        system: S,
        y0: Vec<f64>,
        start: T,
        options: &ForecastOptions,
        forecast: &mut Forecast,
        decode: impl Fn(&[f64]) -> T,
    ) -> (Vec<f64>, Vec<T>) {
        let s_end = stretched(self.x_end);
        // Absolute tolerance in the state's own units (1e-7 of the lithium inventory, 1e-7 nm);
        // the first step is one cycle, the usual automatic choice being far smaller.
        let settings = IntegratorSettings {
            relative_tolerance: options.relative_tolerance * self.tolerance_factor,
            absolute_tolerance: ABSOLUTE_TOLERANCE * self.tolerance_factor,
            first_step: stretched(FIRST_STEP.min(self.x_end)),
            growth_max: self.step_growth_max,
            shrink_min: STEP_SHRINK_MIN,
            safety: STEP_SAFETY,
            beta: STEP_PI_BETA,
            max_steps: STEP_LIMIT,
        };
        let mut dense = DenseSolution::default();
        match integrate(&system, 0.0, s_end, DVector::from_vec(y0), &settings, &mut dense) {
            Ok(stats) => {
                forecast.accepted_steps = stats.accepted_steps;
                forecast.rejected_steps = stats.rejected_steps;
            }
            Err(e) => {
                let x = dense.reached().map_or(0.0, unstretched);
                self.failure
                    .borrow_mut()
                    .get_or_insert((x, RateFailure::Failed(ForecastFailure::Integrator { detail: e.to_string() })));
            }
        }
        let mut xs = vec![0.0];
        let mut ys = vec![start];
        let reached = dense.reached().unwrap_or(0.0);
        // A failed rate evaluation zeroes that stage's rates and the step holding it may still be
        // accepted, so its dense output can run past the failure: report nothing beyond it.
        let failed_at = self.failure.borrow().as_ref().map(|(x, _)| stretched(*x));
        let reached = failed_at.map_or(reached, |s| reached.min(s));
        let mut k = 1;
        loop {
            let x = (k as f64 * self.spacing).min(self.x_end);
            let s = stretched(x);
            if s > reached + 1e-12 {
                break;
            }
            let Some(y) = dense.evaluate(s.min(reached)) else { break };
            xs.push(x);
            ys.push(decode(y.as_slice()));
            if x >= self.x_end {
                break;
            }
            k += 1;
        }
        (xs, ys)
    }
}

/// The reference: every cycle simulated, the state advanced by each cycle's rates.
fn integrate_every_cycle(
    forecaster: &Forecaster,
    start: AgingState,
    x_end: f64,
    spacing: f64,
) -> (Vec<f64>, Vec<AgingState>) {
    let mut xs = vec![0.0];
    let mut ys = vec![start];
    let mut state = start.to_vector();
    let mut next_report = spacing;
    let cycles = x_end.ceil() as usize;
    for k in 0..cycles {
        let x = k as f64;
        let rate = match forecaster.rates(x, &AgingState::from_vector(&state)) {
            Ok(r) => r.to_vector(),
            Err(failure) => {
                forecaster.failure.borrow_mut().get_or_insert((x, failure));
                break;
            }
        };
        let step = (x_end - x).min(1.0);
        let next: [f64; STATE_LEN] = std::array::from_fn(|i| state[i] + step * rate[i]);
        // Report points inside this cycle are interpolated linearly.
        while next_report <= x + step + 1e-9 && next_report <= x_end + 1e-9 {
            let w = (next_report - x) / step;
            let mixed: [f64; STATE_LEN] = std::array::from_fn(|i| state[i] * (1.0 - w) + next[i] * w);
            xs.push(next_report);
            ys.push(AgingState::from_vector(&mixed));
            next_report += spacing;
        }
        state = next;
    }
    (xs, ys)
}

/// First crossing of each threshold, interpolated linearly between reported points.
pub(super) fn end_of_life(
    points: &[FadePoint],
    plan: &Plan,
    cycling: bool,
    cycles_per_day: f64,
) -> Vec<EndOfLifePoint> {
    let eol = plan.end_of_life;
    let crossing = |value: &dyn Fn(&FadePoint) -> f64, level: f64, falling: bool| -> Option<LifeAt> {
        points.windows(2).find_map(|w| {
            let (a, b) = (value(&w[0]), value(&w[1]));
            let crossed = if falling { a > level && b <= level } else { a < level && b >= level };
            crossed.then(|| {
                let t = (level - a) / (b - a);
                let day = w[0].day + t * (w[1].day - w[0].day);
                LifeAt {
                    cycles: if cycling { day * cycles_per_day } else { 0.0 },
                    efc: w[0].efc + t * (w[1].efc - w[0].efc),
                    years: day / DAYS_PER_YEAR,
                }
            })
        })
    };
    vec![
        EndOfLifePoint {
            threshold: Threshold::Capacity,
            level_pct: 100.0 * eol.capacity_fraction,
            reached: crossing(&|p| p.soh_pct, 100.0 * eol.capacity_fraction, true),
        },
        EndOfLifePoint {
            threshold: Threshold::Resistance,
            level_pct: 100.0 * eol.resistance_fraction,
            reached: crossing(&|p| 100.0 + p.resistance_growth_pct, 100.0 * eol.resistance_fraction, false),
        },
    ]
}

/// Safety and validity warnings from what the simulated cycles showed and how far the
/// forecast reached.
fn warnings(forecaster: &Forecaster, forecast: &Forecast) -> Vec<ForecastWarning> {
    warnings_from(&forecaster.scenario.cell, &forecaster.log.borrow(), forecaster.plan, forecast)
}

/// The warnings of a forecast of `cell` (a pack's nominal cell) from its cycles' snapshots.
pub(super) fn warnings_from(
    cell: &Cell,
    log: &[CycleSnapshot],
    plan: &Plan,
    forecast: &Forecast,
) -> Vec<ForecastWarning> {
    let mut out = Vec::new();
    let lowest_potential_v = log.iter().map(|s| s.min_neg_potential_v).fold(f64::INFINITY, f64::min);
    if lowest_potential_v < 0.0 {
        let plated_ah =
            forecast.final_state.map_or(0.0, |s| s[Component::PlatedTotal] * forecast.scale.lithium_fresh_ah);
        out.push(ForecastWarning::Plating { lowest_potential_v, plated_ah });
    }
    let peak = |current: fn(&CycleSnapshot) -> (f64, usize)| {
        log.iter().map(current).fold((0.0, 0), |best, this| if this.0 > best.0 { this } else { best })
    };
    let (peak_charge, charge_step) = peak(|s| (s.peak_charge_a, s.peak_charge_step));
    if peak_charge > cell.max_charge_current_a * (1.0 + LIMIT_SLACK) {
        out.push(ForecastWarning::ChargeCurrentOverLimit {
            peak_a: peak_charge,
            limit_a: cell.max_charge_current_a,
            step: charge_step + 1,
        });
    }
    let (peak_discharge, discharge_step) = peak(|s| (s.peak_discharge_a, s.peak_discharge_step));
    if peak_discharge > cell.max_discharge_current_a * (1.0 + LIMIT_SLACK) {
        out.push(ForecastWarning::DischargeCurrentOverLimit {
            peak_a: peak_discharge,
            limit_a: cell.max_discharge_current_a,
            step: discharge_step + 1,
        });
    }
    let hottest_k = log.iter().map(|s| s.peak_temperature_k).fold(f64::NEG_INFINITY, f64::max);
    let coldest_k = log.iter().map(|s| s.min_temperature_k).fold(f64::INFINITY, f64::min);
    if hottest_k > cell.temperature_max_k || coldest_k < cell.temperature_min_k {
        out.push(ForecastWarning::TemperatureOutsideLimits {
            coldest_k,
            hottest_k,
            min_k: cell.temperature_min_k,
            max_k: cell.temperature_max_k,
        });
    }
    let held = log.iter().map(|s| s.voltage_limited_s).fold(0.0, f64::max);
    if held > 0.0 {
        out.push(ForecastWarning::HeldAtVoltageLimit { seconds_per_cycle: held });
    }
    match plan.calibration {
        None => out.push(ForecastWarning::Uncalibrated),
        Some(range) => {
            if let Some(warning) = beyond_calibration(plan, &range, forecast.points.last()) {
                out.push(warning);
            }
        }
    }
    out
}

/// The warning for a forecast that reaches past its calibration range on any axis the range
/// gives (cycles, days, equivalent full cycles) or runs at an ambient outside the fitted
/// temperatures; None when it stays inside.
fn beyond_calibration(plan: &Plan, range: &CalibrationRange, last: Option<&FadePoint>) -> Option<ForecastWarning> {
    let (cycles, days, efc) = last.map_or((0.0, 0.0, 0.0), |p| (p.cycle, p.day, p.efc));
    let past = |limit: Option<f64>, reached: f64| limit.is_some_and(|limit| reached > limit * (1.0 + 1e-9));
    let temperature_outside_k = range.temperature_k.and_then(|(low, high)| {
        let ambients: Vec<f64> = match &plan.usage.ambient_k {
            Ambient::Constant(t) => vec![*t],
            Ambient::Monthly(months) => months.to_vec(),
        };
        // The ambient furthest outside the fitted range (a kelvin of slack for rounding).
        ambients
            .into_iter()
            .filter(|t| *t < low - 1.0 || *t > high + 1.0)
            .max_by(|a, b| (a - a.clamp(low, high)).abs().total_cmp(&(b - b.clamp(low, high)).abs()))
    });
    let outside = past(range.cycles, cycles) || past(range.days, days) || past(range.efc, efc);
    (outside || temperature_outside_k.is_some()).then_some(ForecastWarning::BeyondCalibration {
        calibrated: *range,
        horizon_cycles: cycles,
        horizon_days: days,
        horizon_efc: efc,
        temperature_outside_k,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::load_scenario;
    use std::path::Path;

    /// Largest relative difference between two rate vectors over the components that move.
    fn largest_relative_difference(a: &AgingState, b: &AgingState) -> f64 {
        let (a, b) = (a.to_vector(), b.to_vector());
        (0..COMPONENT_COUNT).filter(|&i| b[i] != 0.0).map(|i| ((a[i] - b[i]) / b[i]).abs()).fold(0.0, f64::max)
    }

    /// A jump's one cycle, warm-started from a cycle at another health and another day, gives
    /// the rates that cycle gives once it repeats itself (derived: the rates are a function of
    /// the health and the day). The state is taken to 300 cycles by jumps of ten; before the
    /// warm state was carried at its state of charge and with its temperature excess over the
    /// ambient, the last jump left the measured day's rates 4.5e-4 off and the ferry's (monthly
    /// ambient) 7e-2, now 5e-6 and 2.4e-3. Over longer jumps the measured day's start moves
    /// with the health (its charge is cut at the voltage limit): 3e-4 after 200 cycles.
    #[test]
    fn rates_after_a_jump_do_not_depend_on_the_last_evaluation() {
        let root = Path::new(env!("CARGO_MANIFEST_DIR"));
        for (demo, tolerance) in [("examples/van-day-measured.toml", 2e-5), ("examples/harbour-ferry.toml", 1e-2)] {
            let loaded = load_scenario(&root.join(demo), &[]).expect("demo loads");
            let forecaster = Forecaster::new(&loaded.scenario, &loaded.plan, &SolverSettings::default());
            let (jump, jumps) = (10.0, 30);
            let mut state = AgingState::fresh(&loaded.plan.aging);
            let mut rate = AgingState::default();
            for k in 0..=jumps {
                if k > 0 {
                    let (start, slope) = (state.to_vector(), rate.to_vector());
                    state = AgingState::from_vector(&std::array::from_fn(|i| start[i] + jump * slope[i]));
                }
                rate = forecaster.rates(k as f64 * jump, &state).expect("cycle runs");
            }
            let repeated = forecaster.rates(jumps as f64 * jump, &state).expect("cycle runs");
            let difference = largest_relative_difference(&rate, &repeated);
            assert!(difference < tolerance, "{demo}: {difference:.2e}");
        }
    }
}
