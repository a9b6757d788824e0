//! Cell files: unit-suffixed TOML → [`crate::cycle::Cell`] in SI units.

use std::path::Path;

use serde::Deserialize;

use super::checks::Checks;
use super::document::{check_shape, TomlDocument};
use super::error::{first_problem, InputError};
use super::mechanisms::{convert_calibration, reject_misplaced, CalibrationSection, Surroundings, TableRules};
use super::overrides::{Override, OverrideTarget};
use super::plausible::{report_implausible, unusual_values};
use super::suggest;
use super::units::{CUBIC_CENTIMETRE, GIGA, KILO, MICRO, MILLI};
use crate::aging::{self, MechanismTable, Side};
use crate::aging::{AgingParams, CalibrationRange};
use crate::cycle::{Cell, Electrode};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use crate::material::{BuiltinOcp, OpenCircuit};

const DEFAULT_REFERENCE_TEMPERATURE_C: f64 = 25.0;
const DEFAULT_SHELLS: i64 = 16;
const SHELL_RANGE: (i64, i64) = (4, 200);
/// Nominal capacity over the charge of the smaller electrode window: wide enough for any
/// real rating, narrow enough to catch a factor-of-1000 slip.
const NOMINAL_TO_WINDOW_RANGE: (f64, f64) = (0.2, 1.5);

/// The cell file as written (units as in the key suffixes).
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct CellFile {
    name: String,
    nominal_capacity_ah: f64,
    voltage_min_v: f64,
    voltage_max_v: f64,
    reference_temperature_c: Option<f64>,
    resistance: ResistanceSection,
    electrolyte: ElectrolyteSection,
    thermal: ThermalSection,
    limits: LimitsSection,
    negative: ElectrodeSection,
    positive: ElectrodeSection,
    #[serde(default)]
    numerics: NumericsSection,
    calibration: Option<CalibrationSection>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ResistanceSection {
    ohmic_mohm: f64,
    ohmic_activation_kj_mol: f64,
    #[serde(default)]
    film_mohm: f64,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ElectrolyteSection {
    concentration_mol_m3: f64,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ThermalSection {
    mass_kg: f64,
    specific_heat_j_kg_k: f64,
    convective_conductance_w_k: f64,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct LimitsSection {
    max_charge_current_a: f64,
    max_discharge_current_a: f64,
    min_temperature_c: f64,
    max_temperature_c: f64,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ElectrodeSection {
    thickness_um: f64,
    area_m2: f64,
    active_fraction: f64,
    particle_radius_um: f64,
    max_concentration_mol_m3: f64,
    stoich_at_soc0: f64,
    stoich_at_soc100: f64,
    diffusivity_m2_s: f64,
    diffusivity_activation_kj_mol: f64,
    rate_constant_m_s: f64,
    rate_constant_activation_kj_mol: f64,
    ocp: Option<String>,
    ocp_table: Option<Vec<[f64; 2]>>,
    #[serde(default)]
    entropic_coefficient_mv_k: f64,
    youngs_modulus_gpa: f64,
    poisson_ratio: f64,
    partial_molar_volume_cm3_mol: f64,
    // Aging-mechanism tables, each declared by its mechanism (`src/aging/`); one whose
    // mechanism does not act on this electrode is rejected.
    film: Option<aging::film::FilmSection>,
    film_breathing: Option<aging::film_breathing::FilmBreathingSection>,
    cracking: Option<aging::cracking::CrackingSection>,
    plating: Option<aging::plating::PlatingSection>,
    active_loss: Option<aging::active_loss::ActiveLossSection>,
    electrolyte_oxidation: Option<aging::electrolyte_oxidation::ElectrolyteOxidationSection>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct NumericsSection {
    #[serde(default = "default_shells")]
    shells: i64,
}

impl Default for NumericsSection {
    fn default() -> Self {
        Self { shells: DEFAULT_SHELLS }
    }
}

fn default_shells() -> i64 {
    DEFAULT_SHELLS
}

/// A cell file as understood: the cycle model's cell and, apart from it, its aging laws.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadedCell {
    pub cell: Cell,
    /// Aging laws (all off when the file gives none).
    pub aging: AgingParams,
    /// The aging data the parameters were calibrated on, if the file says.
    pub calibration: Option<CalibrationRange>,
    /// Values outside their usual range (`file:line: key: warning: …`).
    pub warnings: Vec<String>,
}

/// Reads, overrides, checks and converts a cell file; the first problem is the error.
pub fn load_cell(path: &Path, overrides: &[Override]) -> Result<LoadedCell, InputError> {
    check_cell(path, overrides).map_err(first_problem)
}

/// Like [`load_cell`], but returns every problem found (at least one on failure).
pub fn check_cell(path: &Path, overrides: &[Override]) -> Result<LoadedCell, Vec<InputError>> {
    let document = TomlDocument::read_overridden(path, OverrideTarget::Cell, overrides).map_err(|e| vec![e])?;
    check_cell_document(&document)
}

/// [`check_cell`] on a cell file already read, with its overrides applied.
pub(super) fn check_cell_document(document: &TomlDocument) -> Result<LoadedCell, Vec<InputError>> {
    let file: CellFile = document.deserialize().map_err(|e| vec![e])?;
    convert_cell(document, file)
}

/// Whether `overrides` leave the cell file well-formed (known keys, values of the right
/// type); no value is checked against its rules.
pub(super) fn check_cell_shape(path: &Path, overrides: &[Override]) -> Result<(), InputError> {
    check_shape::<CellFile>(path, OverrideTarget::Cell, overrides)
}

fn convert_cell(document: &TomlDocument, file: CellFile) -> Result<LoadedCell, Vec<InputError>> {
    let mut checks = Checks::new(document);
    if file.name.trim().is_empty() {
        checks.report("name", "must not be empty");
    }
    checks.positive("nominal_capacity_ah", file.nominal_capacity_ah);
    checks.positive("voltage_min_v", file.voltage_min_v);
    checks.positive("voltage_max_v", file.voltage_max_v);
    if file.voltage_min_v >= file.voltage_max_v {
        checks.report(
            "voltage_min_v",
            format!("must be below voltage_max_v ({} V), found {} V", file.voltage_max_v, file.voltage_min_v),
        );
    }
    let reference_temperature_c = file.reference_temperature_c.unwrap_or(DEFAULT_REFERENCE_TEMPERATURE_C);
    checks.celsius("reference_temperature_c", reference_temperature_c);

    let resistance = &file.resistance;
    checks.non_negative("resistance.ohmic_mohm", resistance.ohmic_mohm);
    checks.non_negative("resistance.ohmic_activation_kj_mol", resistance.ohmic_activation_kj_mol);
    checks.non_negative("resistance.film_mohm", resistance.film_mohm);
    checks.positive("electrolyte.concentration_mol_m3", file.electrolyte.concentration_mol_m3);

    let thermal = &file.thermal;
    checks.positive("thermal.mass_kg", thermal.mass_kg);
    checks.positive("thermal.specific_heat_j_kg_k", thermal.specific_heat_j_kg_k);
    checks.positive("thermal.convective_conductance_w_k", thermal.convective_conductance_w_k);

    let limits = &file.limits;
    checks.positive("limits.max_charge_current_a", limits.max_charge_current_a);
    checks.positive("limits.max_discharge_current_a", limits.max_discharge_current_a);
    checks.celsius("limits.min_temperature_c", limits.min_temperature_c);
    checks.celsius("limits.max_temperature_c", limits.max_temperature_c);
    if limits.min_temperature_c >= limits.max_temperature_c {
        checks.report(
            "limits.min_temperature_c",
            format!(
                "must be below max_temperature_c ({} °C), found {} °C",
                limits.max_temperature_c, limits.min_temperature_c
            ),
        );
    }

    let shells = file.numerics.shells;
    if !(SHELL_RANGE.0..=SHELL_RANGE.1).contains(&shells) {
        checks.report("numerics.shells", format!("must lie in {}–{}, found {shells}", SHELL_RANGE.0, SHELL_RANGE.1));
    }

    let negative = convert_electrode(&mut checks, Side::Negative, &file.negative);
    let positive = convert_electrode(&mut checks, Side::Positive, &file.positive);
    let aging = convert_aging(&mut checks, &file, reference_temperature_c);
    let calibration = file.calibration.as_ref().map(|section| convert_calibration(&mut checks, section));
    check_capacity_matches_electrodes(&mut checks, &file, &negative, &positive);
    report_implausible(&mut checks, document);
    let warnings = unusual_values(document);

    let cell = Cell {
        name: file.name.trim().to_string(),
        negative,
        positive,
        nominal_capacity_coulomb: file.nominal_capacity_ah * SECONDS_PER_HOUR,
        voltage_min_v: file.voltage_min_v,
        voltage_max_v: file.voltage_max_v,
        ohmic_resistance_ohm: resistance.ohmic_mohm * MILLI,
        ohmic_activation_j_mol: resistance.ohmic_activation_kj_mol * KILO,
        film_resistance_ohm: resistance.film_mohm * MILLI,
        electrolyte_concentration_mol_m3: file.electrolyte.concentration_mol_m3,
        mass_kg: thermal.mass_kg,
        specific_heat_j_kg_k: thermal.specific_heat_j_kg_k,
        convective_conductance_w_k: thermal.convective_conductance_w_k,
        max_charge_current_a: limits.max_charge_current_a,
        max_discharge_current_a: limits.max_discharge_current_a,
        temperature_min_k: limits.min_temperature_c + ZERO_CELSIUS_K,
        temperature_max_k: limits.max_temperature_c + ZERO_CELSIUS_K,
        reference_temperature_k: reference_temperature_c + ZERO_CELSIUS_K,
        shells: usize::try_from(shells).unwrap_or(0),
        // The plating law's kinetics act inside the cycle (the current split), read once with
        // the other aging laws.
        plating: aging.plating,
    };
    checks.finish(LoadedCell { cell, aging, calibration, warnings })
}

/// The nominal capacity cannot be far from the charge the electrodes' windows hold: a cell
/// rated at 5000 Ah on electrodes holding 5 Ah (a mAh slip, or a pasted value) would have
/// every C-rate wrong by the same factor. Common practice, no source: rated capacity lies
/// within a few per cent of the smaller window's charge.
fn check_capacity_matches_electrodes(
    checks: &mut Checks<'_>,
    file: &CellFile,
    negative: &Electrode,
    positive: &Electrode,
) {
    let negative_ah =
        (negative.stoich_at_soc100 - negative.stoich_at_soc0) * negative.capacity_coulomb() / SECONDS_PER_HOUR;
    let positive_ah =
        (positive.stoich_at_soc0 - positive.stoich_at_soc100) * positive.capacity_coulomb() / SECONDS_PER_HOUR;
    let held_ah = negative_ah.min(positive_ah);
    let nominal_ah = file.nominal_capacity_ah;
    if !(held_ah.is_finite() && held_ah > 0.0 && nominal_ah.is_finite() && nominal_ah > 0.0) {
        return; // Reported by the rules of the values themselves.
    }
    let ratio = nominal_ah / held_ah;
    if !(NOMINAL_TO_WINDOW_RANGE.0..=NOMINAL_TO_WINDOW_RANGE.1).contains(&ratio) {
        checks.report(
            "nominal_capacity_ah",
            format!(
                "{nominal_ah} Ah is {ratio:.3} times the {held_ah:.4} Ah the electrodes hold between 0 and 100 % \
                 state of charge; it must lie within {}–{} times that (check the unit: Ah, not mAh; and the \
                 electrodes' thickness, area and active fraction)",
                NOMINAL_TO_WINDOW_RANGE.0, NOMINAL_TO_WINDOW_RANGE.1
            ),
        );
    }
}

fn convert_electrode(checks: &mut Checks<'_>, side: Side, section: &ElectrodeSection) -> Electrode {
    let key = |field: &str| format!("{}.{field}", side.key());
    checks.positive(&key("thickness_um"), section.thickness_um);
    checks.positive(&key("area_m2"), section.area_m2);
    if checks.finite(&key("active_fraction"), section.active_fraction)
        && !(section.active_fraction > 0.0 && section.active_fraction <= 1.0)
    {
        checks.report(
            &key("active_fraction"),
            format!("must be above 0 and at most 1, found {}", section.active_fraction),
        );
    }
    checks.positive(&key("particle_radius_um"), section.particle_radius_um);
    checks.positive(&key("max_concentration_mol_m3"), section.max_concentration_mol_m3);
    checks.within(&key("stoich_at_soc0"), section.stoich_at_soc0, 0.0, 1.0);
    checks.within(&key("stoich_at_soc100"), section.stoich_at_soc100, 0.0, 1.0);
    check_stoichiometry_direction(checks, side, section);
    checks.positive(&key("diffusivity_m2_s"), section.diffusivity_m2_s);
    checks.non_negative(&key("diffusivity_activation_kj_mol"), section.diffusivity_activation_kj_mol);
    checks.positive(&key("rate_constant_m_s"), section.rate_constant_m_s);
    checks.non_negative(&key("rate_constant_activation_kj_mol"), section.rate_constant_activation_kj_mol);
    checks.finite(&key("entropic_coefficient_mv_k"), section.entropic_coefficient_mv_k);
    checks.positive(&key("youngs_modulus_gpa"), section.youngs_modulus_gpa);
    checks.within(&key("poisson_ratio"), section.poisson_ratio, 0.0, 0.5);
    checks.positive(&key("partial_molar_volume_cm3_mol"), section.partial_molar_volume_cm3_mol);
    let ocp = convert_ocp(checks, side, section);

    Electrode {
        thickness_m: section.thickness_um * MICRO,
        area_m2: section.area_m2,
        active_fraction: section.active_fraction,
        particle_radius_m: section.particle_radius_um * MICRO,
        max_concentration_mol_m3: section.max_concentration_mol_m3,
        stoich_at_soc0: section.stoich_at_soc0,
        stoich_at_soc100: section.stoich_at_soc100,
        diffusivity_m2_s: section.diffusivity_m2_s,
        diffusivity_activation_j_mol: section.diffusivity_activation_kj_mol * KILO,
        rate_constant_m_s: section.rate_constant_m_s,
        rate_constant_activation_j_mol: section.rate_constant_activation_kj_mol * KILO,
        ocp,
        entropic_coefficient_v_k: section.entropic_coefficient_mv_k * MILLI,
        youngs_modulus_pa: section.youngs_modulus_gpa * GIGA,
        poisson_ratio: section.poisson_ratio,
        partial_molar_volume_m3_mol: section.partial_molar_volume_cm3_mol * CUBIC_CENTIMETRE,
    }
}

/// The mechanism tables under both electrodes, each read by its mechanism's own section type
/// (`src/aging/`), in registry order; absent or switched-off ones stay `None`. A table its
/// mechanism does not allow on an electrode is rejected there.
fn convert_aging(checks: &mut Checks<'_>, file: &CellFile, reference_temperature_c: f64) -> AgingParams {
    let electrode = |side: Side| match side {
        Side::Negative => &file.negative,
        Side::Positive => &file.positive,
    };
    for side in [Side::Negative, Side::Positive] {
        for (table, _) in electrode(side).mechanism_tables().iter().filter(|(_, s)| s.is_some()) {
            if let Some(registration) = aging::registration_of(table).filter(|r| !r.sides.contains(&side)) {
                reject_misplaced(checks, side, table, registration);
            }
        }
    }
    let mut aging = AgingParams::default();
    for registration in aging::REGISTRY {
        let Some(table) = registration.table else { continue };
        for &side in registration.sides {
            let section = electrode(side);
            let found = section.mechanism_tables().into_iter().find(|(name, _)| *name == table).and_then(|(_, s)| s);
            let Some(found) = found.filter(|s| s.enabled()) else { continue };
            let key = format!("{}.{table}", side.key());
            let surroundings = Surroundings { reference_temperature_c, particle_radius_um: section.particle_radius_um };
            found.store(&mut TableRules { checks: &mut *checks, table: &key, surroundings }, side, &mut aging);
        }
    }
    aging
}

impl ElectrodeSection {
    /// The mechanism tables this electrode may hold, by name; one line per mechanism table.
    fn mechanism_tables(&self) -> Vec<(&'static str, Option<&dyn MechanismTable>)> {
        fn table<T: MechanismTable>(section: &Option<T>) -> Option<&dyn MechanismTable> {
            section.as_ref().map(|s| s as &dyn MechanismTable)
        }
        vec![
            ("film", table(&self.film)),
            ("film_breathing", table(&self.film_breathing)),
            ("cracking", table(&self.cracking)),
            ("plating", table(&self.plating)),
            ("active_loss", table(&self.active_loss)),
            ("electrolyte_oxidation", table(&self.electrolyte_oxidation)),
        ]
    }
}

fn check_stoichiometry_direction(checks: &mut Checks<'_>, side: Side, section: &ElectrodeSection) {
    let (at_soc0, at_soc100) = (section.stoich_at_soc0, section.stoich_at_soc100);
    let key = format!("{}.stoich_at_soc100", side.key());
    // Lithium moves into the negative host on charge and out of the positive one.
    match side {
        Side::Negative if at_soc100 <= at_soc0 => checks.report(
            &key,
            format!(
                "must be above stoich_at_soc0 ({at_soc0}): the negative electrode takes up lithium \
                 on charge, found {at_soc100}"
            ),
        ),
        Side::Positive if at_soc100 >= at_soc0 => checks.report(
            &key,
            format!(
                "must be below stoich_at_soc0 ({at_soc0}): the positive electrode gives up lithium \
                 on charge, found {at_soc100}"
            ),
        ),
        _ => {}
    }
}

fn convert_ocp(checks: &mut Checks<'_>, side: Side, section: &ElectrodeSection) -> OpenCircuit {
    let placeholder = OpenCircuit::Table { stoich: Vec::new(), potential_v: Vec::new() };
    match (&section.ocp, &section.ocp_table) {
        (Some(_), Some(_)) => {
            checks.report(
                &format!("{}.ocp_table", side.key()),
                "give either `ocp` (a built-in form) or `ocp_table`, not both",
            );
            placeholder
        }
        (None, None) => {
            checks.report(side.key(), "needs an open-circuit potential: `ocp` (a built-in form) or `ocp_table`");
            placeholder
        }
        (Some(name), None) => match BuiltinOcp::from_name(name.trim()) {
            Some(form) => OpenCircuit::Builtin(form),
            None => {
                let names: Vec<&str> = BuiltinOcp::ALL.iter().map(|(n, _)| *n).collect();
                let hint = match suggest::nearest(name.trim(), names.iter().copied()) {
                    Some(best) => format!("did you mean `{best}`? "),
                    None => String::new(),
                };
                checks.report(
                    &format!("{}.ocp", side.key()),
                    format!("unknown open-circuit form `{name}`; {hint}built-in forms: {}", names.join(", ")),
                );
                placeholder
            }
        },
        (None, Some(points)) => convert_ocp_table(checks, &format!("{}.ocp_table", side.key()), points),
    }
}

fn convert_ocp_table(checks: &mut Checks<'_>, key: &str, points: &[[f64; 2]]) -> OpenCircuit {
    let problems_before = checks.problem_count();
    if points.len() < 2 {
        checks.report(key, format!("needs at least two [stoichiometry, volts] points, found {}", points.len()));
    }
    for (i, [stoich, volts]) in points.iter().copied().enumerate() {
        let point = i + 1;
        if !(stoich.is_finite() && (0.0..=1.0).contains(&stoich)) {
            checks.report(key, format!("point {point}: stoichiometry must lie in 0–1, found {stoich}"));
        }
        if !volts.is_finite() {
            checks.report(key, format!("point {point}: potential must be a finite number, found {volts}"));
        }
        if i > 0 && stoich <= points[i - 1][0] {
            checks.report(
                key,
                format!(
                    "point {point}: stoichiometry must increase strictly, found {stoich} after {}",
                    points[i - 1][0]
                ),
            );
        }
    }
    if checks.problem_count() > problems_before {
        return OpenCircuit::Table { stoich: Vec::new(), potential_v: Vec::new() };
    }
    OpenCircuit::Table {
        stoich: points.iter().map(|p| p[0]).collect(),
        potential_v: points.iter().map(|p| p[1]).collect(),
    }
}
