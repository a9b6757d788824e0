//! `fadecast check` on the demo inputs, driving the real binary.

use assert_cmd::Command;
use predicates::prelude::*;

/// The binary, run from the repository root so demo paths read as in the README.
fn fadecast() -> Command {
    let mut command = assert_cmd::cargo::cargo_bin_cmd!("fadecast");
    command.current_dir(env!("CARGO_MANIFEST_DIR"));
    command
}

fn ends_with_caution() -> impl Predicate<str> {
    predicate::function(|out: &str| out.trim_end().ends_with(fadecast::CAUTION))
}

#[test]
fn cell_reports_capacities_and_balance() {
    fadecast().args(["check", "examples/cells/van-pouch-5ah.toml"]).assert().success().stdout(
        predicate::str::contains("negative electrode")
            .and(predicate::str::contains("positive electrode"))
            .and(predicate::str::contains("N/P capacity ratio"))
            .and(predicate::str::is_match(r"balanced capacity\s+\d+\.\d+ Ah").unwrap())
            .and(predicate::str::is_match(r"balanced energy\s+\d+\.\d+ Wh").unwrap())
            .and(predicate::str::contains("stoichiometry when full"))
            .and(predicate::str::contains("thermal time constant"))
            .and(ends_with_caution()),
    );
}

#[test]
fn several_files_of_every_kind_in_one_run() {
    fadecast()
        .args([
            "check",
            "examples/cells/ferry-prismatic-100ah.toml",
            "profiles/fast-charge-2c.toml",
            "profiles/multistage-fast-charge.toml",
            "profiles/van-day.csv",
        ])
        .assert()
        .success()
        .stdout(
            predicate::str::contains("cell \"")
                .and(predicate::str::contains("step profile"))
                .and(predicate::str::contains("measured time series"))
                .and(predicate::str::contains("1 Ah cell"))
                .and(predicate::str::contains("charge throughput"))
                .and(ends_with_caution()),
        );
}

#[test]
fn profile_steps_read_in_words() {
    fadecast().args(["check", "profiles/overnight-charge-1c-drive.toml"]).assert().success().stdout(
        predicate::str::is_match(r"steps\s+\d+ after expanding repeats")
            .unwrap()
            .and(predicate::str::contains(" until ")),
    );
}

#[test]
fn scenario_includes_its_cell_and_one_simulated_cycle() {
    fadecast().args(["check", "examples/van-fleet-overnight.toml"]).assert().success().stdout(
        predicate::str::contains("scenario \"")
            .and(predicate::str::contains("balanced capacity"))
            .and(predicate::str::contains("One periodic cycle at beginning of life"))
            .and(predicate::str::is_match(r"charge throughput\s+\d+\.\d+ Ah out").unwrap())
            .and(ends_with_caution()),
    );
}

#[test]
fn overrides_apply_before_and_after_the_command_name() {
    fadecast()
        .args(["--set", "ambient_c=40", "check", "examples/van-fleet-overnight.toml"])
        .args(["--set", "start_soc_pct=90"])
        .assert()
        .success()
        .stdout(
            predicate::str::is_match(r"ambient\s+40 °C")
                .unwrap()
                .and(predicate::str::is_match(r"start state of charge\s+90 %").unwrap()),
        );
}
