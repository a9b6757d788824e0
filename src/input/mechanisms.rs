//! The aging-mechanism tables of a cell file (`[negative.film]`, `[positive.cracking]`, …) and
//! its `[calibration]` table. Each mechanism declares and converts its own table in its file
//! under `src/aging/` (its `…Section` type); this module supplies the [`TableReader`] that
//! checks each value and reports problems with the file, line and key.
//!
//! A table that is present switches its mechanism on unless it says `enabled = false`; an
//! absent table leaves it off. A switched-off table needs no other keys and its values are not
//! checked, so a mechanism can be kept in the file for later or switched off with `--set`
//! without deleting anything. Unknown keys are rejected either way (by serde).

use serde::Deserialize;

use super::checks::Checks;
use crate::aging::{CalibrationRange, Registration, Side, TableReader};
use crate::material::constants::ZERO_CELSIUS_K;
use crate::material::units::KILO;

const DEFAULT_TRANSFER_COEFFICIENT: f64 = 0.5;

const MISSING_RULE: &str = "required key is missing; give it, or switch the mechanism off with `enabled = false`";

/// What a mechanism table needs to know about the cell around it.
#[derive(Debug, Clone, Copy)]
pub(super) struct Surroundings {
    /// The cell's `reference_temperature_c`, the default of every table's own.
    pub reference_temperature_c: f64,
    /// Of the electrode the table sits under, as written (µm); cracks must start shorter.
    pub particle_radius_um: f64,
}

/// Checks the keys of one switched-on mechanism table, each reported as `table.key`.
pub(super) struct TableRules<'c, 'd> {
    pub checks: &'c mut Checks<'d>,
    pub table: &'c str,
    pub surroundings: Surroundings,
}

impl TableRules<'_, '_> {
    fn required(&mut self, field: &str, value: Option<f64>) -> Option<f64> {
        if value.is_none() {
            self.checks.report(&self.key(field), MISSING_RULE);
        }
        value
    }
}

impl TableReader for TableRules<'_, '_> {
    fn key(&self, field: &str) -> String {
        format!("{}.{field}", self.table)
    }

    fn report(&mut self, field: &str, rule: String) {
        let key = self.key(field);
        self.checks.report(&key, rule);
    }

    fn positive(&mut self, field: &str, value: Option<f64>) -> f64 {
        if let Some(value) = self.required(field, value) {
            self.checks.positive(&self.key(field), value);
        }
        value.unwrap_or(f64::NAN)
    }

    fn non_negative(&mut self, field: &str, value: Option<f64>) -> f64 {
        if let Some(value) = self.required(field, value) {
            self.checks.non_negative(&self.key(field), value);
        }
        value.unwrap_or(f64::NAN)
    }

    fn fraction(&mut self, field: &str, value: Option<f64>) -> f64 {
        if let Some(value) = self.required(field, value) {
            self.checks.within(&self.key(field), value, 0.0, 1.0);
        }
        value.unwrap_or(f64::NAN)
    }

    fn optional_positive(&mut self, field: &str, value: Option<f64>, default: f64) -> f64 {
        let value = value.unwrap_or(default);
        self.checks.positive(&self.key(field), value);
        value
    }

    fn finite(&mut self, field: &str, value: f64) -> f64 {
        self.checks.finite(&self.key(field), value);
        value
    }

    /// The end points would make one reaction direction vanish.
    fn transfer_coefficient(&mut self, value: Option<f64>) -> f64 {
        let value = value.unwrap_or(DEFAULT_TRANSFER_COEFFICIENT);
        self.checks.strictly_between(&self.key("transfer_coefficient"), value, 0.0, 1.0);
        value
    }

    fn activation_j_mol(&mut self, field: &str, value: Option<f64>) -> f64 {
        self.non_negative(field, value) * KILO
    }

    fn reference_temperature_k(&mut self, value: Option<f64>) -> f64 {
        let celsius = value.unwrap_or(self.surroundings.reference_temperature_c);
        if value.is_some() {
            self.checks.celsius(&self.key("reference_temperature_c"), celsius);
        }
        celsius + ZERO_CELSIUS_K
    }

    fn particle_radius_um(&self) -> f64 {
        self.surroundings.particle_radius_um
    }
}

/// `[calibration]`: the extent of the aging data the parameters were fitted to.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct CalibrationSection {
    cycles: Option<f64>,
    days: Option<f64>,
    efc: Option<f64>,
    min_temperature_c: Option<f64>,
    max_temperature_c: Option<f64>,
}

pub(super) fn convert_calibration(checks: &mut Checks<'_>, section: &CalibrationSection) -> CalibrationRange {
    if section.cycles.is_none() && section.days.is_none() && section.efc.is_none() {
        checks.report(
            "calibration",
            "give `cycles`, `days` or `efc` (any of them): how far the aging data the parameters were \
             fitted to reaches (leave the table out for uncalibrated parameters)",
        );
    }
    for (key, value) in
        [("calibration.cycles", section.cycles), ("calibration.days", section.days), ("calibration.efc", section.efc)]
    {
        if let Some(value) = value {
            checks.positive(key, value);
        }
    }
    let temperature_k = match (section.min_temperature_c, section.max_temperature_c) {
        (None, None) => None,
        (Some(low), Some(high)) => {
            checks.celsius("calibration.min_temperature_c", low);
            checks.celsius("calibration.max_temperature_c", high);
            if low > high {
                checks.report(
                    "calibration.min_temperature_c",
                    format!("must not be above max_temperature_c ({high} °C), found {low} °C"),
                );
            }
            Some((low + ZERO_CELSIUS_K, high + ZERO_CELSIUS_K))
        }
        (Some(_), None) => {
            checks.report("calibration.max_temperature_c", "give it with min_temperature_c (the fitted data's range)");
            None
        }
        (None, Some(_)) => {
            checks.report("calibration.min_temperature_c", "give it with max_temperature_c (the fitted data's range)");
            None
        }
    };
    CalibrationRange { cycles: section.cycles, days: section.days, efc: section.efc, temperature_k }
}

/// Reports a mechanism table found under an electrode its mechanism does not act on.
pub(super) fn reject_misplaced(checks: &mut Checks<'_>, side: Side, table: &str, registration: &Registration) {
    let allowed: Vec<String> = registration.sides.iter().map(|s| format!("`[{}.{table}]`", s.key())).collect();
    let electrodes: Vec<&str> = registration.sides.iter().map(|s| s.key()).collect();
    checks.report(
        &format!("{}.{table}", side.key()),
        format!(
            "unknown key; {} is modelled on the {} electrode only ({})",
            registration.models,
            electrodes.join(" and "),
            allowed.join(", ")
        ),
    );
}
