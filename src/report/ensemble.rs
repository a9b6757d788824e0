//! Ensemble outputs as bytes: the bands and samples tables and the JSON summary.

use super::schema::{flag, number};
use super::ReportError;
use crate::ensemble::summary::QuantileEstimate;
use crate::ensemble::{EnsembleSummary, SampleRecord, SampleStatus, CURVE_QUANTITIES};
use crate::forecast::WarningKind;
use serde::Serialize;
use serde_json::{json, Value};

const DAYS_PER_YEAR: f64 = 365.25;
use std::fmt::Write as _;

/// `5` for 0.05, `2.5` for 0.025: the quantile as a percent in column names.
pub fn percent_label(p: f64) -> String {
    let pct = p * 100.0;
    let rounded = (pct * 1e6).round() / 1e6;
    format!("{rounded}")
}

/// bands.csv: per reported point (cycle, day, years), the chosen quantiles of capacity, state
/// of health and resistance (`soh_pct_p5`, `soh_pct_p50`, …).
pub fn bands_csv(summary: &EnsembleSummary) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    let mut header = vec!["cycle".to_string(), "day".into(), "years".into()];
    for q in CURVE_QUANTITIES {
        for &p in &summary.quantiles {
            header.push(format!("{q}_p{}", percent_label(p)));
        }
    }
    writer.write_record(&header)?;
    for point in &summary.bands {
        let mut row = vec![number(point.cycle), number(point.day), number(point.day / DAYS_PER_YEAR)];
        for values in &point.values {
            row.extend(values.iter().map(|&v| number(v)));
        }
        writer.write_record(&row)?;
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

/// samples.csv: one row per sample with its drawn inputs, end of life and state at the horizon.
pub fn samples_csv(records: &[SampleRecord], parameters: &[String], warranty: bool) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    let mut header = vec!["sample".to_string(), "status".into()];
    header.extend(parameters.iter().cloned());
    for t in ["capacity", "resistance"] {
        for unit in ["cycles", "efc", "years", "censored"] {
            header.push(format!("life_{t}_{unit}"));
        }
    }
    header.extend(["soh_at_horizon_pct".into(), "resistance_growth_at_horizon_pct".into()]);
    if warranty {
        header.push("soh_at_warranty_pct".into());
    }
    header.extend(["plating_predicted".into(), "warnings".into(), "note".into()]);
    writer.write_record(&header)?;
    for r in records {
        let (status, note) = match &r.status {
            SampleStatus::Ok => ("ok", String::new()),
            SampleStatus::Invalid(m) => ("invalid", m.clone()),
            SampleStatus::Failed { stop, cycling } => ("failed", super::stop_text(stop, *cycling).unwrap_or_default()),
        };
        let mut row = vec![r.index.to_string(), status.to_string()];
        row.extend(r.values.iter().map(|&v| number(v)));
        // A sample left out has no life at all; a usable one without an end is censored.
        let usable = matches!(r.status, SampleStatus::Ok);
        for end in [r.capacity_end, r.resistance_end] {
            match end {
                Some(at) => row.extend([number(at.cycles), number(at.efc), number(at.years), flag(false).into()]),
                None => row.extend([String::new(), String::new(), String::new(), flag(usable).into()]),
            }
        }
        row.push(number(r.soh_at_horizon_pct));
        row.push(number(r.resistance_growth_at_horizon_pct));
        if warranty {
            row.push(number(r.soh_at_warranty_pct));
        }
        row.push(flag(r.warnings.contains(WarningKind::Plating)).to_string());
        row.push(r.warnings.kinds().map(WarningKind::key).collect::<Vec<_>>().join(";"));
        row.push(note.to_string());
        writer.write_record(&row)?;
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

/// One quantile estimate in JSON: its label as in CSV column names (`p5`), the value (`null`
/// when the quantile lies beyond the horizon, with `censored` saying so) and its Monte Carlo
/// standard error.
#[derive(Serialize)]
struct EstimateJson {
    quantile: String,
    value: Option<f64>,
    censored: bool,
    standard_error: Option<f64>,
}

fn estimates_json(estimates: &[QuantileEstimate]) -> Vec<EstimateJson> {
    estimates
        .iter()
        .map(|e| EstimateJson {
            quantile: format!("p{}", percent_label(e.p)),
            value: e.value,
            censored: e.value.is_none(),
            standard_error: e.standard_error,
        })
        .collect()
}

/// summary.json of an ensemble run: per threshold, the life quantiles under the same names as
/// samples.csv's columns (`life_capacity_cycles`, `life_capacity_years`).
pub fn ensemble_json(summary: &EnsembleSummary, run: &Value, warnings: &[String]) -> Result<Vec<u8>, ReportError> {
    let mut life = serde_json::Map::new();
    for l in &summary.life {
        let t = l.threshold;
        life.insert(format!("life_{t}_reached_fraction"), json!(l.reached_fraction));
        life.insert(format!("life_{t}_cycles"), json!(estimates_json(&l.cycles)));
        life.insert(format!("life_{t}_years"), json!(estimates_json(&l.years)));
    }
    let quantiles: Vec<String> = summary.quantiles.iter().map(|&p| format!("p{}", percent_label(p))).collect();
    let value = json!({
        "run": run,
        "samples": summary.samples,
        "counted": summary.counted,
        "invalid": summary.invalid,
        "failed": summary.failed,
        "quantiles": quantiles,
        "end_of_life": life,
        "warranty": summary.warranty,
        "sensitivity_measure": summary.sensitivity_measure,
        "sensitivity": summary.sensitivity,
        "plating_fraction": summary.plating_fraction,
        "warnings": warnings,
        "forecast_warnings": super::counted_warnings_json(&summary.warning_counts, summary.counted as usize, "samples"),
        "caution": crate::CAUTION,
    });
    Ok(super::schema::json_bytes(value)?)
}

/// The notes of an ensemble run, for the terminal and `summary.json`: the scenario's input
/// warnings, what a shard covers, samples left out, the forecasts' warnings counted over the
/// samples, and whether the run is complete.
pub fn ensemble_notes(
    input_warnings: &[String],
    summary: &EnsembleSummary,
    (shard_index, shard_count): (u64, u64),
    complete: bool,
) -> Vec<String> {
    let mut notes = input_warnings.to_vec();
    if shard_count > 1 {
        notes.push(format!(
            "shard {shard_index}/{shard_count}: these outputs cover this shard's samples only; merge all shards with `fadecast merge`"
        ));
    }
    if summary.invalid > 0 {
        notes.push(format!(
            "{} samples drew inputs that break an input rule and were left out (see samples.csv)",
            summary.invalid
        ));
    }
    if summary.failed > 0 {
        notes.push(format!("{} samples stopped before the horizon (see samples.csv)", summary.failed));
    }
    notes.extend(super::counted_warning_lines(&summary.warning_counts, summary.counted as usize, "samples"));
    if !complete {
        notes.push("the run is incomplete; continue it with --resume".into());
    }
    notes
}

/// Why a run reports no statistics: how many samples were left out, of which kind.
pub fn statistics_refused_text(summary: &EnsembleSummary, most_left_out: f64) -> String {
    format!(
        "{} of {} samples were left out ({} invalid draws, {} forecasts stopped before end of life), more than \
         the {:.0} % that statistics allow; no bands, quantiles or warranty odds are reported. samples.csv lists \
         each sample's drawn values and why it was left out: narrow the [uncertainty] ranges or fix the inputs",
        summary.left_out(),
        summary.samples,
        summary.invalid,
        summary.left_out() - summary.invalid,
        100.0 * most_left_out
    )
}

/// An ensemble run as the terminal shows it: counts, end-of-life quantiles, warranty odds
/// (marked when the samples extrapolate past the calibration range), sensitivity, notes.
pub fn ensemble_text(scenario: &str, seed: u64, summary: &EnsembleSummary, notes: &[String]) -> String {
    let mut text = format!("{scenario}: {} samples (seed {seed})\n", summary.samples);
    let _ = writeln!(
        text,
        "  counted {}, invalid draws {}, stopped early {}",
        summary.counted, summary.invalid, summary.failed
    );
    for life in &summary.life {
        let _ = write!(text, "  end of life ({}), reached by {:.1} %:", life.threshold, 100.0 * life.reached_fraction);
        for (c, y) in life.cycles.iter().zip(&life.years) {
            let p = percent_label(c.p);
            match (c.value, y.value) {
                (Some(cv), Some(yv)) => {
                    // Without a Monte Carlo error (too few samples beside the quantile) none is shown.
                    let error =
                        y.standard_error.filter(|e| e.is_finite()).map_or(String::new(), |e| format!(" ± {e:.2}"));
                    let _ = write!(text, "  P{p} {cv:.0} cycles ({yv:.2} y{error})");
                }
                _ => {
                    let _ = write!(text, "  P{p} beyond the horizon");
                }
            }
        }
        text.push('\n');
    }
    if let Some(w) = &summary.warranty {
        let _ = writeln!(
            text,
            "  warranty {} years at {} %: met by {:.1} % of samples (95 % interval {:.1}–{:.1} %, {} of {})",
            w.years,
            w.soh_pct,
            100.0 * w.probability,
            100.0 * w.interval_95.0,
            100.0 * w.interval_95.1,
            w.met,
            w.trials
        );
        let beyond = summary.warning_counts.iter().find(|(kind, _)| *kind == WarningKind::BeyondCalibration);
        if let Some((_, n)) = beyond {
            let _ = writeln!(
                text,
                "    (an extrapolation: {n} of {} samples run beyond the aging data the cell was calibrated on)",
                summary.counted
            );
        }
    }
    let _ = writeln!(text, "  strongest influence on {}:", summary.sensitivity_measure);
    for s in summary.sensitivity.iter().take(5) {
        let _ = writeln!(text, "    {:+.2}  {}", s.rank_correlation, s.path);
    }
    for w in notes {
        let _ = writeln!(text, "\n{w}");
    }
    text
}
