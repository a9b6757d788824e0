//! Every command tells the same truth: typed warnings reach `forecast`, `bands`, `compare`,
//! `table` and `fit` (terminal and JSON); a `--holdout-after` fit calibrates only what it fitted;
//! an unconverged fit says so; equivalent full cycles and the lithium columns follow their one
//! definition each (FORMATS.md, "Quantities").

use assert_cmd::Command;
use fadecast::aging::{Component, Measure, COMPONENTS};
use fadecast::forecast::{run_forecast, ForecastOptions, ForecastWarning, Horizon, WarningKind};
use fadecast::input::load_scenario;
use serde_json::Value;
use std::path::{Path, PathBuf};

fn repo(path: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(path)
}

fn fadecast() -> Command {
    Command::cargo_bin("fadecast").unwrap()
}

fn run_ok(args: &[&str]) -> String {
    let output = fadecast().args(args).output().unwrap();
    assert!(output.status.success(), "{args:?}: {}", String::from_utf8_lossy(&output.stderr));
    // Results on stdout, warnings and cautions on stderr: read both.
    format!("{}{}", String::from_utf8_lossy(&output.stdout), String::from_utf8_lossy(&output.stderr))
}

fn json(path: &Path) -> Value {
    serde_json::from_slice(&std::fs::read(path).unwrap()).unwrap()
}

/// Kinds of the typed warnings in a forecast's summary.json.
fn warning_kinds(summary: &Value) -> Vec<String> {
    summary["warnings"].as_array().unwrap().iter().map(|w| w["kind"].as_str().unwrap().to_string()).collect()
}

/// Days of the storage data up to `limit`, from the demo data file.
fn last_day_up_to(file: &str, limit: f64) -> f64 {
    let text = std::fs::read_to_string(repo(file)).unwrap();
    text.lines()
        .skip(1)
        .filter_map(|l| l.split(',').next()?.parse::<f64>().ok())
        .filter(|d| *d <= limit)
        .fold(0.0, f64::max)
}

#[test]
fn a_holdout_fit_calibrates_only_what_it_fitted_and_bands_past_it_warn() {
    let dir = tempfile::tempdir().unwrap();
    let fit_out = dir.path().join("fit");
    let fit_file = repo("examples/fit/van-storage-fit.toml");
    run_ok(&["fit", fit_file.to_str().unwrap(), "--holdout-after", "365", "--out", fit_out.to_str().unwrap()]);

    // The calibration range ends at the last fitted point, not at the end of the data.
    let cell_text = std::fs::read_to_string(fit_out.join("fitted-cell.toml")).unwrap();
    let cell: toml::Table = toml::from_str(&cell_text).unwrap();
    let calibration = cell["calibration"].as_table().unwrap();
    let days = calibration["days"].as_float().unwrap();
    let last_fitted = last_day_up_to("examples/fit/storage-25c.csv", 365.0)
        .max(last_day_up_to("examples/fit/storage-40c.csv", 365.0));
    assert!((days - last_fitted).abs() < 1e-6, "calibrated to day {days}, last fitted point {last_fitted}");
    assert!(!calibration.contains_key("cycles"), "a storage fit says nothing about cycles");
    assert_eq!(calibration["min_temperature_c"].as_float(), Some(25.0));
    assert_eq!(calibration["max_temperature_c"].as_float(), Some(40.0));

    let scenario = repo("examples/van-depot-storage.toml");
    let set_cell = format!("cell={}", fit_out.join("fitted-cell.toml").display());
    // Inside the range: no extrapolation warning. Past it (between the fitted and the held-out
    // data): the forecast warns, in the terminal and in summary.json.
    for (years, beyond) in [("0.5", false), ("1.5", true)] {
        let out = dir.path().join(format!("forecast-{years}"));
        let text = run_ok(&[
            "forecast",
            scenario.to_str().unwrap(),
            "--set",
            &set_cell,
            "--set",
            "ambient_c=30",
            "--years",
            years,
            "--out",
            out.to_str().unwrap(),
        ]);
        let kinds = warning_kinds(&json(&out.join("summary.json")));
        assert_eq!(kinds.contains(&"beyond_calibration".to_string()), beyond, "{years} years: {kinds:?}");
        assert_eq!(text.contains("beyond the calibration range"), beyond, "{years} years:\n{text}");
        assert!(!kinds.contains(&"uncalibrated".to_string()));
    }

    // bands to 10 years with the fit's uncertainty: every sample runs past the range.
    let bands_out = dir.path().join("bands");
    let text = run_ok(&[
        "bands",
        scenario.to_str().unwrap(),
        "--set",
        &set_cell,
        "--uncertainty",
        fit_out.join("uncertainty.toml").to_str().unwrap(),
        "--samples",
        "6",
        "--years",
        "10",
        "--warranty",
        "8:90",
        "--quiet",
        "--out",
        bands_out.to_str().unwrap(),
    ]);
    assert!(text.contains("beyond the calibration range (extrapolation) in 6 of 6 samples"), "{text}");
    assert!(text.contains("an extrapolation: 6 of 6 samples"), "the warranty line says so too:\n{text}");
    let summary = json(&bands_out.join("summary.json"));
    let counted = summary["forecast_warnings"].as_array().unwrap();
    let beyond = counted.iter().find(|w| w["kind"] == "beyond_calibration").expect("counted warning");
    assert_eq!((beyond["count"].as_u64(), beyond["out_of"].as_u64()), (Some(6), Some(6)));
    assert!(!summary["warnings"].as_array().unwrap().is_empty());

    // merge re-reads the journal: the counts survive.
    let merged = dir.path().join("merged");
    run_ok(&["merge", bands_out.to_str().unwrap(), "--out", merged.to_str().unwrap()]);
    let merged_summary = json(&merged.join("summary.json"));
    assert_eq!(merged_summary["forecast_warnings"], summary["forecast_warnings"]);
}

#[test]
fn an_unconverged_fit_warns_in_its_summary_and_fit_json() {
    let dir = tempfile::tempdir().unwrap();
    let original = std::fs::read_to_string(repo("examples/fit/van-storage-fit.toml")).unwrap();
    // The same fit with the optimiser's patience cut to one round of evaluations: it stops on
    // its evaluation limit, before its convergence tests are met.
    let text = original
        .replace("starts = 3 ", "starts = 1\npatience = 1 ")
        .replace("\"storage-25c.csv\"", &format!("{:?}", repo("examples/fit/storage-25c.csv")))
        .replace("\"storage-40c.csv\"", &format!("{:?}", repo("examples/fit/storage-40c.csv")))
        .replace("\"../van-depot-storage.toml\"", &format!("{:?}", repo("examples/van-depot-storage.toml")));
    assert!(text.contains("patience = 1"), "the demo fit file changed; update this test");
    let file = dir.path().join("fit.toml");
    std::fs::write(&file, text).unwrap();
    let out = dir.path().join("out");
    let stdout = run_ok(&["fit", file.to_str().unwrap(), "--out", out.to_str().unwrap()]);
    assert!(stdout.contains("did not converge"), "{stdout}");
    let record = json(&out.join("fit.json"));
    assert_eq!(record["converged"], Value::Bool(false));
    assert!(record["warnings"].as_array().unwrap().iter().any(|w| w["kind"] == "not_converged"));
}

#[test]
fn compare_and_table_flag_plating_from_the_typed_warning() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = repo("examples/van-fleet-overnight.toml");
    // The cold 2C charge plates in this model, the overnight charge does not (flag read from
    // `WarningKind::Plating`, never from message text).
    let compare_out = dir.path().join("compare");
    run_ok(&[
        "compare",
        scenario.to_str().unwrap(),
        "--profile",
        repo("profiles/overnight-charge-1c-drive.toml").to_str().unwrap(),
        "--profile",
        repo("profiles/fast-charge-2c.toml").to_str().unwrap(),
        "--set",
        "ambient_c=0",
        "--cycles",
        "20",
        "--out",
        compare_out.to_str().unwrap(),
    ]);
    let csv = std::fs::read_to_string(compare_out.join("compare.csv")).unwrap();
    let header: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
    let column = header.iter().position(|h| *h == "plating_predicted").unwrap();
    let flags: Vec<String> = csv.lines().skip(1).map(|l| l.split(',').nth(column).unwrap().to_string()).collect();
    assert_eq!(flags, ["false", "true"], "{csv}");

    let table_out = dir.path().join("table");
    run_ok(&[
        "table",
        scenario.to_str().unwrap(),
        "--ambient-c",
        "0,25",
        "--c-rate",
        "2",
        "--soc-window",
        "0-100",
        "--cycles",
        "20",
        "--out",
        table_out.to_str().unwrap(),
    ]);
    let csv = std::fs::read_to_string(table_out.join("table.csv")).unwrap();
    let header: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
    let (ambient, plating) = (
        header.iter().position(|h| *h == "ambient_c").unwrap(),
        header.iter().position(|h| *h == "plating_predicted").unwrap(),
    );
    for line in csv.lines().skip(1) {
        let cells: Vec<&str> = line.split(',').collect();
        let cold = cells[ambient].parse::<f64>().unwrap() < 1.0;
        assert_eq!(cells[plating], if cold { "true" } else { "false" }, "{line}");
    }
}

#[test]
fn efc_is_throughput_over_nominal_capacity_and_the_lithium_columns_add_up() {
    let loaded = load_scenario(&repo("examples/van-fleet-overnight.toml"), &[]).unwrap();
    let forecast = run_forecast(&loaded.scenario, &loaded.plan, Horizon::Cycles(1500.0), &ForecastOptions::default());
    let nominal_ah = loaded.scenario.cell.nominal_capacity_coulomb / 3600.0;
    // FORMATS.md: equivalent full cycles = discharge throughput / nominal capacity (5 Ah here).
    assert!((nominal_ah - 5.0).abs() < 1e-12);
    for p in &forecast.points {
        let expected = p.throughput_ah / nominal_ah;
        assert!((p.efc - expected).abs() <= 1e-9 * expected.max(1.0), "cycle {}: {} vs {expected}", p.cycle, p.efc);
    }
    let scale = &forecast.scale;
    let last = forecast.points.last().unwrap();
    // Conservation: the sinks' own shares in Ah add up to the lithium that left the inventory
    // (the integrator carries the inventory as its own component, so this is a check).
    let sinks: f64 = COMPONENTS
        .iter()
        .filter(|c| c.measure == Measure::LithiumLost)
        .map(|c| scale.lithium_ah(&last.state, c.component))
        .sum();
    let left = scale.lithium_fresh_ah * (1.0 - last.state[Component::LithiumInventory]);
    assert!((sinks - left).abs() < 1e-9 * scale.lithium_fresh_ah, "{sinks} vs {left} Ah");
    // How they combine with the balance: the capacity lost splits exactly into the lithium
    // taken by film and plating and the active material lost with its lithium.
    let lost = forecast.fresh_capacity_ah - last.capacity_ah;
    assert!((last.fade_lithium_ah + last.fade_active_material_ah - lost).abs() < 1e-12, "split must be exact");
    // In this cell the capacity falls by a little less than each Ah of lithium taken by film
    // and plating (the open-circuit slopes at the window's ends share the loss between the
    // electrodes; derived from the electrode balance, checked here as a range).
    let film_and_plating = sinks - scale.lithium_ah(&last.state, Component::LithiumStranded);
    let ratio = last.fade_lithium_ah / film_and_plating;
    assert!((0.8..=1.0).contains(&ratio), "capacity per Ah of lithium {ratio}");
    // Film fracture has its own column, and it is a real share of the film's lithium here.
    let fracture = scale.lithium_ah(&last.state, Component::LithiumFilmFracture);
    assert!(fracture > 0.1 * scale.lithium_ah(&last.state, Component::LithiumFilmOriginal), "{fracture} Ah");
    // The forecast's warnings are typed: the demo cell is uncalibrated.
    assert!(forecast.warnings.contains(&ForecastWarning::Uncalibrated));
    assert!(!forecast.warning_set().contains(WarningKind::BeyondCalibration));
}

#[test]
fn forecast_repeats_the_held_series_warning_of_cycle() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("f");
    let scenario = repo("examples/van-day-measured.toml");
    let text = run_ok(&["forecast", scenario.to_str().unwrap(), "--cycles", "50", "--out", out.to_str().unwrap()]);
    assert!(text.contains("held at the voltage limit"), "{text}");
    let kinds = warning_kinds(&json(&out.join("summary.json")));
    assert!(kinds.contains(&"held_at_voltage_limit".to_string()), "{kinds:?}");
}

#[test]
fn runs_of_an_earlier_journal_format_are_refused_not_read_as_empty() {
    // Journal records now carry warning kinds and typed stop reasons; an older run must say so
    // rather than look unfinished.
    let dir = tempfile::tempdir().unwrap();
    let run = dir.path().join("run");
    let scenario = repo("examples/van-fleet-bands.toml");
    run_ok(&[
        "bands",
        scenario.to_str().unwrap(),
        "--samples",
        "2",
        "--cycles",
        "20",
        "--quiet",
        "--out",
        run.to_str().unwrap(),
    ]);
    let description = std::fs::read_to_string(run.join("run.json")).unwrap();
    assert!(description.contains("\"format\": 3"), "{description}");
    std::fs::write(run.join("run.json"), description.replace("\"format\": 3", "\"format\": 2")).unwrap();
    let merged = dir.path().join("merged");
    let output = fadecast().args(["merge", run.to_str().unwrap(), "--out", merged.to_str().unwrap()]).output().unwrap();
    assert_eq!(output.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(stderr.contains("another version of fadecast"), "{stderr}");
}
