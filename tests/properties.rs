//! Properties over random inputs (proptest; 128, 512 and 64 cases, in the order below):
//!
//! - lithium is conserved (inventory + film + crack film + dead plated + stranded = 1 to 1e-9)
//!   and capacity never rises, for random cell, duty and mechanism parameters drawn within the
//!   input rules (FORMATS.md) and loaded through the same override machinery as `--set`;
//! - type-7 sample quantiles (Hyndman & Fan 1996, definition 7) are non-decreasing in the
//!   probability and lie between the sample's minimum and maximum;
//! - an ensemble's records and bands do not depend on the number of jobs.
//!
//! Each case is kept cheap (300 cycles, few reported points, a handful of samples) so the file
//! runs in well under a minute on two cores. Draws are random on every run; a failing draw is
//! shrunk and saved in `properties.proptest-regressions` beside this file, and re-run first from
//! then on. The record of these checks is docs/VALIDATION.md
//! §13.

mod common;

use common::{check_cases, EnsembleCase, ReferenceCase, Tolerance, LAB};
use fadecast::ensemble::{quantile, run_ensemble, summarize};
use fadecast::forecast::{report_grid, run_forecast, ForecastOptions, Horizon, StopReason};
use fadecast::input::parse_override;
use proptest::prelude::*;
use std::collections::BTreeSet;

/// A value drawn uniformly in log space between `low` and `high`.
fn log_uniform(low: f64, high: f64) -> impl Strategy<Value = f64> {
    (low.ln()..high.ln()).prop_map(f64::exp)
}

/// `--set` overrides for the lab scenario (the 5 Ah demo cell, 1C/1C CC-CV, every mechanism on):
/// particle sizes, ambient, rates of the duty cycle and of each aging law. The ranges are wider
/// than any real cell's spread but inside the input rules; a draw a rule still refuses (say, a
/// crack longer than a small particle) is discarded.
fn lab_draw() -> impl Strategy<Value = Vec<String>> {
    (
        (1.0..12.0f64, 1.0..10.0f64, -10.0..50.0f64, 0.2..3.0f64, 0.2..2.5f64),
        (log_uniform(1e-17, 1e-14), log_uniform(1e-18, 1e-15), log_uniform(1e-20, 1e-18), 0.0..2e-4f64),
        (0.0..1.0f64, 0.0..0.5f64, 1.5..4.0f64, proptest::bool::ANY),
    )
        .prop_map(
            |(
                (neg_radius, pos_radius, ambient, discharge_c, charge_c),
                (film_rate, interstitial, paris, active_loss),
                (irreversible, breathing, breathing_exponent, cracking_on),
            )| {
                vec![
                    format!("cell.negative.particle_radius_um={neg_radius}"),
                    format!("cell.positive.particle_radius_um={pos_radius}"),
                    format!("ambient_c={ambient}"),
                    format!("profile.block.0.step.0.discharge_c={discharge_c}"),
                    format!("profile.block.0.step.2.charge_c={charge_c}"),
                    format!("cell.negative.film.reaction_rate_m_s={film_rate:e}"),
                    format!("cell.negative.film.interstitial_diffusivity_m2_s={interstitial:e}"),
                    format!("cell.negative.cracking.paris_coefficient={paris:e}"),
                    format!("cell.negative.cracking.enabled={cracking_on}"),
                    format!("cell.negative.active_loss.rate_per_cycle={active_loss:e}"),
                    format!("cell.negative.plating.irreversible_fraction={irreversible}"),
                    format!("cell.negative.film_breathing.rate_per_cycle={breathing}"),
                    format!("cell.negative.film_breathing.exponent={breathing_exponent}"),
                ]
            },
        )
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 128, max_shrink_iters: 64, ..ProptestConfig::default() })]

    #[test]
    fn lithium_is_conserved_and_capacity_never_rises(draw in lab_draw()) {
        let overrides: Vec<_> = draw.iter().map(|o| parse_override(o).unwrap()).collect();
        let loaded = common::try_load(LAB, &overrides);
        prop_assume!(loaded.is_ok(), "refused by an input rule: {:?}", loaded.err());
        let (scenario, plan) = loaded.unwrap();
        let options = ForecastOptions { report_points: 6, ..ForecastOptions::default() };
        let forecast = run_forecast(&scenario, &plan, Horizon::Cycles(300.0), &options);
        // A forecast may stop early: some draws age the cell far past any end of life (a few
        // tens of % of health), where the cycle model can fail to hold the charge voltage. What
        // was computed up to there must still conserve lithium and never gain capacity.
        prop_assume!(forecast.final_state.is_some(), "nothing computed: {:?}", forecast.stop);
        let state = forecast.final_state.unwrap();
        let total = state.lithium_total();
        prop_assert!((total - 1.0).abs() <= 1e-9, "lithium total {total} (state {state:?})");
        if forecast.stop == StopReason::Horizon {
            // Film grows in every draw, so there is always something to conserve.
            prop_assert!(state[fadecast::aging::Component::LithiumInventory] < 1.0, "no lithium lost: {}", state[fadecast::aging::Component::LithiumInventory]);
        }
        for w in forecast.points.windows(2) {
            prop_assert!(
                w[1].capacity_ah <= w[0].capacity_ah + 1e-12,
                "capacity rose {} → {} Ah at cycle {}",
                w[0].capacity_ah,
                w[1].capacity_ah,
                w[1].cycle
            );
        }
    }
}

/// Sorted samples, some of them possibly +∞ (a sample that never reached end of life), and
/// ascending probabilities including both ends.
fn samples_and_probabilities() -> impl Strategy<Value = (Vec<f64>, Vec<f64>)> {
    (
        prop::collection::vec(prop_oneof![9 => -1e6..1e6f64, 1 => Just(f64::INFINITY)], 1..200),
        prop::collection::vec(0.0..=1.0f64, 1..20),
    )
        .prop_map(|(mut x, mut p)| {
            x.sort_by(f64::total_cmp);
            p.extend([0.0, 1.0]);
            p.sort_by(f64::total_cmp);
            (x, p)
        })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    #[test]
    fn quantiles_are_ordered_and_bracketed(sample in samples_and_probabilities()) {
        let (x, p) = sample;
        let q: Vec<f64> = p.iter().map(|&p| quantile(&x, p)).collect();
        for (k, w) in q.windows(2).enumerate() {
            prop_assert!(w[0] <= w[1], "Q({}) = {} > Q({}) = {}", p[k], w[0], p[k + 1], w[1]);
        }
        prop_assert_eq!(q[0], x[0], "Q(0) is the minimum");
        prop_assert_eq!(*q.last().unwrap(), *x.last().unwrap(), "Q(1) is the maximum");
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, max_shrink_iters: 16, ..ProptestConfig::default() })]

    #[test]
    fn records_and_bands_do_not_depend_on_the_number_of_jobs(
        seed in any::<u64>(),
        samples in 2u64..6,
        jobs in 2usize..5,
        cycles in 20.0..120.0f64,
    ) {
        let case = EnsembleCase::bands_demo(&[]);
        let sampler = case.sampler(seed, samples);
        let options = ForecastOptions { report_points: 4, ..ForecastOptions::default() };
        let horizon = Horizon::Cycles(cycles);
        let config = case.config(samples, seed, horizon, options);
        let build = |values: &[f64]| case.build(values);
        let run = |jobs: usize| run_ensemble(&sampler, &config, &build, jobs, &BTreeSet::new(), &|_| {}).unwrap();
        let (one, many) = (run(1), run(jobs));
        // As journal bytes: NaN fields never compare equal as floats.
        let bytes = |records: &[fadecast::ensemble::SampleRecord]| -> Vec<u8> {
            records.iter().flat_map(fadecast::report::encode_record).collect()
        };
        prop_assert!(bytes(&one) == bytes(&many), "records differ between 1 and {jobs} jobs");
        let (_, plan) = case.build(&[]).unwrap();
        let grid = report_grid(&plan, horizon, &options).unwrap();
        let bands = |records: &[fadecast::ensemble::SampleRecord]| {
            let summary = summarize(records, &case.paths, &[0.05, 0.5, 0.95], &grid, None);
            fadecast::report::bands_csv(&summary).unwrap()
        };
        prop_assert!(bands(&one) == bands(&many), "bands differ between 1 and {jobs} jobs");
    }
}

/// The checker itself: it must fail on a case outside its tolerance, name every failing case
/// with its source, and refuse an empty list.
#[test]
#[should_panic(expected = "source: made-up source for the checker's own test")]
fn the_checker_fails_on_a_case_outside_its_tolerance() {
    check_cases(&[
        ReferenceCase::new("inside", "made-up source for the checker's own test", Tolerance::Rel(1e-3), 1.0005, 1.0),
        ReferenceCase::new("outside", "made-up source for the checker's own test", Tolerance::Abs(0.1), 1.2, 1.0),
    ]);
}

#[test]
fn the_checker_passes_cases_within_tolerance_and_fails_nan() {
    let inside = ReferenceCase::new("inside", "checker test", Tolerance::Abs(0.1), 1.05, 1.0);
    assert!(inside.passes());
    let nan = ReferenceCase::new("nan", "checker test", Tolerance::Rel(1.0), f64::NAN, 1.0);
    assert!(!nan.passes());
    let at_zero = ReferenceCase::new("relative to zero", "checker test", Tolerance::Rel(1.0), 0.5, 0.0);
    assert!(!at_zero.passes(), "a relative tolerance against 0 cannot pass a nonzero value");
    check_cases(&[inside]);
}

#[test]
#[should_panic(expected = "no reference cases")]
fn the_checker_refuses_an_empty_list() {
    check_cases(&[]);
}
