//! `fadecast bands` and `fadecast merge` through the real binary: reproducibility (thread
//! count, shards, seed, interruption) and bad input.

mod common;

use common::fadecast;

use predicates::prelude::*;
use std::fs;
use std::path::Path;

const SCENARIO: &str = common::BANDS;
/// Outputs that must be identical byte for byte.
const OUTPUTS: [&str; 5] = ["bands.csv", "samples.csv", "summary.json", "bands.svg", "sensitivity.svg"];

/// A short, cheap run: few samples, a short horizon.
fn bands(out: &Path, extra: &[&str]) -> assert_cmd::assert::Assert {
    let mut cmd = fadecast();
    cmd.args(["bands", SCENARIO, "--samples", "12", "--seed", "7", "--cycles", "300", "--quiet", "--out"]).arg(out);
    cmd.args(extra);
    cmd.assert()
}

fn read(dir: &Path, name: &str) -> Vec<u8> {
    fs::read(dir.join(name)).unwrap_or_else(|e| panic!("{}: {e}", dir.join(name).display()))
}

fn assert_same_outputs(a: &Path, b: &Path) {
    for name in OUTPUTS {
        assert!(read(a, name) == read(b, name), "{name} differs between {} and {}", a.display(), b.display());
    }
}

#[test]
fn one_and_two_jobs_give_the_same_bytes() {
    let tmp = tempfile::tempdir().unwrap();
    let (one, two) = (tmp.path().join("one"), tmp.path().join("two"));
    bands(&one, &["--jobs", "1"]).success();
    bands(&two, &["--jobs", "2"]).success();
    assert_same_outputs(&one, &two);
    let header = String::from_utf8(read(&one, "bands.csv")).unwrap();
    let header = header.lines().next().unwrap();
    for column in ["soh_pct_p5", "soh_pct_p50", "soh_pct_p95", "capacity_ah_p50", "resistance_mohm_p95"] {
        assert!(header.split(',').any(|c| c == column), "missing {column} in {header}");
    }
    let samples = String::from_utf8(read(&one, "samples.csv")).unwrap();
    assert_eq!(samples.lines().count(), 13, "a header and one row per sample");
}

#[test]
fn the_same_seed_twice_gives_the_same_bytes_and_another_seed_does_not() {
    let tmp = tempfile::tempdir().unwrap();
    let (a, b, c) = (tmp.path().join("a"), tmp.path().join("b"), tmp.path().join("c"));
    bands(&a, &[]).success();
    bands(&b, &[]).success();
    assert_same_outputs(&a, &b);
    let mut other = fadecast();
    other.args(["bands", SCENARIO, "--samples", "12", "--seed", "8", "--cycles", "300", "--quiet", "--out"]).arg(&c);
    other.assert().success();
    assert!(read(&a, "samples.csv") != read(&c, "samples.csv"));
}

#[test]
fn four_shards_merged_equal_one_run() {
    let tmp = tempfile::tempdir().unwrap();
    let whole = tmp.path().join("whole");
    bands(&whole, &[]).success();
    let mut shards = Vec::new();
    for k in 1..=4 {
        let dir = tmp.path().join(format!("shard{k}"));
        bands(&dir, &["--shard", &format!("{k}/4")]).success();
        shards.push(dir);
    }
    let merged = tmp.path().join("merged");
    let mut cmd = fadecast();
    cmd.arg("merge").args(&shards).arg("--out").arg(&merged);
    cmd.assert().success();
    assert_same_outputs(&whole, &merged);
    // A missing shard is refused.
    let mut partial = fadecast();
    partial.arg("merge").args(&shards[..3]).arg("--out").arg(tmp.path().join("partial"));
    partial.assert().code(2);
}

#[test]
fn a_killed_run_resumes_to_the_same_bytes() {
    let tmp = tempfile::tempdir().unwrap();
    let (whole, resumed) = (tmp.path().join("whole"), tmp.path().join("resumed"));
    let args =
        ["bands", SCENARIO, "--samples", "40", "--seed", "3", "--cycles", "300", "--quiet", "--jobs", "1", "--out"];
    let mut full = fadecast();
    full.args(args).arg(&whole);
    full.assert().success();

    // Start the same run and kill it hard once a few samples are in its journal.
    let mut child = std::process::Command::new(common::fadecast_binary())
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .args(args)
        .arg(&resumed)
        .stdout(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let journal = resumed.join("samples.journal");
    let started = std::time::Instant::now();
    loop {
        let size = fs::metadata(&journal).map(|m| m.len()).unwrap_or(0);
        if size > 3000 || started.elapsed().as_secs() > 120 {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    child.kill().unwrap();
    let status = child.wait().unwrap();
    assert!(!status.success(), "the run finished before it could be killed; raise --samples");
    assert!(!resumed.join("summary.json").exists(), "a killed run writes no summary");

    let mut again = fadecast();
    again.args(args).arg(&resumed).arg("--resume");
    again.assert().success();
    assert_same_outputs(&whole, &resumed);
}

#[test]
fn bad_ensemble_input_exits_2_and_names_the_problem() {
    let tmp = tempfile::tempdir().unwrap();
    let cases: [(&[&str], &str); 6] = [
        (&["--samples", "0"], "--samples"),
        (&["--samples", "100000000"], "--samples"),
        (&["--samples", "4", "--shard", "5/4"], "--shard"),
        (&["--samples", "4", "--quantiles", "50,5"], "--quantiles"),
        (&["--samples", "4", "--warranty", "40:70"], "--warranty"),
        (&["--samples", "4", "--set", "uncertainty.parameter.0.sigma_ln=-0.3"], "sigma_ln"),
    ];
    for (k, (extra, needle)) in cases.iter().enumerate() {
        let out = tmp.path().join(format!("case{k}"));
        let mut cmd = fadecast();
        cmd.args(["bands", SCENARIO, "--cycles", "300", "--quiet", "--out"]).arg(&out).args(*extra);
        let assert = cmd.assert().code(2);
        let stderr = String::from_utf8(assert.get_output().stderr.clone()).unwrap();
        assert!(stderr.contains(needle), "case {extra:?}: {stderr}");
        assert!(!out.join("summary.json").exists());
    }
}

/// A scenario in `dir` sampling only the cell's specific heat (which barely moves the fade),
/// with `distribution` lines for it.
fn heat_spread(dir: &Path, distribution: &str) -> std::path::PathBuf {
    let text = format!(
        "name = \"heat spread\"\ncell = {:?}\nprofile = {:?}\nambient_c = 25.0\n\n[uncertainty]\n\
         sampling = \"latin-hypercube\"\n\n[[uncertainty.parameter]]\npath = \"cell.thermal.specific_heat_j_kg_k\"\n{distribution}\n",
        Path::new(env!("CARGO_MANIFEST_DIR")).join(common::VAN_CELL),
        Path::new(env!("CARGO_MANIFEST_DIR")).join(common::PROFILE_OVERNIGHT),
    );
    let path = dir.join("heat.toml");
    fs::write(&path, text).unwrap();
    path
}

#[test]
fn an_impossible_draw_is_recorded_and_the_run_goes_on() {
    // Latin-hypercube strata of 990 J/(kg·K) from 1000: the top one lies almost wholly past the
    // plausibility table's 10 000, so one of the ten draws is impossible.
    let tmp = tempfile::tempdir().unwrap();
    let scenario = heat_spread(tmp.path(), "distribution = \"uniform\"\nlow = 1000.0\nhigh = 10900.0");
    let out = tmp.path().join("out");
    let mut cmd = fadecast();
    cmd.arg("bands").arg(&scenario).args(["--samples", "10", "--seed", "1", "--cycles", "100", "--quiet", "--out"]);
    cmd.arg(&out).assert().success().stdout(predicate::str::contains("counted 9, invalid draws 1"));
    let samples = String::from_utf8(read(&out, "samples.csv")).unwrap();
    let invalid: Vec<&str> = samples.lines().filter(|l| l.contains(",invalid,")).collect();
    assert_eq!(invalid.len(), 1, "{samples}");
    assert!(invalid[0].contains("is not a plausible value"), "the reason is recorded: {}", invalid[0]);
    assert!(out.join("bands.csv").exists());
}

#[test]
fn too_many_impossible_draws_refuse_statistics_but_keep_the_record() {
    // A log-normal of σ = 5 puts most draws outside 100–10 000 J/(kg·K).
    let tmp = tempfile::tempdir().unwrap();
    let scenario = heat_spread(tmp.path(), "distribution = \"log-normal\"\nmedian = 1000.0\nsigma_ln = 5.0");
    let out = tmp.path().join("out");
    let mut cmd = fadecast();
    cmd.arg("bands").arg(&scenario).args(["--samples", "10", "--seed", "1", "--cycles", "100", "--quiet", "--out"]);
    cmd.arg(&out)
        .assert()
        .code(1)
        .stderr(predicate::str::contains("were left out").and(predicate::str::contains("no bands")));
    assert!(out.join("samples.csv").exists() && out.join("samples.journal").exists());
    for name in ["bands.csv", "summary.json", "bands.svg"] {
        assert!(!out.join(name).exists(), "{name} holds statistics and is not written");
    }
}
