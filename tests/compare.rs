//! The comparison library on the 5 Ah demo cell: common random numbers make paired
//! differences tighter than differences between independently drawn runs, and every sample is
//! accounted for.
//!
//! Reference: common practice in stochastic simulation — running competing alternatives on
//! common random numbers makes their outputs positively correlated, so the variance of the
//! difference, Var(A) + Var(B) − 2 Cov(A, B), is smaller than Var(A) + Var(B) for independent
//! runs (the variance-reduction technique treated in simulation textbooks, e.g. A. M. Law,
//! *Simulation Modeling and Analysis*, chapter on variance-reduction techniques).

mod common;

use common::{EnsembleCase, PROFILE_FAST_2C, PROFILE_OVERNIGHT};
use fadecast::compare::{run_comparison, summarize_comparison, Alternative, CompareConfig, Comparison};
use fadecast::forecast::{ForecastOptions, Horizon};
use fadecast::input::Override;

const SAMPLES: u64 = 24;

/// Runs `profiles` on `SAMPLES` samples drawn with `seed`, with an end of life that falls
/// inside a short horizon for every sample.
fn run(profiles: &[&str], seed: u64) -> Comparison {
    let case = EnsembleCase::bands_demo(&["end_of_life.capacity_pct=95"]);
    let per_alternative: Vec<Vec<Override>> = profiles.iter().map(|p| vec![common::profile_override(p)]).collect();
    let alternatives: Vec<Alternative> = profiles
        .iter()
        .zip(&per_alternative)
        .map(|(name, o)| {
            let (scenario, plan) = case.build_with(o, &[]).unwrap();
            Alternative { name: name.to_string(), scenario, plan }
        })
        .collect();
    let sampler = case.sampler(seed, SAMPLES);
    let build = |alternative: usize, values: &[f64]| case.build_with(&per_alternative[alternative], values);
    let config = CompareConfig {
        samples: SAMPLES,
        horizon: Horizon::Cycles(2000.0),
        options: ForecastOptions::default(),
        jobs: 2,
    };
    run_comparison(&alternatives, Some(&sampler), &config, &build).unwrap()
}

/// Life in cycles of every sample of one alternative; every sample must have reached end of
/// life inside the horizon (so no censored value enters the spread).
fn lives(c: &Comparison, alternative: usize) -> Vec<f64> {
    c.outcomes[alternative]
        .iter()
        .map(|o| {
            let life = o.life.expect("every sample has a life");
            assert!(!life.is_censored(), "a sample outlived the horizon; lengthen it");
            life.at().cycles
        })
        .collect()
}

fn standard_deviation(v: &[f64]) -> f64 {
    let mean = v.iter().sum::<f64>() / v.len() as f64;
    (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (v.len() - 1) as f64).sqrt()
}

#[test]
fn common_random_numbers_make_the_paired_difference_tighter_than_independent_runs() {
    const OVERNIGHT: &str = PROFILE_OVERNIGHT;
    const FAST: &str = PROFILE_FAST_2C;
    let paired = run(&[OVERNIGHT, FAST], 1);
    let other_seed = run(&[FAST], 2);
    let (overnight, fast) = (lives(&paired, 0), lives(&paired, 1));
    let fast_independent = lives(&other_seed, 0);
    let paired_differences: Vec<f64> = fast.iter().zip(&overnight).map(|(f, o)| f - o).collect();
    let independent_differences: Vec<f64> = fast_independent.iter().zip(&overnight).map(|(f, o)| f - o).collect();
    let (sd_paired, sd_independent) =
        (standard_deviation(&paired_differences), standard_deviation(&independent_differences));
    // "Measurably smaller": the cell-to-cell spread (film rates, particle size, ambient) moves
    // both protocols' lives together, so most of it cancels; demand at least a halving, far
    // outside what 24 samples' sampling error of a standard deviation (~15 %) could produce.
    assert!(
        sd_paired < 0.5 * sd_independent,
        "spread of the paired difference {sd_paired:.1} cycles, of independent runs {sd_independent:.1}"
    );
    // The summary reports the same paired differences.
    let summary = summarize_comparison(&paired);
    let d = summary[1].paired.expect("the second alternative is paired with the first");
    assert_eq!(d.pairs, SAMPLES as usize);
    assert_eq!(d.censored_pairs, 0);
    let mut sorted = paired_differences.clone();
    sorted.sort_by(f64::total_cmp);
    assert_eq!(d.median_cycles, fadecast::ensemble::quantile(&sorted, 0.5));
    let (low, high) = d.interval_cycles.expect("sampled, so an interval");
    assert!(low <= d.median_cycles && d.median_cycles <= high);
}

#[test]
fn sample_i_uses_the_same_draw_in_every_alternative() {
    // With the same profile twice, common random numbers make the two alternatives identical
    // sample by sample: every paired difference is exactly zero.
    const OVERNIGHT: &str = PROFILE_OVERNIGHT;
    let c = run(&[OVERNIGHT, OVERNIGHT], 7);
    assert_eq!(lives(&c, 0), lives(&c, 1));
    let d = summarize_comparison(&c)[1].paired.unwrap();
    assert_eq!((d.median_cycles, d.interval_cycles), (0.0, Some((0.0, 0.0))));
    assert_eq!(d.probability_outlasts, 0.5, "ties count one half");
}
