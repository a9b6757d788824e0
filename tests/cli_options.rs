//! Options every command shares and the terminal's split (issue 13): results on stdout,
//! warnings and the caution on stderr; one sampling option group; `--variant` values as TOML;
//! command-line paths relative to the current directory; completions and a man page from the
//! clap definitions; `fit`'s outputs feeding `compare` and `table`, its cell edited in place.

mod common;

use common::fadecast;
use predicates::prelude::*;
use std::path::Path;

fn stdout_of(args: &[&str]) -> (String, String) {
    let output = fadecast().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    (String::from_utf8_lossy(&output.stdout).into_owned(), String::from_utf8_lossy(&output.stderr).into_owned())
}

#[test]
fn results_go_to_stdout_and_the_caution_once_to_stderr() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("f");
    let (stdout, stderr) =
        stdout_of(&["forecast", common::OVERNIGHT, "--cycles", "30", "--out", out.to_str().unwrap()]);
    assert!(stdout.contains("End of life"), "{stdout}");
    assert!(!stdout.contains(fadecast::CAUTION) && !stdout.contains("WARNING"), "{stdout}");
    assert_eq!(stderr.matches(fadecast::CAUTION).count(), 1, "{stderr}");
    assert!(stderr.contains("no calibration range"), "the demo cell's warning is on stderr: {stderr}");
    assert!(!stdout.contains("no calibration range"), "{stdout}");
}

#[test]
fn every_sampling_command_takes_the_same_options() {
    for command in ["bands", "compare", "table"] {
        let (help, _) = stdout_of(&[command, "--help"]);
        for flag in ["--samples", "--seed", "--jobs", "--quantiles", "--uncertainty", "--quiet"] {
            assert!(help.contains(flag), "{command} lacks {flag}");
        }
    }
    let (help, _) = stdout_of(&["fit", "--help"]);
    assert!(help.contains("--jobs") && help.contains("--quiet"), "{help}");
}

#[test]
fn completions_and_the_man_page_come_from_the_definitions() {
    for shell in ["bash", "zsh", "fish"] {
        let (script, _) = stdout_of(&["completions", shell]);
        for word in ["fadecast", "forecast", "bands", "quantiles"] {
            assert!(script.contains(word), "{shell} completions lack {word}");
        }
    }
    let (page, _) = stdout_of(&["man"]);
    assert!(page.starts_with(".ie") || page.contains(".TH fadecast"), "{}", &page[..page.len().min(200)]);
    assert!(page.contains("forecast") && page.contains("compare"), "the page lists the commands");
    fadecast().args(["completions", "nosuchshell"]).assert().code(2);
}

#[test]
fn a_variant_value_may_be_a_list_and_set_paths_are_relative_to_here() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("c");
    let months = "mild: usage.monthly_ambient_c=[5, 6, 9, 12, 16, 19, 21, 21, 18, 13, 9, 6]";
    stdout_of(&["compare", common::OVERNIGHT, "--variant", months, "--cycles", "30", "--out", out.to_str().unwrap()]);
    let csv = std::fs::read_to_string(out.join("compare.csv")).unwrap();
    assert!(csv.lines().any(|l| l.starts_with("mild,")), "{csv}");
    // The scenario lives in examples/; the cell path is given from the repository root (the
    // current directory), not from the scenario's directory.
    let f = dir.path().join("f");
    stdout_of(&[
        "forecast",
        common::OVERNIGHT,
        "--set",
        "cell=examples/cells/van-pouch-5ah.toml",
        "--cycles",
        "20",
        "--out",
        f.to_str().unwrap(),
    ]);
}

#[test]
fn the_fits_uncertainty_feeds_compare_and_table_and_its_cell_keeps_the_comments() {
    let dir = tempfile::tempdir().unwrap();
    let fit = dir.path().join("fit");
    stdout_of(&["fit", "examples/fit/van-storage-fit.toml", "--jobs", "2", "--out", fit.to_str().unwrap()]);
    let cell = std::fs::read_to_string(fit.join("fitted-cell.toml")).unwrap();
    let original = std::fs::read_to_string(common::repo(common::VAN_CELL)).unwrap();
    // The original's comments and key order survive; the fitted values keep exponent notation.
    assert!(cell.contains(original.lines().next().unwrap()), "{cell}");
    assert!(cell.contains("# rated; the balanced low-rate capacity"), "{cell}");
    assert!(cell.find("nominal_capacity_ah").unwrap() < cell.find("voltage_min_v").unwrap());
    assert!(cell.contains("[calibration]"));
    let line = cell.lines().find(|l| l.trim_start().starts_with("interstitial_diffusivity_m2_s")).unwrap();
    assert!(line.contains("e-"), "exponent form kept: {line}");
    fadecast().arg("check").arg(fit.join("fitted-cell.toml")).assert().success();

    let uncertainty = fit.join("uncertainty.toml");
    let u = uncertainty.to_str().unwrap();
    let c = dir.path().join("compare");
    stdout_of(&[
        "compare",
        "examples/van-depot-storage.toml",
        "--variant",
        "full: usage.rest_soc_pct=90",
        "--uncertainty",
        u,
        "--samples",
        "3",
        "--years",
        "1",
        "--quiet",
        "--out",
        c.to_str().unwrap(),
    ]);
    let t = dir.path().join("table");
    let (table, _) = stdout_of(&[
        "table",
        common::OVERNIGHT,
        "--ambient-c",
        "25",
        "--c-rate",
        "1",
        "--soc-window",
        "10-90",
        "--cycles",
        "30",
        "--uncertainty",
        u,
        "--samples",
        "2",
        "--quiet",
        "--out",
        t.to_str().unwrap(),
    ]);
    assert!(table.contains("2 samples per condition"), "{table}");
    let header = std::fs::read_to_string(t.join("table.csv")).unwrap();
    assert!(header.lines().next().unwrap().contains("soh_pct_p95"));
    assert!(Path::new(&c.join("compare.csv")).exists());
}

#[test]
fn a_comparison_without_samples_prints_no_pair_statistics() {
    let dir = tempfile::tempdir().unwrap();
    fadecast()
        .args(["compare", common::OVERNIGHT, "--variant", "warm: ambient_c=30", "--cycles", "30", "--out"])
        .arg(dir.path())
        .assert()
        .success()
        .stdout(predicate::str::contains("outlasts").not().and(predicate::str::contains("pairs").not()));
}
