//! The fade curve as tidy CSV: one row per reported point, units in the column names. The
//! slow state's columns come from its table (`aging::COMPONENTS`): lithium in Ah and in % of
//! the fresh capacity, active material in % of each electrode, lengths in nm.

use super::ReportError;
use crate::forecast::{FadePoint, ReportScale};

/// The columns before the slow state's, with their values.
fn leading(p: &FadePoint) -> [(&'static str, f64); 12] {
    [
        ("cycle", p.cycle),
        ("day", p.day),
        ("years", p.day / 365.25),
        ("efc", p.efc),
        ("capacity_ah", p.capacity_ah),
        ("duty_capacity_ah", p.duty_capacity_ah),
        ("soh_pct", p.soh_pct),
        ("resistance_mohm", p.resistance_mohm),
        ("resistance_growth_pct", p.resistance_growth_pct),
        ("fade_lithium_ah", p.fade_lithium_ah),
        ("fade_active_material_ah", p.fade_active_material_ah),
        ("peak_temperature_c", p.peak_temperature_c),
    ]
}

/// Every column of a point: the leading ones, the slow state's, then derived lengths.
pub fn fade_columns(p: &FadePoint, scale: &ReportScale) -> Vec<(String, f64)> {
    let mut columns: Vec<(String, f64)> = leading(p).iter().map(|(name, v)| (name.to_string(), *v)).collect();
    for value in scale.all_values(&p.state) {
        columns.push((format!("{}_{}", value.spec.column, value.unit), value.value));
    }
    columns.push(("film_crack_nm".into(), p.film_crack_nm));
    columns
}

/// Renders the reported points (an empty forecast still states its columns).
pub fn fade_csv(points: &[FadePoint], scale: &ReportScale) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    let header: Vec<String> = fade_columns(&FadePoint::default(), scale).into_iter().map(|(name, _)| name).collect();
    writer.write_record(&header)?;
    for point in points {
        writer.write_record(fade_columns(point, scale).iter().map(|(_, v)| super::schema::number(*v)))?;
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn header_carries_units_and_every_lithium_sink() {
        let scale =
            ReportScale { lithium_fresh_ah: 10.0, fresh_capacity_ah: 5.0, neg_radius_nm: 1e4, pos_radius_nm: 1e4 };
        let text = String::from_utf8(fade_csv(&[FadePoint::default()], &scale).unwrap()).unwrap();
        let header = text.lines().next().unwrap();
        for column in [
            "cycle",
            "day",
            "years",
            "efc",
            "throughput_ah",
            "energy_wh",
            "capacity_ah",
            "soh_pct",
            "resistance_mohm",
            "resistance_growth_pct",
            "fade_lithium_ah",
            "fade_active_material_ah",
            "lithium_lost_film_original_ah",
            "lithium_lost_film_original_pct",
            "lithium_lost_film_fracture_ah",
            "lithium_lost_film_crack_ah",
            "lithium_lost_plating_ah",
            "lithium_lost_stranded_ah",
            "neg_active_lost_pct",
            "pos_active_lost_pct",
            "film_original_nm",
            "film_crack_nm",
            "neg_crack_nm",
            "peak_temperature_c",
        ] {
            assert!(header.split(',').any(|c| c == column), "missing {column} in {header}");
        }
        assert_eq!(String::from_utf8(fade_csv(&[], &scale).unwrap()).unwrap().lines().count(), 1);
    }
}
