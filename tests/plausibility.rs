//! Inputs that used to pass with exit 0 (or end as a simulation failure, exit 1) although no
//! lithium-ion cell or use could have them: each is now an input error, exit 2, one line naming
//! where the value came from, the key and the rule with its range or the likely unit slip. The
//! ranges are the plausibility table of `src/input/plausible.rs` (FORMATS.md prints it).

mod common;

use common::fadecast;
use predicates::prelude::*;
use std::path::Path;

/// Exactly one non-empty line on stderr, containing every piece of `expected`.
fn one_line_naming(expected: &'static [&'static str]) -> impl Predicate<str> {
    predicate::function(move |err: &str| {
        err.trim_end().lines().count() == 1 && expected.iter().all(|p| err.contains(p))
    })
}

fn refused(args: &[&str], expected: &'static [&'static str]) {
    let started = std::time::Instant::now();
    fadecast().args(args).assert().code(2).stderr(one_line_naming(expected));
    assert!(started.elapsed().as_secs_f64() < 2.0, "{args:?} took {:?}", started.elapsed());
}

#[test]
fn absurd_cell_values_are_refused_with_their_range() {
    let scenario = common::OVERNIGHT;
    refused(
        &["check", scenario, "--set", "cell.negative.particle_radius_um=1e9"],
        &["cell.negative.particle_radius_um", "1e9 is not a plausible value", "0.005 to 200 µm"],
    );
    refused(
        &["check", scenario, "--set", "cell.negative.diffusivity_m2_s=1e-30"],
        &["cell.negative.diffusivity_m2_s", "1e-30 is not a plausible value", "m²/s"],
    );
    refused(
        &["check", scenario, "--set", "cell.resistance.ohmic_mohm=1e9"],
        &["cell.resistance.ohmic_mohm", "1e9 is not a plausible value", "0 to 1000 mΩ"],
    );
    // Used to end as "did not converge" at load time, exit 1, with no key.
    refused(
        &["check", scenario, "--set", "cell.negative.thickness_um=1e9"],
        &["cell.negative.thickness_um", "1 to 2000 µm"],
    );
    refused(
        &["check", scenario, "--set", "cell.negative.particle_radius_um=5e-6"],
        &["5e-6 looks like metres; this key is in µm (write 5)"],
    );
    refused(
        &["check", scenario, "--set", "cell.negative.film.reaction_activation_kj_mol=55000"],
        &["looks like J/mol", "write 55"],
    );
}

#[test]
fn a_nominal_capacity_the_electrodes_cannot_hold_is_refused() {
    refused(
        &["check", common::OVERNIGHT, "--set", "cell.nominal_capacity_ah=5000"],
        &["cell.nominal_capacity_ah", "times the", "Ah the electrodes hold", "mAh"],
    );
}

#[test]
fn temperatures_and_percentages_in_the_wrong_unit_are_named() {
    refused(
        &["check", common::OVERNIGHT, "--set", "ambient_c=298"],
        &["ambient_c", "298 looks like kelvin; this key is in °C (write 24.85)"],
    );
    refused(&["check", common::OVERNIGHT, "--set", "ambient_c=1e9"], &["ambient_c", "-90 to 150 °C"]);
    refused(
        &["check", common::OVERNIGHT, "--set", "usage.rest_soc_pct=0.9"],
        &["usage.rest_soc_pct", "0.9 looks like a fraction; this key is in percent (write 90)"],
    );
    refused(
        &["check", common::OVERNIGHT, "--set", "usage.monthly_ambient_c=[1,2,3,4,5,6,300,8,9,10,11,12]"],
        &["usage.monthly_ambient_c", "item 7", "looks like kelvin"],
    );
}

#[test]
fn a_value_in_the_file_is_placed_on_its_line() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(common::repo(common::VAN_CELL)).unwrap();
    let original = text.lines().position(|l| l.starts_with("particle_radius_um")).unwrap();
    let edited: Vec<String> = text
        .lines()
        .enumerate()
        .map(|(i, line)| if i == original { "particle_radius_um = 5e-6".to_string() } else { line.to_string() })
        .collect();
    let cell = dir.path().join("cell.toml");
    std::fs::write(&cell, edited.join("\n")).unwrap();
    let expected = format!("cell.toml:{}: negative.particle_radius_um: 5e-6 is not a plausible value", original + 1);
    let output = fadecast().arg("check").arg(&cell).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains(&expected) && stderr.contains("looks like metres"), "{stderr}\nexpected {expected}");
}

#[test]
fn unusual_values_are_warnings_not_errors() {
    fadecast()
        .args(["check", common::OVERNIGHT, "--set", "cell.negative.particle_radius_um=60"])
        .assert()
        .success()
        .stdout(predicate::str::contains("cell.negative.particle_radius_um: warning: 60 is unusual"));
}

#[test]
fn a_step_longer_than_the_simulator_allows_is_an_input_error() {
    // A rest of 1e12 s used to run until "did not end within 168 h", exit 1, with no key.
    refused(
        &["check", common::OVERNIGHT, "--set", "profile.block.0.step.0.end_time_s=1e12"],
        &["profile.block.0.step.0.end_time_s", "at most 168 h"],
    );
}

#[test]
fn usage_that_cannot_fit_in_a_day_is_an_input_error() {
    // The overnight van cycle lasts about 7.2 h: five a day need 36 h.
    let dir = tempfile::tempdir().unwrap();
    fadecast()
        .args(["forecast", common::OVERNIGHT, "--cycles", "10", "--set", "usage.cycles_per_day=5", "--out"])
        .arg(dir.path().join("out"))
        .assert()
        .code(2)
        .stderr(one_line_naming(&["usage.cycles_per_day", "5 cycles a day of 7.", "h a day", "fit in a day"]));
    assert!(!dir.path().join("out").exists(), "nothing is written for an input error");
}

#[test]
fn fit_data_in_the_wrong_unit_is_refused_naming_the_column() {
    let dir = tempfile::tempdir().unwrap();
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let fit_text = std::fs::read_to_string(root.join("examples/fit/van-storage-fit.toml")).unwrap();
    let scenario = root.join("examples/van-depot-storage.toml");
    let fit_text = fit_text.replace("\"../van-depot-storage.toml\"", &format!("{:?}", scenario.display().to_string()));
    std::fs::write(dir.path().join("fit.toml"), &fit_text).unwrap();
    let rescale = |name: &str, column: usize, factor: f64| {
        let text = std::fs::read_to_string(root.join("examples/fit").join(name)).unwrap();
        let mut lines = text.lines();
        let mut out = vec![lines.next().unwrap().to_string()];
        for line in lines {
            let mut fields: Vec<String> = line.split(',').map(str::to_string).collect();
            if let Ok(value) = fields[column].parse::<f64>() {
                fields[column] = format!("{}", value * factor);
            }
            out.push(fields.join(","));
        }
        std::fs::write(dir.path().join(name), out.join("\n")).unwrap();
    };
    // Capacity in mAh.
    rescale("storage-25c.csv", 1, 1000.0);
    rescale("storage-40c.csv", 1, 1.0);
    let fit =
        || fadecast().arg("fit").arg(dir.path().join("fit.toml")).arg("--out").arg(dir.path().join("out")).assert();
    fit().code(2).stderr(one_line_naming(&["storage-25c.csv", "capacity_ah", "mAh"]));
    // Resistance in Ω.
    rescale("storage-25c.csv", 1, 1.0);
    rescale("storage-40c.csv", 2, 1e-3);
    fit().code(2).stderr(one_line_naming(&["storage-40c.csv", "resistance_mohm", "in Ω"]));
    assert!(!dir.path().join("out").exists(), "no fitted cell is written");
}
