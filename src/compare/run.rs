//! Running the alternatives: the nominal check at beginning of life, then every alternative on
//! every sample (or once each, deterministically), each forecast reduced to an [`Outcome`].

use crate::cycle::{simulate_periodic_cycle, CycleRecord, Health, Scenario, SolverSettings};
use crate::ensemble::{SampleStatus, Sampler};
use crate::forecast::{
    run_forecast, Forecast, ForecastOptions, ForecastWarning, Horizon, LifeAt, Plan, StopReason, WarningSet,
};
use rayon::prelude::*;
use thiserror::Error;

const DAYS_PER_YEAR: f64 = 365.25;

/// One alternative with its nominal inputs (no draws applied).
#[derive(Debug, Clone)]
pub struct Alternative {
    pub name: String,
    pub scenario: Scenario,
    pub plan: Plan,
}

/// Everything fixed for a comparison.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CompareConfig {
    /// Samples per alternative; 0 runs each alternative's nominal inputs once.
    pub samples: u64,
    pub horizon: Horizon,
    pub options: ForecastOptions,
    /// Worker threads.
    pub jobs: usize,
}

#[derive(Debug, Error)]
pub enum CompareError {
    /// The alternative's duty cycle fails on the fresh cell (e.g. a power it cannot deliver).
    #[error("\"{name}\" cannot run on the cell at beginning of life: {detail}")]
    Unrunnable { index: usize, name: String, detail: String },
    #[error("could not start {jobs} worker threads: {detail}")]
    Threads { jobs: usize, detail: String },
}

/// Where an alternative's life ended on one sample.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Life {
    /// A threshold (the first crossed of capacity and resistance) was reached here.
    Reached(LifeAt),
    /// No threshold was reached by the horizon, which is given: life is longer than that.
    Censored(LifeAt),
}

impl Life {
    /// The end of life, or the horizon when censored (a lower bound).
    pub fn at(&self) -> LifeAt {
        match *self {
            Life::Reached(at) | Life::Censored(at) => at,
        }
    }

    pub fn is_censored(&self) -> bool {
        matches!(self, Life::Censored(_))
    }
}

/// One alternative on one sample, reduced to what the comparison reports.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    pub status: SampleStatus,
    /// None when the inputs were invalid, or the forecast failed before any end of life.
    pub life: Option<Life>,
    /// Energy delivered on discharge up to the end of life (up to the horizon when censored), Wh.
    pub energy_to_end_wh: f64,
    /// NaN when the forecast did not reach the horizon.
    pub soh_at_horizon_pct: f64,
    /// Highest peak cell temperature of any simulated duty cycle, °C.
    pub peak_temperature_c: f64,
    /// The kinds of warning the forecast gave (plating, limits, calibration).
    pub warnings: WarningSet,
    /// The warnings themselves, with their numbers (for a deterministic comparison's report).
    pub warning_details: Vec<ForecastWarning>,
    /// The fade curve at the reported points: (cycle, day, state of health %).
    pub curve: Vec<(f64, f64, f32)>,
}

/// Every outcome of a comparison, by alternative then sample.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    pub names: Vec<String>,
    /// `outcomes[alternative][sample]`; one sample per alternative when deterministic.
    pub outcomes: Vec<Vec<Outcome>>,
    /// False when each alternative ran once on its nominal inputs.
    pub sampled: bool,
    /// Time spent charging in one beginning-of-life periodic cycle, per alternative, s.
    pub charge_time_s: Vec<f64>,
}

/// Time with a charging current in a cycle: the trace's steps whose current charges the cell
/// (constant-current and constant-voltage charging alike; rests excluded), s.
pub fn charge_time_s(record: &CycleRecord) -> f64 {
    record.trace.iter().filter(|p| p.current_a < 0.0).map(|p| p.dt_s).sum()
}

/// Simulates each alternative's duty cycle on the fresh cell, so a protocol the cell cannot
/// run (a power it cannot deliver, a step that never ends) is refused before any forecast.
/// Returns each alternative's charge time per cycle, s.
pub fn check_runs_at_beginning_of_life(alternatives: &[Alternative]) -> Result<Vec<f64>, CompareError> {
    let settings = SolverSettings::default();
    alternatives
        .iter()
        .enumerate()
        .map(|(index, alternative)| {
            let health = Health::fresh(&alternative.scenario.cell);
            simulate_periodic_cycle(&alternative.scenario, &health, &settings)
                .map(|record| charge_time_s(&record))
                .map_err(|e| CompareError::Unrunnable { index, name: alternative.name.clone(), detail: e.to_string() })
        })
        .collect()
}

/// Runs every alternative on the same samples: sample i of each alternative is
/// `build(alternative, &sampler.draw(i))`, so differences are paired. Without a sampler, or
/// with `config.samples == 0`, each alternative runs once on its nominal inputs.
pub fn run_comparison<B>(
    alternatives: &[Alternative],
    sampler: Option<&Sampler>,
    config: &CompareConfig,
    build: &B,
) -> Result<Comparison, CompareError>
where
    B: Fn(usize, &[f64]) -> Result<(Scenario, Plan), String> + Sync,
{
    run_comparison_observed(alternatives, sampler, config, build, &|| {})
}

/// How many tasks [`run_comparison_observed`] reports: one per sample (every alternative on
/// its draw), or one per alternative without samples.
pub fn comparison_tasks(alternatives: &[Alternative], sampler: Option<&Sampler>, config: &CompareConfig) -> u64 {
    match sampler.filter(|_| config.samples > 0) {
        Some(_) => config.samples,
        None => alternatives.len() as u64,
    }
}

/// [`run_comparison`], calling `done` as each task ends ([`comparison_tasks`]), from any
/// thread, so a caller can show progress.
pub fn run_comparison_observed<B>(
    alternatives: &[Alternative],
    sampler: Option<&Sampler>,
    config: &CompareConfig,
    build: &B,
    done: &(dyn Fn() + Sync),
) -> Result<Comparison, CompareError>
where
    B: Fn(usize, &[f64]) -> Result<(Scenario, Plan), String> + Sync,
{
    let charge_time_s = check_runs_at_beginning_of_life(alternatives)?;
    let names = alternatives.iter().map(|a| a.name.clone()).collect();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(config.jobs.max(1))
        .build()
        .map_err(|e| CompareError::Threads { jobs: config.jobs, detail: e.to_string() })?;
    let sampler = sampler.filter(|_| config.samples > 0);
    let outcomes = match sampler {
        None => pool.install(|| {
            alternatives
                .par_iter()
                .map(|a| {
                    let outcome = outcome_of(&run_forecast(&a.scenario, &a.plan, config.horizon, &config.options));
                    done();
                    vec![outcome]
                })
                .collect()
        }),
        Some(sampler) => {
            // One task per sample runs all alternatives on its draw: the draw is made once.
            let by_sample: Vec<Vec<Outcome>> = pool.install(|| {
                (0..config.samples)
                    .into_par_iter()
                    .map(|i| {
                        let values = sampler.draw_for_build(i);
                        let outcomes = (0..alternatives.len())
                            .map(|a| match build(a, &values) {
                                Ok((scenario, plan)) => {
                                    outcome_of(&run_forecast(&scenario, &plan, config.horizon, &config.options))
                                }
                                Err(message) => invalid(message),
                            })
                            .collect();
                        done();
                        outcomes
                    })
                    .collect()
            });
            let mut outcomes: Vec<Vec<Outcome>> = vec![Vec::with_capacity(by_sample.len()); alternatives.len()];
            for sample in by_sample {
                for (a, outcome) in sample.into_iter().enumerate() {
                    outcomes[a].push(outcome);
                }
            }
            outcomes
        }
    };
    Ok(Comparison { names, outcomes, sampled: sampler.is_some(), charge_time_s })
}

fn invalid(message: String) -> Outcome {
    Outcome {
        status: SampleStatus::Invalid(message),
        life: None,
        energy_to_end_wh: f64::NAN,
        soh_at_horizon_pct: f64::NAN,
        peak_temperature_c: f64::NAN,
        warnings: WarningSet::default(),
        warning_details: Vec::new(),
        curve: Vec::new(),
    }
}

/// Reduces a forecast: life at the first threshold crossed (censored at the last reported
/// point when none was and the horizon was reached), energy delivered up to it, and the rest.
pub(crate) fn outcome_of(f: &Forecast) -> Outcome {
    let reached = f
        .end_of_life
        .iter()
        .filter_map(|e| e.reached)
        .min_by(|a, b| a.years.partial_cmp(&b.years).unwrap_or(std::cmp::Ordering::Equal));
    let last = f.points.last();
    let horizon_reached = matches!(f.stop, StopReason::Horizon);
    let life = match (reached, last) {
        (Some(at), _) => Some(Life::Reached(at)),
        (None, Some(p)) if horizon_reached => {
            Some(Life::Censored(LifeAt { cycles: p.cycle, efc: p.efc, years: p.day / DAYS_PER_YEAR }))
        }
        _ => None,
    };
    Outcome {
        status: SampleStatus::of_stop(&f.stop, f.points.iter().any(|p| p.cycle > 0.0)),
        energy_to_end_wh: life.map_or(f64::NAN, |l| energy_at_day(f, l.at().years * DAYS_PER_YEAR)),
        life,
        soh_at_horizon_pct: if horizon_reached { last.map_or(f64::NAN, |p| p.soh_pct) } else { f64::NAN },
        peak_temperature_c: f.points.iter().map(|p| p.peak_temperature_c).fold(f64::NEG_INFINITY, f64::max),
        warnings: f.warning_set(),
        warning_details: f.warnings.clone(),
        curve: f.points.iter().map(|p| (p.cycle, p.day, p.soh_pct as f32)).collect(),
    }
}

/// Discharge energy delivered by a calendar day, interpolated linearly between reported
/// points (the last point's value beyond it).
fn energy_at_day(f: &Forecast, day: f64) -> f64 {
    for w in f.points.windows(2) {
        if w[0].day <= day && day <= w[1].day {
            let span = w[1].day - w[0].day;
            let t = if span > 0.0 { (day - w[0].day) / span } else { 0.0 };
            return w[0].energy_wh + t * (w[1].energy_wh - w[0].energy_wh);
        }
    }
    f.points.last().map_or(f64::NAN, |p| p.energy_wh)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cycle::TracePoint;
    use crate::forecast::{EndOfLifePoint, FadePoint, Threshold};

    fn point(day: f64, energy_wh: f64) -> FadePoint {
        FadePoint { cycle: day, day, efc: day, energy_wh, soh_pct: 100.0 - day / 10.0, ..FadePoint::default() }
    }

    fn forecast(reached: Option<LifeAt>) -> Forecast {
        Forecast {
            points: vec![point(0.0, 0.0), point(100.0, 1000.0), point(200.0, 1900.0)],
            end_of_life: vec![EndOfLifePoint { threshold: Threshold::Capacity, level_pct: 80.0, reached }],
            stop: StopReason::Horizon,
            scale: Default::default(),
            simulated_cycles: 0,
            accepted_steps: 0,
            rejected_steps: 0,
            every_cycle: false,
            fresh_capacity_ah: 5.0,
            fresh_resistance_mohm: 6.0,
            warnings: vec![],
            final_state: None,
            interface_rise: None,
            pack: None,
        }
    }

    #[test]
    fn energy_is_interpolated_at_the_end_of_life() {
        let at = LifeAt { cycles: 150.0, efc: 150.0, years: 150.0 / DAYS_PER_YEAR };
        let o = outcome_of(&forecast(Some(at)));
        assert_eq!(o.life, Some(Life::Reached(at)));
        assert!((o.energy_to_end_wh - 1450.0).abs() < 1e-9);
    }

    #[test]
    fn a_life_beyond_the_horizon_is_censored_there_not_dropped() {
        let o = outcome_of(&forecast(None));
        let life = o.life.expect("censored, not missing");
        assert!(life.is_censored());
        assert_eq!(life.at().cycles, 200.0);
        assert!((o.energy_to_end_wh - 1900.0).abs() < 1e-9);
    }

    #[test]
    fn charge_time_counts_only_charging_steps() {
        let mut record = CycleRecord::default();
        for (dt_s, current_a) in [(0.0, 0.0), (60.0, 5.0), (30.0, 0.0), (120.0, -5.0), (40.0, -0.5)] {
            record.trace.push(TracePoint { dt_s, current_a, ..TracePoint::default() });
        }
        assert_eq!(charge_time_s(&record), 160.0);
    }
}
