//! The cycle trace as tidy CSV: one header row, one row per time step, units in column names.

use super::schema::number;
use super::ReportError;
use crate::cycle::CycleRecord;
use crate::material::constants::ZERO_CELSIUS_K;

/// The header `cycle_csv` writes: units in the names (state of charge in %, stress in MPa,
/// the negative's potential against Li/Li⁺), steps counted from 1 as people count them.
pub const CYCLE_CSV_HEADER: &str = "time_s,current_a,voltage_v,temperature_c,soc_pct,\
neg_surface_stoich,pos_surface_stoich,neg_potential_v,neg_surface_stress_mpa,\
pos_surface_stress_mpa,step,step_label";

/// Renders the trace of `record`. `step_labels[i]` names step index `i` (0-based, as in
/// the trace); a missing label is left empty.
pub fn cycle_csv(record: &CycleRecord, step_labels: &[String]) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    writer.write_record(CYCLE_CSV_HEADER.split(','))?;
    for point in &record.trace {
        let numbers = [
            point.time_s,
            point.current_a,
            point.voltage_v,
            point.temperature_k - ZERO_CELSIUS_K,
            100.0 * point.soc,
            point.neg_surface_stoich,
            point.pos_surface_stoich,
            point.neg_potential_v,
            point.neg_surface_stress_pa * 1e-6,
            point.pos_surface_stress_pa * 1e-6,
        ];
        let mut row: Vec<String> = numbers.iter().map(|&v| number(v)).collect();
        row.push((point.step + 1).to_string());
        row.push(step_labels.get(point.step).cloned().unwrap_or_default());
        writer.write_record(&row)?;
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
        assert!(row.starts_with("60,-5,3.9,"), "{row}");
        assert!(row.ends_with(",-2.5,0,2,\"charge, CC\""), "{row}");
    }

    #[test]
    fn empty_trace_still_has_header() {
        let text = String::from_utf8(cycle_csv(&CycleRecord::default(), &[]).unwrap()).unwrap();
        assert_eq!(text.trim_end(), CYCLE_CSV_HEADER);
    }
}
