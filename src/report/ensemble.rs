//! Ensemble outputs as bytes: the bands and samples tables and the JSON summary.

use super::ReportError;
use crate::ensemble::summary::QuantileEstimate;
use crate::ensemble::{EnsembleSummary, SampleRecord, SampleStatus, CURVE_QUANTITIES};
use crate::forecast::WarningKind;
use serde_json::{json, Value};

/// `5` for 0.05, `2.5` for 0.025: the quantile as a percent in column names.
pub fn percent_label(p: f64) -> String {
    let pct = p * 100.0;
    let rounded = (pct * 1e6).round() / 1e6;
    format!("{rounded}")
}

/// bands.csv: per reported point, the chosen quantiles of capacity, state of health and
/// resistance (`soh_pct_p5`, `soh_pct_p50`, …).
pub fn bands_csv(summary: &EnsembleSummary) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    let mut header = vec!["point".to_string(), "cycle".into(), "day".into()];
    for q in CURVE_QUANTITIES {
        for &p in &summary.quantiles {
            header.push(format!("{q}_p{}", percent_label(p)));
        }
    }
    writer.write_record(&header)?;
    for (k, point) in summary.bands.iter().enumerate() {
        let mut row = vec![k.to_string(), point.cycle.to_string(), point.day.to_string()];
        for values in &point.values {
            row.extend(values.iter().map(|v| v.to_string()));
        }
        writer.write_record(&row)?;
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

fn blank_if_nan(v: f64) -> String {
    if v.is_finite() {
        v.to_string()
    } else {
        String::new()
    }
}

/// samples.csv: one row per sample with its drawn inputs, end of life and state at the horizon.
pub fn samples_csv(records: &[SampleRecord], parameters: &[String], warranty: bool) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    let mut header = vec!["sample".to_string(), "status".into()];
    header.extend(parameters.iter().cloned());
    for t in ["capacity", "resistance"] {
        for unit in ["cycles", "efc", "years"] {
            header.push(format!("eol_{t}_{unit}"));
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
        row.extend(r.values.iter().map(|v| v.to_string()));
        for end in [r.capacity_end, r.resistance_end] {
            match end {
                Some(at) => row.extend([at.cycles.to_string(), at.efc.to_string(), at.years.to_string()]),
                None => row.extend(["not reached".to_string(), String::new(), String::new()]),
            }
        }
        row.push(blank_if_nan(r.soh_at_horizon_pct));
        row.push(blank_if_nan(r.resistance_growth_at_horizon_pct));
        if warranty {
            row.push(blank_if_nan(r.soh_at_warranty_pct));
        }
        row.push(if r.warnings.contains(WarningKind::Plating) { "yes" } else { "no" }.to_string());
        row.push(r.warnings.kinds().map(WarningKind::key).collect::<Vec<_>>().join(";"));
        row.push(note.to_string());
        writer.write_record(&row)?;
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

fn estimates_json(estimates: &[QuantileEstimate]) -> Value {
    Value::Array(
        estimates
            .iter()
            .map(|e| {
                json!({
                    "p": e.p,
                    "value": e.value.map_or(json!("not reached"), |v| json!(v)),
                    "standard_error": e.standard_error,
                })
            })
            .collect(),
    )
}

/// summary.json of an ensemble run.
pub fn ensemble_json(summary: &EnsembleSummary, run: &Value, warnings: &[String]) -> Result<Vec<u8>, ReportError> {
    let life: Vec<Value> = summary
        .life
        .iter()
        .map(|l| {
            json!({
                "threshold": l.threshold,
                "reached_fraction": l.reached_fraction,
                "cycles": estimates_json(&l.cycles),
                "years": estimates_json(&l.years),
            })
        })
        .collect();
    let value = json!({
        "run": run,
        "samples": summary.samples,
        "counted": summary.counted,
        "invalid": summary.invalid,
        "failed": summary.failed,
        "quantiles": summary.quantiles,
        "end_of_life": life,
        "warranty": summary.warranty,
        "sensitivity_measure": summary.sensitivity_measure,
        "sensitivity": summary.sensitivity,
        "plating_fraction": summary.plating_fraction,
        "warnings": warnings,
        "forecast_warnings": super::counted_warnings_json(&summary.warning_counts, summary.counted as usize, "samples"),
        "caution": crate::CAUTION,
    });
    let mut bytes = serde_json::to_vec_pretty(&value)?;
    bytes.push(b'\n');
    Ok(bytes)
}
