//! One output schema (issue 13): every command runs on the bundled demos (small horizons and
//! sample counts, so this stays fast), and every CSV it writes is read strictly — each column
//! is named in the schema (`fadecast::report::schema`), each numeric cell parses as a finite
//! number or is empty, each flag is `true` or `false`, each whole-number column is a whole
//! number — and every JSON carries `schema_version` and no number spelt as text. Since every
//! column name must resolve to one schema entry and the schema gives each meaning one name,
//! the same quantity cannot appear under two names in two files.

mod common;

use common::fadecast;
use fadecast::report::schema::{column, columns, Kind, SCHEMA_VERSION};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Runs fadecast with `args` (from the repository root), asserting success.
fn run(args: &[&str]) {
    let output = fadecast().args(args).output().unwrap();
    assert!(
        output.status.success(),
        "fadecast {} failed:\n{}\n{}",
        args.join(" "),
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    );
}

/// Every command on the demos, each into its own directory under `root`.
fn run_every_command(root: &Path) -> Vec<PathBuf> {
    let dir = |name: &str| root.join(name);
    let s = |p: &Path| p.to_str().unwrap().to_string();
    let runs: Vec<(&str, Vec<String>)> = vec![
        ("cycle", vec!["cycle".into(), "examples/lab-cccv-1c.toml".into()]),
        (
            "forecast",
            vec!["forecast".into(), "examples/van-fleet-overnight.toml".into(), "--cycles".into(), "200".into()],
        ),
        (
            "forecast-storage",
            vec!["forecast".into(), "examples/van-depot-storage.toml".into(), "--years".into(), "1".into()],
        ),
        ("pack", vec!["forecast".into(), "examples/home-storage-pack.toml".into(), "--cycles".into(), "60".into()]),
        (
            "bands",
            [
                "bands",
                "examples/van-fleet-bands.toml",
                "--samples",
                "6",
                "--cycles",
                "200",
                "--warranty",
                "0.5:95",
                "--quiet",
            ]
            .map(String::from)
            .to_vec(),
        ),
        (
            "compare",
            [
                "compare",
                "examples/van-fleet-bands.toml",
                "--variant",
                "full idle: usage.rest_soc_pct=90",
                "--samples",
                "4",
                "--cycles",
                "200",
                "--quiet",
            ]
            .map(String::from)
            .to_vec(),
        ),
        (
            "compare-deterministic",
            [
                "compare",
                "examples/van-fleet-overnight.toml",
                "--profile",
                "profiles/overnight-charge-1c-drive.toml",
                "--profile",
                "profiles/fast-charge-2c.toml",
                "--cycles",
                "150",
            ]
            .map(String::from)
            .to_vec(),
        ),
        (
            "table",
            [
                "table",
                "examples/van-fleet-bands.toml",
                "--ambient-c",
                "0,25",
                "--c-rate",
                "1",
                "--soc-window",
                "10-90",
                "--cycles",
                "100",
                "--samples",
                "3",
                "--quiet",
            ]
            .map(String::from)
            .to_vec(),
        ),
        ("fit", ["fit", "examples/fit/van-storage-fit.toml", "--quiet"].map(String::from).to_vec()),
    ];
    let mut dirs = Vec::new();
    for (name, mut args) in runs {
        let out = dir(name);
        args.extend(["--out".into(), s(&out)]);
        run(&args.iter().map(String::as_str).collect::<Vec<_>>());
        dirs.push(out);
    }
    dirs
}

/// The problems of one CSV file read strictly; `seen` collects each column's files.
fn check_csv(path: &Path, seen: &mut BTreeMap<String, Vec<String>>) -> Vec<String> {
    let mut problems = Vec::new();
    let file = path.file_name().unwrap().to_string_lossy().to_string();
    let mut reader = csv::Reader::from_path(path).unwrap();
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    let kinds: Vec<Option<Kind>> = header
        .iter()
        .map(|name| {
            // samples.csv names each drawn input by its `--set` path.
            if file == "samples.csv" && name.contains('.') {
                return Some(Kind::Number);
            }
            match column(name) {
                Some(c) => {
                    let place = format!("{file}:{name}");
                    let places = seen.entry(c.name).or_default();
                    if !places.contains(&place) {
                        places.push(place);
                    }
                    Some(c.kind)
                }
                None => {
                    problems.push(format!("{}: column `{name}` is not in the output schema", path.display()));
                    None
                }
            }
        })
        .collect();
    let mut rows = 0;
    for (line, record) in reader.records().enumerate() {
        let record = record.unwrap();
        rows += 1;
        for ((name, kind), cell) in header.iter().zip(&kinds).zip(record.iter()) {
            let ok = match kind {
                Some(Kind::Number) => cell.is_empty() || cell.parse::<f64>().is_ok_and(f64::is_finite),
                Some(Kind::Integer) => cell.parse::<u64>().is_ok(),
                Some(Kind::Flag) => cell == "true" || cell == "false",
                Some(Kind::Text) | None => true,
            };
            if !ok {
                problems.push(format!("{}:{}: `{name}` holds `{cell}`", path.display(), line + 2));
            }
            // Six significant digits at most: no 17-digit floating-point noise.
            if matches!(kind, Some(Kind::Number)) && !cell.is_empty() {
                let mantissa = cell.split(['e', 'E']).next().unwrap();
                let digits = mantissa.trim_start_matches('-').replace('.', "");
                let significant = digits.trim_start_matches('0').trim_end_matches('0').len();
                if significant > 6 {
                    problems.push(format!(
                        "{}:{}: `{name}` = {cell} has {significant} digits",
                        path.display(),
                        line + 2
                    ));
                }
            }
        }
    }
    if rows == 0 {
        problems.push(format!("{}: no rows", path.display()));
    }
    problems
}

/// A JSON value's problems: numbers written as text (`"inf"`, `"not reached"`), `NaN`.
fn check_json_value(path: &Path, at: &str, value: &serde_json::Value, problems: &mut Vec<String>) {
    match value {
        serde_json::Value::String(s) => {
            let lower = s.to_lowercase();
            if lower == "not reached" || lower == "inf" || lower == "nan" || lower.parse::<f64>().is_ok() {
                problems.push(format!("{}: {at} is the text `{s}` where a number or null belongs", path.display()));
            }
        }
        serde_json::Value::Array(items) => {
            for (i, item) in items.iter().enumerate() {
                check_json_value(path, &format!("{at}[{i}]"), item, problems);
            }
        }
        serde_json::Value::Object(map) => {
            for (key, item) in map {
                check_json_value(path, &format!("{at}.{key}"), item, problems);
            }
        }
        _ => {}
    }
}

#[test]
fn every_output_follows_one_schema() {
    let root = tempfile::tempdir().unwrap();
    let dirs = run_every_command(root.path());
    let mut problems = Vec::new();
    let mut seen: BTreeMap<String, Vec<String>> = BTreeMap::new();
    let mut csv_files = 0;
    let mut json_files = 0;
    for dir in &dirs {
        let mut entries: Vec<PathBuf> = std::fs::read_dir(dir).unwrap().map(|e| e.unwrap().path()).collect();
        entries.sort();
        for path in entries {
            match path.extension().and_then(|e| e.to_str()) {
                Some("csv") => {
                    csv_files += 1;
                    problems.extend(check_csv(&path, &mut seen));
                }
                Some("json") if path.file_name().unwrap() != "run.json" => {
                    json_files += 1;
                    let value: serde_json::Value =
                        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
                    if value.get("schema_version") != Some(&serde_json::json!(SCHEMA_VERSION)) {
                        problems.push(format!("{}: no schema_version {SCHEMA_VERSION}", path.display()));
                    }
                    check_json_value(&path, "", &value, &mut problems);
                }
                _ => {}
            }
        }
    }
    // Each command wrote into its own directory: bands did not overwrite forecast's summary.
    assert!(dirs.iter().all(|d| d.is_dir()));
    println!("{csv_files} CSV files, {json_files} JSON files; columns and where they appear:");
    for (name, places) in &seen {
        println!("  {name}: {}", places.join(", "));
    }
    assert!(problems.is_empty(), "{} problems:\n{}", problems.len(), problems.join("\n"));
    // cycle, forecast ×2, pack (fade + pack), bands (bands + samples), compare ×2, table.
    assert_eq!(csv_files, 10, "every CSV the commands write was read");
    assert_eq!(json_files, 5, "summary.json ×4 (forecast ×2, pack, bands) and fit.json");
    // The shared axes appear in every file that reports points over life.
    for axis in ["cycle", "day", "years", "efc", "throughput_ah"] {
        let files: Vec<&str> = seen[axis].iter().map(|p| p.split(':').next().unwrap()).collect();
        for file in ["fade.csv", "table.csv", "pack.csv"] {
            assert!(files.contains(&file), "{axis} missing from {file}: {files:?}");
        }
    }
    for axis in ["cycle", "day", "years"] {
        assert!(seen[axis].iter().any(|p| p.starts_with("bands.csv")), "{axis} missing from bands.csv");
    }
}

#[test]
fn fit_json_names_its_termination_and_censoring_is_null_plus_flag() {
    let root = tempfile::tempdir().unwrap();
    let out = root.path().join("forecast");
    // 50 cycles: the van cell is far from end of life, so both thresholds are censored.
    run(&["forecast", "examples/van-fleet-overnight.toml", "--cycles", "50", "--out", out.to_str().unwrap()]);
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let eol = &summary["end_of_life"];
    assert_eq!(eol["life_capacity_cycles"], serde_json::Value::Null, "{eol}");
    assert_eq!(eol["life_capacity_censored"], serde_json::json!(true), "{eol}");
    // The JSON key is the CSV column's name.
    assert!(column("life_capacity_censored").is_some());
    let names: Vec<String> = columns().into_iter().map(|c| c.name).collect();
    assert!(!names.iter().any(|n| n.starts_with("eol_")), "{names:?}");
}
