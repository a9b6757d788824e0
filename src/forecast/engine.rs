//! Cycle jumping: the slow state is integrated over the cycle count by an adaptive
//! Dormand–Prince integrator (ode_solvers' Dopri5); every evaluation of the rates simulates one
//! duty cycle at the health the integrator asks about, warm-started from the last simulated
//! cycle so it starts from (nearly) the periodic state. Where the fade curve bends the error
//! estimate grows and the integrator shortens its steps by itself. The reference mode
//! simulates every cycle and advances the state by each cycle's rates.
//!
//! References: J. R. Dormand, P. J. Prince, J. Comput. Appl. Math. 6 (1980) 19; E. Hairer,
//! S. P. Nørsett, G. Wanner, *Solving Ordinary Differential Equations I*, Springer (1993).

use super::plan::{Ambient, Horizon, Plan};
use super::result::*;
use super::ForecastOptions;
use crate::aging::{health_of, mechanisms_for, AgingContext, AgingState, Mechanism, STATE_LEN};
use crate::cycle::cell::LIMIT_SLACK;
use crate::cycle::{
    balance_cell, simulate_cycle, simulate_periodic_with, Balance, CellModel, CellState, CycleRecord, CycleRun, Health,
    Scenario, SolverSettings,
};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::{DVector, Dopri5, OutputType, System};
use std::cell::RefCell;

const SECONDS_PER_DAY: f64 = 86_400.0;
/// The failure detail that means the cell is used up rather than the model failing.
const EXHAUSTED: &str = "no charge can be cycled in the voltage window any more";
const DAYS_PER_YEAR: f64 = 365.25;
/// Length and C-rate of the resistance pulse.
const PULSE_S: f64 = 10.0;
const PULSE_C_RATE: f64 = 1.0;
/// Integrator settings of cycle jumping (see `integrate_jumping`).
const ABSOLUTE_TOLERANCE: f64 = 1e-7;
const FIRST_STEP: f64 = 1.0;

/// What one simulated cycle showed, kept for reporting between the integrator's points.
#[derive(Debug, Clone, Copy)]
struct CycleSnapshot {
    x: f64,
    duty_capacity_ah: f64,
    peak_temperature_k: f64,
    min_temperature_k: f64,
    min_neg_potential_v: f64,
    peak_charge_a: f64,
    peak_discharge_a: f64,
}

/// Everything one forecast needs, with the mutable parts behind RefCells because the
/// integrator calls the rate function through a shared reference.
struct Forecaster<'a> {
    scenario: &'a Scenario,
    plan: &'a Plan,
    model: CellModel,
    mechanisms: Vec<Box<dyn Mechanism>>,
    settings: SolverSettings,
    lithium_fresh_coulomb: f64,
    warm: RefCell<Option<CellState>>,
    record: RefCell<CycleRecord>,
    log: RefCell<Vec<CycleSnapshot>>,
    failure: RefCell<Option<(f64, String)>>,
    simulated: RefCell<usize>,
}

impl<'a> Forecaster<'a> {
    fn new(scenario: &'a Scenario, plan: &'a Plan) -> Forecaster<'a> {
        Forecaster {
            scenario,
            plan,
            model: CellModel::new(&scenario.cell),
            mechanisms: mechanisms_for(&scenario.cell),
            settings: SolverSettings::default(),
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
        match &self.plan.usage.ambient_k {
            Ambient::Constant(t) => *t,
            Ambient::Monthly(months) => {
                let month_length = DAYS_PER_YEAR / 12.0;
                let position = (self.plan.usage.start_month as f64 - 1.0) + day / month_length - 0.5;
                let wrapped = position.rem_euclid(12.0);
                let lower = wrapped.floor() as usize % 12;
                let w = wrapped - wrapped.floor();
                months[lower] * (1.0 - w) + months[(lower + 1) % 12] * w
            }
        }
    }

    /// Rates of change of the slow state per cycle (per day when storing) at `x`.
    fn rates(&self, x: f64, state: &AgingState) -> Result<AgingState, String> {
        let cell = &self.scenario.cell;
        let health = health_of(cell, state);
        let balance = balance_cell(cell, &health).ok_or(EXHAUSTED)?;
        let ambient = self.ambient_k(self.day(x));
        let mut record = self.record.borrow_mut();
        let (cycle, idle_s) = if self.cycling() {
            self.simulate(x, &health, &balance, ambient, &mut record)?;
            let period = SECONDS_PER_DAY / self.plan.usage.cycles_per_day;
            (Some(&*record), (period - record.duration_s).max(0.0))
        } else {
            (None, SECONDS_PER_DAY)
        };
        let (rest_stoich, _) = balance.stoich_at_soc(self.plan.usage.rest_soc, &health);
        let negative = &cell.negative;
        let idle_potential = negative.ocp.potential(rest_stoich)
            + (ambient - cell.reference_temperature_k) * negative.entropic_coefficient_v_k;
        let context = AgingContext {
            cell,
            record: cycle,
            idle_s,
            idle_temperature_k: ambient,
            idle_neg_potential_v: idle_potential,
            lithium_fresh_coulomb: self.lithium_fresh_coulomb,
        };
        let mut rate = AgingState::default();
        for mechanism in &self.mechanisms {
            mechanism.add_rates(&context, state, &mut rate);
        }
        rate.throughput_ah = cycle.map_or(0.0, |r| r.charge_out_coulomb / SECONDS_PER_HOUR);
        rate.energy_wh = cycle.map_or(0.0, |r| r.energy_out_j / SECONDS_PER_HOUR);
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
    ) -> Result<(), String> {
        let mut warm = self.warm.borrow_mut();
        let scenario = self.scenario;
        let aligned = warm.take().and_then(|mut s| self.model.align_lithium(&mut s, balance, health).then_some(s));
        let mut state = match aligned {
            Some(s) => s,
            None => {
                // First cycle (or the last end state no longer fits): reach the periodic state.
                let mut start = scenario.clone();
                start.ambient_k = ambient_k;
                let (first, end) =
                    simulate_periodic_with(&self.model, &start, health, &self.settings).map_err(|e| e.to_string())?;
                *self.simulated.borrow_mut() += first.warmup_cycles;
                end
            }
        };
        let run = CycleRun { duty: &scenario.duty, ambient_k, health, balance };
        simulate_cycle(&self.model, &run, &mut state, &self.settings, record).map_err(|e| e.to_string())?;
        *self.simulated.borrow_mut() += 1;
        self.log.borrow_mut().push(CycleSnapshot {
            x,
            duty_capacity_ah: record.charge_out_coulomb / SECONDS_PER_HOUR,
            peak_temperature_k: record.peak_temperature_k,
            min_temperature_k: record.min_temperature_k,
            min_neg_potential_v: record.neg_potential_min_v,
            peak_charge_a: record.peak_charge_current_a,
            peak_discharge_a: record.peak_discharge_current_a,
        });
        *warm = Some(state);
        Ok(())
    }

    /// The reported quantities of a state at `x`.
    fn point(&self, x: f64, state: &AgingState, fresh: (f64, f64)) -> Option<FadePoint> {
        let cell = &self.scenario.cell;
        let health = health_of(cell, state);
        let balance = balance_cell(cell, &health)?;
        let capacity_ah = balance.capacity_coulomb / SECONDS_PER_HOUR;
        let pulse = PULSE_C_RATE * cell.nominal_capacity_coulomb / SECONDS_PER_HOUR;
        let resistance =
            self.model.pulse_resistance(&health, &balance, 0.5, cell.reference_temperature_k, pulse, PULSE_S)?;
        let snapshot = self.snapshot_at(x);
        let (fresh_capacity_ah, fresh_resistance) = fresh;
        Some(FadePoint {
            cycle: if self.cycling() { x } else { 0.0 },
            day: self.day(x),
            efc: state.throughput_ah / fresh_capacity_ah,
            throughput_ah: state.throughput_ah,
            energy_wh: state.energy_wh,
            capacity_ah,
            duty_capacity_ah: snapshot.map_or(0.0, |s| s.duty_capacity_ah),
            soh_pct: 100.0 * capacity_ah / fresh_capacity_ah,
            resistance_mohm: resistance * 1e3,
            resistance_growth_pct: 100.0 * (resistance / fresh_resistance - 1.0),
            lithium_film_original_pct: 100.0 * state.lithium_film_original,
            lithium_film_crack_pct: 100.0 * state.lithium_film_crack,
            lithium_plating_pct: 100.0 * state.lithium_plated_dead,
            lithium_stranded_pct: 100.0 * state.lithium_stranded,
            neg_active_lost_pct: 100.0 * state.neg_active_lost,
            pos_active_lost_pct: 100.0 * state.pos_active_lost,
            film_original_nm: state.film_original_nm,
            film_crack_nm: crate::aging::state::crack_film_thickness_m(cell, state) * 1e9,
            // Cracks stop at the particle centre (the integrator may step slightly past it).
            neg_crack_nm: state.neg_crack_nm.min(cell.negative.particle_radius_m * 1e9),
            pos_crack_nm: state.pos_crack_nm.min(cell.positive.particle_radius_m * 1e9),
            plated_total_pct: 100.0 * state.plated_total,
            peak_temperature_c: snapshot.map_or(self.ambient_k(self.day(x)), |s| s.peak_temperature_k) - ZERO_CELSIUS_K,
        })
    }

    /// The last simulated cycle at or before `x`.
    fn snapshot_at(&self, x: f64) -> Option<CycleSnapshot> {
        let log = self.log.borrow();
        log.iter().filter(|s| s.x <= x + 1e-9).max_by(|a, b| a.x.total_cmp(&b.x)).or_else(|| log.first()).copied()
    }
}

/// The integrator's view of the forecaster. It integrates in s = √(N + N₀) − √N₀ rather than
/// the cycle count N itself: film growth that slows as √N is close to linear in s, so the
/// steps stay long through the early, fast part of the fade.
struct RateSystem<'f, 'a>(&'f Forecaster<'a>);

/// N₀ of the stretched variable, in cycles (days when storing).
const STRETCH_OFFSET: f64 = 1.0;

fn stretched(x: f64) -> f64 {
    (x + STRETCH_OFFSET).sqrt() - STRETCH_OFFSET.sqrt()
}

fn unstretched(s: f64) -> f64 {
    (s + STRETCH_OFFSET.sqrt()).powi(2) - STRETCH_OFFSET
}

impl System<f64, DVector<f64>> for RateSystem<'_, '_> {
    fn system(&self, s: f64, y: &DVector<f64>, dy: &mut DVector<f64>) {
        let x = unstretched(s);
        let dx_ds = 2.0 * (s + STRETCH_OFFSET.sqrt());
        let state = AgingState::from_slice(y.as_slice());
        match self.0.rates(x, &state) {
            Ok(rate) => {
                for (d, r) in dy.iter_mut().zip(rate.to_array()) {
                    *d = r * dx_ds;
                }
            }
            Err(detail) => {
                dy.fill(0.0);
                self.0.failure.borrow_mut().get_or_insert((x, detail));
            }
        }
    }

    fn solout(&mut self, _s: f64, _y: &DVector<f64>, _dy: &DVector<f64>) -> bool {
        self.0.failure.borrow().is_some()
    }
}

/// End of the integration variable for a horizon: cycles when cycling, days when storing.
fn horizon_end(plan: &Plan, horizon: Horizon) -> Result<f64, String> {
    let cpd = plan.usage.cycles_per_day;
    match horizon {
        Horizon::Cycles(n) if cpd > 0.0 => Ok(n),
        Horizon::Cycles(_) => Err("storage-only usage (0 cycles per day) needs a horizon in years".into()),
        Horizon::Years(y) if cpd > 0.0 => Ok(y * DAYS_PER_YEAR * cpd),
        Horizon::Years(y) => Ok(y * DAYS_PER_YEAR),
    }
}

/// The reported points of a forecast as (cycle, day) pairs: the same for every sample of an
/// ensemble that shares the plan's usage. Err when the horizon does not suit the usage.
pub fn report_grid(plan: &Plan, horizon: Horizon, options: &ForecastOptions) -> Result<Vec<(f64, f64)>, String> {
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
    let forecaster = Forecaster::new(scenario, plan);
    let cell = &scenario.cell;
    let fresh_state = AgingState::fresh(cell);
    let fresh_health = health_of(cell, &fresh_state);
    let mut forecast = Forecast {
        points: Vec::new(),
        end_of_life: Vec::new(),
        stop: StopReason::Horizon,
        loss_at_horizon: LossByMechanism::default(),
        simulated_cycles: 0,
        accepted_steps: 0,
        rejected_steps: 0,
        every_cycle: options.every_cycle,
        fresh_capacity_ah: 0.0,
        fresh_resistance_mohm: 0.0,
        warnings: Vec::new(),
        final_state: None,
    };
    let fail = |mut f: Forecast, x: f64, detail: String| {
        f.stop = StopReason::Failed { cycle: x, detail };
        f
    };
    let Some(balance) = balance_cell(cell, &fresh_health) else {
        return fail(forecast, 0.0, "the fresh cell has no charge in its voltage window".into());
    };
    let pulse = PULSE_C_RATE * cell.nominal_capacity_coulomb / SECONDS_PER_HOUR;
    let Some(fresh_resistance) =
        forecaster.model.pulse_resistance(&fresh_health, &balance, 0.5, cell.reference_temperature_k, pulse, PULSE_S)
    else {
        return fail(forecast, 0.0, "the resistance pulse cannot be run on the fresh cell".into());
    };
    let fresh = (balance.capacity_coulomb / SECONDS_PER_HOUR, fresh_resistance);
    forecast.fresh_capacity_ah = fresh.0;
    forecast.fresh_resistance_mohm = fresh_resistance * 1e3;
    let x_end = match horizon_end(plan, horizon) {
        Ok(x) => x,
        Err(detail) => return fail(forecast, 0.0, detail),
    };
    let spacing = x_end / options.report_points.max(1) as f64;
    let (xs, ys) = if options.every_cycle {
        integrate_every_cycle(&forecaster, fresh_state, x_end, spacing)
    } else {
        integrate_jumping(&forecaster, fresh_state, x_end, spacing, options, &mut forecast)
    };
    for (x, y) in xs.iter().zip(&ys) {
        match forecaster.point(*x, y, fresh) {
            Some(p) => forecast.points.push(p),
            None => {
                forecaster.failure.borrow_mut().get_or_insert((*x, EXHAUSTED.into()));
                break;
            }
        }
    }
    forecast.final_state = ys.get(forecast.points.len().saturating_sub(1)).copied();
    if let Some(last) = forecast.final_state.as_ref() {
        forecast.loss_at_horizon = LossByMechanism {
            film_original_pct: 100.0 * last.lithium_film_original,
            film_crack_pct: 100.0 * last.lithium_film_crack,
            plating_pct: 100.0 * last.lithium_plated_dead,
            stranded_pct: 100.0 * last.lithium_stranded,
            neg_active_pct: 100.0 * last.neg_active_lost,
            pos_active_pct: 100.0 * last.pos_active_lost,
        };
    }
    if let Some((x, detail)) = forecaster.failure.borrow().clone() {
        forecast.stop = if detail == EXHAUSTED {
            StopReason::Exhausted { cycle: x }
        } else {
            StopReason::Failed { cycle: x, detail }
        };
    }
    forecast.end_of_life = end_of_life(&forecast.points, plan, forecaster.cycling(), plan.usage.cycles_per_day);
    forecast.simulated_cycles = *forecaster.simulated.borrow();
    forecast.warnings = warnings(&forecaster, x_end);
    forecast
}

/// Cycle jumping with Dopri5; returns the states on the report grid (read from the
/// integrator's continuous output, which is accurate up to the last step).
fn integrate_jumping(
    forecaster: &Forecaster,
    start: AgingState,
    x_end: f64,
    spacing: f64,
    options: &ForecastOptions,
    forecast: &mut Forecast,
) -> (Vec<f64>, Vec<AgingState>) {
    let y0 = DVector::from_row_slice(&start.to_array());
    let s_end = stretched(x_end);
    // Absolute tolerance in the state's own units (1e-7 of the lithium inventory, 1e-7 nm);
    // the first step is one cycle, the automatic choice being far smaller.
    let mut stepper = Dopri5::from_param(
        RateSystem(forecaster),
        0.0,
        s_end,
        s_end,
        y0,
        options.relative_tolerance,
        ABSOLUTE_TOLERANCE,
        0.9,
        0.04,
        0.2,
        10.0,
        s_end,
        stretched(FIRST_STEP.min(x_end)),
        100_000,
        1000,
        OutputType::Continuous,
    );
    let mut continuous = ContinuousOutputModel::default();
    match stepper.integrate_with_continuous_output_model(&mut continuous) {
        Ok(stats) => {
            forecast.accepted_steps = stats.accepted_steps as usize;
            forecast.rejected_steps = stats.rejected_steps as usize;
        }
        Err(e) => {
            let x = stepper.x_out().last().copied().map_or(0.0, unstretched);
            forecaster.failure.borrow_mut().get_or_insert((x, format!("integrator: {e}")));
        }
    }
    let mut xs = vec![0.0];
    let mut ys = vec![start];
    let reached = if continuous_is_empty(&continuous) { 0.0 } else { continuous.bounds().1 };
    let mut k = 1;
    loop {
        let x = (k as f64 * spacing).min(x_end);
        let s = stretched(x);
        if s > reached + 1e-12 {
            break;
        }
        let Some(y) = continuous.evaluate(s.min(reached)) else { break };
        xs.push(x);
        ys.push(AgingState::from_slice(y.as_slice()));
        if x >= x_end {
            break;
        }
        k += 1;
    }
    (xs, ys)
}

fn continuous_is_empty(model: &ContinuousOutputModel<f64, DVector<f64>>) -> bool {
    model.evaluate(0.0).is_none()
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
    let mut state = start.to_array();
    let mut next_report = spacing;
    let cycles = x_end.ceil() as usize;
    for k in 0..cycles {
        let x = k as f64;
        let rate = match forecaster.rates(x, &AgingState::from_slice(&state)) {
            Ok(r) => r.to_array(),
            Err(detail) => {
                forecaster.failure.borrow_mut().get_or_insert((x, detail));
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
            ys.push(AgingState::from_slice(&mixed));
            next_report += spacing;
        }
        state = next;
    }
    (xs, ys)
}

/// First crossing of each threshold, interpolated linearly between reported points.
fn end_of_life(points: &[FadePoint], plan: &Plan, cycling: bool, cycles_per_day: f64) -> Vec<EndOfLifePoint> {
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

/// Safety and validity warnings from what the simulated cycles showed.
fn warnings(forecaster: &Forecaster, x_end: f64) -> Vec<String> {
    let cell = &forecaster.scenario.cell;
    let log = forecaster.log.borrow();
    let mut out = Vec::new();
    let min_potential = log.iter().map(|s| s.min_neg_potential_v).fold(f64::INFINITY, f64::min);
    if min_potential < 0.0 {
        out.push(format!(
            "lithium plating predicted: the negative electrode falls to {:.0} mV against lithium while charging. \
             Plating is a safety concern (internal short circuits), not only a capacity loss; check the charge \
             protocol against the cell maker's limits and the applicable standards before use",
            min_potential * 1e3
        ));
    }
    let peak_charge = log.iter().map(|s| s.peak_charge_a).fold(0.0, f64::max);
    let peak_discharge = log.iter().map(|s| s.peak_discharge_a).fold(0.0, f64::max);
    if peak_charge > cell.max_charge_current_a * (1.0 + LIMIT_SLACK) {
        out.push(format!(
            "the profile charges at {peak_charge:.1} A, above the cell's limit of {:.1} A",
            cell.max_charge_current_a
        ));
    }
    if peak_discharge > cell.max_discharge_current_a * (1.0 + LIMIT_SLACK) {
        out.push(format!(
            "the profile discharges at {peak_discharge:.1} A, above the cell's limit of {:.1} A",
            cell.max_discharge_current_a
        ));
    }
    let hottest = log.iter().map(|s| s.peak_temperature_k).fold(f64::NEG_INFINITY, f64::max);
    let coldest = log.iter().map(|s| s.min_temperature_k).fold(f64::INFINITY, f64::min);
    if hottest > cell.temperature_max_k || coldest < cell.temperature_min_k {
        out.push(format!(
            "the cell reaches {:.1}–{:.1} °C, outside its limits of {:.1}–{:.1} °C",
            coldest - ZERO_CELSIUS_K,
            hottest - ZERO_CELSIUS_K,
            cell.temperature_min_k - ZERO_CELSIUS_K,
            cell.temperature_max_k - ZERO_CELSIUS_K
        ));
    }
    let days = forecaster.day(x_end);
    let cycles = if forecaster.cycling() { x_end } else { 0.0 };
    match cell.calibration {
        None => out.push(
            "the cell's aging parameters carry no calibration range: treat this forecast as illustrative until they are \
             fitted to measured aging data"
                .into(),
        ),
        Some(range) => {
            let beyond_cycles = range.cycles.map(|c| cycles / c).unwrap_or(0.0);
            let beyond_days = range.days.map(|d| days / d).unwrap_or(0.0);
            let factor = beyond_cycles.max(beyond_days);
            if factor > 2.0 {
                out.push(format!(
                    "the horizon reaches {factor:.1}× beyond the aging data the parameters were calibrated on: the \
                     forecast is an extrapolation"
                ));
            }
        }
    }
    out
}
