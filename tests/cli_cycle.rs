//! `fadecast cycle` on the demo scenario: the files it writes, its summary, and `--set`.

mod common;

use common::fadecast;

use predicates::prelude::*;
use std::path::Path;

const SCENARIO: &str = common::OVERNIGHT;

/// Runs `cycle` on the demo scenario with extra arguments, writing into `out`; returns stdout.
fn run_cycle(out: &Path, extra: &[&str]) -> String {
    let output =
        fadecast().args(["cycle", SCENARIO, "--out"]).arg(out).args(extra).assert().success().get_output().clone();
    // Results on stdout, warnings and cautions on stderr: read both, in that order.
    format!("{}{}", String::from_utf8_lossy(&output.stdout), String::from_utf8_lossy(&output.stderr))
}

/// The largest value of `column` in a cycle.csv.
fn column_max(csv_path: &Path, column: &str) -> f64 {
    let mut reader = csv::Reader::from_path(csv_path).unwrap();
    let index = reader.headers().unwrap().iter().position(|h| h == column).unwrap();
    reader.records().map(|row| row.unwrap()[index].parse::<f64>().unwrap()).fold(f64::NEG_INFINITY, f64::max)
}

#[test]
fn writes_trace_and_plot_and_summarises() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("new-dir");
    let stdout = run_cycle(&out, &[]);

    let csv = std::fs::read_to_string(out.join("cycle.csv")).unwrap();
    assert_eq!(csv.lines().next(), Some(fadecast::report::CYCLE_CSV_HEADER));
    assert!(csv.lines().count() > 10, "a cycle has many time steps");
    let svg = std::fs::read_to_string(out.join("cycle.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("surface stress, MPa"));
    let names: Vec<_> =
        std::fs::read_dir(&out).unwrap().map(|e| e.unwrap().file_name().into_string().unwrap()).collect();
    assert_eq!(names.len(), 2, "no temporary file left behind: {names:?}");

    for expected in [
        "charge out / in",
        "round-trip efficiency",
        "peak",
        "negative surface stress",
        "lowest negative potential",
        "warm-up cycles to periodic",
        "time steps",
        "ended by",
    ] {
        assert!(stdout.contains(expected), "summary lacks {expected:?}:\n{stdout}");
    }
    assert!(stdout.trim_end().ends_with(fadecast::CAUTION));
}

#[test]
fn warmer_ambient_raises_peak_temperature() {
    let dir = tempfile::tempdir().unwrap();
    let (base, warm) = (dir.path().join("base"), dir.path().join("warm"));
    run_cycle(&base, &["--set", "ambient_c=25"]);
    run_cycle(&warm, &["--set", "ambient_c=40"]);
    let peak_base = column_max(&base.join("cycle.csv"), "temperature_c");
    let peak_warm = column_max(&warm.join("cycle.csv"), "temperature_c");
    // The cell self-heats above ambient, so each peak sits at or above its ambient.
    assert!(peak_base >= 25.0 - 1e-9 && peak_warm >= 40.0 - 1e-9);
    assert!(peak_warm > peak_base + 10.0, "{peak_base} → {peak_warm}");
}

#[test]
fn current_over_the_cell_limit_is_warned_about() {
    let dir = tempfile::tempdir().unwrap();
    let stdout = run_cycle(dir.path(), &["--set", "cell.limits.max_charge_current_a=0.5"]);
    assert!(stdout.contains("WARNING: peak charge current"), "no limit warning:\n{stdout}");
}

#[test]
fn temperature_outside_the_window_is_warned_about() {
    let dir = tempfile::tempdir().unwrap();
    fadecast()
        .args(["cycle", SCENARIO, "--out"])
        .arg(dir.path())
        .args(["--set", "ambient_c=35", "--set", "cell.limits.max_temperature_c=30"])
        .assert()
        .success()
        .stderr(predicate::str::contains("WARNING: peak temperature"));
}

#[test]
fn series_held_back_at_the_voltage_limit_is_warned_about() {
    // Each day charges 10 Ah into a 5 Ah cell after taking 2.5 Ah out: most of the charge
    // cannot go in, so the cycle model must derate it and the summary must say so.
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("series.csv"), "time_s,current_a\n0,2.5\n3600,-5.0\n10800,0.0\n").unwrap();
    let cell = common::repo(common::VAN_CELL);
    let scenario = dir.path().join("scenario.toml");
    let text = format!("name = \"overcharge\"\ncell = {cell:?}\nprofile = \"series.csv\"\nambient_c = 25.0\n");
    std::fs::write(&scenario, text).unwrap();
    let out = dir.path().join("out");
    fadecast()
        .arg("cycle")
        .arg(&scenario)
        .arg("--out")
        .arg(&out)
        .assert()
        .success()
        .stderr(predicate::str::contains("was derated there"));
    let csv = std::fs::read_to_string(out.join("cycle.csv")).unwrap();
    assert!(csv.lines().nth(1).unwrap().ends_with(",1,series"), "a series is step 1, labelled by its name");
}
