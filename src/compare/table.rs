//! Fade tables for system models: the scenario's cell under a standard cycle at each
//! condition of a grid (ambient × C-rate × state-of-charge window), forecast over the horizon.
//!
//! The standard cycle is built here, not read from a file, so every condition runs the same
//! shape of cycle: constant-current discharge at the C-rate to the window's lower state of
//! charge, a ten-minute rest, constant-current charge at the same C-rate to its upper state of
//! charge, a ten-minute rest. The cell's voltage limits end either current step too, so a
//! window wider than the cell reaches at that rate ends on voltage (no constant-voltage phase:
//! the table isolates rate, window and temperature). The ambient is held constant and the cell
//! idles between cycles at the top of its window.

use super::run::CompareError;
use crate::cycle::{simulate_periodic_cycle, Cell, Drive, DutyCycle, Health, Scenario, SolverSettings};
use crate::cycle::{Step, StepEnd, StepProfile};
use crate::ensemble::{quantile, Sampler};
use crate::forecast::{run_forecast, Ambient, Forecast, ForecastOptions, Horizon, Plan};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use rayon::prelude::*;

/// Quantiles reported per point when the table is sampled, unless the command asks others.
pub const TABLE_QUANTILES: [f64; 3] = [0.05, 0.5, 0.95];
const REST_S: f64 = 600.0;

/// One operating condition of the grid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Condition {
    pub ambient_c: f64,
    /// Charge and discharge current over the cell's nominal capacity, 1/h.
    pub c_rate: f64,
    /// State-of-charge window, fractions 0–1, low < high.
    pub soc_low: f64,
    pub soc_high: f64,
}

impl Condition {
    /// "25 °C, 1C, 10–90 %", to name the condition in messages.
    pub fn label(&self) -> String {
        format!("{} °C, {}C, {}–{} %", self.ambient_c, self.c_rate, self.soc_low * 100.0, self.soc_high * 100.0)
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TableConfig {
    /// Samples per condition; 0 runs the nominal inputs only.
    pub samples: u64,
    pub horizon: Horizon,
    pub options: ForecastOptions,
    pub jobs: usize,
    /// Low, median and high quantile of the sampled columns (fractions).
    pub quantiles: [f64; 3],
}

/// One condition's forecast.
#[derive(Debug, Clone, PartialEq)]
pub struct ConditionResult {
    pub condition: Condition,
    /// The nominal inputs' forecast: every row's cycle, day, throughput and central values.
    pub nominal: Forecast,
    /// When sampled: per reported point of the nominal forecast, the configured quantiles of
    /// state of health and of resistance growth over the samples covering the whole horizon.
    pub quantiles: Option<Vec<[[f64; 3]; 2]>>,
    /// Samples left out of the quantiles: inputs breaking a rule, or a forecast stopping early.
    pub samples_left_out: usize,
}

/// The standard cycle of a condition for a cell (see the module docs).
pub fn standard_cycle(cell: &Cell, condition: &Condition) -> StepProfile {
    standard_pack_cycle(cell, condition, 1, 1)
}

/// The standard cycle of a condition for `parallel` cells per group and `series` groups: the
/// same C-rate of the pack's rated capacity, the cell's voltage window times the groups.
pub fn standard_pack_cycle(cell: &Cell, condition: &Condition, parallel: usize, series: usize) -> StepProfile {
    let current_a = condition.c_rate * cell.nominal_capacity_coulomb * parallel as f64 / SECONDS_PER_HOUR;
    let (voltage_min_v, voltage_max_v) = (cell.voltage_min_v * series as f64, cell.voltage_max_v * series as f64);
    let step = |label: &str, drive: Drive, ends: Vec<StepEnd>| Step { label: label.into(), drive, ends };
    StepProfile {
        name: format!("standard cycle, {}", condition.label()),
        steps: vec![
            step(
                "discharge",
                Drive::Current(current_a),
                vec![StepEnd::Soc(condition.soc_low), StepEnd::Voltage(voltage_min_v)],
            ),
            step("rest after discharge", Drive::Rest, vec![StepEnd::Time(REST_S)]),
            step(
                "charge",
                Drive::Current(-current_a),
                vec![StepEnd::Soc(condition.soc_high), StepEnd::Voltage(voltage_max_v)],
            ),
            step("rest after charge", Drive::Rest, vec![StepEnd::Time(REST_S)]),
        ],
    }
}

/// The scenario and plan of a condition: the standard cycle, a constant ambient, idle at the
/// top of the window; the cell, cycles per day, horizon and end of life stay as given.
pub fn condition_scenario(scenario: Scenario, plan: Plan, condition: &Condition) -> (Scenario, Plan) {
    let ambient_k = condition.ambient_c + ZERO_CELSIUS_K;
    let (parallel, series) = scenario.pack.as_ref().map_or((1, 1), |pack| (pack.parallel, pack.series));
    let duty = DutyCycle::Steps(standard_pack_cycle(&scenario.cell, condition, parallel, series));
    let scenario = Scenario { duty, ambient_k, start_soc: condition.soc_high, ..scenario };
    let mut plan = plan;
    plan.usage.ambient_k = Ambient::Constant(ambient_k);
    plan.usage.rest_soc = condition.soc_high;
    (scenario, plan)
}

/// Forecasts every condition on the nominal inputs and, with a sampler, on every sample
/// (`build` turns a draw into the scenario before the condition is applied). Each condition's
/// cycle is first simulated on the fresh cell, so one the cell cannot run is refused up front.
pub fn run_table<B>(
    conditions: &[Condition],
    nominal: &(Scenario, Plan),
    sampler: Option<&Sampler>,
    config: &TableConfig,
    build: &B,
) -> Result<Vec<ConditionResult>, CompareError>
where
    B: Fn(&[f64]) -> Result<(Scenario, Plan), String> + Sync,
{
    run_table_observed(conditions, nominal, sampler, config, build, &|| {})
}

/// How many forecasts [`run_table_observed`] reports: every condition's nominal one and, with
/// samples, one per condition and sample.
pub fn table_tasks(conditions: &[Condition], sampler: Option<&Sampler>, config: &TableConfig) -> u64 {
    let per_condition = 1 + sampler.filter(|_| config.samples > 0).map_or(0, |_| config.samples);
    conditions.len() as u64 * per_condition
}

/// [`run_table`], calling `done` as each forecast ends ([`table_tasks`]), from any thread.
pub fn run_table_observed<B>(
    conditions: &[Condition],
    nominal: &(Scenario, Plan),
    sampler: Option<&Sampler>,
    config: &TableConfig,
    build: &B,
    done: &(dyn Fn() + Sync),
) -> Result<Vec<ConditionResult>, CompareError>
where
    B: Fn(&[f64]) -> Result<(Scenario, Plan), String> + Sync,
{
    let settings = SolverSettings::default();
    let nominal_runs: Vec<(Scenario, Plan)> =
        conditions.iter().map(|c| condition_scenario(nominal.0.clone(), nominal.1.clone(), c)).collect();
    for (index, ((scenario, _), condition)) in nominal_runs.iter().zip(conditions).enumerate() {
        simulate_periodic_cycle(scenario, &Health::fresh(&scenario.cell), &settings)
            .map_err(|e| CompareError::Unrunnable { index, name: condition.label(), detail: e.to_string() })?;
    }
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(config.jobs.max(1))
        .build()
        .map_err(|e| CompareError::Threads { jobs: config.jobs, detail: e.to_string() })?;
    let sampler = sampler.filter(|_| config.samples > 0);
    let results = pool.install(|| {
        let forecasts: Vec<Forecast> = nominal_runs
            .par_iter()
            .map(|(scenario, plan)| {
                let forecast = run_forecast(scenario, plan, config.horizon, &config.options);
                done();
                forecast
            })
            .collect();
        // Samples: every (condition, sample) pair is one task; sample i uses draw i everywhere.
        let sampled: Vec<Vec<Option<Forecast>>> = match sampler {
            None => Vec::new(),
            Some(sampler) => conditions
                .par_iter()
                .map(|condition| {
                    (0..config.samples)
                        .into_par_iter()
                        .map(|i| {
                            let built = build(&sampler.draw_for_build(i)).ok().map(|(scenario, plan)| {
                                let (scenario, plan) = condition_scenario(scenario, plan, condition);
                                run_forecast(&scenario, &plan, config.horizon, &config.options)
                            });
                            done();
                            built
                        })
                        .collect()
                })
                .collect(),
        };
        (forecasts, sampled)
    });
    let (forecasts, sampled) = results;
    Ok(forecasts
        .into_iter()
        .zip(conditions)
        .enumerate()
        .map(|(c, (nominal, condition))| {
            let (quantiles, samples_left_out) = match sampled.get(c) {
                Some(samples) => {
                    let (q, left_out) = point_quantiles(&nominal, samples, config.quantiles);
                    (Some(q), left_out)
                }
                None => (None, 0),
            };
            ConditionResult { condition: *condition, nominal, quantiles, samples_left_out }
        })
        .collect())
}

/// Quantiles of state of health and resistance growth per reported point over the samples that
/// reached the horizon with the nominal forecast's grid; returns them and how many were left out.
fn point_quantiles(
    nominal: &Forecast,
    samples: &[Option<Forecast>],
    quantiles: [f64; 3],
) -> (Vec<[[f64; 3]; 2]>, usize) {
    let n = nominal.points.len();
    let complete: Vec<&Forecast> = samples.iter().flatten().filter(|f| f.points.len() == n).collect();
    let quantiles = (0..n)
        .map(|k| {
            let q = |value: fn(&crate::forecast::FadePoint) -> f64| {
                let mut v: Vec<f64> = complete.iter().map(|f| value(&f.points[k])).filter(|x| !x.is_nan()).collect();
                v.sort_by(|a, b| a.total_cmp(b));
                quantiles.map(|p| quantile(&v, p))
            };
            [q(|p| p.soh_pct), q(|p| p.resistance_growth_pct)]
        })
        .collect();
    (quantiles, samples.len() - complete.len())
}
