//! Ensemble figures (release, this machine's cores):
//! - 1000 samples × 5000 cycles of the 5 Ah demo scenario with uncertainty: wall time on two
//!   jobs (target ≤ 60 s) and the speed-up of two jobs over one, measured in this run
//!   (target ≥ 1.7×);
//! - peak memory of holding, summarising and writing 100 000 sample records (the part of a run
//!   that grows with the sample count; each worker's forecast needs only a few MB more),
//!   target ≤ 200 MB.
//!
//! Run: `cargo bench --bench ensemble` (about two minutes).

#[path = "../tests/common/cases.rs"]
mod cases;

use fadecast::ensemble::{run_ensemble, summarize, SampleRecord, SampleStatus};
use fadecast::forecast::{report_grid, ForecastOptions, Horizon, LifeAt};
use std::collections::BTreeSet;
use std::time::Instant;

/// Peak resident memory of this process so far, MB (Linux: VmHWM).
fn peak_memory_mb() -> f64 {
    let status = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    status
        .lines()
        .find_map(|l| l.strip_prefix("VmHWM:"))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<f64>().ok())
        .map_or(f64::NAN, |kb| kb / 1024.0)
}

fn timed_run(samples: u64, jobs: usize) -> (f64, Vec<SampleRecord>) {
    // The bands demo as `bands` runs it, built as the tests build it (the jobs property).
    let case = cases::EnsembleCase::bands_demo(&[]);
    let sampler = case.sampler(1, samples);
    let config = case.config(samples, 1, Horizon::Cycles(5000.0), ForecastOptions::default());
    let build = |values: &[f64]| case.build(values);
    let start = Instant::now();
    let records = run_ensemble(&sampler, &config, &build, jobs, &BTreeSet::new(), &|_| {}).expect("pool starts");
    (start.elapsed().as_secs_f64(), records)
}

fn main() {
    if std::env::args().any(|a| a == "--list") {
        return;
    }
    let (two, records_two) = timed_run(1000, 2);
    let (one, records_one) = timed_run(1000, 1);
    // Compared as journal bytes: NaN fields (no warranty point) never compare equal as floats.
    let bytes =
        |records: &[SampleRecord]| records.iter().flat_map(fadecast::report::encode_record).collect::<Vec<u8>>();
    assert!(bytes(&records_one) == bytes(&records_two), "records must not depend on the thread count");
    let ok = records_two.iter().filter(|r| r.status == SampleStatus::Ok).count();
    println!(
        "1000 samples × 5000 cycles: 2 jobs {two:.1} s, 1 job {one:.1} s, speed-up {:.2}× ({ok} samples ok)",
        one / two
    );

    // Synthetic records of the real size: 101 reported points, six drawn values.
    let case = cases::EnsembleCase::bands_demo(&[]);
    let (_, plan) = case.build(&[]).unwrap();
    let grid = report_grid(&plan, Horizon::Cycles(5000.0), &ForecastOptions::default()).unwrap();
    let parameters = case.paths.clone();
    let before = peak_memory_mb();
    let records: Vec<SampleRecord> = (0..100_000u64)
        .map(|i| {
            let wobble = (i as f64 * 0.618_033_988_75).fract();
            SampleRecord {
                index: i,
                values: vec![wobble; parameters.len()],
                status: SampleStatus::Ok,
                capacity_end: Some(LifeAt { cycles: 3000.0 + 1000.0 * wobble, efc: 2500.0, years: 8.0 + wobble }),
                resistance_end: None,
                soh_at_horizon_pct: 75.0 + 5.0 * wobble,
                resistance_growth_at_horizon_pct: 30.0,
                soh_at_warranty_pct: 80.0,
                warnings: Default::default(),
                curves: (0..grid.len())
                    .map(|k| {
                        [5.0 - k as f32 * 0.01, 100.0 - k as f32 * 0.2 * (1.0 + wobble as f32), 16.0 + k as f32 * 0.05]
                    })
                    .collect(),
            }
        })
        .collect();
    let summary = summarize(&records, &parameters, &[0.05, 0.5, 0.95], &grid, None);
    let bands = fadecast::report::bands_csv(&summary).unwrap();
    let samples = fadecast::report::samples_csv(&records, &parameters, false).unwrap();
    let mut journal_bytes = 0usize;
    for r in &records {
        journal_bytes += fadecast::report::encode_record(r).len();
    }
    println!(
        "100 000 records: peak memory {:.0} MB (before {:.0} MB); bands.csv {} kB, samples.csv {} MB, journal {} MB",
        peak_memory_mb(),
        before,
        bands.len() / 1024,
        samples.len() / (1024 * 1024),
        journal_bytes / (1024 * 1024)
    );
}
