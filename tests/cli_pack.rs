//! `fadecast forecast` on a pack scenario through the real binary: the pack's files and
//! summary, the caution, and bad `[pack]` input refused with exit 2 naming file, line and key.

mod common;

use common::fadecast;
use predicates::prelude::*;

const DEMO_PACK: &str = "examples/home-storage-pack.toml";

#[test]
fn a_pack_forecast_writes_its_cells_and_names_the_weakest() {
    let out = tempfile::tempdir().unwrap();
    let output = fadecast()
        .args(["forecast", DEMO_PACK, "--cycles", "200", "--out"])
        .arg(out.path())
        .assert()
        .success()
        .stdout(predicate::str::contains("Pack: 4 in parallel × 4 in series (16 cells)"))
        .stdout(predicate::str::contains("weakest cell"))
        .stderr(predicate::str::contains(fadecast::CAUTION))
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(output).unwrap();
    assert!(text.contains("pack.csv") && text.contains("pack.svg"), "{text}");
    let mut reader = csv::Reader::from_path(out.path().join("pack.csv")).unwrap();
    let header: Vec<String> = reader.headers().unwrap().iter().map(str::to_string).collect();
    assert_eq!(header, fadecast::report::PACK_CSV_HEADER.to_vec());
    let rows = reader.records().count();
    // 100 reported points and the start, 16 cells each.
    assert_eq!(rows, 101 * 16);
    assert!(out.path().join("fade.csv").is_file());
    let svg = std::fs::read_to_string(out.path().join("pack.svg")).unwrap();
    // The summary carries the pack: every cell at the horizon and the weakest one by number.
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.path().join("summary.json")).unwrap()).unwrap();
    let pack = &summary["pack"];
    assert_eq!(pack["parallel"], 4);
    let cells = pack["cells"].as_array().unwrap();
    assert_eq!(cells.len(), 16);
    let weakest = pack["weakest_cell"].as_u64().unwrap() as usize;
    let lowest = cells.iter().map(|c| c["soh_pct"].as_f64().unwrap()).fold(f64::INFINITY, f64::min);
    assert_eq!(cells[weakest - 1]["soh_pct"].as_f64().unwrap(), lowest);
    assert_eq!(pack["at_horizon"]["soh_pct"]["min"].as_f64().unwrap(), lowest);
    assert!(text.contains(&format!("cell {weakest} (group")), "{text}");
    // Four groups in series: one colour per group, named with its cells.
    assert!(svg.contains("group 4: cells 13–16"), "pack.svg names the last group's cells");
}

#[test]
fn bad_pack_input_exits_2_naming_the_key() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(common::repo(DEMO_PACK)).unwrap();
    let text = text.replace("cell = \"cells/", &format!("cell = \"{}/", common::repo("examples/cells").display()));
    let text =
        text.replace("profile = \"../profiles/", &format!("profile = \"{}/", common::repo("profiles").display()));
    for (from, to, key) in [
        ("interconnect_mohm = [0.2, 0.4, 0.6, 0.8]", "interconnect_mohm = [0.2, 0.4, 0.6]", "pack.interconnect_mohm"),
        ("interconnect_mohm = [0.2, 0.4, 0.6, 0.8]", "interconnect_mohm = -1.0", "pack.interconnect_mohm"),
        ("parallel = 4", "parallel = 0", "pack.parallel"),
        ("parallel = 4", "parallel = 400", "pack.parallel"),
        ("neighbour_conductance_w_k = 0.05", "neighbour_conductance_w_k = 0.05\ncoolant_inlet_c = 20", "pack."),
        // The pack's day (charge from solar, evening discharge, rests) cannot repeat 6 times a day.
        ("cycles_per_day = 1", "cycles_per_day = 6", "usage.cycles_per_day"),
    ] {
        let path = dir.path().join("pack.toml");
        assert!(text.contains(from), "{from}");
        std::fs::write(&path, text.replace(from, to)).unwrap();
        fadecast()
            .args(["forecast"])
            .arg(&path)
            .args(["--cycles", "10", "--out"])
            .arg(dir.path().join("out"))
            .assert()
            .code(2)
            .stderr(predicate::str::contains("pack.toml:"))
            .stderr(predicate::str::contains(key));
        assert!(!dir.path().join("out").exists(), "nothing written for {to}");
    }
    fadecast()
        .args(["cycle", DEMO_PACK, "--out"])
        .arg(dir.path().join("cycle"))
        .assert()
        .code(2)
        .stderr(predicate::str::contains("`cycle` simulates one cell"));
}
