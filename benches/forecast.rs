//! Forecast of 5000 cycles of the 5 Ah demo scenario by cycle jumping (target: ≤ 0.1 s on one
//! core), and the ratio of the every-cycle reference's time to the jumping time, both measured
//! in this run (target ≥ 50×); then the same ratio over 3000 cycles of every cycling demo,
//! with the simulated cycles, the integrator's accepted and rejected steps and the worst
//! differences from the every-cycle forecast (target, issue 16: ≥ 40× at ≤ 0.2 pp on every
//! demo). Run: `cargo bench --bench forecast` (about a minute).

#[path = "../tests/common/cases.rs"]
mod cases;

use criterion::{criterion_group, criterion_main, Criterion};
use fadecast::cycle::Scenario;
use fadecast::forecast::{run_forecast, Forecast, ForecastOptions, Horizon, Plan};
use std::hint::black_box;
use std::time::Instant;

const CYCLES: f64 = 5000.0;

fn forecast(c: &mut Criterion) {
    // The overnight demo is one of the scenarios the every-cycle comparison test runs.
    let (scenario, plan) = cases::load(cases::OVERNIGHT, &[]);
    let horizon = Horizon::Cycles(CYCLES);
    let jumping = ForecastOptions::default();
    let every = cases::every_cycle(ForecastOptions::default());

    // The ratio, from medians of repeated runs in this process.
    let (t_jump, probe) = median_run(&scenario, &plan, horizon, &jumping, 15);
    let (t_every, reference) = median_run(&scenario, &plan, horizon, &every, 3);
    let worst =
        probe.points.iter().zip(&reference.points).map(|(a, b)| (a.soh_pct - b.soh_pct).abs()).fold(0.0, f64::max);
    eprintln!(
        "forecast {CYCLES} cycles: jumping {:.1} ms ({} simulated cycles, {} steps, {} rejected), every cycle {:.0} ms \
         ({} simulated); ratio {:.0}×; worst |ΔSOH| {:.4} pp",
        t_jump * 1e3,
        probe.simulated_cycles,
        probe.accepted_steps,
        probe.rejected_steps,
        t_every * 1e3,
        reference.simulated_cycles,
        t_every / t_jump,
        worst
    );

    every_demo_ratio();

    c.bench_function("forecast_5000_cycles_jumping", |b| {
        b.iter(|| black_box(run_forecast(&scenario, &plan, horizon, &jumping)))
    });
}

/// Median wall time of `runs` forecasts, s, and the last forecast.
fn median_run(
    scenario: &Scenario,
    plan: &Plan,
    horizon: Horizon,
    options: &ForecastOptions,
    runs: usize,
) -> (f64, Forecast) {
    let mut seconds = Vec::new();
    let mut last = None;
    for _ in 0..runs {
        let start = Instant::now();
        last = Some(black_box(run_forecast(scenario, plan, horizon, options)));
        seconds.push(start.elapsed().as_secs_f64());
    }
    seconds.sort_by(f64::total_cmp);
    (seconds[runs / 2], last.expect("at least one run"))
}

/// Every-cycle / jumping time over 3000 cycles of each cycling demo (median of three jumping
/// runs, one every-cycle run).
fn every_demo_ratio() {
    let horizon = Horizon::Cycles(3000.0);
    for path in cases::CYCLING_DEMOS {
        let (scenario, plan) = cases::load(path, &[]);
        let (t_jump, jumping) = median_run(&scenario, &plan, horizon, &ForecastOptions::default(), 3);
        let (t_every, every) =
            median_run(&scenario, &plan, horizon, &cases::every_cycle(ForecastOptions::default()), 1);
        let worst = |f: fn(&fadecast::forecast::FadePoint) -> f64| {
            jumping.points.iter().zip(&every.points).map(|(a, b)| (f(a) - f(b)).abs()).fold(0.0, f64::max)
        };
        eprintln!(
            "{path}: ratio {:.1}× (jumping {:.1} ms, {} simulated cycles, {} steps, {} rejected; every cycle {:.0} ms); \
             worst |ΔSOH| {:.4} pp, |Δ resistance growth| {:.4} pp",
            t_every / t_jump,
            t_jump * 1e3,
            jumping.simulated_cycles,
            jumping.accepted_steps,
            jumping.rejected_steps,
            t_every * 1e3,
            worst(|p| p.soh_pct),
            worst(|p| p.resistance_growth_pct),
        );
    }
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = forecast
}
criterion_main!(benches);
