//! Reducing sample records to what an engineer reads: quantile bands on the reported grid,
//! the end-of-life distribution with Monte Carlo errors, warranty odds with an exact binomial
//! interval, and the rank correlation of each uncertain input with life.

use super::run::{SampleRecord, Warranty, CURVE_QUANTITIES};
use super::stats::{clopper_pearson, quantile, quantile_standard_error, spearman};
use super::status::SampleStatus;
use crate::forecast::{WarningKind, WarningSet};
use serde::Serialize;

/// One quantile of an end-of-life distribution. `value` None: the quantile lies among samples
/// that had not reached end of life at the horizon.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct QuantileEstimate {
    pub p: f64,
    pub value: Option<f64>,
    pub standard_error: Option<f64>,
}

/// The end-of-life distribution for one threshold, in cycles and years.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LifeDistribution {
    pub threshold: &'static str,
    /// Fraction of counted samples that reached this end of life within the horizon.
    pub reached_fraction: f64,
    pub cycles: Vec<QuantileEstimate>,
    pub years: Vec<QuantileEstimate>,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WarrantyOdds {
    pub years: f64,
    pub soh_pct: f64,
    pub met: u64,
    pub trials: u64,
    pub probability: f64,
    /// 95 % Clopper–Pearson interval of the probability.
    pub interval_95: (f64, f64),
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sensitivity {
    pub path: String,
    /// Spearman rank correlation with the life measure (positive: more of it, longer life).
    pub rank_correlation: f64,
}

/// Quantiles of each curve quantity at one reported point.
#[derive(Debug, Clone, PartialEq)]
pub struct BandPoint {
    pub cycle: f64,
    pub day: f64,
    /// `values[q][p]`: quantity q of [`CURVE_QUANTITIES`] at quantile p.
    pub values: [Vec<f64>; 3],
}

/// The largest share of a run's samples that may be left out (invalid draws, forecasts that
/// failed before end of life) with statistics still reported. Left-out draws are rarely a fair
/// sample (they sit at the edges of the ranges), so beyond this the quantiles would describe
/// a different population. Common practice, no source.
pub const MOST_LEFT_OUT_FRACTION: f64 = 0.1;

#[derive(Debug, Clone, PartialEq)]
pub struct EnsembleSummary {
    pub samples: u64,
    pub counted: u64,
    pub invalid: u64,
    pub failed: u64,
    pub quantiles: Vec<f64>,
    pub life: Vec<LifeDistribution>,
    pub warranty: Option<WarrantyOdds>,
    /// What life the sensitivity ranks against ("end of life (capacity), cycles" or the state of
    /// health at the horizon when no sample reached end of life).
    pub sensitivity_measure: String,
    pub sensitivity: Vec<Sensitivity>,
    pub bands: Vec<BandPoint>,
    /// Fraction of counted samples whose duty cycle drove the negative below lithium.
    pub plating_fraction: f64,
    /// Every kind of warning with the number of counted samples that gave it (kinds no
    /// sample gave are left out).
    pub warning_counts: Vec<(WarningKind, usize)>,
}

impl EnsembleSummary {
    /// Samples that ran but are not counted, plus invalid draws.
    pub fn left_out(&self) -> u64 {
        self.samples - self.counted
    }

    /// Whether too many samples were left out for the statistics to stand
    /// ([`MOST_LEFT_OUT_FRACTION`]).
    pub fn statistics_refused(&self) -> bool {
        self.samples > 0 && self.left_out() as f64 > MOST_LEFT_OUT_FRACTION * self.samples as f64
    }
}

/// Summarises records (sorted by index) of a run over `grid` (the reported (cycle, day) points);
/// `parameters` names the drawn values of each record, in order.
pub fn summarize(
    records: &[SampleRecord],
    parameters: &[String],
    quantiles: &[f64],
    grid: &[(f64, f64)],
    warranty: Option<Warranty>,
) -> EnsembleSummary {
    // Counted: samples that ran; a failed forecast still counts if it ended after end of life.
    let counted: Vec<&SampleRecord> = records
        .iter()
        .filter(|r| {
            matches!(r.status, SampleStatus::Ok)
                || (matches!(r.status, SampleStatus::Failed { .. }) && r.capacity_end.is_some())
        })
        .collect();
    let invalid = records.iter().filter(|r| matches!(r.status, SampleStatus::Invalid(_))).count() as u64;
    let failed = records.iter().filter(|r| matches!(r.status, SampleStatus::Failed { .. })).count() as u64;

    let distribution = |name: &'static str, end: fn(&SampleRecord) -> Option<crate::forecast::LifeAt>| {
        let mut cycles: Vec<f64> = counted.iter().map(|r| end(r).map_or(f64::INFINITY, |a| a.cycles)).collect();
        let mut years: Vec<f64> = counted.iter().map(|r| end(r).map_or(f64::INFINITY, |a| a.years)).collect();
        cycles.sort_by(f64::total_cmp);
        years.sort_by(f64::total_cmp);
        let reached = cycles.iter().filter(|c| c.is_finite()).count();
        LifeDistribution {
            threshold: name,
            reached_fraction: if cycles.is_empty() { 0.0 } else { reached as f64 / cycles.len() as f64 },
            cycles: estimates(&cycles, quantiles),
            years: estimates(&years, quantiles),
        }
    };
    let life = vec![distribution("capacity", |r| r.capacity_end), distribution("resistance", |r| r.resistance_end)];

    let warranty = warranty.map(|w| {
        let judged: Vec<&&SampleRecord> =
            counted.iter().filter(|r| r.soh_at_warranty_pct.is_finite() || r.capacity_end.is_some()).collect();
        // A sample that failed before the warranty point after reaching end of life did not meet it.
        let met =
            judged.iter().filter(|r| r.soh_at_warranty_pct.is_finite() && r.soh_at_warranty_pct >= w.soh_pct).count()
                as u64;
        let trials = judged.len() as u64;
        WarrantyOdds {
            years: w.years,
            soh_pct: w.soh_pct,
            met,
            trials,
            probability: if trials > 0 { met as f64 / trials as f64 } else { f64::NAN },
            interval_95: clopper_pearson(met, trials, 0.95),
        }
    });

    let any_reached = counted.iter().any(|r| r.capacity_end.is_some());
    let (sensitivity_measure, life_measure): (String, Vec<f64>) = if any_reached {
        (
            "end of life (capacity), cycles".into(),
            counted.iter().map(|r| r.capacity_end.map_or(f64::INFINITY, |a| a.cycles)).collect(),
        )
    } else {
        ("state of health at the horizon, %".into(), counted.iter().map(|r| r.soh_at_horizon_pct).collect())
    };
    let mut sensitivity: Vec<Sensitivity> = parameters
        .iter()
        .enumerate()
        .map(|(k, path)| {
            let x: Vec<f64> = counted.iter().map(|r| r.values[k]).collect();
            Sensitivity { path: path.clone(), rank_correlation: spearman(&x, &life_measure) }
        })
        .collect();
    sensitivity.sort_by(|a, b| b.rank_correlation.abs().total_cmp(&a.rank_correlation.abs()).then(a.path.cmp(&b.path)));

    let complete: Vec<&&SampleRecord> = counted.iter().filter(|r| r.curves.len() == grid.len()).collect();
    let bands = grid
        .iter()
        .enumerate()
        .map(|(k, &(cycle, day))| {
            let column = |q: usize| {
                let mut v: Vec<f64> = complete.iter().map(|r| r.curves[k][q] as f64).collect();
                v.sort_by(f64::total_cmp);
                quantiles.iter().map(|&p| if v.is_empty() { f64::NAN } else { quantile(&v, p) }).collect::<Vec<f64>>()
            };
            BandPoint { cycle, day, values: [column(0), column(1), column(2)] }
        })
        .collect();
    debug_assert_eq!(CURVE_QUANTITIES.len(), 3);

    EnsembleSummary {
        samples: records.len() as u64,
        counted: counted.len() as u64,
        invalid,
        failed,
        quantiles: quantiles.to_vec(),
        life,
        warranty,
        sensitivity_measure,
        sensitivity,
        bands,
        plating_fraction: if counted.is_empty() {
            0.0
        } else {
            counted.iter().filter(|r| r.warnings.contains(WarningKind::Plating)).count() as f64 / counted.len() as f64
        },
        warning_counts: count_warnings(counted.iter().map(|r| r.warnings)),
    }
}

/// How many of the given sets hold each kind of warning (kinds held by none left out).
pub fn count_warnings(sets: impl Iterator<Item = WarningSet>) -> Vec<(WarningKind, usize)> {
    let mut counts = [0usize; WarningKind::ALL.len()];
    for set in sets {
        for kind in set.kinds() {
            counts[kind as usize] += 1;
        }
    }
    WarningKind::ALL.into_iter().zip(counts).filter(|(_, n)| *n > 0).collect()
}

/// Quantile estimates of a sorted sample that may end in +∞ (not reached).
fn estimates(sorted: &[f64], quantiles: &[f64]) -> Vec<QuantileEstimate> {
    quantiles
        .iter()
        .map(|&p| {
            if sorted.is_empty() {
                return QuantileEstimate { p, value: None, standard_error: None };
            }
            let value = quantile(sorted, p);
            let error = quantile_standard_error(sorted, p);
            QuantileEstimate {
                p,
                value: value.is_finite().then_some(value),
                standard_error: (value.is_finite() && error.is_finite()).then_some(error),
            }
        })
        .collect()
}
