//! The aging-mechanism tables of a cell file (`[negative.film]`, `[positive.cracking]`, …) and
//! its `[calibration]` table → the SI parameter structs of [`crate::aging`].
//!
//! A table that is present switches its mechanism on unless it says `enabled = false`; an
//! absent table leaves it off. A switched-off table needs no other keys and its values are not
//! checked, so a mechanism can be kept in the file for later or switched off with `--set`
//! without deleting anything. Unknown keys are rejected either way (by serde).

use serde::Deserialize;

use super::checks::Checks;
use super::units::{CUBIC_CENTIMETRE, KILO, MEGA, NANO, PER_SQUARE_MICROMETRE};
use crate::aging::{
    ActiveLossParams, CalibrationRange, CrackingParams, FilmBreathingParams, FilmParams, PlatingParams,
};
use crate::material::constants::ZERO_CELSIUS_K;

const DEFAULT_TRANSFER_COEFFICIENT: f64 = 0.5;
/// Film-forming reaction potential against Li/Li⁺ when the file gives none, V.
const DEFAULT_FILM_REFERENCE_POTENTIAL_V: f64 = 0.4;
/// Y of ΔK = Y Δσ √(πa) for a shallow surface crack.
const DEFAULT_GEOMETRY_FACTOR: f64 = 1.12;

const NANOMETRES_PER_MICROMETRE: f64 = 1e3;

const MISSING_RULE: &str = "required key is missing; give it, or switch the mechanism off with `enabled = false`";

fn switched_on() -> bool {
    true
}

/// `[negative.film]`: film (SEI) growth by a mixed reaction / solvent-diffusion law.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FilmSection {
    #[serde(default = "switched_on")]
    enabled: bool,
    reaction_rate_m_s: Option<f64>,
    reaction_activation_kj_mol: Option<f64>,
    solvent_diffusivity_m2_s: Option<f64>,
    solvent_diffusivity_activation_kj_mol: Option<f64>,
    solvent_concentration_mol_m3: Option<f64>,
    transfer_coefficient: Option<f64>,
    reference_potential_v: Option<f64>,
    molar_volume_cm3_mol: Option<f64>,
    conductivity_s_m: Option<f64>,
    initial_thickness_nm: Option<f64>,
    reference_temperature_c: Option<f64>,
}

/// `[negative.cracking]`, `[positive.cracking]`: Paris-law fatigue cracking of the particles.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct CrackingSection {
    #[serde(default = "switched_on")]
    enabled: bool,
    paris_coefficient: Option<f64>,
    paris_exponent: Option<f64>,
    geometry_factor: Option<f64>,
    threshold_kpa_sqrt_m: Option<f64>,
    initial_length_nm: Option<f64>,
    density_per_um2: Option<f64>,
    width_nm: Option<f64>,
    activation_kj_mol: Option<f64>,
    reference_temperature_c: Option<f64>,
}

/// `[negative.plating]`: lithium plating.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct PlatingSection {
    #[serde(default = "switched_on")]
    enabled: bool,
    exchange_current_a_m2: Option<f64>,
    activation_kj_mol: Option<f64>,
    transfer_coefficient: Option<f64>,
    irreversible_fraction: Option<f64>,
    reference_temperature_c: Option<f64>,
}

/// `[negative.film_breathing]`: film fracture by the host lattice's volume swing.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct FilmBreathingSection {
    #[serde(default = "switched_on")]
    enabled: bool,
    rate_per_cycle: Option<f64>,
    reference_strain: Option<f64>,
    exponent: Option<f64>,
    activation_kj_mol: Option<f64>,
    reference_temperature_c: Option<f64>,
}

/// `[negative.active_loss]`, `[positive.active_loss]`: stress-driven loss of active material.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct ActiveLossSection {
    #[serde(default = "switched_on")]
    enabled: bool,
    rate_per_cycle: Option<f64>,
    critical_stress_mpa: Option<f64>,
    exponent: Option<f64>,
    activation_kj_mol: Option<f64>,
    reference_temperature_c: Option<f64>,
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

/// What a mechanism table needs to know about the cell around it.
#[derive(Debug, Clone, Copy)]
pub(super) struct Surroundings {
    /// The cell's `reference_temperature_c`, the default of every table's own.
    pub reference_temperature_c: f64,
    /// Of the electrode the table sits under, as written (µm); cracks must start shorter.
    pub particle_radius_um: f64,
}

/// Checks the keys of one switched-on mechanism table, each reported as `table.key`.
///
/// Missing required values come back as NaN: they are placeholders only, since a reported
/// problem makes the whole cell an error before anything uses them.
struct TableRules<'c, 'd> {
    checks: &'c mut Checks<'d>,
    table: &'c str,
}

impl TableRules<'_, '_> {
    fn key(&self, field: &str) -> String {
        format!("{}.{field}", self.table)
    }

    fn required(&mut self, field: &str, value: Option<f64>) -> Option<f64> {
        if value.is_none() {
            self.checks.report(&self.key(field), MISSING_RULE);
        }
        value
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

    fn finite(&mut self, field: &str, value: f64) -> f64 {
        self.checks.finite(&self.key(field), value);
        value
    }

    fn optional_positive(&mut self, field: &str, value: Option<f64>, default: f64) -> f64 {
        let value = value.unwrap_or(default);
        self.checks.positive(&self.key(field), value);
        value
    }

    /// A transfer coefficient: the end points would make one reaction direction vanish.
    fn transfer_coefficient(&mut self, value: Option<f64>) -> f64 {
        let value = value.unwrap_or(DEFAULT_TRANSFER_COEFFICIENT);
        self.checks.strictly_between(&self.key("transfer_coefficient"), value, 0.0, 1.0);
        value
    }

    /// An activation energy in kJ/mol, returned in J/mol.
    fn activation_j_mol(&mut self, field: &str, value: Option<f64>) -> f64 {
        self.non_negative(field, value) * KILO
    }

    /// The table's `reference_temperature_c`, defaulting to the cell's, returned in K.
    fn reference_temperature_k(&mut self, value: Option<f64>, surroundings: Surroundings) -> f64 {
        let celsius = value.unwrap_or(surroundings.reference_temperature_c);
        if value.is_some() {
            self.checks.celsius(&self.key("reference_temperature_c"), celsius);
        }
        celsius + ZERO_CELSIUS_K
    }
}

pub(super) fn convert_film(
    checks: &mut Checks<'_>,
    table: &str,
    section: &FilmSection,
    surroundings: Surroundings,
) -> Option<FilmParams> {
    if !section.enabled {
        return None;
    }
    let mut rules = TableRules { checks, table };
    let reference_potential_v = section.reference_potential_v.unwrap_or(DEFAULT_FILM_REFERENCE_POTENTIAL_V);
    Some(FilmParams {
        reaction_rate_m_s: rules.positive("reaction_rate_m_s", section.reaction_rate_m_s),
        reaction_activation_j_mol: rules
            .activation_j_mol("reaction_activation_kj_mol", section.reaction_activation_kj_mol),
        solvent_diffusivity_m2_s: rules.positive("solvent_diffusivity_m2_s", section.solvent_diffusivity_m2_s),
        solvent_diffusivity_activation_j_mol: rules
            .activation_j_mol("solvent_diffusivity_activation_kj_mol", section.solvent_diffusivity_activation_kj_mol),
        solvent_concentration_mol_m3: rules
            .positive("solvent_concentration_mol_m3", section.solvent_concentration_mol_m3),
        transfer_coefficient: rules.transfer_coefficient(section.transfer_coefficient),
        reference_potential_v: rules.finite("reference_potential_v", reference_potential_v),
        molar_volume_m3_mol: rules.positive("molar_volume_cm3_mol", section.molar_volume_cm3_mol) * CUBIC_CENTIMETRE,
        conductivity_s_m: rules.positive("conductivity_s_m", section.conductivity_s_m),
        initial_thickness_m: rules.non_negative("initial_thickness_nm", section.initial_thickness_nm) * NANO,
        reference_temperature_k: rules.reference_temperature_k(section.reference_temperature_c, surroundings),
    })
}

pub(super) fn convert_cracking(
    checks: &mut Checks<'_>,
    table: &str,
    section: &CrackingSection,
    surroundings: Surroundings,
) -> Option<CrackingParams> {
    if !section.enabled {
        return None;
    }
    let mut rules = TableRules { checks, table };
    let paris_coefficient = rules.positive("paris_coefficient", section.paris_coefficient);
    let paris_exponent = rules.positive("paris_exponent", section.paris_exponent);
    let geometry_factor = rules.optional_positive("geometry_factor", section.geometry_factor, DEFAULT_GEOMETRY_FACTOR);
    let threshold_pa_sqrt_m = rules.non_negative("threshold_kpa_sqrt_m", section.threshold_kpa_sqrt_m) * KILO;
    let initial_length_nm = rules.positive("initial_length_nm", section.initial_length_nm);
    let radius_um = surroundings.particle_radius_um;
    // Compared only when both are valid; a bad radius is reported at the electrode.
    if initial_length_nm > 0.0
        && radius_um > 0.0
        && radius_um.is_finite()
        && initial_length_nm >= radius_um * NANOMETRES_PER_MICROMETRE
    {
        rules.checks.report(
            &rules.key("initial_length_nm"),
            format!("must be below the particle radius ({radius_um} µm), found {initial_length_nm} nm"),
        );
    }
    Some(CrackingParams {
        paris_coefficient,
        paris_exponent,
        geometry_factor,
        threshold_pa_sqrt_m,
        initial_length_m: initial_length_nm * NANO,
        density_per_m2: rules.non_negative("density_per_um2", section.density_per_um2) * PER_SQUARE_MICROMETRE,
        width_m: rules.positive("width_nm", section.width_nm) * NANO,
        activation_j_mol: rules.activation_j_mol("activation_kj_mol", section.activation_kj_mol),
        reference_temperature_k: rules.reference_temperature_k(section.reference_temperature_c, surroundings),
    })
}

pub(super) fn convert_plating(
    checks: &mut Checks<'_>,
    table: &str,
    section: &PlatingSection,
    surroundings: Surroundings,
) -> Option<PlatingParams> {
    if !section.enabled {
        return None;
    }
    let mut rules = TableRules { checks, table };
    let irreversible_fraction = rules.required("irreversible_fraction", section.irreversible_fraction);
    if let Some(fraction) = irreversible_fraction {
        rules.checks.within(&rules.key("irreversible_fraction"), fraction, 0.0, 1.0);
    }
    Some(PlatingParams {
        exchange_current_a_m2: rules.positive("exchange_current_a_m2", section.exchange_current_a_m2),
        activation_j_mol: rules.activation_j_mol("activation_kj_mol", section.activation_kj_mol),
        transfer_coefficient: rules.transfer_coefficient(section.transfer_coefficient),
        irreversible_fraction: irreversible_fraction.unwrap_or(f64::NAN),
        reference_temperature_k: rules.reference_temperature_k(section.reference_temperature_c, surroundings),
    })
}

pub(super) fn convert_film_breathing(
    checks: &mut Checks<'_>,
    table: &str,
    section: &FilmBreathingSection,
    surroundings: Surroundings,
) -> Option<FilmBreathingParams> {
    if !section.enabled {
        return None;
    }
    let mut rules = TableRules { checks, table };
    Some(FilmBreathingParams {
        rate_per_cycle: rules.non_negative("rate_per_cycle", section.rate_per_cycle),
        reference_strain: rules.positive("reference_strain", section.reference_strain),
        exponent: rules.positive("exponent", section.exponent),
        activation_j_mol: rules.activation_j_mol("activation_kj_mol", section.activation_kj_mol),
        reference_temperature_k: rules.reference_temperature_k(section.reference_temperature_c, surroundings),
    })
}

pub(super) fn convert_active_loss(
    checks: &mut Checks<'_>,
    table: &str,
    section: &ActiveLossSection,
    surroundings: Surroundings,
) -> Option<ActiveLossParams> {
    if !section.enabled {
        return None;
    }
    let mut rules = TableRules { checks, table };
    Some(ActiveLossParams {
        rate_per_cycle: rules.non_negative("rate_per_cycle", section.rate_per_cycle),
        critical_stress_pa: rules.positive("critical_stress_mpa", section.critical_stress_mpa) * MEGA,
        exponent: rules.positive("exponent", section.exponent),
        activation_j_mol: rules.activation_j_mol("activation_kj_mol", section.activation_kj_mol),
        reference_temperature_k: rules.reference_temperature_k(section.reference_temperature_c, surroundings),
    })
}

pub(super) fn convert_calibration(checks: &mut Checks<'_>, section: &CalibrationSection) -> CalibrationRange {
    if section.cycles.is_none() && section.days.is_none() && section.efc.is_none() {
        checks.report(
            "calibration",
            "give `cycles`, `days` or `efc` (any of them): how far the aging data the parameters were \
             fitted to reaches (leave the table out for uncalibrated parameters)",
        );
    }
    for (key, value) in [("calibration.cycles", section.cycles), ("calibration.days", section.days), ("calibration.efc", section.efc)] {
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

/// Reports a table that only the negative electrode may have, found under the positive one.
pub(super) fn reject_on_positive(checks: &mut Checks<'_>, table: &str, present: bool, what: &str) {
    if present {
        checks.report(
            &format!("positive.{table}"),
            format!("unknown key; {what} is modelled on the negative electrode only (`[negative.{table}]`)"),
        );
    }
}
