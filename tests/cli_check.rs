//! `fadecast check` on the demo inputs, driving the real binary.

mod common;

use common::fadecast;

use predicates::prelude::*;

/// `check` computes no forecast: it reports its inputs without the standards caution, which
/// closes the commands that give results (once per run).
fn no_standards_caution() -> impl Predicate<str> {
    predicate::function(|out: &str| !out.contains(fadecast::CAUTION))
}

#[test]
fn cell_reports_capacities_and_balance() {
    fadecast().args(["check", common::VAN_CELL]).assert().success().stdout(
        predicate::str::contains("negative electrode")
            .and(predicate::str::contains("positive electrode"))
            .and(predicate::str::contains("N/P capacity ratio"))
            .and(predicate::str::is_match(r"balanced capacity\s+\d+\.\d+ Ah").unwrap())
            .and(predicate::str::is_match(r"balanced energy\s+\d+\.\d+ Wh").unwrap())
            .and(predicate::str::contains("stoichiometry when full"))
            .and(predicate::str::contains("thermal time constant"))
            .and(no_standards_caution()),
    );
}

#[test]
fn several_files_of_every_kind_in_one_run() {
    fadecast()
        .args([
            "check",
            common::FERRY_CELL,
            common::PROFILE_FAST_2C,
            common::PROFILE_MULTISTAGE,
            common::PROFILE_VAN_DAY,
        ])
        .assert()
        .success()
        .stdout(
            predicate::str::contains("cell \"")
                .and(predicate::str::contains("step profile"))
                .and(predicate::str::contains("measured time series"))
                .and(predicate::str::contains("1 Ah cell"))
                .and(predicate::str::contains("charge throughput"))
                .and(no_standards_caution()),
        );
}

#[test]
fn profile_steps_read_as_a_table() {
    fadecast().args(["check", common::PROFILE_OVERNIGHT]).assert().success().stdout(
        predicate::str::is_match(r"steps\s+\d+ after expanding repeats")
            .unwrap()
            .and(predicate::str::is_match(r"step\s+mode\s+set point\s+ends when").unwrap())
            .and(predicate::str::contains("constant current, charge")),
    );
}

#[test]
fn fit_descriptions_aging_data_and_uncertainty_sections_are_recognised() {
    fadecast()
        .args(["check", "examples/fit/van-storage-fit.toml", "examples/fit/storage-25c.csv"])
        .assert()
        .success()
        .stdout(
            predicate::str::contains("fit description")
                .and(predicate::str::contains("free parameters"))
                .and(predicate::str::contains("measured aging data"))
                .and(predicate::str::is_match(r"axis\s+day").unwrap()),
        );
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("uncertainty.toml");
    std::fs::write(
        &file,
        "[uncertainty]\n[[uncertainty.parameter]]\npath = \"ambient_c\"\ndistribution = \"normal\"\nmean = 25\nsd = 2\n",
    )
    .unwrap();
    fadecast()
        .arg("check")
        .arg(&file)
        .assert()
        .success()
        .stdout(predicate::str::contains("uncertainty section").and(predicate::str::contains("normal, mean 25 sd 2")));
}

#[test]
fn scenario_includes_its_cell_and_one_simulated_cycle() {
    fadecast().args(["check", common::OVERNIGHT]).assert().success().stdout(
        predicate::str::contains("scenario \"")
            .and(predicate::str::contains("balanced capacity"))
            .and(predicate::str::contains("One periodic cycle at beginning of life"))
            .and(predicate::str::is_match(r"charge throughput\s+\d+\.\d+ Ah out").unwrap())
            .and(no_standards_caution()),
    );
}

#[test]
fn overrides_apply_before_and_after_the_command_name() {
    fadecast()
        .args(["--set", "ambient_c=40", "check", common::OVERNIGHT])
        .args(["--set", "start_soc_pct=90"])
        .assert()
        .success()
        .stdout(
            predicate::str::is_match(r"ambient\s+40 °C")
                .unwrap()
                .and(predicate::str::is_match(r"start state of charge\s+90 %").unwrap()),
        );
}
