//! Per-alternative statistics and paired differences against the first alternative.
//!
//! Life quantiles treat censored samples as `+∞` (see [`crate::ensemble::stats`]): a P90 of
//! `+∞` says "beyond the horizon", which is what is known. Paired differences use a censored
//! life at the horizon, so a difference involving one is a bound; they are counted.

use super::run::{Comparison, Life, Outcome};
use crate::ensemble::quantile;
use crate::ensemble::summary::count_warnings;
use crate::ensemble::SampleStatus;
use crate::forecast::WarningKind;

/// The low and high quantiles reported by default for life, state of health and paired
/// differences: the same P5 and P95 as `bands`, so every output's quantile columns match.
pub const SPREAD_QUANTILES: (f64, f64) = (0.05, 0.95);

/// The low quantile, median and high quantile of a quantity over the usable samples; the outer
/// two are None when the comparison ran deterministically (one run, no spread).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    pub low: Option<f64>,
    pub median: f64,
    pub high: Option<f64>,
}

/// State of health over the usable samples at one reported point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CurveBand {
    pub cycle: f64,
    pub day: f64,
    pub low: f64,
    pub median: f64,
    pub high: f64,
}

/// An alternative's life against the first alternative's on the same samples.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairedDifference {
    /// Samples usable in both alternatives.
    pub pairs: usize,
    /// Pairs where either life is censored at the horizon (their difference is a bound).
    pub censored_pairs: usize,
    /// Median of the per-sample differences (this alternative minus the first), cycles.
    pub median_cycles: f64,
    /// The low and high quantiles of the differences (None when deterministic), cycles.
    pub interval_cycles: Option<(f64, f64)>,
    pub median_efc: f64,
    pub interval_efc: Option<(f64, f64)>,
    /// Share of pairs in which this alternative lives longer than the first; a pair where both
    /// are censored is undecided and counts one half.
    pub probability_outlasts: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct AlternativeSummary {
    pub name: String,
    /// Samples that gave a life (reached or censored).
    pub usable: usize,
    pub censored: usize,
    /// Samples whose drawn inputs break an input rule, and forecasts that failed before any
    /// end of life: left out of the statistics, and counted here.
    pub invalid: usize,
    pub failed: usize,
    pub life_cycles: Spread,
    pub life_efc: Spread,
    pub life_years: Spread,
    /// Energy delivered on discharge up to end of life, Wh (`+∞` when censored).
    pub energy_to_end_wh: Spread,
    pub soh_at_horizon_pct: Spread,
    /// Highest peak cell temperature over every sample and cycle, °C.
    pub peak_temperature_c: f64,
    /// Share of samples in which plating was predicted.
    pub plating_fraction: f64,
    /// Time spent charging in one beginning-of-life cycle, s.
    pub charge_time_s: f64,
    /// Every kind of forecast warning with the number of samples that gave it.
    pub warning_counts: Vec<(WarningKind, usize)>,
    /// None for the first alternative (the reference).
    pub paired: Option<PairedDifference>,
    pub curve: Vec<CurveBand>,
}

/// Summarizes every alternative of a comparison at the default quantiles.
pub fn summarize_comparison(comparison: &Comparison) -> Vec<AlternativeSummary> {
    summarize_comparison_at(comparison, SPREAD_QUANTILES)
}

/// Summarizes every alternative of a comparison with `(low, high)` as the outer quantiles.
pub fn summarize_comparison_at(comparison: &Comparison, quantiles: (f64, f64)) -> Vec<AlternativeSummary> {
    let reference = comparison.outcomes.first();
    comparison
        .outcomes
        .iter()
        .enumerate()
        .map(|(a, outcomes)| {
            let usable: Vec<&Outcome> = outcomes.iter().filter(|o| o.life.is_some()).collect();
            let lives: Vec<Life> = usable.iter().filter_map(|o| o.life).collect();
            let life_value = |f: fn(&Life) -> f64| -> Vec<f64> {
                lives.iter().map(|l| if l.is_censored() { f64::INFINITY } else { f(l) }).collect()
            };
            let energy: Vec<f64> = usable
                .iter()
                .map(|o| if o.life.is_some_and(|l| l.is_censored()) { f64::INFINITY } else { o.energy_to_end_wh })
                .collect();
            let soh: Vec<f64> = usable.iter().map(|o| o.soh_at_horizon_pct).filter(|v| v.is_finite()).collect();
            let spread = |values: Vec<f64>| spread_of(values, comparison.sampled, quantiles);
            AlternativeSummary {
                name: comparison.names[a].clone(),
                usable: usable.len(),
                censored: lives.iter().filter(|l| l.is_censored()).count(),
                invalid: outcomes.iter().filter(|o| matches!(o.status, SampleStatus::Invalid(_))).count(),
                failed: outcomes
                    .iter()
                    .filter(|o| o.life.is_none() && matches!(o.status, SampleStatus::Failed { .. }))
                    .count(),
                life_cycles: spread(life_value(|l| l.at().cycles)),
                life_efc: spread(life_value(|l| l.at().efc)),
                life_years: spread(life_value(|l| l.at().years)),
                energy_to_end_wh: spread(energy),
                soh_at_horizon_pct: spread(soh),
                peak_temperature_c: outcomes
                    .iter()
                    .map(|o| o.peak_temperature_c)
                    .filter(|t| t.is_finite())
                    .fold(f64::NAN, f64::max),
                plating_fraction: if outcomes.is_empty() {
                    0.0
                } else {
                    outcomes.iter().filter(|o| o.warnings.contains(WarningKind::Plating)).count() as f64
                        / outcomes.len() as f64
                },
                charge_time_s: comparison.charge_time_s.get(a).copied().unwrap_or(f64::NAN),
                warning_counts: count_warnings(outcomes.iter().map(|o| o.warnings)),
                paired: match reference {
                    Some(first) if a > 0 => Some(paired_difference(first, outcomes, comparison.sampled, quantiles)),
                    _ => None,
                },
                curve: curve_bands(&usable, quantiles),
            }
        })
        .collect()
}

fn sorted(mut values: Vec<f64>) -> Vec<f64> {
    values.retain(|v| !v.is_nan());
    values.sort_by(|a, b| a.total_cmp(b));
    values
}

fn spread_of(values: Vec<f64>, sampled: bool, (low, high): (f64, f64)) -> Spread {
    let values = sorted(values);
    Spread {
        low: sampled.then(|| quantile(&values, low)),
        median: quantile(&values, 0.5),
        high: sampled.then(|| quantile(&values, high)),
    }
}

/// Differences on the samples both alternatives could use, sample by sample.
pub(crate) fn paired_difference(
    first: &[Outcome],
    other: &[Outcome],
    sampled: bool,
    (low, high): (f64, f64),
) -> PairedDifference {
    let mut cycles = Vec::new();
    let mut efc = Vec::new();
    let mut censored_pairs = 0;
    let mut outlasts = 0.0;
    for (f, o) in first.iter().zip(other) {
        let (Some(lf), Some(lo)) = (f.life, o.life) else { continue };
        cycles.push(lo.at().cycles - lf.at().cycles);
        efc.push(lo.at().efc - lf.at().efc);
        if lf.is_censored() || lo.is_censored() {
            censored_pairs += 1;
        }
        outlasts += match (lf.is_censored(), lo.is_censored()) {
            (true, true) => 0.5,
            (false, true) => 1.0,
            (true, false) => 0.0,
            (false, false) if lo.at().years > lf.at().years => 1.0,
            (false, false) if lo.at().years == lf.at().years => 0.5,
            (false, false) => 0.0,
        };
    }
    let pairs = cycles.len();
    let (cycles, efc) = (sorted(cycles), sorted(efc));
    let interval = |v: &[f64]| sampled.then(|| (quantile(v, low), quantile(v, high)));
    PairedDifference {
        pairs,
        censored_pairs,
        median_cycles: quantile(&cycles, 0.5),
        interval_cycles: interval(&cycles),
        median_efc: quantile(&efc, 0.5),
        interval_efc: interval(&efc),
        probability_outlasts: if pairs > 0 { outlasts / pairs as f64 } else { f64::NAN },
    }
}

/// The low quantile, median and high quantile of state of health per reported point, over the
/// samples whose curve covers the whole horizon (the first such sample's grid).
fn curve_bands(usable: &[&Outcome], (low, high): (f64, f64)) -> Vec<CurveBand> {
    let full = usable.iter().map(|o| o.curve.len()).max().unwrap_or(0);
    let complete: Vec<&&Outcome> = usable.iter().filter(|o| o.curve.len() == full).collect();
    let Some(grid) = complete.first() else { return Vec::new() };
    (0..full)
        .map(|k| {
            let values = sorted(complete.iter().map(|o| f64::from(o.curve[k].2)).collect());
            CurveBand {
                cycle: grid.curve[k].0,
                day: grid.curve[k].1,
                low: quantile(&values, low),
                median: quantile(&values, 0.5),
                high: quantile(&values, high),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::forecast::{LifeAt, WarningSet};

    fn outcome(life: Option<Life>) -> Outcome {
        Outcome {
            status: SampleStatus::Ok,
            life,
            energy_to_end_wh: 1.0,
            soh_at_horizon_pct: 80.0,
            peak_temperature_c: 30.0,
            warnings: WarningSet::default(),
            warning_details: Vec::new(),
            curve: vec![],
        }
    }

    fn at(cycles: f64) -> LifeAt {
        LifeAt { cycles, efc: cycles, years: cycles / 365.25 }
    }

    #[test]
    fn paired_differences_count_censored_pairs_and_split_undecided_ones() {
        let first = [outcome(Some(Life::Reached(at(100.0)))), outcome(Some(Life::Censored(at(500.0)))), outcome(None)];
        let other = [
            outcome(Some(Life::Reached(at(150.0)))),
            outcome(Some(Life::Censored(at(500.0)))),
            outcome(Some(Life::Reached(at(10.0)))),
        ];
        let d = paired_difference(&first, &other, true, SPREAD_QUANTILES);
        assert_eq!(d.pairs, 2, "a sample unusable in either alternative is not a pair");
        assert_eq!(d.censored_pairs, 1);
        assert_eq!(d.probability_outlasts, 0.75);
        assert_eq!(d.median_cycles, 25.0);
    }

    #[test]
    fn warnings_are_counted_by_kind_and_plating_read_from_the_type() {
        // Nothing here reads message text: the flag survives any rewording in src/report.
        let mut a = outcome(None);
        a.warnings.insert(WarningKind::Plating);
        a.warnings.insert(WarningKind::Uncalibrated);
        let mut b = outcome(None);
        b.warnings.insert(WarningKind::Uncalibrated);
        let comparison =
            Comparison { names: vec!["x".into()], outcomes: vec![vec![a, b]], sampled: true, charge_time_s: vec![1.0] };
        let summary = &summarize_comparison(&comparison)[0];
        assert_eq!(summary.plating_fraction, 0.5);
        assert_eq!(summary.warning_counts, vec![(WarningKind::Plating, 1), (WarningKind::Uncalibrated, 2)]);
    }

    #[test]
    fn censored_lives_read_as_beyond_the_horizon_in_quantiles() {
        // Type-7 quantiles of 100, 200, ∞, ∞, ∞: P10 at position 0.4 between 100 and 200.
        let s = spread_of(vec![100.0, 200.0, f64::INFINITY, f64::INFINITY, f64::INFINITY], true, (0.1, 0.9));
        assert_eq!(s.low, Some(140.0));
        assert_eq!(s.median, f64::INFINITY);
        let deterministic = spread_of(vec![100.0], false, SPREAD_QUANTILES);
        assert_eq!((deterministic.low, deterministic.median, deterministic.high), (None, 100.0, None));
    }
}
