//! The cycle trace as tidy CSV: one header row, one row per time step, units in column names.

use super::ReportError;
use crate::cycle::CycleRecord;
use crate::material::constants::ZERO_CELSIUS_K;
use serde::Serialize;

/// One exported row. The field names are the CSV header, so this struct is the file format.
#[derive(Serialize)]
struct TraceRow<'a> {
    time_s: f64,
    /// Positive on discharge, as everywhere in fadecast.
    current_a: f64,
    voltage_v: f64,
    temperature_c: f64,
    /// State of charge, fraction 0–1.
    soc: f64,
    neg_surface_stoich: f64,
    pos_surface_stoich: f64,
    /// Negative-electrode surface potential against Li/Li⁺; below 0 V means plating.
    neg_potential_v: f64,
    /// Tangential surface stress, positive in tension.
    neg_surface_stress_mpa: f64,
    pos_surface_stress_mpa: f64,
    /// 1-based, as people count steps.
    step: usize,
    step_label: &'a str,
}

/// The header `cycle_csv` writes, for readers and tests.
pub const CYCLE_CSV_HEADER: &str = "time_s,current_a,voltage_v,temperature_c,soc,\
neg_surface_stoich,pos_surface_stoich,neg_potential_v,neg_surface_stress_mpa,\
pos_surface_stress_mpa,step,step_label";

/// Renders the trace of `record`. `step_labels[i]` names step index `i` (0-based, as in
/// the trace); a missing label is left empty.
pub fn cycle_csv(record: &CycleRecord, step_labels: &[String]) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    for point in &record.trace {
        writer.serialize(TraceRow {
            time_s: point.time_s,
            current_a: point.current_a,
            voltage_v: point.voltage_v,
            temperature_c: point.temperature_k - ZERO_CELSIUS_K,
            soc: point.soc,
            neg_surface_stoich: point.neg_surface_stoich,
            pos_surface_stoich: point.pos_surface_stoich,
            neg_potential_v: point.neg_potential_v,
            neg_surface_stress_mpa: point.neg_surface_stress_pa * 1e-6,
            pos_surface_stress_mpa: point.pos_surface_stress_pa * 1e-6,
            step: point.step + 1,
            step_label: step_labels.get(point.step).map_or("", String::as_str),
        })?;
    }
    if record.trace.is_empty() {
        // serde writes the header only with the first row; an empty trace still gets one.
        writer.write_record(CYCLE_CSV_HEADER.split(','))?;
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cycle::TracePoint;

    #[test]
    fn header_units_and_one_based_steps() {
        let record = CycleRecord {
            trace: vec![TracePoint {
                time_s: 60.0,
                current_a: -5.0,
                voltage_v: 3.9,
                temperature_k: 298.15,
                neg_surface_stress_pa: -2.5e6,
                step: 1,
                ..TracePoint::default()
            }],
            ..CycleRecord::default()
        };
        let labels = vec!["drive".to_string(), "charge, CC".to_string()];
        let text = String::from_utf8(cycle_csv(&record, &labels).unwrap()).unwrap();
        let mut lines = text.lines();
        assert_eq!(lines.next(), Some(CYCLE_CSV_HEADER));
        let row = lines.next().unwrap();
        assert!(row.starts_with("60.0,-5.0,3.9,"), "{row}");
        assert!(row.ends_with(",-2.5,0.0,2,\"charge, CC\""), "{row}");
    }

    #[test]
    fn empty_trace_still_has_header() {
        let text = String::from_utf8(cycle_csv(&CycleRecord::default(), &[]).unwrap()).unwrap();
        assert_eq!(text.trim_end(), CYCLE_CSV_HEADER);
    }
}
