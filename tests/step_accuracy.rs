//! The cycle model's default step limits against a reference with 4× finer steps (every step
//! limit and step length a quarter): every cycling demo's 3000-cycle forecast within 0.1
//! percentage points of state of health and 0.5 % of resistance at every reported point.
//!
//! Ignored because the defaults do not meet it yet: measured at this commit, the winter fast
//! charge is 0.54 pp from the reference and the airport tug 0.12 pp (all others ≤ 0.08 pp and
//! ≤ 0.17 %). On the winter demo the state-of-charge limit alone accounts for it (a quarter of
//! it alone leaves 0.005 pp), so the trace sums, not the diffusion, need the finer steps there.
//! Run: `cargo test --release --test step_accuracy -- --ignored --nocapture` (about 20 s).

mod common;

use common::cases;
use fadecast::cycle::SolverSettings;
use fadecast::forecast::{run_cell_forecast, ForecastOptions, Horizon};

/// Every limit on the step divided by `factor`.
fn finer(settings: SolverSettings, factor: f64) -> SolverSettings {
    SolverSettings {
        max_soc_step: settings.max_soc_step / factor,
        max_voltage_step_v: settings.max_voltage_step_v / factor,
        max_temperature_step_k: settings.max_temperature_step_k / factor,
        first_dt_s: settings.first_dt_s / factor,
        max_dt_load_s: settings.max_dt_load_s / factor,
        max_dt_rest_s: settings.max_dt_rest_s / factor,
        ..settings
    }
}

#[test]
#[ignore = "the winter and tug demos exceed the bound at the default steps (module docs)"]
fn default_steps_forecast_within_a_tenth_of_a_point_of_four_times_finer_steps() {
    let options = ForecastOptions { report_points: 20, ..ForecastOptions::default() };
    let horizon = Horizon::Cycles(3000.0);
    let defaults = SolverSettings::default();
    let mut failures = Vec::new();
    for demo in cases::CYCLING_DEMOS {
        let (scenario, plan) = cases::load(demo, &[]);
        let ours = run_cell_forecast(&scenario, &plan, horizon, &options, &defaults);
        let reference = run_cell_forecast(&scenario, &plan, horizon, &options, &finer(defaults, 4.0));
        assert_eq!(ours.points.len(), reference.points.len(), "{demo}: same reported points");
        let soh =
            ours.points.iter().zip(&reference.points).map(|(a, b)| (a.soh_pct - b.soh_pct).abs()).fold(0.0, f64::max);
        let resistance = ours
            .points
            .iter()
            .zip(&reference.points)
            .map(|(a, b)| ((a.resistance_mohm - b.resistance_mohm) / b.resistance_mohm).abs() * 100.0)
            .fold(0.0, f64::max);
        eprintln!("{demo}: worst |ΔSOH| {soh:.4} pp, worst |ΔR| {resistance:.4} %");
        if soh > 0.1 || resistance > 0.5 {
            failures.push(format!("{demo}: {soh:.4} pp, {resistance:.4} %"));
        }
    }
    assert!(failures.is_empty(), "beyond 0.1 pp / 0.5 % of 4× finer steps: {failures:?}");
}
