//! Bad input exits with code 2 and one line naming the file, and leaves no output behind.

mod common;

use common::fadecast;

use predicates::prelude::*;
use std::path::{Path, PathBuf};

/// Exactly one non-empty line on stderr, containing every piece of `expected`.
fn one_line_naming(expected: &'static [&'static str]) -> impl Predicate<str> {
    predicate::function(move |err: &str| {
        err.trim_end().lines().count() == 1 && expected.iter().all(|piece| err.contains(piece))
    })
}

/// A copy of the demo scenario in `dir` with absolute paths to its inputs, plus `extra` lines
/// at the top (where top-level keys go).
fn scenario_copy(dir: &Path, extra: &str) -> PathBuf {
    let text = format!(
        "{extra}\nname = \"copy\"\ncell = {:?}\nprofile = {:?}\nambient_c = 25.0\n",
        common::repo(common::VAN_CELL),
        common::repo(common::PROFILE_OVERNIGHT),
    );
    let path = dir.join("scenario.toml");
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn the_copied_scenario_is_itself_valid() {
    // Guards the tests below: they must fail for the reason they plant, not another.
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario_copy(dir.path(), "");
    fadecast().arg("check").arg(&scenario).assert().success();
}

#[test]
fn missing_file_exits_2_naming_it() {
    fadecast()
        .args(["check", "examples/no-such-cell.toml"])
        .assert()
        .code(2)
        .stdout("")
        .stderr(one_line_naming(&["examples/no-such-cell.toml"]));
}

#[test]
fn missing_scenario_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    fadecast()
        .args(["cycle", "examples/no-such-scenario.toml", "--out"])
        .arg(&out)
        .assert()
        .code(2)
        .stderr(one_line_naming(&["no-such-scenario.toml"]));
    assert!(!out.exists(), "the output directory must not be created");
}

#[test]
fn unknown_key_in_a_file_exits_2_and_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario_copy(dir.path(), "ambiant_c = 30");
    let out = dir.path().join("out");
    fadecast()
        .arg("cycle")
        .arg(&scenario)
        .arg("--out")
        .arg(&out)
        .assert()
        .code(2)
        .stderr(one_line_naming(&["scenario.toml", "ambiant_c"]));
    assert!(!out.exists());
}

#[test]
fn unknown_key_in_a_cell_file_names_file_and_key() {
    let dir = tempfile::tempdir().unwrap();
    let cell = dir.path().join("cell.toml");
    let original = std::fs::read_to_string(common::repo(common::VAN_CELL)).unwrap();
    std::fs::write(&cell, format!("capacity_typo_ah = 5.0\n{original}")).unwrap();
    fadecast().arg("check").arg(&cell).assert().code(2).stderr(one_line_naming(&["cell.toml", "capacity_typo_ah"]));
}

#[test]
fn unknown_override_key_exits_2() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    fadecast()
        .args(["cycle", common::OVERNIGHT, "--set", "ambiant_c=30", "--out"])
        .arg(&out)
        .assert()
        .code(2)
        .stderr(one_line_naming(&["ambiant_c"]));
    assert!(!out.exists());
}

#[test]
fn malformed_override_exits_2() {
    fadecast()
        .args(["check", common::OVERNIGHT, "--set", "ambient_c"])
        .assert()
        .code(2)
        .stderr(one_line_naming(&["--set"]));
}

#[test]
fn bad_arguments_exit_2() {
    fadecast().arg("cycle").assert().code(2);
    fadecast().arg("no-such-command").assert().code(2);
}

#[test]
fn one_bad_file_among_good_ones_still_reports_the_good_ones() {
    fadecast()
        .args(["check", common::VAN_CELL, "examples/no-such-cell.toml"])
        .assert()
        .code(2)
        .stdout(predicate::str::contains("balanced capacity"))
        .stderr(one_line_naming(&["no-such-cell.toml"]));
}

#[test]
fn absurd_temperatures_are_input_errors_answered_at_once() {
    // 1e30 °C and 1e9 °C used to make every time step tiny: the cycle grew its trace until
    // the allocator aborted (exit 134 after 10–40 s). The plausibility table now refuses them
    // before anything runs; the cap on time steps per cycle stays as the second line
    // (tested in tests/cycle_model.rs).
    for args in [
        &["check", "examples/van-fleet-winter-fast-charge.toml", "--set", "ambient_c=1e30"][..],
        &[
            "forecast",
            "examples/airport-tug-2c.toml",
            "--cycles",
            "50",
            "--set",
            "ambient_c=1e9",
            "--out",
            "/nonexistent/never-written",
        ][..],
    ] {
        let started = std::time::Instant::now();
        fadecast().args(args).assert().code(2).stderr(one_line_naming(&[
            "--set",
            "ambient_c",
            "is not a plausible value",
            "°C",
        ]));
        assert!(started.elapsed().as_secs_f64() < 2.0, "{args:?} took {:?}", started.elapsed());
    }
}

#[test]
fn thousands_of_jobs_are_refused_before_anything_is_written() {
    // `--jobs 100000` used to start that many threads, run for tens of seconds and leave a
    // run.json and an empty journal behind.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    fadecast()
        .args(["bands", "examples/van-fleet-bands.toml", "--samples", "4", "--jobs", "100000", "--out"])
        .arg(&out)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("--jobs: at most"))
        .stderr(predicates::str::contains("found 100000"));
    assert!(!out.exists(), "nothing is written");
}

#[test]
fn an_out_path_that_is_a_file_is_an_input_error_naming_it() {
    // Used to exit 1 with "File exists (os error 17)".
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("a-file");
    std::fs::write(&file, "x").unwrap();
    for out in [file.clone(), file.join("below")] {
        fadecast()
            .args(["forecast", common::OVERNIGHT, "--cycles", "10", "--out"])
            .arg(&out)
            .assert()
            .code(2)
            .stderr(one_line_naming(&["--out", "a-file` is a file"]));
    }
    assert_eq!(std::fs::read(&file).unwrap(), b"x");
}

#[test]
fn a_set_value_no_checked_file_takes_is_refused() {
    // `check cell.toml --set bogus.key=4` used to pass silently: the value was meant for a
    // scenario, and none was checked.
    fadecast().args(["check", common::VAN_CELL, "--set", "bogus.key=4"]).assert().code(2).stderr(one_line_naming(&[
        "--set",
        "bogus.key",
        "no such file is being checked",
        "cell.bogus.key",
    ]));
    fadecast()
        .args(["check", common::PROFILE_OVERNIGHT, "--set", "bogus.key=4"])
        .assert()
        .code(2)
        .stderr(one_line_naming(&["bogus.key", "profile.bogus.key"]));
    fadecast()
        .args(["check", common::VAN_CELL, "--set", "profile.block.0.repeat=2"])
        .assert()
        .code(2)
        .stderr(one_line_naming(&["profile.block.0.repeat", "no such file is being checked"]));
}

#[cfg(unix)]
#[test]
fn a_fifo_given_as_input_is_refused_at_once() {
    // Reading a FIFO used to block forever.
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("cell.toml");
    let made = std::process::Command::new("mkfifo").arg(&fifo).status().unwrap();
    assert!(made.success());
    let started = std::time::Instant::now();
    fadecast()
        .arg("check")
        .arg(&fifo)
        .timeout(std::time::Duration::from_secs(10))
        .assert()
        .code(2)
        .stderr(one_line_naming(&["cell.toml", "not a regular file"]));
    assert!(started.elapsed().as_secs_f64() < 2.0);
}

#[test]
fn a_scenario_naming_itself_as_its_profile_says_so() {
    // Used to report "unknown key ambient_c" against a step profile's keys.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("scenario.toml");
    let text = format!(
        "name = \"self\"\ncell = {:?}\nprofile = \"scenario.toml\"\nambient_c = 25.0\n",
        common::repo(common::VAN_CELL)
    );
    std::fs::write(&path, text).unwrap();
    fadecast()
        .arg("check")
        .arg(&path)
        .assert()
        .code(2)
        .stderr(one_line_naming(&["scenario.toml:3: profile: names this scenario file itself"]));
}

#[test]
fn an_uncertainty_bound_of_1e30_is_refused_before_sampling() {
    // Its draws used to run the cycle until the allocator aborted the whole ensemble.
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario_copy(dir.path(), "");
    let mut text = std::fs::read_to_string(&scenario).unwrap();
    text.push_str("\n[uncertainty]\n[[uncertainty.parameter]]\npath = \"ambient_c\"\ndistribution = \"uniform\"\nlow = 20.0\nhigh = 1e30\n");
    std::fs::write(&scenario, text).unwrap();
    let started = std::time::Instant::now();
    fadecast()
        .arg("bands")
        .arg(&scenario)
        .args(["--samples", "4", "--cycles", "10", "--quiet", "--out"])
        .arg(dir.path().join("out"))
        .assert()
        .code(2)
        .stderr(one_line_naming(&["uncertainty.parameter.0", "is not a plausible value"]));
    assert!(started.elapsed().as_secs_f64() < 2.0);
    assert!(!dir.path().join("out").exists());
}
