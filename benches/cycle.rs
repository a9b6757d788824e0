//! One 1C/1C constant-current–constant-voltage cycle with rests on the 5 Ah demo cell, from
//! its periodic state (as the forecast runs it). Target (issue): ≤ 0.3 ms per simulated cycle
//! on one core. Run: `cargo bench --bench cycle`.

#[path = "../tests/common/cases.rs"]
mod cases;

use criterion::{criterion_group, criterion_main, Criterion};
use fadecast::cycle::{
    balance_cell, simulate_cycle, simulate_periodic_with, CellModel, CycleRecord, CycleRun, Health, SolverSettings,
};
use std::hint::black_box;

fn one_cycle(c: &mut Criterion) {
    let (scenario, _) = cases::load(cases::LAB, &[]);
    let health = Health::fresh(&scenario.cell);
    let settings = SolverSettings::default();
    let model = CellModel::new(&scenario.cell);
    let balance = balance_cell(&scenario.cell, &health).expect("balanced");
    let (first, periodic) = simulate_periodic_with(&model, &scenario, &health, &settings).expect("cycle runs");
    eprintln!(
        "time steps per cycle: {}; step ends: {:?}",
        first.time_steps,
        first.steps.iter().map(|s| s.end.describe()).collect::<Vec<_>>()
    );
    let mut record = CycleRecord::default();
    let run = CycleRun { duty: &scenario.duty, ambient_k: scenario.ambient_k, health: &health, balance: &balance };
    c.bench_function("cycle_1c_cccv_5ah", |b| {
        b.iter(|| {
            let mut state = periodic.clone();
            simulate_cycle(&model, &run, &mut state, &settings, &mut record).expect("cycle runs");
            black_box(record.charge_out_coulomb)
        })
    });
}

criterion_group!(benches, one_cycle);
criterion_main!(benches);
