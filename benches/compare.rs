//! Comparison cost (release, two jobs): three charge protocols of the 5 Ah demo scenario with
//! uncertainty, 200 samples each over 1000 cycles, against one protocol's run of the same 200
//! samples, both measured in this run. Target: the three-protocol comparison costs at most
//! 3.2× the single run (the samples are drawn once and each task runs every protocol on its
//! draw, so the comparison adds only the protocols' own forecasts).
//!
//! Run: `cargo bench --bench compare` (well under a minute).

use fadecast::compare::{run_comparison, summarize_comparison, Alternative, CompareConfig};
use fadecast::ensemble::Sampler;
use fadecast::forecast::{ForecastOptions, Horizon};
use fadecast::input::{load_scenario, parse_override, Override};
use std::path::Path;
use std::time::Instant;

const SCENARIO: &str = "examples/van-fleet-bands.toml";
const PROFILES: [&str; 3] =
    ["profiles/overnight-charge-1c-drive.toml", "profiles/fast-charge-2c.toml", "profiles/multistage-fast-charge.toml"];
const SAMPLES: u64 = 200;
const JOBS: usize = 2;
/// Timed repetitions of each run; the fastest counts (the machine is shared).
const REPEATS: usize = 3;

fn profile_override(profile: &str) -> Override {
    let absolute = std::fs::canonicalize(profile).expect("demo profile exists");
    parse_override(&format!("profile={}", absolute.display())).expect("valid override")
}

/// Wall time of comparing `profiles` on the same `SAMPLES` samples, s.
fn timed(profiles: &[&str]) -> f64 {
    let per_alternative: Vec<Vec<Override>> = profiles.iter().map(|p| vec![profile_override(p)]).collect();
    let alternatives: Vec<Alternative> = profiles
        .iter()
        .zip(&per_alternative)
        .map(|(name, o)| {
            let loaded = load_scenario(Path::new(SCENARIO), o).expect("demo loads");
            Alternative { name: name.to_string(), scenario: loaded.scenario, plan: loaded.plan }
        })
        .collect();
    let spec = load_scenario(Path::new(SCENARIO), &[]).expect("demo loads").uncertainty;
    let paths: Vec<String> = spec.parameters.iter().map(|p| p.path.clone()).collect();
    let config = CompareConfig {
        samples: SAMPLES,
        horizon: Horizon::Cycles(1000.0),
        options: ForecastOptions::default(),
        jobs: JOBS,
    };
    let build = |alternative: usize, values: &[f64]| {
        let mut overrides = per_alternative[alternative].clone();
        for (p, v) in paths.iter().zip(values) {
            overrides.push(parse_override(&format!("{p}={v:e}")).map_err(|e| e.to_string())?);
        }
        let loaded = load_scenario(Path::new(SCENARIO), &overrides).map_err(|e| e.to_string())?;
        Ok((loaded.scenario, loaded.plan))
    };
    (0..REPEATS)
        .map(|_| {
            let start = Instant::now();
            // Sampling set-up is part of a run's cost.
            let sampler = Sampler::new(&spec, 1, SAMPLES).expect("valid spec");
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
