//! The fade curve as tidy CSV: one row per reported point, units in the column names.

use super::ReportError;
use crate::forecast::FadePoint;

/// Renders the reported points; the columns are the fields of [`FadePoint`], in order.
pub fn fade_csv(points: &[FadePoint]) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    for point in points {
        writer.serialize(point)?;
    }
    if points.is_empty() {
        writer.serialize(FadePoint::default())?;
        // Keep only the header: an empty forecast still states its columns.
        let bytes = writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))?;
        let header_end = bytes.iter().position(|&b| b == b'\n').map_or(bytes.len(), |i| i + 1);
        return Ok(bytes[..header_end].to_vec());
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn header_carries_units() {
        let text = String::from_utf8(fade_csv(&[FadePoint::default()]).unwrap()).unwrap();
        let header = text.lines().next().unwrap();
        for column in [
            "cycle",
            "day",
            "efc",
            "throughput_ah",
            "capacity_ah",
            "soh_pct",
            "resistance_mohm",
            "resistance_growth_pct",
            "lithium_film_original_pct",
            "lithium_film_crack_pct",
            "lithium_plating_pct",
            "neg_active_lost_pct",
            "pos_active_lost_pct",
            "film_original_nm",
            "film_crack_nm",
            "neg_crack_nm",
            "peak_temperature_c",
        ] {
            assert!(header.split(',').any(|c| c == column), "missing {column}");
        }
        assert_eq!(String::from_utf8(fade_csv(&[]).unwrap()).unwrap().lines().count(), 1);
    }
}
