//! Scenario files: which cell runs which duty cycle under which conditions.
//!
//! Each section of the file is one field of [`ScenarioFile`] plus one conversion step in
//! [`convert_scenario`]; later sections slot in the same way. The `[uncertainty]` section
//! takes one more step once everything else has loaded: each sampled path is tried by loading
//! the files again with the path set (see `uncertainty.rs`).

use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::cell::{check_cell_document, check_cell_shape, LoadedCell};
use super::checks::Checks;
use super::document::{check_shape, TomlDocument};
use super::duty::{check_duty_file, check_duty_shape, read_duty, DutyFile};
use super::error::{first_problem, InputError};
use super::overrides::{Override, OverrideTarget};
use super::pack::{convert_pack, PackSection};
use super::plan::{convert_plan, EndOfLifeSection, HorizonSection, PlanSections, UsageSection, MONTH_NAMES};
use super::plausible::{report_implausible, unusual_values};
use super::profile::VoltageWindow;
use super::template::ScenarioTemplate;
use super::uncertainty::{check_sampled_paths, convert_uncertainty, ScenarioProbe, UncertaintySection};
use crate::cycle::{Cell, Scenario};
use crate::ensemble::UncertaintySpec;
use crate::forecast::{Ambient, Plan};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};

/// Electrode windows further apart than this (relative to the smaller) draw a warning.
const WINDOW_MISMATCH_WARNING: f64 = 0.03;

/// The scenario file as written.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ScenarioFile {
    name: String,
    /// Relative to the scenario file.
    cell: PathBuf,
    /// Relative to the scenario file; `.toml` step profile or `.csv` series.
    profile: PathBuf,
    ambient_c: f64,
    /// Overrides the profile's own start, when given.
    start_soc_pct: Option<f64>,
    usage: Option<UsageSection>,
    horizon: Option<HorizonSection>,
    end_of_life: Option<EndOfLifeSection>,
    uncertainty: Option<UncertaintySection>,
    pack: Option<PackSection>,
}

/// A scenario with everything it names loaded and checked.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadedScenario {
    pub scenario: Scenario,
    /// Use in calendar time, horizon and end of life, for the forecast.
    pub plan: Plan,
    /// The inputs an ensemble draws; empty when the file has no `[uncertainty]` section.
    pub uncertainty: UncertaintySpec,
    /// The cell and duty-cycle files as resolved against the scenario's directory.
    pub cell_path: PathBuf,
    pub profile_path: PathBuf,
    /// Things that are allowed but probably not meant, one line each.
    pub warnings: Vec<String>,
}

/// Reads a scenario and the cell and duty cycle it names; the first problem is the error.
/// Problems inside the cell or profile name that file.
///
/// An ensemble sample or a fit's trial is a [`ScenarioTemplate`] of the same call built with the
/// drawn values: they come after `overrides`, so a draw replaces the file's value and any
/// `--set` value for the same path.
pub fn load_scenario(path: &Path, overrides: &[Override]) -> Result<LoadedScenario, InputError> {
    check_scenario(path, overrides).map_err(first_problem)
}

/// Like [`load_scenario`], but returns every problem found across the three files.
pub fn check_scenario(path: &Path, overrides: &[Override]) -> Result<LoadedScenario, Vec<InputError>> {
    ScenarioTemplate::check(path, overrides).map(ScenarioTemplate::into_loaded)
}

/// The scenario file at `path` with `overrides` applied, the scenario it makes and the files
/// it names, once every rule (the `[uncertainty]` section's tries included) has passed.
pub(super) fn check_scenario_parts(
    path: &Path,
    overrides: &[Override],
) -> Result<(TomlDocument, LoadedScenario, ReferencedFiles), Vec<InputError>> {
    let document = TomlDocument::read_overridden(path, OverrideTarget::Scenario, overrides).map_err(|e| vec![e])?;
    let (loaded, files) = convert_scenario(path, &document, &FilesOnDisk { overrides })?;
    let probe =
        FileProbe { scenario_path: path, cell_path: &loaded.cell_path, profile_path: &loaded.profile_path, overrides };
    let problems = check_sampled_paths(&document, &loaded.uncertainty, &probe);
    if problems.is_empty() {
        Ok((document, loaded, files))
    } else {
        Err(problems)
    }
}

/// The `[uncertainty]` section of a file of its own (`bands --uncertainty FILE`, such as the
/// `uncertainty.toml` a fit writes), checked against the scenario it will sample exactly as
/// the scenario's own section would be, and used in its place.
pub fn load_uncertainty_file(
    file: &Path,
    scenario_path: &Path,
    overrides: &[Override],
) -> Result<UncertaintySpec, InputError> {
    /// The file holds the section and nothing else.
    #[derive(Deserialize)]
    #[serde(deny_unknown_fields)]
    struct UncertaintyFile {
        uncertainty: UncertaintySection,
    }
    let (_, loaded) = check_scenario_files(scenario_path, overrides).map_err(first_problem)?;
    let document = TomlDocument::read(file, OverrideTarget::Scenario)?;
    let section: UncertaintyFile = document.deserialize()?;
    let mut checks = Checks::new(&document);
    let spec = convert_uncertainty(&mut checks, Some(&section.uncertainty));
    checks.finish(()).map_err(first_problem)?;
    let probe =
        FileProbe { scenario_path, cell_path: &loaded.cell_path, profile_path: &loaded.profile_path, overrides };
    let problems = check_sampled_paths(&document, &spec, &probe);
    if problems.is_empty() {
        Ok(spec)
    } else {
        Err(first_problem(problems))
    }
}

/// The `[uncertainty]` section of a file of its own, checked by its own rules only (`check`
/// has no scenario to try its paths on; `bands`, `compare` and `table --uncertainty` do).
pub fn load_uncertainty_alone(file: &Path) -> Result<UncertaintySpec, InputError> {
    #[derive(Deserialize)]
    #[serde(deny_unknown_fields)]
    struct UncertaintyFile {
        uncertainty: UncertaintySection,
    }
    let document = TomlDocument::read(file, OverrideTarget::Scenario)?;
    let section: UncertaintyFile = document.deserialize()?;
    let mut checks = Checks::new(&document);
    let spec = convert_uncertainty(&mut checks, Some(&section.uncertainty));
    checks.finish(()).map_err(first_problem)?;
    Ok(spec)
}

/// Everything but trying the sampled paths: the scenario file (the uncertainty section's own
/// rules included), the cell and the duty cycle. Returns the scenario's document for reporting
/// against it later.
fn check_scenario_files(
    path: &Path,
    overrides: &[Override],
) -> Result<(TomlDocument, LoadedScenario), Vec<InputError>> {
    let document = TomlDocument::read_overridden(path, OverrideTarget::Scenario, overrides).map_err(|e| vec![e])?;
    let (loaded, _) = convert_scenario(path, &document, &FilesOnDisk { overrides })?;
    Ok((document, loaded))
}

/// The cell and duty-cycle files of a scenario as read, their overrides applied.
#[derive(Debug, Clone)]
pub(super) struct ReferencedFiles {
    pub cell: TomlDocument,
    pub duty: DutyFile,
}

/// Where the files a scenario names come from: the disk, or copies read once (a
/// [`super::ScenarioTemplate`]).
pub(super) trait FileSource {
    /// Whether `path` names a file.
    fn is_file(&self, path: &Path) -> bool;
    /// The cell file at `path`, with every override meant for it applied.
    fn cell(&self, path: &Path) -> Result<TomlDocument, InputError>;
    /// The duty-cycle file at `path`, with every override meant for it applied.
    fn duty(&self, path: &Path) -> Result<DutyFile, InputError>;
}

/// Reads each file when asked, applying `overrides`.
pub(super) struct FilesOnDisk<'a> {
    pub overrides: &'a [Override],
}

impl FileSource for FilesOnDisk<'_> {
    fn is_file(&self, path: &Path) -> bool {
        path.is_file()
    }

    fn cell(&self, path: &Path) -> Result<TomlDocument, InputError> {
        TomlDocument::read_overridden(path, OverrideTarget::Cell, self.overrides)
    }

    fn duty(&self, path: &Path) -> Result<DutyFile, InputError> {
        read_duty(path, self.overrides)
    }
}

/// Checks and converts a scenario `document` (its overrides applied, read from `path`) with the
/// cell and duty cycle it names, taken from `files`; returns those files as read too.
pub(super) fn convert_scenario(
    path: &Path,
    document: &TomlDocument,
    files: &impl FileSource,
) -> Result<(LoadedScenario, ReferencedFiles), Vec<InputError>> {
    let file: ScenarioFile = document.deserialize().map_err(|e| vec![e])?;

    let mut checks = Checks::new(document);
    if file.name.trim().is_empty() {
        checks.report("name", "must not be empty");
    }
    checks.celsius("ambient_c", file.ambient_c);
    if let Some(start_soc_pct) = file.start_soc_pct {
        checks.within("start_soc_pct", start_soc_pct, 0.0, 100.0);
    }
    let directory = path.parent().unwrap_or(Path::new(""));
    let cell_path = referenced_file(&mut checks, files, directory, "cell", &file.cell);
    let profile_path = referenced_file(&mut checks, files, directory, "profile", &file.profile);
    let cell_path = cell_path.filter(|cell| !names_itself(&mut checks, path, cell, "cell", "a cell file"));
    let profile_path = profile_path
        .filter(|profile| !names_itself(&mut checks, path, profile, "profile", "a step profile or a time series"));
    let mut plan = convert_plan(
        &mut checks,
        PlanSections {
            usage: file.usage.as_ref(),
            horizon: file.horizon.as_ref(),
            end_of_life: file.end_of_life.as_ref(),
            ambient_c: file.ambient_c,
        },
    );
    let uncertainty = convert_uncertainty(&mut checks, file.uncertainty.as_ref());
    report_implausible(&mut checks, document);
    let mut problems = checks.finish(()).err().unwrap_or_default();

    let cell = match &cell_path {
        Some(cell_path) => files
            .cell(cell_path)
            .map_err(|e| vec![e])
            .and_then(|document| check_cell_document(&document).map(|cell| (cell, document)))
            .map_err(|mut found| problems.append(&mut found))
            .ok(),
        None => None,
    };
    // A pack's duty cycle is the pack's: C-rates of the pack's rated capacity, voltages of
    // its series string.
    let pack_counts = file.pack.as_ref().map(PackSection::counts);
    let (parallel, series) = pack_counts.flatten().unwrap_or((1, 1));
    // Cell counts out of range are the pack's problem; the duty cannot be checked against it.
    let counts_known = !matches!(pack_counts, Some(None));
    let duty = match (&cell, &profile_path) {
        (Some((cell, _)), Some(profile_path)) if counts_known => {
            let window = VoltageWindow {
                min_v: cell.cell.voltage_min_v * series as f64,
                max_v: cell.cell.voltage_max_v * series as f64,
            };
            let nominal = cell.cell.nominal_capacity_coulomb * parallel as f64;
            files
                .duty(profile_path)
                .map_err(|e| vec![e])
                .and_then(|duty_file| {
                    check_duty_file(profile_path, &duty_file, nominal, Some(window)).map(|duty| (duty, duty_file))
                })
                .map_err(|mut found| problems.append(&mut found))
                .ok()
        }
        _ => None,
    };
    let pack = match (&file.pack, &cell) {
        (Some(section), Some((cell, _))) => {
            let mut pack_checks = Checks::new(document);
            let layout = convert_pack(&mut pack_checks, section, &cell.cell);
            if matches!(&duty, Some(((crate::cycle::DutyCycle::Series(_), _), _))) {
                pack_checks.report(
                    "profile",
                    "a pack runs a step profile (.toml); measured series (.csv) are for single cells",
                );
            }
            if let Err(mut found) = pack_checks.finish(()) {
                problems.append(&mut found);
            }
            layout
        }
        _ => None,
    };
    if file.pack.is_none() {
        if let Some(index) = uncertainty.parameters.iter().position(|p| p.per_cell) {
            problems.push(
                document.problem(
                    &format!("uncertainty.parameter.{index}.per_cell"),
                    "draws per cell need a [pack] section",
                ),
            );
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    // With no problems recorded every part loaded; the `else` only keeps this panic-free.
    let (
        Some((loaded_cell, cell_file)),
        Some(((duty, profile_start_soc), duty_file)),
        Some(cell_path),
        Some(profile_path),
    ) = (cell, duty, cell_path, profile_path)
    else {
        return Err(problems);
    };
    let LoadedCell { cell, aging, calibration, warnings: cell_warnings } = loaded_cell;
    plan.aging = aging;
    plan.calibration = calibration;

    let mut warnings = unusual_values(document);
    warnings.extend(cell_warnings);
    if let DutyFile::Profile(profile) = &duty_file {
        warnings.extend(unusual_values(profile));
    }
    if let Some(warning) = window_mismatch_warning(&cell, &cell_path) {
        warnings.push(warning);
    }
    let ambient_k = file.ambient_c + ZERO_CELSIUS_K;
    if !(cell.temperature_min_k..=cell.temperature_max_k).contains(&ambient_k) {
        let rule = format!(
            "warning: {} °C is outside the cell's temperature limits {:.1}–{:.1} °C",
            file.ambient_c,
            cell.temperature_min_k - ZERO_CELSIUS_K,
            cell.temperature_max_k - ZERO_CELSIUS_K
        );
        warnings.push(document.problem("ambient_c", rule).to_string());
    }
    if let Some(warning) = monthly_ambient_warning(&cell, &plan) {
        warnings.push(document.problem("usage.monthly_ambient_c", warning).to_string());
    }

    let start_soc = file.start_soc_pct.map_or(profile_start_soc, |pct| pct / 100.0);
    let loaded = LoadedScenario {
        scenario: Scenario { name: file.name.trim().to_string(), cell, duty, ambient_k, start_soc, pack },
        plan,
        uncertainty,
        cell_path,
        profile_path,
        warnings,
    };
    Ok((loaded, ReferencedFiles { cell: cell_file, duty: duty_file }))
}

/// The files a scenario named, loaded again with extra overrides after the command line's.
struct FileProbe<'a> {
    scenario_path: &'a Path,
    cell_path: &'a Path,
    profile_path: &'a Path,
    overrides: &'a [Override],
}

impl FileProbe<'_> {
    fn with(&self, extra: &[Override]) -> Vec<Override> {
        self.overrides.iter().chain(extra).cloned().collect()
    }
}

impl ScenarioProbe for FileProbe<'_> {
    fn shape(&self, extra: &Override) -> Result<(), InputError> {
        let overrides = self.with(std::slice::from_ref(extra));
        match extra.target {
            OverrideTarget::Scenario => check_shape::<ScenarioFile>(self.scenario_path, extra.target, &overrides),
            OverrideTarget::Cell => check_cell_shape(self.cell_path, &overrides),
            OverrideTarget::Profile => check_duty_shape(self.profile_path, &overrides),
        }
    }

    fn load(&self, extra: &[Override]) -> Result<(), Vec<InputError>> {
        check_scenario_files(self.scenario_path, &self.with(extra)).map(drop)
    }
}

/// Whether `referenced` is the scenario file itself (reported: it would be read as the wrong kind).
fn names_itself(checks: &mut Checks<'_>, scenario: &Path, referenced: &Path, key: &str, wanted: &str) -> bool {
    let same = match (std::fs::canonicalize(scenario), std::fs::canonicalize(referenced)) {
        (Ok(a), Ok(b)) => a == b,
        _ => scenario == referenced,
    };
    if same {
        checks.report(key, format!("names this scenario file itself; give {wanted}"));
    }
    same
}

/// `written` resolved against the scenario's directory, if that file exists.
fn referenced_file(
    checks: &mut Checks<'_>,
    files: &impl FileSource,
    directory: &Path,
    key: &str,
    written: &Path,
) -> Option<PathBuf> {
    if written.as_os_str().is_empty() {
        checks.report(key, "must name a file");
        return None;
    }
    let resolved = directory.join(written);
    if files.is_file(&resolved) {
        return Some(resolved);
    }
    let rule = if resolved.exists() {
        format!("`{}` is not a file", resolved.display())
    } else {
        format!("`{}` does not exist (paths are relative to the scenario file)", resolved.display())
    };
    checks.report(key, rule);
    None
}

/// The charge each electrode's stoichiometry window holds should match; a large mismatch
/// usually means a mistyped stoichiometry.
fn window_mismatch_warning(cell: &Cell, cell_path: &Path) -> Option<String> {
    let negative = (cell.negative.stoich_at_soc100 - cell.negative.stoich_at_soc0) * cell.negative.capacity_coulomb();
    let positive = (cell.positive.stoich_at_soc0 - cell.positive.stoich_at_soc100) * cell.positive.capacity_coulomb();
    let mismatch = (negative - positive).abs() / negative.min(positive);
    (mismatch > WINDOW_MISMATCH_WARNING).then(|| {
        format!(
            "{}: warning: the electrode windows hold different charge: negative {:.3} Ah, positive {:.3} Ah \
             ({:.1} % apart); check stoich_at_soc0 and stoich_at_soc100",
            cell_path.display(),
            negative / SECONDS_PER_HOUR,
            positive / SECONDS_PER_HOUR,
            mismatch * 100.0
        )
    })
}

/// Months whose ambient lies outside the cell's temperature limits, as a warning rule.
fn monthly_ambient_warning(cell: &Cell, plan: &Plan) -> Option<String> {
    let Ambient::Monthly(monthly_k) = &plan.usage.ambient_k else {
        return None;
    };
    let outside: Vec<String> = monthly_k
        .iter()
        .zip(MONTH_NAMES)
        .filter(|(&k, _)| !(cell.temperature_min_k..=cell.temperature_max_k).contains(&k))
        .map(|(&k, name)| format!("{name} ({:.1} °C)", k - ZERO_CELSIUS_K))
        .collect();
    (!outside.is_empty()).then(|| {
        format!(
            "warning: {} {} outside the cell's temperature limits {:.1}–{:.1} °C",
            outside.join(", "),
            if outside.len() == 1 { "is" } else { "are" },
            cell.temperature_min_k - ZERO_CELSIUS_K,
            cell.temperature_max_k - ZERO_CELSIUS_K
        )
    })
}
