//! `fadecast forecast` driving the real binary: the files it writes and what they hold, the
//! horizon flags, the every-cycle reference, warnings, bad input, and a forecast that fails
//! part-way. Horizons are kept to a few hundred cycles so the whole file runs in seconds.

mod common;

use common::fadecast;

use assert_cmd::Command;
use predicates::prelude::*;
use serde_json::Value;
use std::path::{Path, PathBuf};

const OVERNIGHT: &str = common::OVERNIGHT;
const WINTER_FAST_CHARGE: &str = common::WINTER_FAST_CHARGE;
const STORAGE: &str = common::STORAGE;
/// Three cycles a day, so cycles and days differ.
const TUG: &str = common::TUG;

const DAYS_PER_YEAR: f64 = 365.25;

/// Columns fade.csv must carry besides the slow state's (it may carry more).
const FADE_COLUMNS: [&str; 12] = [
    "cycle",
    "day",
    "years",
    "efc",
    "capacity_ah",
    "soh_pct",
    "resistance_mohm",
    "resistance_growth_pct",
    "fade_lithium_ah",
    "fade_active_material_ah",
    "film_crack_nm",
    "peak_temperature_c",
];

/// `fadecast forecast SCENARIO --out OUT EXTRA...`, not yet run.
fn forecast_command(scenario: impl AsRef<Path>, out: &Path, extra: &[&str]) -> Command {
    let mut command = fadecast();
    command.arg("forecast").arg(scenario.as_ref()).arg("--out").arg(out).args(extra);
    command
}

/// Runs a forecast that must succeed; returns what it printed: the results (stdout), then the
/// warnings and cautions (stderr).
fn run_forecast(scenario: impl AsRef<Path>, out: &Path, extra: &[&str]) -> String {
    let output = forecast_command(scenario, out, extra).assert().success().get_output().clone();
    format!("{}{}", String::from_utf8_lossy(&output.stdout), String::from_utf8_lossy(&output.stderr))
}

/// fade.csv read back: its header and its rows as numbers.
struct FadeTable {
    header: Vec<String>,
    rows: Vec<Vec<f64>>,
}

impl FadeTable {
    fn read(out: &Path) -> FadeTable {
        let mut reader = csv::Reader::from_path(out.join("fade.csv")).unwrap();
        let header = reader.headers().unwrap().iter().map(str::to_string).collect();
        let rows = reader
            .records()
            .map(|record| record.unwrap().iter().map(|field| field.parse::<f64>().unwrap()).collect())
            .collect();
        FadeTable { header, rows }
    }

    fn column(&self, name: &str) -> Vec<f64> {
        let index = self.header.iter().position(|h| h == name).unwrap_or_else(|| panic!("no column {name}"));
        self.rows.iter().map(|row| row[index]).collect()
    }

    fn last(&self, name: &str) -> f64 {
        *self.column(name).last().expect("fade.csv has rows")
    }
}

fn read_summary(out: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap()
}

/// The summary's end of life for `threshold` ("capacity" or "resistance") as (cycles, efc,
/// years), or None when censored (`null` values and `life_<threshold>_censored: true`); any other
/// shape fails.
fn end_of_life(summary: &Value, threshold: &str) -> Option<(f64, f64, f64)> {
    let eol = &summary["end_of_life"];
    let censored = eol[format!("life_{threshold}_censored")].as_bool().expect("a censored flag");
    let value = |axis: &str| eol[format!("life_{threshold}_{axis}")].as_f64();
    if censored {
        for axis in ["cycles", "efc", "years"] {
            assert!(value(axis).is_none(), "a censored life is null: {eol}");
        }
        return None;
    }
    let number = |axis: &str| value(axis).unwrap_or_else(|| panic!("end of life lacks {axis}: {eol}"));
    Some((number("cycles"), number("efc"), number("years")))
}

fn is_strictly_increasing(values: &[f64]) -> bool {
    values.windows(2).all(|w| w[1] > w[0])
}

/// Equal to the 6 significant digits outputs carry (FORMATS.md, "Outputs").
fn assert_close(actual: f64, expected: f64, what: &str) {
    assert!((actual - expected).abs() < 1e-5 * expected.abs().max(1.0), "{what}: {actual}, expected {expected}");
}

/// Exactly one non-empty line on stderr, containing every piece of `expected`.
fn one_line_naming(expected: &'static [&'static str]) -> impl Predicate<str> {
    predicate::function(move |err: &str| {
        err.trim_end().lines().count() == 1 && expected.iter().all(|piece| err.contains(piece))
    })
}

/// Ends (after the cautions) with one line naming every piece of `expected`.
fn last_line_naming(expected: &'static [&'static str]) -> impl Predicate<str> {
    predicate::function(move |err: &str| {
        let last = err.trim_end().lines().last().unwrap_or("");
        expected.iter().all(|piece| last.contains(piece))
    })
}

/// Runs a forecast that must be refused as bad input: exit 2, nothing on stdout, one line on
/// stderr naming every piece of `expected`, and no output directory created.
fn assert_rejected(scenario: impl AsRef<Path>, extra: &[&str], expected: &'static [&'static str]) {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    forecast_command(scenario, &out, extra).assert().code(2).stdout("").stderr(one_line_naming(expected));
    assert!(!out.exists(), "bad input must not create {}", out.display());
}

/// A scenario in `dir` on the demo cell (absolute path) running `profile`, with `sections`
/// (TOML tables such as `[usage]`) after the top-level keys.
fn write_scenario(dir: &Path, profile: &Path, sections: &str) -> PathBuf {
    let text = format!(
        "name = \"test scenario\"\ncell = {:?}\nprofile = {profile:?}\nambient_c = 25.0\n\n{sections}",
        common::repo(common::VAN_CELL),
    );
    let path = dir.join("scenario.toml");
    std::fs::write(&path, text).unwrap();
    path
}

fn overnight_profile() -> PathBuf {
    common::repo(common::PROFILE_OVERNIGHT)
}

#[test]
fn forecast_writes_fade_curve_summary_and_plot() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("new-dir");
    // A 99 % capacity threshold is crossed within the short horizon, so both shapes of an end
    // of life appear: an object for capacity, "not reached" for resistance.
    let stdout = run_forecast(OVERNIGHT, &out, &["--cycles", "300", "--set", "end_of_life.capacity_pct=99"]);

    let mut names: Vec<_> =
        std::fs::read_dir(&out).unwrap().map(|e| e.unwrap().file_name().into_string().unwrap()).collect();
    names.sort();
    assert_eq!(
        names,
        ["fade.csv", "fade.svg", "report.html", "summary.json"],
        "exactly the four outputs, no temporaries"
    );
    let svg = std::fs::read_to_string(out.join("fade.svg")).unwrap();
    assert!(svg.starts_with("<svg"));
    // The page holds the plot itself and the standards caution, and fetches nothing.
    let page = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(page.contains(&svg) && page.contains("applicable standards"));
    // (The inline SVG's xmlns names a namespace; nothing is loaded from it.)
    assert!(!page.contains("href=") && !page.contains("src=") && !page.contains("<script"));

    let fade = FadeTable::read(&out);
    for column in FADE_COLUMNS {
        assert!(fade.header.iter().any(|h| h == column), "fade.csv lacks {column}: {:?}", fade.header);
    }
    // Every component of the slow state has its columns, named from its table row.
    for spec in fadecast::aging::COMPONENTS.iter() {
        let prefix = format!("{}_", spec.column);
        assert!(fade.header.iter().any(|h| h.starts_with(&prefix)), "fade.csv lacks {prefix}*: {:?}", fade.header);
    }
    let cycles = fade.column("cycle");
    assert_eq!(cycles.first(), Some(&0.0));
    assert_close(fade.last("cycle"), 300.0, "last cycle");
    assert!(is_strictly_increasing(&cycles), "cycles must increase: {cycles:?}");
    let soh = fade.column("soh_pct");
    assert_eq!(soh[0], 100.0);
    assert!(soh.windows(2).all(|w| w[1] <= w[0]), "state of health must not recover: {soh:?}");

    let summary = read_summary(&out);
    let (eol_cycles, eol_efc, eol_years) = end_of_life(&summary, "capacity").expect("99 % is reached");
    assert!(eol_cycles > 0.0 && eol_cycles < 300.0, "{eol_cycles}");
    // A cycle delivers about one nominal capacity of charge (the balanced capacity is 2 % above
    // the rating in this cell).
    assert!(eol_efc > 0.0 && eol_efc <= 1.05 * eol_cycles, "about one full cycle of charge per cycle: {eol_efc}");
    assert_close(eol_years, eol_cycles / DAYS_PER_YEAR, "years at one cycle a day");
    assert_eq!(end_of_life(&summary, "resistance"), None, "+20 % in 300 cycles is far from 200 %");
    assert_close(summary["at_horizon"]["soh_pct"].as_f64().unwrap(), fade.last("soh_pct"), "soh at the horizon");
    assert!(summary["lost_at_horizon"]["lithium_lost_film_original_ah"].as_f64().unwrap() > 0.0);
    let simulated = summary["simulated_cycles"].as_u64().unwrap();
    assert!(simulated > 0 && simulated < 300 / 4, "jumping simulates a fraction of the cycles: {simulated}");
    assert!(summary["warnings"].is_array());
    assert_eq!(summary["caution"], fadecast::CAUTION);

    assert!(stdout.contains("End of life"), "{stdout}");
    assert!(stdout.trim_end().ends_with(fadecast::CAUTION), "{stdout}");
}

#[test]
fn cycles_flag_overrides_the_scenario_horizon() {
    let dir = tempfile::tempdir().unwrap();
    run_forecast(OVERNIGHT, dir.path(), &["--cycles", "120"]);
    let fade = FadeTable::read(dir.path());
    assert_close(fade.last("cycle"), 120.0, "last cycle");
    assert_close(fade.last("day"), 120.0, "last day at one cycle a day");
}

#[test]
fn years_flag_overrides_the_scenario_horizon() {
    let dir = tempfile::tempdir().unwrap();
    run_forecast(TUG, dir.path(), &["--years", "0.2"]);
    let fade = FadeTable::read(dir.path());
    assert_close(fade.last("day"), 0.2 * DAYS_PER_YEAR, "last day");
    assert_close(fade.last("cycle"), 3.0 * 0.2 * DAYS_PER_YEAR, "last cycle at three cycles a day");
}

#[test]
fn every_cycle_agrees_with_jumping() {
    let dir = tempfile::tempdir().unwrap();
    let (jumping, every) = (dir.path().join("jumping"), dir.path().join("every"));
    run_forecast(OVERNIGHT, &jumping, &["--cycles", "150"]);
    run_forecast(OVERNIGHT, &every, &["--cycles", "150", "--every-cycle"]);

    let (jumped, reference) = (FadeTable::read(&jumping), FadeTable::read(&every));
    assert_eq!(jumped.column("cycle"), reference.column("cycle"), "both report on the same grid");
    for ((cycle, a), b) in jumped.column("cycle").iter().zip(jumped.column("soh_pct")).zip(reference.column("soh_pct"))
    {
        assert!((a - b).abs() <= 0.2, "at cycle {cycle}: jumping {a} %, every cycle {b} %");
    }
    let summary = read_summary(&every);
    assert_eq!(summary["mode"], "every cycle");
    assert!(summary["simulated_cycles"].as_u64().unwrap() >= 150, "{}", summary["simulated_cycles"]);
}

#[test]
fn cold_fast_charge_warns_of_plating() {
    let dir = tempfile::tempdir().unwrap();
    let (winter, overnight) = (dir.path().join("winter"), dir.path().join("overnight"));
    let mentions_plating =
        |summary: &Value| summary["warnings"].as_array().unwrap().iter().any(|w| w["kind"] == "plating");

    let stdout = run_forecast(WINTER_FAST_CHARGE, &winter, &["--cycles", "300"]);
    assert!(stdout.contains("plating"), "{stdout}");
    assert!(mentions_plating(&read_summary(&winter)), "summary.json lacks the plating warning");

    // The slow overnight charge at 25 °C is the contrast: no plating, no warning.
    run_forecast(OVERNIGHT, &overnight, &["--cycles", "300"]);
    assert!(!mentions_plating(&read_summary(&overnight)));
}

#[test]
fn storage_forecast_runs_in_days() {
    let dir = tempfile::tempdir().unwrap();
    let stdout = run_forecast(STORAGE, dir.path(), &["--years", "2"]);
    assert!(stdout.contains("years of storage"), "{stdout}");

    let fade = FadeTable::read(dir.path());
    let days = fade.column("day");
    assert!(is_strictly_increasing(&days), "{days:?}");
    assert_close(fade.last("day"), 2.0 * DAYS_PER_YEAR, "last day");
    assert!(fade.column("cycle").iter().all(|&c| c == 0.0), "storage runs no cycles");
    assert!(fade.last("soh_pct") < 100.0, "calendar aging still fades the cell");
    assert_eq!(read_summary(dir.path())["simulated_cycles"], 0);
}

#[test]
fn storage_forecast_refuses_a_cycle_horizon() {
    assert_rejected(STORAGE, &["--cycles", "100"], &["--cycles", "storage-only", "--years"]);
}

#[test]
fn capacity_threshold_above_100_is_rejected() {
    assert_rejected(
        OVERNIGHT,
        &["--set", "end_of_life.capacity_pct=120"],
        &["end_of_life.capacity_pct", "between 0 and 100"],
    );
}

#[test]
fn resistance_threshold_below_fresh_is_rejected() {
    assert_rejected(
        OVERNIGHT,
        &["--set", "end_of_life.resistance_pct=90"],
        &["end_of_life.resistance_pct", "above 100"],
    );
}

#[test]
fn negative_cycles_per_day_is_rejected() {
    assert_rejected(OVERNIGHT, &["--set", "usage.cycles_per_day=-1"], &["usage.cycles_per_day", "zero or positive"]);
}

#[test]
fn eleven_monthly_ambients_are_rejected() {
    let dir = tempfile::tempdir().unwrap();
    let usage = "[usage]\nmonthly_ambient_c = [6, 6, 8, 11, 14, 17, 19, 19, 16, 12, 9]\n";
    let scenario = write_scenario(dir.path(), &overnight_profile(), &format!("{usage}\n[horizon]\ncycles = 100\n"));
    assert_rejected(&scenario, &[], &["scenario.toml", "usage.monthly_ambient_c", "twelve", "found 11"]);
}

#[test]
fn scenario_without_horizon_needs_a_flag() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = write_scenario(dir.path(), &overnight_profile(), "");
    assert_rejected(&scenario, &[], &["scenario.toml", "[horizon]", "--cycles", "--years"]);
    // The same scenario runs once the command line gives the horizon.
    run_forecast(&scenario, &dir.path().join("out"), &["--cycles", "30"]);
}

#[test]
fn negative_cycles_flag_is_rejected() {
    assert_rejected(OVERNIGHT, &["--cycles=-5"], &["--cycles", "must be positive", "-5"]);
}

// `--cycles -5` (with a space) and `--cycles N --years Y` are refused by the argument parser
// before fadecast's own check runs; they exit 2 and write nothing...
#[test]
fn horizon_flags_refused_by_the_argument_parser_write_nothing() {
    for extra in [["--cycles", "-5"].as_slice(), &["--cycles", "10", "--years", "1"]] {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        forecast_command(OVERNIGHT, &out, extra).assert().code(2).stdout("");
        assert!(!out.exists(), "{extra:?} created {}", out.display());
    }
}

// ...but print a multi-line usage message instead of the one-line rule.
#[test]
fn horizon_flag_errors_are_one_line_naming_the_flag() {
    assert_rejected(OVERNIGHT, &["--cycles", "-5"], &["--cycles", "must be positive"]);
    assert_rejected(OVERNIGHT, &["--cycles", "10", "--years", "1"], &["--cycles", "--years", "not both"]);
}

/// A duty cycle opening with a 10 s constant-power pulse from full charge. At 447 W (some 30C)
/// the fresh demo cell delivers it just above its voltage floor (448 W it cannot); as the cell
/// ages the most power it can give falls below 447 W and the pulse can no longer be run, some
/// 900 cycles in. (Near 440 W the pulse's stress breaks off so much graphite that the cell runs
/// out within 30 cycles, and whether it first runs out of capacity or of power is a knife edge.)
const POWER_PULSE_PROFILE: &str = r#"name = "power pulse, 1C drive, C/2 charge"
start_soc_pct = 100

[[block]]
[[block.step]]
label = "rest full"
rest = true
end_time_min = 10

[[block.step]]
label = "power pulse"
discharge_w = 447
end_time_s = 10

[[block.step]]
label = "drive"
discharge_c = 1.0
end_voltage_v = 2.8

[[block.step]]
label = "charge"
charge_c = 0.5
end_voltage_v = 4.15

[[block.step]]
label = "hold"
hold_v = 4.15
end_current_c = 0.05
end_time_h = 2
"#;

#[test]
fn forecast_that_fails_part_way_exits_1_and_keeps_its_rows() {
    let dir = tempfile::tempdir().unwrap();
    let profile = dir.path().join("power-pulse.toml");
    std::fs::write(&profile, POWER_PULSE_PROFILE).unwrap();
    let scenario = write_scenario(dir.path(), &profile, "[usage]\ncycles_per_day = 1\n");

    // Guard: the fresh cell runs the whole pulse (it ends on time, not at the voltage floor), so
    // the failure below comes from aging.
    fadecast()
        .arg("cycle")
        .arg(&scenario)
        .arg("--out")
        .arg(dir.path().join("cycle"))
        .assert()
        .success()
        .stdout(predicate::str::is_match(r"power pulse\s+10 s\s+\S+\s+time").unwrap());

    let horizon = 2000.0;
    let out = dir.path().join("out");
    let output = forecast_command(&scenario, &out, &["--cycles", "2000"])
        .assert()
        .code(1)
        .stderr(last_line_naming(&["forecast failed at cycle", "power pulse", "cannot deliver 447.0 W"]))
        .get_output()
        .clone();
    let stderr = String::from_utf8(output.stderr).unwrap();

    let summary = read_summary(&out);
    assert_eq!(summary["stop"]["kind"], "failed", "{}", summary["stop"]);
    let stopped_at = summary["stop"]["at"].as_f64().unwrap();
    assert!(stopped_at > 1.0 && stopped_at < horizon, "fails mid-forecast, not on the fresh cell: {stopped_at}");
    assert!(stderr.contains(&format!("at cycle {stopped_at:.0}")), "stderr names where it stopped: {stderr}");

    let fade = FadeTable::read(&out);
    let cycles = fade.column("cycle");
    assert!(cycles.len() >= 3, "rows before the failure are kept: {cycles:?}");
    assert!(is_strictly_increasing(&cycles) && cycles[0] == 0.0);
    assert!(fade.last("cycle") <= stopped_at, "no row past the failure: {cycles:?}");
    assert!(stderr.contains(&format!("the {} rows computed so far", cycles.len())), "{stderr}");
    assert!(out.join("fade.svg").exists());
}
