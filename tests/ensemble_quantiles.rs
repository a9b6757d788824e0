//! Quantile equivariance: with one uncertain input that moves end of life monotonically, the
//! Monte Carlo end-of-life quantiles equal the deterministic forecast at that input's own
//! quantiles, within their Monte Carlo standard errors. The input's quantiles come from statrs'
//! inverse distribution function (a general-purpose reference library).

mod common;

use common::{check_cases, ReferenceCase, Tolerance};

use fadecast::ensemble::{run_ensemble, summarize, Distribution, EnsembleConfig, Sampler, Sampling, Shard};
use fadecast::ensemble::{UncertainParameter, UncertaintySpec};
use fadecast::forecast::{run_forecast, ForecastOptions, Horizon, Threshold};

use statrs::distribution::{ContinuousCDF, LogNormal};
use std::collections::BTreeSet;

const SCENARIO: &str = common::LAB;
const PATH: &str = "cell.negative.film.interstitial_diffusivity_m2_s";
/// A threshold the lab cell reaches well inside 3000 cycles.
const THRESHOLD: &str = "end_of_life.capacity_pct=97";
const MEDIAN: f64 = 3.0e-17;
const SIGMA_LN: f64 = 0.3;

fn load_with(diffusivity: f64) -> Result<(fadecast::cycle::Scenario, fadecast::forecast::Plan), String> {
    common::try_load(SCENARIO, &common::overrides(&[THRESHOLD, &format!("{PATH}={diffusivity:e}")]))
}

fn deterministic_life(diffusivity: f64, horizon: Horizon) -> f64 {
    let (scenario, plan) = load_with(diffusivity).unwrap();
    let f = run_forecast(&scenario, &plan, horizon, &ForecastOptions::default());
    f.end_of_life
        .iter()
        .find(|e| e.threshold == Threshold::Capacity)
        .and_then(|e| e.reached)
        .expect("end of life reached")
        .cycles
}

#[test]
fn end_of_life_quantiles_match_the_forecast_at_the_input_quantiles() {
    let spec = UncertaintySpec {
        parameters: vec![UncertainParameter {
            path: PATH.into(),
            distribution: Distribution::LogNormal { median: MEDIAN, sigma_ln: SIGMA_LN },
            per_cell: false,
        }],
        groups: Vec::new(),
        sampling: Sampling::MonteCarlo,
    };
    let samples = 240;
    let horizon = Horizon::Cycles(3000.0);
    let sampler = Sampler::new(&spec, 11, samples).unwrap();
    let config = EnsembleConfig {
        samples,
        seed: 11,
        shard: Shard::WHOLE,
        horizon,
        warranty: None,
        options: ForecastOptions::default(),
    };
    let build = |values: &[f64]| load_with(values[0]);
    let records = run_ensemble(&sampler, &config, &build, 2, &BTreeSet::new(), &|_| {}).unwrap();
    let quantiles = [0.1, 0.5, 0.9];
    let summary = summarize(&records, &[PATH.to_string()], &quantiles, &[], None);
    let life = summary.life.iter().find(|l| l.threshold == "capacity").unwrap();
    assert_eq!(life.reached_fraction, 1.0, "every sample must reach end of life for the check");
    let input = LogNormal::new(MEDIAN.ln(), SIGMA_LN).unwrap();
    let mut cases = Vec::new();
    for estimate in &life.cycles {
        // Faster solvent diffusion ages faster: life quantile p sits at input quantile 1 − p.
        let at = input.inverse_cdf(1.0 - estimate.p);
        let expected = deterministic_life(at, horizon);
        let value = estimate.value.unwrap();
        let error = estimate.standard_error.unwrap();
        // Three Monte Carlo standard errors, plus 2 cycles for the forecast's own resolution.
        cases.push(ReferenceCase::new(
            format!("P{} of end of life (± {error:.1} standard error), cycles", estimate.p * 100.0),
            "the deterministic forecast at the input's quantile 1 − p (equivariance of quantiles under a \
             decreasing map, derived), the input quantile from statrs' inverse log-normal (reference library)",
            Tolerance::Abs(3.0 * error + 2.0),
            value,
            expected,
        ));
    }
    check_cases(&cases);
    // The sensitivity sees the one input, pointing the right way.
    assert!(summary.sensitivity[0].rank_correlation < -0.99, "{:?}", summary.sensitivity);
}
