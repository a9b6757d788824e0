//! A 4-in-parallel pack forecast over 3000 cycles against the lone cell's forecast of the same
//! duty, both measured in this run (target: the pack costs at most 6× the cell), and one
//! forecast of a 100-cell pack (10 in parallel × 10 in series), timed. Run:
//! `cargo bench --bench pack`.

#[path = "../tests/common/cases.rs"]
mod cases;

use criterion::{criterion_group, criterion_main, Criterion};
use fadecast::cycle::pack::{Cooling, PackLayout};
use fadecast::forecast::{run_forecast, ForecastOptions, Horizon};
use std::hint::black_box;
use std::time::Instant;

const CYCLES: f64 = 3000.0;

fn seconds(run: &mut impl FnMut()) -> f64 {
    let start = Instant::now();
    run();
    start.elapsed().as_secs_f64()
}

/// Medians of each command's time and of the per-pair ratio b/a, over `pairs` runs taken
/// alternately, so that a change in the machine's load falls on both sides of a pair.
fn paired_medians(pairs: usize, mut a: impl FnMut(), mut b: impl FnMut()) -> (f64, f64, f64) {
    let median = |mut v: Vec<f64>| {
        v.sort_by(f64::total_cmp);
        v[v.len() / 2]
    };
    let (mut ta, mut tb, mut ratio) = (Vec::new(), Vec::new(), Vec::new());
    for _ in 0..pairs {
        let (x, y) = (seconds(&mut a), seconds(&mut b));
        ta.push(x);
        tb.push(y);
        ratio.push(y / x);
    }
    (median(ta), median(tb), median(ratio))
}

fn pack(c: &mut Criterion) {
    let (scenario, plan) = cases::load(cases::OVERNIGHT, &[]);
    let horizon = Horizon::Cycles(CYCLES);
    let options = ForecastOptions::default();
    // Four cells behind different interconnects at different temperatures, so the split is
    // solved at every step (identical cells would split evenly at the first iterate).
    let layout = PackLayout {
        interconnect_ohm: vec![0.2e-3, 0.5e-3, 0.8e-3, 1.1e-3],
        cooling: Cooling::AmbientOffsets(vec![0.0, 1.0, 2.0, 3.0]),
        neighbour_conductance_w_k: 0.05,
        ..PackLayout::uniform(&scenario.cell, 4, 1)
    };
    let packed = cases::pack_scenario(&scenario, layout);
    let cell_probe = run_forecast(&scenario, &plan, horizon, &options);
    let probe = run_forecast(&packed, &plan, horizon, &options);
    let (t_cell, t_pack, ratio) = paired_medians(
        9,
        || {
            black_box(run_forecast(&scenario, &plan, horizon, &options));
        },
        || {
            black_box(run_forecast(&packed, &plan, horizon, &options));
        },
    );
    eprintln!(
        "forecast {CYCLES} cycles: cell {:.1} ms ({} simulated cycles), 4-in-parallel pack {:.1} ms ({} simulated cycles); median paired ratio {ratio:.2}× (target ≤ 6×)",
        t_cell * 1e3,
        cell_probe.simulated_cycles,
        t_pack * 1e3,
        probe.simulated_cycles,
    );

    let offsets: Vec<f64> = (0..100).map(|k| 0.05 * k as f64).collect();
    let big = PackLayout {
        interconnect_ohm: (0..100).map(|k| (0.2 + 0.1 * (k % 10) as f64) * 1e-3).collect(),
        cooling: Cooling::AmbientOffsets(offsets),
        ..PackLayout::uniform(&scenario.cell, 10, 10)
    };
    let big = cases::pack_scenario(&scenario, big);
    let start = Instant::now();
    let f = run_forecast(&big, &plan, horizon, &options);
    eprintln!(
        "100-cell pack (10 × 10) forecast of {CYCLES} cycles: {:.2} s ({} simulated cycles, stop {:?})",
        start.elapsed().as_secs_f64(),
        f.simulated_cycles,
        f.stop
    );

    c.bench_function("pack_4p_3000_cycles", |b| b.iter(|| black_box(run_forecast(&packed, &plan, horizon, &options))));
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(10);
    targets = pack
}
criterion_main!(benches);
