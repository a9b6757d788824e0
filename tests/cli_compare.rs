//! `fadecast compare` and `fadecast table` driving the real binary, on the 5 Ah demo cell:
//! protocol ranking, the cold fast-charge plating flag, paired sampled comparisons, the fade
//! table's trends (including the film law's Arrhenius factor) and bad input. Horizons are short
//! and end-of-life thresholds lowered (`--set end_of_life.capacity_pct=…`) so that life ends
//! inside them; the whole file runs in seconds.
//!
//! The demo cell is invented, so no check value here is a number of a real cell: each test
//! checks a trend (the direction of an effect, "trend, common practice") or a ratio derived from
//! the model's own law, with the derivation beside it.

mod common;

use common::{check_cases, fadecast, ReferenceCase, Tolerance};

use predicates::prelude::*;
use std::collections::BTreeMap;
use std::path::Path;

const OVERNIGHT_SCENARIO: &str = common::OVERNIGHT;
const BANDS_SCENARIO: &str = common::BANDS;
const OVERNIGHT: &str = common::PROFILE_OVERNIGHT;
const FAST_2C: &str = common::PROFILE_FAST_2C;
const MULTISTAGE: &str = common::PROFILE_MULTISTAGE;

/// compare.csv or table.csv as rows of column → text.
fn read_csv(path: &Path) -> Vec<BTreeMap<String, String>> {
    let mut reader = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    reader.records().map(|r| header.iter().cloned().zip(r.unwrap().iter().map(String::from)).collect()).collect()
}

fn number(row: &BTreeMap<String, String>, column: &str) -> f64 {
    let text = row.get(column).unwrap_or_else(|| panic!("no column {column}"));
    text.parse().unwrap_or_else(|_| panic!("{column} = `{text}` is not a number"))
}

/// Runs `compare` (must succeed) and returns what it printed (results, then the cautions of
/// standard error) and the compare.csv rows by alternative.
fn compare(out: &Path, args: &[&str]) -> (String, BTreeMap<String, BTreeMap<String, String>>) {
    let output = fadecast().arg("compare").args(args).arg("--out").arg(out).assert().success().get_output().clone();
    let rows = read_csv(&out.join("compare.csv")).into_iter().map(|r| (r["alternative"].clone(), r)).collect();
    let printed = format!("{}{}", String::from_utf8_lossy(&output.stdout), String::from_utf8_lossy(&output.stderr));
    (printed, rows)
}

fn profiles_args<'a>(profiles: &[&'a str]) -> Vec<&'a str> {
    profiles.iter().flat_map(|p| ["--profile", *p]).collect()
}

#[test]
fn fast_charge_ends_life_before_the_overnight_charge_and_the_multistage_charge_stays_with_the_fast_one() {
    // Trend, common practice: charging at 2C wears a cell faster than charging at C/5.
    // The end-of-life threshold is lowered to 95 % so that life ends inside 1500 cycles.
    let dir = tempfile::tempdir().unwrap();
    let mut args = vec![OVERNIGHT_SCENARIO];
    args.extend(profiles_args(&[OVERNIGHT, FAST_2C, MULTISTAGE]));
    args.extend(["--cycles", "1500", "--set", "end_of_life.capacity_pct=95"]);
    let (stdout, rows) = compare(dir.path(), &args);
    let life = |name: &str| number(&rows[name], "life_cycles_p50");
    let (overnight, fast, multistage) =
        (life("overnight-charge-1c-drive"), life("fast-charge-2c"), life("multistage-fast-charge"));
    // The margin is small at 25 °C: the 2C charge's cost is the positive's stress-driven loss,
    // counted with a steep law, and a little more heat; plating is negligible when warm.
    assert!(fast < 0.97 * overnight, "2C fast charge {fast} cycles against overnight {overnight}");
    // Why the multi-stage charge does not sit clearly between the two at 25 °C: its first stage
    // is the same 2C charge, to 40 % state of charge, and what separates the fast charges from
    // the overnight one at 25 °C is the stress-driven loss of active material (a forecast of
    // 1500 cycles loses ~1 % of the positive's active material under either fast charge and
    // ~0.07 % overnight), which that 2C stage sets; the later, gentler stages barely change it.
    // Their purpose, keeping the graphite above lithium potential, does not enter because
    // neither fast charge plates at 25 °C. So the model puts the multi-stage charge level with
    // the 2C one (within the cycle-jumping accuracy) and below the overnight charge.
    assert!(multistage < 0.97 * overnight, "multi-stage {multistage} against overnight {overnight}");
    assert!((multistage - fast).abs() < 0.03 * fast, "multi-stage {multistage} against 2C {fast}");
    // Deterministic: no intervals, no probabilities beyond certainty, and a paired difference.
    // A single run is every quantile of itself.
    assert_eq!(rows["fast-charge-2c"]["life_cycles_p5"], rows["fast-charge-2c"]["life_cycles_p50"]);
    // Each figure is rounded to 6 significant digits on output.
    assert!(
        (number(&rows["fast-charge-2c"], "life_difference_cycles_p50") - (fast - overnight)).abs() < 2e-5 * overnight
    );
    assert_eq!(number(&rows["fast-charge-2c"], "probability_outlasts_first"), 0.0);
    // Charge time follows the charge current.
    let charge_h = |name: &str| number(&rows[name], "charge_time_h");
    assert!(charge_h("fast-charge-2c") < charge_h("multistage-fast-charge"));
    assert!(charge_h("multistage-fast-charge") < charge_h("overnight-charge-1c-drive"));
    assert!(stdout.trim_end().ends_with(fadecast::CAUTION), "{stdout}");
    assert!(dir.path().join("compare.svg").exists());
}

#[test]
fn a_cold_fast_charge_is_flagged_for_plating_and_the_overnight_charge_is_not() {
    // Trend, common practice: charging graphite fast near 0 °C drives its surface below the
    // lithium potential; a slow charge at the same temperature does not.
    let dir = tempfile::tempdir().unwrap();
    let mut args = vec![OVERNIGHT_SCENARIO];
    args.extend(profiles_args(&[OVERNIGHT, FAST_2C]));
    args.extend(["--cycles", "200", "--set", "ambient_c=0"]);
    let (stdout, rows) = compare(dir.path(), &args);
    assert_eq!(rows["fast-charge-2c"]["plating_predicted"], "true");
    assert_eq!(rows["overnight-charge-1c-drive"]["plating_predicted"], "false");
    assert!(
        stdout.contains("\"fast-charge-2c\": lithium plating predicted") && stdout.contains("safety concern"),
        "{stdout}"
    );
    assert!(stdout.trim_end().ends_with(fadecast::CAUTION));
}

#[test]
fn sampled_comparisons_give_intervals_and_count_censored_samples() {
    let dir = tempfile::tempdir().unwrap();
    let mut args = vec![BANDS_SCENARIO];
    args.extend(profiles_args(&[OVERNIGHT, FAST_2C]));
    args.extend(["--cycles", "600", "--set", "end_of_life.capacity_pct=97", "--samples", "12", "--jobs", "2"]);
    let (stdout, rows) = compare(dir.path(), &args);
    let fast = &rows["fast-charge-2c"];
    let (p5, p50, p95) =
        (number(fast, "life_cycles_p5"), number(fast, "life_cycles_p50"), number(fast, "life_cycles_p95"));
    assert!(p5 <= p50 && p50 <= p95, "{fast:?}");
    let (d5, d50, d95) = (
        number(fast, "life_difference_cycles_p5"),
        number(fast, "life_difference_cycles_p50"),
        number(fast, "life_difference_cycles_p95"),
    );
    assert!(d5 <= d50 && d50 <= d95 && d95 < 0.0, "paired differences {d5} {d50} {d95}");
    // Every sample is accounted for: usable (reached or censored) plus left out.
    for row in rows.values() {
        assert_eq!(number(row, "samples_usable") + number(row, "samples_left_out"), 12.0, "{row:?}");
    }
    assert!(stdout.contains("12 samples of 6 uncertain inputs"), "{stdout}");
}

#[test]
fn variants_compare_the_scenario_with_itself_changed() {
    // Trend, common practice: a warmer ambient speeds up film growth, the dominant loss of the
    // overnight-charged demo cell at 25 °C.
    let dir = tempfile::tempdir().unwrap();
    let args = [OVERNIGHT_SCENARIO, "--variant", "hot depot: ambient_c=40", "--cycles", "300"];
    let (_, rows) = compare(dir.path(), &args);
    assert!(rows.contains_key("scenario"), "the scenario is the first alternative without --profile");
    let soh = |name: &str| number(&rows[name], "soh_at_horizon_pct_p50");
    assert!(soh("hot depot") < soh("scenario"));
}

#[test]
fn a_limit_exceeded_by_one_alternative_is_printed_naming_it() {
    // Operation outside the cell's limits is a caution, never dropped (DEVELOPERS.md).
    let dir = tempfile::tempdir().unwrap();
    let args =
        [OVERNIGHT_SCENARIO, "--variant", "hard drive: profile.block.0.step.0.discharge_c=3.5", "--cycles", "100"];
    let (stdout, _) = compare(dir.path(), &args);
    assert!(stdout.contains("\"hard drive\": WARNING: the profile discharges at"), "{stdout}");
    assert!(stdout.trim_end().ends_with(fadecast::CAUTION));
}

fn table(out: &Path, args: &[&str]) -> Vec<BTreeMap<String, String>> {
    fadecast().arg("table").args(args).arg("--out").arg(out).assert().success();
    read_csv(&out.join("table.csv"))
}

#[test]
fn the_fade_table_falls_along_every_row_and_carries_quantiles_with_samples() {
    // Trend, common practice: state of health never rises and resistance never falls with use.
    let dir = tempfile::tempdir().unwrap();
    let args = [
        OVERNIGHT_SCENARIO,
        "--ambient-c",
        "10,25,40",
        "--c-rate",
        "0.5,1,2",
        "--soc-window",
        "10-90,0-100",
        "--cycles",
        "500",
    ];
    let rows = table(dir.path(), &args);
    let mut conditions: BTreeMap<String, Vec<&BTreeMap<String, String>>> = BTreeMap::new();
    for row in &rows {
        let key = ["ambient_c", "c_rate", "soc_low_pct", "soc_high_pct"].map(|c| row[c].clone()).join("/");
        conditions.entry(key).or_default().push(row);
    }
    assert_eq!(conditions.len(), 18);
    for (condition, points) in &conditions {
        assert_eq!(points.len(), 101, "{condition}");
        for pair in points.windows(2) {
            assert!(number(pair[1], "soh_pct") <= number(pair[0], "soh_pct") + 1e-9, "{condition}");
            assert!(number(pair[1], "efc") > number(pair[0], "efc"), "{condition}");
            assert!(number(pair[1], "throughput_ah") > number(pair[0], "throughput_ah"), "{condition}");
        }
        assert!(number(points[100], "soh_pct") < 100.0, "{condition}");
    }

    let sampled = table(
        &dir.path().join("sampled"),
        &[
            BANDS_SCENARIO,
            "--ambient-c",
            "25",
            "--c-rate",
            "1",
            "--soc-window",
            "10-90",
            "--cycles",
            "300",
            "--samples",
            "6",
        ],
    );
    assert_eq!(sampled.len(), 101);
    for row in &sampled[1..] {
        let (p5, p50, p95) = (number(row, "soh_pct_p5"), number(row, "soh_pct_p50"), number(row, "soh_pct_p95"));
        assert!(p5 <= p50 && p50 <= p95 && p5 < p95, "{row:?}");
        assert!(number(row, "resistance_growth_pct_p5") <= number(row, "resistance_growth_pct_p95"));
    }
}

#[test]
fn higher_ambient_ages_the_film_dominated_cell_faster_by_the_square_root_of_the_diffusivity_factor() {
    // Derived from the mixed film law of src/aging/film.rs. Lithium goes to the film at
    // N = c k / (1 + k δ / D) per unit area. Once the film is much thicker than 2 D / k (here
    // ~5 nm against the ~170 nm grown by the end), growth is diffusion-limited: δ dδ/dt = D c V̄,
    // so δ ≈ √(2 D c V̄ t) and the lithium lost ∝ δ ∝ √(D(T) t). At equal time the loss ratio
    // between two temperatures is √(A_D) with A_D = exp(E_D/R (1/T₁ − 1/T₂)), the Arrhenius
    // factor of the solvent diffusivity (E_D = 40 kJ/mol in the demo cell).
    // From 25 °C to 40 °C: A_D = exp(40 000/8.314 × (1/298.15 − 1/313.15)) = 2.17, √A_D = 1.47.
    // Every other mechanism is switched off, the C/2 cycle barely heats the cell, and the
    // state of health is compared at the same throughput (interpolated). Tolerance ±10 %:
    // the small leftover reaction-limited share, the few-tenths-of-a-kelvin self-heating and
    // the slightly longer time the warmer cell needs for the same throughput (its capacity
    // is lower) each move the ratio by a few per cent; the alternatives a wrong law would give
    // lie outside (A_D = 2.17, √A_k = 1.70 for the 55 kJ/mol reaction, A_k = 2.89).
    let e_d = 40_000.0_f64;
    let (t1, t2) = (298.15_f64, 313.15_f64);
    let expected = (e_d / 8.314_462_618 * (1.0 / t1 - 1.0 / t2)).exp().sqrt();
    let dir = tempfile::tempdir().unwrap();
    let args = [
        OVERNIGHT_SCENARIO,
        "--ambient-c",
        "25,40",
        "--c-rate",
        "0.5",
        "--soc-window",
        "10-90",
        "--cycles",
        "2000",
        "--set",
        "cell.negative.cracking.enabled=false",
        "--set",
        "cell.positive.cracking.enabled=false",
        "--set",
        "cell.negative.plating.enabled=false",
        "--set",
        "cell.negative.active_loss.enabled=false",
        "--set",
        "cell.positive.active_loss.enabled=false",
        "--set",
        "cell.negative.film_breathing.enabled=false",
        // The mixed law, which the van cell carries beside its default interstitial law.
        "--set",
        "cell.negative.film.law=solvent-diffusion",
    ];
    let rows = table(dir.path(), &args);
    let curve = |ambient: &str| -> Vec<(f64, f64)> {
        rows.iter()
            .filter(|r| r["ambient_c"] == ambient)
            .map(|r| (number(r, "throughput_ah"), 100.0 - number(r, "soh_pct")))
            .collect()
    };
    let (cool, warm) = (curve("25"), curve("40"));
    // The common throughput: the warm cell's last point (it delivers a little less per cycle).
    let throughput = warm.last().unwrap().0.min(cool.last().unwrap().0);
    let loss_at = |c: &[(f64, f64)]| {
        let k = c.windows(2).position(|w| w[0].0 <= throughput && throughput <= w[1].0).unwrap();
        let (a, b) = (c[k], c[k + 1]);
        a.1 + (throughput - a.0) / (b.0 - a.0) * (b.1 - a.1)
    };
    let ratio = loss_at(&warm) / loss_at(&cool);
    check_cases(&[ReferenceCase::new(
        "film loss at 40 °C over 25 °C at equal throughput",
        "√A_D of the solvent diffusivity, diffusion-limited film growth (Ploehn, Ramadass, White, J. Electrochem. \
         Soc. 151 (2004) A456; derived above)",
        Tolerance::Rel(0.10),
        ratio,
        expected,
    )]);
}

/// Runs a command that must fail as bad input: exit 2, one line naming `names`, nothing written.
fn refused(args: &[&str], names: &str) {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let assert = fadecast().args(args).arg("--out").arg(&out).assert().code(2);
    let stderr = String::from_utf8(assert.get_output().stderr.clone()).unwrap();
    assert!(stderr.contains(names), "{args:?}: expected `{names}` in {stderr}");
    assert_eq!(stderr.trim().lines().count(), 1, "{stderr}");
    assert!(!out.exists(), "{args:?} wrote output");
}

#[test]
fn bad_input_exits_2_naming_the_flag_or_file() {
    let dir = tempfile::tempdir().unwrap();
    // A charge step with no end: refused by the input layer, naming the profile file.
    let endless = dir.path().join("endless-charge.toml");
    std::fs::write(
        &endless,
        "name = \"endless\"\n[[block]]\n[[block.step]]\nlabel = \"drive\"\ndischarge_c = 1.0\nend_voltage_v = 2.8\n\
         [[block.step]]\nlabel = \"charge\"\ncharge_c = 1.0\n",
    )
    .unwrap();
    let endless = endless.to_str().unwrap();
    refused(&["compare", OVERNIGHT_SCENARIO, "--profile", OVERNIGHT, "--profile", endless], "endless-charge.toml");
    // A power the cell cannot deliver (2 kW from a 5 Ah cell of ~6 mΩ, above the ~0.7 kW an
    // open-circuit voltage of 4.1 V can give into a matched load): fails at beginning of life,
    // reported as bad input naming the profile.
    let too_much = dir.path().join("too-much-power.toml");
    std::fs::write(
        &too_much,
        "name = \"too much\"\n[[block]]\n[[block.step]]\nlabel = \"sprint\"\ndischarge_w = 2000\nend_voltage_v = 2.8\n\
         [[block.step]]\nlabel = \"charge\"\ncharge_c = 0.5\nend_voltage_v = 4.15\n",
    )
    .unwrap();
    let too_much = too_much.to_str().unwrap();
    refused(&["compare", OVERNIGHT_SCENARIO, "--profile", OVERNIGHT, "--profile", too_much], "too-much-power.toml");
    refused(&["compare", OVERNIGHT_SCENARIO, "--profile", OVERNIGHT], "--profile");
    refused(&["compare", OVERNIGHT_SCENARIO, "--variant", "no colon here"], "--variant");
    // A variant of an input the draws set would be undone by every draw.
    refused(&["compare", BANDS_SCENARIO, "--variant", "hot: ambient_c=40", "--samples", "4"], "ambient_c");
    refused(
        &["compare", OVERNIGHT_SCENARIO, "--profile", "profiles/missing.toml", "--profile", OVERNIGHT],
        "missing.toml",
    );

    let grid = |ambient: &str, rate: &str, window: &str| {
        vec!["table", OVERNIGHT_SCENARIO, "--ambient-c", ambient, "--c-rate", rate, "--soc-window", window]
            .into_iter()
            .map(String::from)
            .collect::<Vec<_>>()
    };
    for (args, flag) in [
        (grid("25", "1", "10-"), "--soc-window"),
        (grid("25", "1", "90-10"), "--soc-window"),
        (grid("25", "1", "abc"), "--soc-window"),
        (grid("25", "1", "0-120"), "--soc-window"),
        (grid("25", "1", ""), "--soc-window"),
        (grid("25", "", "10-90"), "--c-rate"),
        (grid("25", "0,1", "10-90"), "--c-rate"),
        (grid("25", "5", "10-90"), "--c-rate"),
        (grid("", "1", "10-90"), "--ambient-c"),
        (grid("25,200", "1", "10-90"), "--ambient-c"),
    ] {
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        refused(&args, flag);
    }
}

#[test]
fn help_lists_both_commands() {
    fadecast()
        .arg("--help")
        .assert()
        .success()
        .stdout(predicate::str::contains("compare").and(predicate::str::contains("table")));
}

#[test]
fn a_narrower_state_of_charge_window_lasts_longer_in_equivalent_full_cycles() {
    // Trend, common practice (shallow cycling spares a cell per unit of charge passed; reported
    // widely for graphite cells, e.g. Ecker et al., J. Power Sources 248 (2014) 839, from
    // memory). In the model it comes from film fracture by graphite's volume swing
    // (src/aging/film_breathing.rs), steeper than linear in the swing. Compared at the same
    // number of equivalent full cycles, interpolated on each window's curve.
    let dir = tempfile::tempdir().unwrap();
    let rows = table(
        dir.path(),
        &[common::LAB, "--ambient-c", "25", "--c-rate", "0.5", "--soc-window", "20-80,0-100", "--cycles", "1500"],
    );
    let curve = |low: &str| -> Vec<(f64, f64)> {
        rows.iter()
            .filter(|r| r["soc_low_pct"] == low)
            .map(|r| (number(r, "efc"), 100.0 - number(r, "soh_pct")))
            .collect()
    };
    let (narrow, deep) = (curve("20"), curve("0"));
    let at = |curve: &[(f64, f64)], efc: f64| {
        let w = curve.windows(2).find(|w| w[0].0 <= efc && efc <= w[1].0).expect("inside the curve");
        w[0].1 + (efc - w[0].0) / (w[1].0 - w[0].0) * (w[1].1 - w[0].1)
    };
    let efc = narrow.last().unwrap().0.min(deep.last().unwrap().0);
    let (loss_narrow, loss_deep) = (at(&narrow, efc), at(&deep, efc));
    assert!(
        loss_narrow < 0.95 * loss_deep,
        "at {efc:.0} equivalent full cycles: 20–80 % lost {loss_narrow:.2} %, 0–100 % lost {loss_deep:.2} %"
    );
}
