//! The forecast summary as JSON: end of life per threshold, values at the horizon, lithium
//! and active material lost (from the slow-state table), how much was simulated, why it
//! stopped, and every warning with its numbers and message.

use super::outcome::{stop_json, warning_json};
use super::ReportError;
use crate::forecast::{FadePoint, Forecast, LifeAt, ReportScale};
use serde_json::{json, Map, Value};

/// One threshold's end of life under the names samples.csv uses (`life_capacity_cycles`, …):
/// `null` with `life_<threshold>_censored: true` when it is not reached by the horizon.
fn life(threshold: &str, level_pct: f64, reached: &Option<LifeAt>) -> Map<String, Value> {
    let mut map = Map::new();
    map.insert(format!("{threshold}_threshold_pct"), json!(level_pct));
    map.insert(format!("life_{threshold}_cycles"), json!(reached.map(|a| a.cycles)));
    map.insert(format!("life_{threshold}_efc"), json!(reached.map(|a| a.efc)));
    map.insert(format!("life_{threshold}_years"), json!(reached.map(|a| a.years)));
    map.insert(format!("life_{threshold}_censored"), json!(reached.is_none()));
    map
}

/// A point's every column (the same names as `fade.csv`).
fn point_json(point: &FadePoint, scale: &ReportScale) -> Value {
    let map: Map<String, Value> =
        super::fade_csv::fade_columns(point, scale).into_iter().map(|(name, v)| (name, json!(v))).collect();
    Value::Object(map)
}

/// Renders the summary of a forecast of `scenario` on `cell`.
pub fn forecast_json(forecast: &Forecast, scenario: &str, cell: &str, cycling: bool) -> Result<Vec<u8>, ReportError> {
    let last = forecast.points.last();
    let mut end_of_life = Map::new();
    for e in &forecast.end_of_life {
        let threshold = match e.threshold {
            crate::forecast::Threshold::Capacity => "capacity",
            crate::forecast::Threshold::Resistance => "resistance",
        };
        end_of_life.extend(life(threshold, e.level_pct, &e.reached));
    }
    let lost: Map<String, Value> = last.map_or_else(Map::new, |p| {
        forecast
            .scale
            .all_values(&p.state)
            .into_iter()
            .filter(|v| {
                use crate::aging::Measure::*;
                matches!(v.spec.measure, LithiumLost | ElectrodeFraction)
            })
            .map(|v| (format!("{}_{}", v.spec.column, v.unit), json!(v.value)))
            .collect()
    });
    let shares: Map<String, Value> = last.map_or_else(Map::new, |p| {
        p.state
            .sink_shares()
            .into_iter()
            .map(|(c, share)| (crate::aging::COMPONENTS[c as usize].column.to_string(), json!(100.0 * share)))
            .collect()
    });
    let resistance_rise = match (last, &forecast.interface_rise) {
        (Some(p), Some(rise)) => {
            let total = p.resistance_mohm - forecast.fresh_resistance_mohm;
            let parts = [rise.film_original_ohm, rise.crack_faces_ohm, rise.lost_area_ohm].map(|r| r * 1e3);
            json!({
                "total_mohm": total,
                "negative_film_original_mohm": parts[0],
                "negative_crack_faces_mohm": parts[1],
                "negative_lost_active_area_mohm": parts[2],
                "other_mohm": total - parts.iter().sum::<f64>(),
            })
        }
        _ => Value::Null,
    };
    let summary = json!({
        "scenario": scenario,
        "cell": cell,
        "mode": if forecast.every_cycle { "every cycle" } else { "cycle jumping" },
        "fresh": {
            "capacity_ah": forecast.fresh_capacity_ah,
            "resistance_mohm": forecast.fresh_resistance_mohm,
            "cyclable_lithium_ah": forecast.scale.lithium_fresh_ah,
        },
        "end_of_life": end_of_life,
        "at_horizon": last.map(|p| point_json(p, &forecast.scale)),
        "lost_at_horizon": lost,
        "lithium_sink_share_pct": shares,
        "resistance_rise_at_horizon": resistance_rise,
        "simulated_cycles": forecast.simulated_cycles,
        "integrator": { "accepted_steps": forecast.accepted_steps, "rejected_steps": forecast.rejected_steps },
        "stop": stop_json(&forecast.stop, cycling),
        "pack": forecast.pack.as_deref().and_then(super::pack::pack_summary),
        "warnings": forecast.warnings.iter().map(warning_json).collect::<Vec<_>>(),
        "caution": crate::CAUTION,
    });
    Ok(super::schema::json_bytes(summary)?)
}
