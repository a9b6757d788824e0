//! Running the ensemble: each sample draws its inputs from its own stream, builds its scenario
//! through a caller-supplied function (the command layer loads files; this module does no
//! I/O), forecasts it, and reduces the forecast to a compact record: its drawn values, end of
//! life, state at the horizon and its curves on the reported grid. Records are independent of
//! each other, so samples run in parallel (rayon) in any order and any split into shards, and
//! [`summarize`] of the same records sorted by index always gives the same numbers.

use super::sampling::Sampler;
use super::status::SampleStatus;
use crate::cycle::Scenario;
use crate::forecast::{run_forecast, Forecast, ForecastOptions, Horizon, LifeAt, Plan, Threshold, WarningSet};
use rayon::prelude::*;

/// Which part of the samples this run computes: sample i belongs to shard `i % count + 1`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// 1-based.
    pub index: u64,
    pub count: u64,
}

impl Shard {
    pub const WHOLE: Shard = Shard { index: 1, count: 1 };

    pub fn contains(&self, sample: u64) -> bool {
        sample % self.count + 1 == self.index
    }
}

/// Quantities kept per reported point for the bands.
pub const CURVE_QUANTITIES: [&str; 3] = ["capacity_ah", "soh_pct", "resistance_mohm"];

/// One sample, reduced to what the summary needs. Curves are f32: bands need no more, and
/// 100 000 samples × 101 points × 3 quantities stay near 120 MB.
#[derive(Debug, Clone, PartialEq)]
pub struct SampleRecord {
    pub index: u64,
    pub values: Vec<f64>,
    pub status: SampleStatus,
    pub capacity_end: Option<LifeAt>,
    pub resistance_end: Option<LifeAt>,
    pub soh_at_horizon_pct: f64,
    pub resistance_growth_at_horizon_pct: f64,
    /// State of health at the warranty point, % (NaN without a warranty point).
    pub soh_at_warranty_pct: f64,
    /// The kinds of warning the sample's forecast gave (plating, limits, calibration).
    pub warnings: WarningSet,
    /// Per reported point: capacity (Ah), state of health (%), resistance (mΩ).
    pub curves: Vec<[f32; 3]>,
}

/// A warranty point: state of health still at or above `soh_pct` after `years`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Warranty {
    pub years: f64,
    pub soh_pct: f64,
}

/// Everything fixed for a run.
#[derive(Debug, Clone, PartialEq)]
pub struct EnsembleConfig {
    pub samples: u64,
    pub seed: u64,
    pub shard: Shard,
    pub horizon: Horizon,
    pub warranty: Option<Warranty>,
    pub options: ForecastOptions,
}

/// Forecasts one sample from its drawn values.
pub fn run_sample<B>(sampler: &Sampler, config: &EnsembleConfig, build: &B, index: u64) -> SampleRecord
where
    B: Fn(&[f64]) -> Result<(Scenario, Plan), String> + Sync,
{
    let values = sampler.draw(index);
    let empty = |status| SampleRecord {
        index,
        values: values.clone(),
        status,
        capacity_end: None,
        resistance_end: None,
        soh_at_horizon_pct: f64::NAN,
        resistance_growth_at_horizon_pct: f64::NAN,
        soh_at_warranty_pct: f64::NAN,
        warnings: WarningSet::default(),
        curves: Vec::new(),
    };
    let built = if sampler.draws_cells() { build(&sampler.draw_for_build(index)) } else { build(&values) };
    let (scenario, plan) = match built {
        Ok(built) => built,
        Err(message) => return empty(SampleStatus::Invalid(message)),
    };
    let forecast = run_forecast(&scenario, &plan, config.horizon, &config.options);
    let status = SampleStatus::of_stop(&forecast.stop, plan.usage.cycles_per_day > 0.0);
    reduce(index, values, status, &forecast, config.warranty)
}

fn reduce(
    index: u64,
    values: Vec<f64>,
    status: SampleStatus,
    f: &Forecast,
    warranty: Option<Warranty>,
) -> SampleRecord {
    let end = |t: Threshold| f.end_of_life.iter().find(|e| e.threshold == t).and_then(|e| e.reached);
    let last = f.points.last();
    let soh_at_warranty_pct = warranty.map_or(f64::NAN, |w| soh_at_day(f, w.years * 365.25));
    SampleRecord {
        index,
        values,
        status,
        capacity_end: end(Threshold::Capacity),
        resistance_end: end(Threshold::Resistance),
        soh_at_horizon_pct: last.map_or(f64::NAN, |p| p.soh_pct),
        resistance_growth_at_horizon_pct: last.map_or(f64::NAN, |p| p.resistance_growth_pct),
        soh_at_warranty_pct,
        warnings: f.warning_set(),
        curves: f.points.iter().map(|p| [p.capacity_ah as f32, p.soh_pct as f32, p.resistance_mohm as f32]).collect(),
    }
}

/// State of health on a calendar day, interpolated linearly between reported points (NaN
/// beyond the last one).
fn soh_at_day(f: &Forecast, day: f64) -> f64 {
    f.points
        .windows(2)
        .find(|w| w[0].day <= day && day <= w[1].day)
        .map(|w| {
            let span = w[1].day - w[0].day;
            let t = if span > 0.0 { (day - w[0].day) / span } else { 0.0 };
            w[0].soh_pct + t * (w[1].soh_pct - w[0].soh_pct)
        })
        .unwrap_or(f64::NAN)
}

/// Runs this shard's samples not in `done` on `jobs` threads, calling `observe` with each
/// record as it completes (in completion order, from the worker threads), and returns them
/// sorted by index.
pub fn run_ensemble<B, O>(
    sampler: &Sampler,
    config: &EnsembleConfig,
    build: &B,
    jobs: usize,
    done: &std::collections::BTreeSet<u64>,
    observe: &O,
) -> Result<Vec<SampleRecord>, rayon::ThreadPoolBuildError>
where
    B: Fn(&[f64]) -> Result<(Scenario, Plan), String> + Sync,
    O: Fn(&SampleRecord) + Sync,
{
    let todo: Vec<u64> = (0..config.samples).filter(|&i| config.shard.contains(i) && !done.contains(&i)).collect();
    let pool = rayon::ThreadPoolBuilder::new().num_threads(jobs.max(1)).build()?;
    let mut records: Vec<SampleRecord> = pool.install(|| {
        todo.par_iter()
            .map(|&i| {
                let record = run_sample(sampler, config, build, i);
                observe(&record);
                record
            })
            .collect()
    });
    records.sort_by_key(|r| r.index);
    Ok(records)
}
