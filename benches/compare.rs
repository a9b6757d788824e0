//! Comparison cost (release, two jobs): three charge protocols of the 5 Ah demo scenario with
//! uncertainty, 200 samples each over 1000 cycles, against one protocol's run of the same 200
//! samples, both measured in this run. Target: the three-protocol comparison costs at most
//! 3.2× the single run (the samples are drawn once and each task runs every protocol on its
//! draw, so the comparison adds only the protocols' own forecasts).
//!
//! Run: `cargo bench --bench compare` (well under a minute).

#[path = "../tests/common/cases.rs"]
mod cases;

use fadecast::compare::{run_comparison, summarize_comparison, Alternative, CompareConfig};
use fadecast::forecast::{ForecastOptions, Horizon};
use fadecast::input::Override;
use std::time::Instant;

const PROFILES: [&str; 3] = [cases::PROFILE_OVERNIGHT, cases::PROFILE_FAST_2C, cases::PROFILE_MULTISTAGE];
const SAMPLES: u64 = 200;
const JOBS: usize = 2;
/// Timed repetitions of each run; the fastest counts (the machine is shared).
const REPEATS: usize = 3;

/// Wall time of comparing `profiles` on the same `SAMPLES` samples, s.
fn timed(profiles: &[&str]) -> f64 {
    // The bands demo with each profile as an alternative, built as tests/compare.rs builds it.
    let case = cases::EnsembleCase::bands_demo(&[]);
    let per_alternative: Vec<Vec<Override>> = profiles.iter().map(|p| vec![cases::profile_override(p)]).collect();
    let alternatives: Vec<Alternative> = profiles
        .iter()
        .zip(&per_alternative)
        .map(|(name, o)| {
            let (scenario, plan) = case.build_with(o, &[]).expect("demo loads");
            Alternative { name: name.to_string(), scenario, plan }
        })
        .collect();
    let config = CompareConfig {
        samples: SAMPLES,
        horizon: Horizon::Cycles(1000.0),
        options: ForecastOptions::default(),
        jobs: JOBS,
    };
    let build = |alternative: usize, values: &[f64]| case.build_with(&per_alternative[alternative], values);
    (0..REPEATS)
        .map(|_| {
            let start = Instant::now();
            // Sampling set-up is part of a run's cost.
            let sampler = case.sampler(1, SAMPLES);
            let comparison = run_comparison(&alternatives, Some(&sampler), &config, &build).expect("runs");
            let summaries = summarize_comparison(&comparison);
            assert_eq!(summaries.len(), profiles.len());
            start.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn main() {
    let one = timed(&PROFILES[..1]);
    let three = timed(&PROFILES);
    let ratio = three / one;
    println!("one protocol, {SAMPLES} samples × 1000 cycles, {JOBS} jobs: {one:.2} s (fastest of {REPEATS})");
    println!("three protocols on the same samples:                    {three:.2} s (fastest of {REPEATS})");
    println!("ratio {ratio:.2} (target ≤ 3.2): {}", if ratio <= 3.2 { "met" } else { "NOT MET" });
}
