//! The output schema, declared once: every column name the commands write into a CSV (and use
//! as a key in JSON) with its kind and meaning, the rounding rule for numbers, and the
//! `schema_version` every JSON output carries. FORMATS.md ("Outputs") prints this table; a test
//! keeps the two equal, and `tests/output_schema.rs` checks every written CSV against it.

use serde_json::{Map, Value};

/// Version of the output schema (column names, JSON keys, censoring and rounding); raised when
/// a name or meaning changes.
pub const SCHEMA_VERSION: u32 = 2;

/// Significant digits of every reported number. The model's inputs are known to two or three
/// digits and its integrator and step ends hold about 1e-6 relative: six digits keep every
/// difference the model resolves and drop the floating-point noise beyond it (and the f32
/// storage of ensemble curves prints the same as the f64 forecast).
pub const SIGNIFICANT_DIGITS: usize = 6;

/// How a column's cells are read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// A number, or empty where it is undefined or censored (a flag column says which).
    Number,
    /// A whole number.
    Integer,
    /// `true` or `false`.
    Flag,
    /// Words: names, labels, lists of warning kinds.
    Text,
}

/// One column: its name, how it is read and what it means (unit included).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Column {
    pub name: String,
    pub kind: Kind,
    pub meaning: String,
}

/// The columns with a fixed name. The slow state's columns come from `aging::COMPONENTS`.
const FIXED: &[(&str, Kind, &str)] = &[
    // Time axes of a reported point.
    ("cycle", Kind::Number, "duty cycles run since the start"),
    ("day", Kind::Number, "calendar days since the start"),
    ("years", Kind::Number, "calendar years since the start (days / 365.25)"),
    ("efc", Kind::Number, "equivalent full cycles: throughput_ah over the nominal capacity"),
    // The state at a point.
    ("capacity_ah", Kind::Number, "capacity at reference conditions, Ah"),
    ("duty_capacity_ah", Kind::Number, "capacity delivered under the duty cycle itself, Ah"),
    ("soh_pct", Kind::Number, "state of health: capacity_ah over the fresh capacity, %"),
    (
        "resistance_mohm",
        Kind::Number,
        "10 s 1C pulse resistance at 50 % state of charge and the reference temperature, mΩ",
    ),
    ("resistance_growth_pct", Kind::Number, "rise of resistance_mohm over the fresh value, %"),
    ("fade_lithium_ah", Kind::Number, "capacity lost to lithium taken by film and plating, Ah"),
    ("fade_active_material_ah", Kind::Number, "capacity lost with active material, Ah"),
    ("peak_temperature_c", Kind::Number, "highest cell temperature of the duty cycle, °C"),
    ("film_crack_nm", Kind::Number, "mean film thickness on crack faces, nm"),
    // Ensemble and comparison results.
    ("sample", Kind::Integer, "sample number, from 0"),
    ("status", Kind::Text, "ok, invalid (the draw breaks an input rule) or failed (the forecast stopped early)"),
    ("note", Kind::Text, "why a sample was left out"),
    ("life_capacity_cycles", Kind::Number, "end of life by the capacity threshold, cycles (empty when censored)"),
    (
        "life_capacity_efc",
        Kind::Number,
        "end of life by the capacity threshold, equivalent full cycles (empty when censored)",
    ),
    ("life_capacity_years", Kind::Number, "end of life by the capacity threshold, years (empty when censored)"),
    ("life_capacity_censored", Kind::Flag, "the capacity threshold is not reached by the horizon"),
    ("life_resistance_cycles", Kind::Number, "end of life by the resistance threshold, cycles (empty when censored)"),
    (
        "life_resistance_efc",
        Kind::Number,
        "end of life by the resistance threshold, equivalent full cycles (empty when censored)",
    ),
    ("life_resistance_years", Kind::Number, "end of life by the resistance threshold, years (empty when censored)"),
    ("life_resistance_censored", Kind::Flag, "the resistance threshold is not reached by the horizon"),
    ("life_cycles", Kind::Number, "end of life at the first threshold reached, cycles (empty when censored)"),
    (
        "life_efc",
        Kind::Number,
        "end of life at the first threshold reached, equivalent full cycles (empty when censored)",
    ),
    ("life_years", Kind::Number, "end of life at the first threshold reached, years (empty when censored)"),
    ("life_censored", Kind::Flag, "no threshold is reached by the horizon: the life columns beside it are empty"),
    (
        "energy_to_end_of_life_wh",
        Kind::Number,
        "discharge energy delivered up to end of life, Wh (empty when censored)",
    ),
    ("soh_at_horizon_pct", Kind::Number, "state of health at the horizon, %"),
    ("resistance_growth_at_horizon_pct", Kind::Number, "resistance growth at the horizon, %"),
    ("soh_at_warranty_pct", Kind::Number, "state of health at the warranty point, %"),
    ("plating_predicted", Kind::Flag, "the forecast predicts lithium plating"),
    ("plating_fraction", Kind::Number, "share of runs predicting lithium plating, 0–1"),
    ("warnings", Kind::Text, "kinds of forecast warning, `;`-separated (compare: `kind:count/runs`)"),
    ("alternative", Kind::Text, "name of a compared alternative"),
    ("samples_usable", Kind::Integer, "runs that gave a life (reached or censored)"),
    ("samples_censored", Kind::Integer, "usable runs still above both thresholds at the horizon"),
    ("samples_left_out", Kind::Integer, "runs left out of the statistics (invalid draws, failed forecasts)"),
    ("charge_time_h", Kind::Number, "time with charging current in one beginning-of-life cycle, h"),
    ("life_difference_cycles", Kind::Number, "paired life difference against the first alternative, cycles"),
    (
        "life_difference_efc",
        Kind::Number,
        "paired life difference against the first alternative, equivalent full cycles",
    ),
    ("probability_outlasts_first", Kind::Number, "share of pairs in which this alternative outlives the first, 0–1"),
    // Fade table conditions.
    ("ambient_c", Kind::Number, "ambient temperature of the condition, °C"),
    ("c_rate", Kind::Number, "C-rate of charge and discharge of the condition"),
    ("soc_low_pct", Kind::Number, "lower end of the condition's state-of-charge window, %"),
    ("soc_high_pct", Kind::Number, "upper end of the condition's state-of-charge window, %"),
    // Cycle trace.
    ("time_s", Kind::Number, "time since the start of the cycle, s"),
    ("current_a", Kind::Number, "cell current, positive on discharge, A"),
    ("voltage_v", Kind::Number, "terminal voltage, V"),
    ("temperature_c", Kind::Number, "cell temperature, °C"),
    ("soc_pct", Kind::Number, "state of charge, %"),
    ("neg_surface_stoich", Kind::Number, "negative particles' surface stoichiometry, 0–1"),
    ("pos_surface_stoich", Kind::Number, "positive particles' surface stoichiometry, 0–1"),
    (
        "neg_potential_v",
        Kind::Number,
        "negative electrode's surface potential against Li/Li⁺, V (below 0: plating possible)",
    ),
    ("neg_surface_stress_mpa", Kind::Number, "negative particles' tangential surface stress, tension positive, MPa"),
    ("pos_surface_stress_mpa", Kind::Number, "positive particles' tangential surface stress, tension positive, MPa"),
    ("step", Kind::Integer, "step of the duty cycle, from 1"),
    ("step_label", Kind::Text, "the step's label"),
    // Pack.
    ("cell", Kind::Integer, "cell position in the pack, from 1, group by group"),
    ("group", Kind::Integer, "parallel group of the cell, from 1"),
    ("place", Kind::Integer, "place of the cell in its group, from 1"),
    ("interconnect_mohm", Kind::Number, "resistance between the cell and its group's node, mΩ"),
    ("cycle_ambient_c", Kind::Number, "ambient at the cell's position while the duty cycle runs, °C"),
    (
        "current_share_pct",
        Kind::Number,
        "share of its group's discharge the cell carried in the last simulated cycle, %",
    ),
    (
        "lithium_total",
        Kind::Number,
        "the cell's lithium inventory plus every sink, fraction of its fresh lithium (1 when conserved)",
    ),
];

/// Every named column: the fixed ones and the slow state's (`lithium_lost_<sink>_ah`, …).
pub fn columns() -> Vec<Column> {
    let mut out: Vec<Column> = FIXED
        .iter()
        .map(|(name, kind, meaning)| Column { name: name.to_string(), kind: *kind, meaning: meaning.to_string() })
        .collect();
    for spec in crate::aging::COMPONENTS {
        let scale = crate::forecast::ReportScale {
            lithium_fresh_ah: 1.0,
            fresh_capacity_ah: 1.0,
            neg_radius_nm: 1.0,
            pos_radius_nm: 1.0,
        };
        for value in scale.values(spec, &crate::aging::AgingState::default()) {
            let unit = match value.unit {
                "ah" => "Ah",
                "pct" if spec.column.starts_with("lithium") || spec.column.starts_with("plated") => {
                    "% of the fresh capacity"
                }
                "pct" => "% of the electrode",
                "nm" => "nm",
                "wh" => "Wh",
                other => other,
            };
            out.push(Column {
                name: format!("{}_{}", spec.column, value.unit),
                kind: Kind::Number,
                meaning: format!("{}, {unit}", spec.label),
            });
        }
    }
    out
}

/// The column a header names: its own entry, or for a quantile column (`soh_pct_p5`,
/// `life_cycles_p50`, `life_censored_p95`) the entry of the quantity it is a quantile of.
pub fn column(name: &str) -> Option<Column> {
    let all = columns();
    if let Some(found) = all.iter().find(|c| c.name == name) {
        return Some(found.clone());
    }
    let (base, suffix) = name.rsplit_once("_p")?;
    let is_percent = !suffix.is_empty() && suffix.chars().all(|c| c.is_ascii_digit() || c == '.');
    all.into_iter().find(|c| is_percent && c.name == base)
}

/// `value` rounded to [`SIGNIFICANT_DIGITS`]; non-finite values pass through.
pub fn round(value: f64) -> f64 {
    if !value.is_finite() || value == 0.0 {
        return value;
    }
    format!("{value:.*e}", SIGNIFICANT_DIGITS - 1).parse().unwrap_or(value)
}

/// A number for a CSV cell: rounded, in exponent form below 1e-4 and from 1e15 on (so a tiny
/// rate is `3.12339e-22`, not thirty zeros), empty when not finite.
pub fn number(value: f64) -> String {
    if !value.is_finite() {
        return String::new();
    }
    let rounded = round(value);
    if rounded != 0.0 && !(1e-4..1e15).contains(&rounded.abs()) {
        format!("{rounded:e}")
    } else {
        format!("{rounded}")
    }
}

/// A flag for a CSV cell.
pub fn flag(value: bool) -> &'static str {
    if value {
        "true"
    } else {
        "false"
    }
}

/// Every float in `value` rounded to [`SIGNIFICANT_DIGITS`]; non-finite ones become `null`.
pub fn round_json(value: &mut Value) {
    match value {
        Value::Number(n) if n.is_f64() => {
            let v = n.as_f64().unwrap_or(f64::NAN);
            *value = serde_json::Number::from_f64(round(v)).map_or(Value::Null, Value::Number);
        }
        Value::Array(items) => items.iter_mut().for_each(round_json),
        Value::Object(map) => map.values_mut().for_each(round_json),
        _ => {}
    }
}

/// A JSON output as bytes: `schema_version` first, then `value`'s keys, numbers rounded.
pub fn json_bytes(value: impl serde::Serialize) -> Result<Vec<u8>, serde_json::Error> {
    let mut value = serde_json::to_value(value)?;
    round_json(&mut value);
    let mut out = Map::new();
    out.insert("schema_version".into(), Value::from(SCHEMA_VERSION));
    match value {
        Value::Object(map) => out.extend(map),
        other => {
            out.insert("value".into(), other);
        }
    }
    let mut bytes = serde_json::to_vec_pretty(&Value::Object(out))?;
    bytes.push(b'\n');
    Ok(bytes)
}

/// The FORMATS.md table of columns, one row each.
pub fn formats_md_table() -> String {
    let mut text = String::from("| column | kind | meaning |\n|---|---|---|\n");
    for c in columns() {
        let kind = match c.kind {
            Kind::Number => "number",
            Kind::Integer => "integer",
            Kind::Flag => "true/false",
            Kind::Text => "text",
        };
        text.push_str(&format!("| `{}` | {kind} | {} |\n", c.name, c.meaning));
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_name_per_meaning_and_one_meaning_per_name() {
        let all = columns();
        for (i, a) in all.iter().enumerate() {
            for b in &all[i + 1..] {
                assert_ne!(a.name, b.name, "{} listed twice", a.name);
                assert_ne!(a.meaning, b.meaning, "{} and {} mean the same", a.name, b.name);
            }
        }
    }

    #[test]
    fn quantile_columns_resolve_to_their_quantity() {
        assert_eq!(column("soh_pct_p5").unwrap().name, "soh_pct");
        assert_eq!(column("life_censored_p97.5").unwrap().kind, Kind::Flag);
        assert!(column("soh_pct_pfive").is_none());
        assert!(column("lithium_lost_plating_ah").is_some());
    }

    #[test]
    fn numbers_keep_six_significant_digits() {
        assert_eq!(number(5.1021575927734375), "5.10216");
        assert_eq!(number(5.102157755522598), "5.10216");
        assert_eq!(number(0.00000000000000000000031233941797576506), "3.12339e-22");
        assert_eq!(number(300.0), "300");
        assert_eq!(number(0.0), "0");
        assert_eq!(number(-2.5), "-2.5");
        assert_eq!(number(f64::INFINITY), "");
        assert_eq!(number(f64::NAN), "");
        assert_eq!(number(123456789.0), "123457000");
    }

    #[test]
    fn formats_md_prints_this_table() {
        let formats = include_str!("../../FORMATS.md");
        assert!(
            formats.contains(&formats_md_table()),
            "FORMATS.md's \"Output columns\" table is out of date; paste:\n{}",
            formats_md_table()
        );
    }
}
