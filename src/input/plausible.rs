//! Plausibility ranges: the one table of how large each physical input can sensibly be.
//!
//! A value outside its hard range cannot describe a lithium-ion cell or its use (a radius of a
//! metre, a kelvin temperature typed into a °C key): it is an input error, and where a common
//! slip would explain it the rule says which. A value inside the hard range but outside the
//! soft one is possible but unusual, and draws a warning. The ranges are wide on purpose: they
//! catch slips and overflows, not unusual cells. They are common practice, no source; FORMATS.md
//! prints this table.
//!
//! Keys are matched by their last segments, array indices left out, so one entry covers both
//! electrodes (`particle_radius_um`), every step of a profile (`charge_c`) and every month
//! (`usage.monthly_ambient_c`). Values that already broke a rule of their own (not finite, not
//! positive) are not reported twice.

use super::checks::Checks;
use super::document::TomlDocument;
use crate::material::constants::ZERO_CELSIUS_K;

/// A unit slip that would explain a value: the value typed in another unit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Slip {
    /// The value times `factor` is the value in this key's unit (`typed` names the unit typed).
    Scaled { typed: &'static str, factor: f64 },
    /// A kelvin temperature in a °C key.
    Kelvin,
}

/// One row of the table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Plausible {
    /// The key's last segments, dotted (`film.initial_thickness_nm`, `ambient_c`).
    pub key: &'static str,
    /// The unit as printed.
    pub unit: &'static str,
    /// Outside this, inclusive, is an error.
    pub hard: (f64, f64),
    /// Outside this, inclusive, is a warning.
    pub soft: (f64, f64),
    /// Slips tried, in order, when the value is outside a range.
    pub slips: &'static [Slip],
}

const METRES_TO_UM: &[Slip] = &[Slip::Scaled { typed: "metres", factor: 1e6 }];
const METRES_TO_NM: &[Slip] = &[Slip::Scaled { typed: "metres", factor: 1e9 }];
const KELVIN: &[Slip] = &[Slip::Kelvin];
const JOULES_TO_KJ: &[Slip] = &[Slip::Scaled { typed: "J/mol", factor: 1e-3 }];
const MILLIVOLTS: &[Slip] = &[Slip::Scaled { typed: "millivolts", factor: 1e-3 }];
const PASCALS_TO_GPA: &[Slip] =
    &[Slip::Scaled { typed: "MPa", factor: 1e-3 }, Slip::Scaled { typed: "pascals", factor: 1e-9 }];
const PASCALS_TO_MPA: &[Slip] = &[Slip::Scaled { typed: "pascals", factor: 1e-6 }];
const OHMS_TO_MOHM: &[Slip] = &[Slip::Scaled { typed: "ohms", factor: 1e3 }];
const NONE: &[Slip] = &[];

/// Temperatures a cell meets in service or storage, with margin; kelvin slips lie above.
const AMBIENT_HARD_C: (f64, f64) = (-90.0, 150.0);

const fn row(
    key: &'static str,
    unit: &'static str,
    hard: (f64, f64),
    soft: (f64, f64),
    slips: &'static [Slip],
) -> Plausible {
    Plausible { key, unit, hard, soft, slips }
}

/// The table. More specific keys come first: the first row whose key matches is used.
pub(crate) const PLAUSIBLE: &[Plausible] = &[
    // Cell, whole.
    row("nominal_capacity_ah", "Ah", (1e-3, 2000.0), (0.05, 500.0), NONE),
    row("voltage_min_v", "V", (0.5, 5.5), (1.5, 3.3), MILLIVOLTS),
    row("voltage_max_v", "V", (1.0, 6.0), (2.4, 4.6), MILLIVOLTS),
    row("reference_temperature_c", "°C", (-60.0, 120.0), (0.0, 60.0), KELVIN),
    row("resistance.ohmic_mohm", "mΩ", (0.0, 1000.0), (0.05, 200.0), OHMS_TO_MOHM),
    row("resistance.film_mohm", "mΩ", (0.0, 1000.0), (0.0, 200.0), OHMS_TO_MOHM),
    row(
        "electrolyte.concentration_mol_m3",
        "mol/m³",
        (10.0, 10_000.0),
        (300.0, 3000.0),
        &[Slip::Scaled { typed: "mol/L", factor: 1e3 }],
    ),
    row("thermal.mass_kg", "kg", (1e-4, 500.0), (0.005, 20.0), &[Slip::Scaled { typed: "grams", factor: 1e-3 }]),
    row(
        "thermal.specific_heat_j_kg_k",
        "J/(kg·K)",
        (100.0, 10_000.0),
        (600.0, 2000.0),
        &[Slip::Scaled { typed: "kJ/(kg·K)", factor: 1e3 }],
    ),
    row("thermal.convective_conductance_w_k", "W/K", (1e-6, 1e4), (1e-3, 100.0), NONE),
    row("limits.max_charge_current_a", "A", (1e-4, 1e5), (1e-3, 2e4), NONE),
    row("limits.max_discharge_current_a", "A", (1e-4, 1e5), (1e-3, 2e4), NONE),
    row("limits.min_temperature_c", "°C", (-90.0, 100.0), (-50.0, 30.0), KELVIN),
    row("limits.max_temperature_c", "°C", (-50.0, 150.0), (20.0, 90.0), KELVIN),
    // Electrodes.
    row("thickness_um", "µm", (1.0, 2000.0), (10.0, 300.0), METRES_TO_UM),
    row("area_m2", "m²", (1e-6, 100.0), (1e-3, 30.0), &[Slip::Scaled { typed: "cm²", factor: 1e-4 }]),
    row("particle_radius_um", "µm", (0.005, 200.0), (0.02, 30.0), METRES_TO_UM),
    row("max_concentration_mol_m3", "mol/m³", (1000.0, 200_000.0), (10_000.0, 100_000.0), NONE),
    row("diffusivity_m2_s", "m²/s", (1e-22, 1e-8), (1e-19, 1e-11), &[Slip::Scaled { typed: "cm²/s", factor: 1e-4 }]),
    row("rate_constant_m_s", "m/s", (1e-18, 1e-2), (1e-14, 1e-6), NONE),
    row("entropic_coefficient_mv_k", "mV/K", (-5.0, 5.0), (-1.0, 1.0), NONE),
    row("youngs_modulus_gpa", "GPa", (0.1, 1000.0), (1.0, 400.0), PASCALS_TO_GPA),
    row(
        "partial_molar_volume_cm3_mol",
        "cm³/mol",
        (1e-3, 50.0),
        (0.1, 10.0),
        &[Slip::Scaled { typed: "m³/mol", factor: 1e6 }],
    ),
    // Aging laws.
    row("film.initial_thickness_nm", "nm", (0.0, 1000.0), (0.5, 100.0), METRES_TO_NM),
    row("film.molar_volume_cm3_mol", "cm³/mol", (1.0, 1000.0), (10.0, 300.0), NONE),
    row("film.conductivity_s_m", "S/m", (1e-14, 10.0), (1e-10, 1e-2), NONE),
    row("film.solvent_concentration_mol_m3", "mol/m³", (1.0, 30_000.0), (500.0, 15_000.0), NONE),
    row("film.reference_potential_v", "V", (-1.0, 5.0), (0.0, 1.5), MILLIVOLTS),
    row("cracking.paris_exponent", "", (0.5, 30.0), (1.0, 12.0), NONE),
    row("cracking.threshold_kpa_sqrt_m", "kPa·√m", (0.0, 1e5), (0.0, 5000.0), NONE),
    row("cracking.initial_length_nm", "nm", (0.0, 1e5), (0.0, 5000.0), METRES_TO_NM),
    row("cracking.width_nm", "nm", (0.0, 1e4), (0.0, 2000.0), METRES_TO_NM),
    row("cracking.density_per_um2", "per µm²", (0.0, 1e4), (0.0, 100.0), NONE),
    row("plating.exchange_current_a_m2", "A/m²", (0.0, 1e4), (0.0, 1000.0), NONE),
    row("active_loss.rate_per_cycle", "per cycle", (0.0, 1.0), (0.0, 0.01), NONE),
    row("active_loss.critical_stress_mpa", "MPa", (0.0, 1e5), (0.0, 5000.0), PASCALS_TO_MPA),
    row("active_loss.exponent", "", (0.0, 30.0), (0.5, 12.0), NONE),
    row("electrolyte_oxidation.current_density_a_m2", "A/m²", (0.0, 1.0), (0.0, 1e-3), NONE),
    row("electrolyte_oxidation.reference_potential_v", "V", (0.0, 6.0), (3.0, 5.0), MILLIVOLTS),
    // Every activation energy: a few kJ/mol to a few hundred; J/mol slips lie above.
    row("*activation_kj_mol", "kJ/mol", (0.0, 300.0), (0.0, 150.0), JOULES_TO_KJ),
    // Scenario and usage.
    row("ambient_c", "°C", AMBIENT_HARD_C, (-40.0, 60.0), KELVIN),
    row("usage.monthly_ambient_c", "°C", AMBIENT_HARD_C, (-40.0, 60.0), KELVIN),
    row("usage.cycles_per_day", "per day", (0.0, 1000.0), (0.0, 50.0), NONE),
    row("horizon.years", "years", (0.0, 100.0), (0.0, 40.0), NONE),
    row("horizon.cycles", "cycles", (0.0, 1e6), (0.0, 1e5), NONE),
    // Step profiles: rates in multiples of the nominal capacity per hour. (Voltages are the
    // pack's in a pack scenario, so they are checked against the loaded window instead.)
    row("charge_c", "C", (0.0, 100.0), (0.0, 15.0), NONE),
    row("discharge_c", "C", (0.0, 100.0), (0.0, 30.0), NONE),
    row("end_current_c", "C", (0.0, 100.0), (0.0, 15.0), NONE),
];

/// Keys in percent of a state of charge: a value strictly between 0 and 1 is a fraction typed
/// where a percentage belongs (nobody rests a cell at 0.9 %).
const SOC_PERCENT_KEYS: &[&str] = &["start_soc_pct", "usage.rest_soc_pct", "end_soc_pct"];

/// The row for a dotted key path (array indices anywhere in it are skipped).
pub(crate) fn plausible_for(key_path: &str) -> Option<&'static Plausible> {
    let segments: Vec<&str> = key_path.split('.').filter(|s| s.parse::<usize>().is_err()).collect();
    PLAUSIBLE.iter().find(|row| ends_with(&segments, row.key))
}

/// `key` matches the last segments of a path; a leading `*` matches the end of the last one.
fn ends_with(segments: &[&str], key: &str) -> bool {
    if let Some(tail) = key.strip_prefix('*') {
        return segments.last().is_some_and(|last| last.ends_with(tail));
    }
    let wanted: Vec<&str> = key.split('.').collect();
    segments.len() >= wanted.len() && segments[segments.len() - wanted.len()..] == wanted[..]
}

/// What a value is against its row.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Verdict {
    Fine,
    /// Outside the soft range: the rule, for a warning.
    Unusual(String),
    /// Outside the hard range: the rule, for an error.
    Impossible(String),
}

/// Judges `value` (finite) against `row`.
pub(crate) fn judge(row: &Plausible, value: f64) -> Verdict {
    let unit = if row.unit.is_empty() { String::new() } else { format!(" {}", row.unit) };
    let rule = |said: &str, (low, high): (f64, f64)| {
        let mut rule = format!("{} {said} from {} to {}{unit}", number(value), number(low), number(high));
        if let Some(hint) = slip_hint(row, value, (low, high)) {
            rule.push_str(&format!("; {hint}"));
        }
        rule
    };
    let inside = |(low, high): (f64, f64)| value >= low && value <= high;
    if !inside(row.hard) {
        Verdict::Impossible(rule("is not a plausible value: it must lie", row.hard))
    } else if !inside(row.soft) {
        Verdict::Unusual(rule("is unusual; values usually lie", row.soft))
    } else {
        Verdict::Fine
    }
}

/// The rule `value` (finite) of `key_path` breaks by lying outside its row's error range, if
/// the key has a row and the value breaks it.
pub(crate) fn impossible(key_path: &str, value: f64) -> Option<String> {
    match judge(plausible_for(key_path)?, value) {
        Verdict::Impossible(rule) => Some(rule),
        _ => None,
    }
}

/// The first slip whose correction lands the value inside `range`, worded for the user.
fn slip_hint(row: &Plausible, value: f64, range: (f64, f64)) -> Option<String> {
    row.slips.iter().find_map(|slip| {
        let corrected = match slip {
            Slip::Scaled { factor, .. } => value * factor,
            Slip::Kelvin => value - ZERO_CELSIUS_K,
        };
        if !(corrected >= range.0 && corrected <= range.1) {
            return None;
        }
        let unit = if row.unit.is_empty() { String::new() } else { format!(" {}", row.unit) };
        Some(match slip {
            Slip::Scaled { typed, .. } => {
                format!("{} looks like {typed}; this key is in{unit} (write {})", number(value), number(corrected))
            }
            Slip::Kelvin => {
                format!("{} looks like kelvin; this key is in °C (write {})", number(value), number(corrected))
            }
        })
    })
}

/// A number as short as it reads: 4 significant digits, exponent form when very large or small.
fn number(value: f64) -> String {
    if value == 0.0 {
        return "0".into();
    }
    let magnitude = value.abs();
    if !(1e-3..1e6).contains(&magnitude) {
        let text = format!("{value:.3e}");
        // 1.000e-6 → 1e-6
        match text.split_once('e') {
            Some((mantissa, exponent)) => {
                let mantissa = mantissa.trim_end_matches('0').trim_end_matches('.');
                format!("{mantissa}e{exponent}")
            }
            None => text,
        }
    } else {
        let digits = (3 - magnitude.log10().floor() as i32).max(0) as usize;
        let text = format!("{value:.digits$}");
        if text.contains('.') {
            text.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            text
        }
    }
}

/// Every numeric value of `document` (its overrides applied) that has a row, with its path.
fn numbers(document: &TomlDocument) -> Vec<(String, Option<usize>, f64)> {
    let mut found = Vec::new();
    collect(document.table(), "", &mut found);
    found
}

fn collect(table: &toml::Table, prefix: &str, found: &mut Vec<(String, Option<usize>, f64)>) {
    for (key, value) in table {
        let path = if prefix.is_empty() { key.clone() } else { format!("{prefix}.{key}") };
        match value {
            toml::Value::Table(inner) => collect(inner, &path, found),
            toml::Value::Array(items) => {
                for (i, item) in items.iter().enumerate() {
                    match item {
                        toml::Value::Table(inner) => collect(inner, &format!("{path}.{i}"), found),
                        other => {
                            if let Some(number) = as_number(other) {
                                found.push((path.clone(), Some(i), number));
                            }
                        }
                    }
                }
            }
            other => {
                if let Some(number) = as_number(other) {
                    found.push((path, None, number));
                }
            }
        }
    }
}

fn as_number(value: &toml::Value) -> Option<f64> {
    match value {
        toml::Value::Float(x) => Some(*x),
        toml::Value::Integer(n) => Some(*n as f64),
        _ => None,
    }
}

/// Reports every value of the checked document outside its hard range (and every fraction in
/// a percentage key) as a problem. Values already reported under their key are skipped.
pub(crate) fn report_implausible(checks: &mut Checks<'_>, document: &TomlDocument) {
    for (key, item, value) in numbers(document) {
        // A key already reported broke a rule of its own (not finite, not positive); one
        // message for it is enough.
        if !value.is_finite() || checks.has_problem_at(&key) {
            continue;
        }
        let which = item.map(|i| format!("item {}: ", i + 1)).unwrap_or_default();
        let segments: Vec<&str> = key.split('.').filter(|s| s.parse::<usize>().is_err()).collect();
        if SOC_PERCENT_KEYS.iter().any(|k| ends_with(&segments, k)) && value > 0.0 && value < 1.0 {
            checks.report_leading(
                &key,
                format!(
                    "{which}{} looks like a fraction; this key is in percent (write {})",
                    number(value),
                    number(value * 100.0)
                ),
            );
            continue;
        }
        if let Some(rule) = impossible(&key, value) {
            checks.report_leading(&key, format!("{which}{rule}"));
        }
    }
}

/// Warnings for the values of `document` outside their soft ranges, each as a one-line
/// `file:line: key: warning: …`.
pub(crate) fn unusual_values(document: &TomlDocument) -> Vec<String> {
    numbers(document)
        .into_iter()
        .filter(|(_, _, value)| value.is_finite())
        .filter_map(|(key, item, value)| {
            let row = plausible_for(&key)?;
            match judge(row, value) {
                Verdict::Unusual(rule) => {
                    let which = item.map(|i| format!("item {}: ", i + 1)).unwrap_or_default();
                    Some(document.problem(&key, format!("warning: {which}{rule}")).to_string())
                }
                _ => None,
            }
        })
        .collect()
}

/// The table as Markdown rows (key, unit, hard range, usual range, slips named), as FORMATS.md
/// prints it; a test keeps the two the same.
#[cfg(test)]
fn markdown_table() -> String {
    let mut out =
        String::from("| key | unit | error outside | warning outside | slips named |\n|---|---|---|---|---|\n");
    for row in PLAUSIBLE {
        let slips: Vec<String> = row
            .slips
            .iter()
            .map(|slip| match slip {
                Slip::Scaled { typed, .. } => (*typed).to_string(),
                Slip::Kelvin => "kelvin".to_string(),
            })
            .collect();
        let key = match row.key.strip_prefix('*') {
            Some(tail) => format!("`…{tail}` (every activation energy)"),
            None => format!("`{}`", row.key),
        };
        out.push_str(&format!(
            "| {key} | {} | {} to {} | {} to {} | {} |\n",
            if row.unit.is_empty() { "–" } else { row.unit },
            number(row.hard.0),
            number(row.hard.1),
            number(row.soft.0),
            number(row.soft.1),
            if slips.is_empty() { "–".to_string() } else { slips.join(", ") }
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formats_md_prints_this_table() {
        let formats = include_str!("../../FORMATS.md");
        let table = markdown_table();
        assert!(formats.contains(&table), "FORMATS.md's plausibility table is out of date; it should read:\n{table}");
    }

    #[test]
    fn keys_match_by_their_last_segments() {
        assert_eq!(plausible_for("negative.particle_radius_um").map(|r| r.key), Some("particle_radius_um"));
        assert_eq!(
            plausible_for("positive.film.initial_thickness_nm").map(|r| r.key),
            Some("film.initial_thickness_nm")
        );
        assert_eq!(plausible_for("negative.cracking.activation_kj_mol").map(|r| r.key), Some("*activation_kj_mol"));
        assert_eq!(plausible_for("block.0.step.3.charge_c").map(|r| r.key), Some("charge_c"));
        assert_eq!(plausible_for("usage.monthly_ambient_c").map(|r| r.key), Some("usage.monthly_ambient_c"));
        assert_eq!(plausible_for("ambient_c").map(|r| r.key), Some("ambient_c"));
        // `charge_c` is a C-rate, not a temperature; no row must take it for one.
        assert_ne!(plausible_for("block.0.step.0.discharge_c").map(|r| r.unit), Some("°C"));
        assert!(plausible_for("negative.poisson_ratio").is_none());
    }

    #[test]
    fn slips_are_named() {
        let ambient = plausible_for("ambient_c").unwrap();
        match judge(ambient, 298.0) {
            Verdict::Impossible(rule) => assert!(rule.contains("298 looks like kelvin; this key is in °C"), "{rule}"),
            other => panic!("{other:?}"),
        }
        let radius = plausible_for("negative.particle_radius_um").unwrap();
        match judge(radius, 5e-6) {
            Verdict::Impossible(rule) => {
                assert!(rule.contains("looks like metres") && rule.contains("write 5"), "{rule}")
            }
            other => panic!("{other:?}"),
        }
        match judge(radius, 1e9) {
            Verdict::Impossible(rule) => assert!(rule.contains("must lie from 0.005 to 200 µm"), "{rule}"),
            other => panic!("{other:?}"),
        }
        assert_eq!(judge(radius, 5.0), Verdict::Fine);
        assert!(matches!(judge(radius, 60.0), Verdict::Unusual(_)));
        let activation = plausible_for("negative.film.reaction_activation_kj_mol").unwrap();
        match judge(activation, 55_000.0) {
            Verdict::Impossible(rule) => {
                assert!(rule.contains("looks like J/mol") && rule.contains("write 55"), "{rule}")
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn every_row_is_ordered_and_soft_lies_within_hard() {
        for row in PLAUSIBLE {
            assert!(row.hard.0 <= row.hard.1 && row.soft.0 <= row.soft.1, "{}", row.key);
            assert!(row.hard.0 <= row.soft.0 && row.soft.1 <= row.hard.1, "{}", row.key);
        }
    }

    #[test]
    fn numbers_read_short() {
        assert_eq!(number(298.0), "298");
        assert_eq!(number(24.85), "24.85");
        assert_eq!(number(1e9), "1e9");
        assert_eq!(number(5e-6), "5e-6");
        assert_eq!(number(0.005), "0.005");
    }
}
