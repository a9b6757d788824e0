//! A scenario read once and built again with numbers set: the draws of an ensemble, the
//! alternatives' samples of a comparison, the trials of a fit.
//!
//! [`ScenarioTemplate::load`] reads the scenario file and the cell and duty-cycle files it
//! names, applies the command line's overrides and checks everything, as
//! [`super::load_scenario`] does. [`ScenarioTemplate::build`] then sets values at
//! [`NumberPath`]s on copies of the parsed files and checks and converts them again, so every
//! input rule applies to a drawn or trial value exactly as to a `--set` one, without reading
//! a file or turning a number into text.

use std::path::{Path, PathBuf};

use super::digest::{document_digest, duty_digest, InputDigest, InputRole};
use super::document::TomlDocument;
use super::duty::DutyFile;
use super::error::{first_problem, InputError};
use super::overrides::{NumberPath, Override};
use super::scenario::{
    check_scenario_parts, convert_scenario, FileSource, FilesOnDisk, LoadedScenario, ReferencedFiles,
};
use crate::cycle::Scenario;
use crate::forecast::Plan;

/// A scenario with its files parsed and its base overrides applied, ready to be built with
/// values set at numeric paths.
#[derive(Debug, Clone)]
pub struct ScenarioTemplate {
    path: PathBuf,
    /// The overrides every build starts from (the command line's, a variant's, a dataset's).
    base: Vec<Override>,
    /// The scenario file with `base` applied.
    document: TomlDocument,
    /// The cell and duty-cycle files with `base` applied.
    files: ReferencedFiles,
    /// The scenario with `base` alone.
    loaded: LoadedScenario,
}

impl ScenarioTemplate {
    /// Reads the scenario at `path` and the files it names, with `overrides` applied; the first
    /// problem is the error.
    pub fn load(path: &Path, overrides: &[Override]) -> Result<Self, InputError> {
        Self::check(path, overrides).map_err(first_problem)
    }

    /// Like [`ScenarioTemplate::load`], but returns every problem found.
    pub fn check(path: &Path, overrides: &[Override]) -> Result<Self, Vec<InputError>> {
        let (document, loaded, files) = check_scenario_parts(path, overrides)?;
        Ok(Self { path: path.to_path_buf(), base: overrides.to_vec(), document, files, loaded })
    }

    /// The scenario with the base overrides alone.
    pub fn loaded(&self) -> &LoadedScenario {
        &self.loaded
    }

    /// Content hashes of the scenario, cell and duty-cycle files as this template holds them
    /// (every base override applied).
    pub fn input_digests(&self) -> Result<Vec<InputDigest>, InputError> {
        Ok(vec![
            document_digest(InputRole::Scenario, &self.document, &["cell", "profile"]),
            document_digest(InputRole::Cell, &self.files.cell, &[]),
            duty_digest(&self.files.duty, &self.loaded.profile_path)?,
        ])
    }

    pub fn into_loaded(self) -> LoadedScenario {
        self.loaded
    }

    /// The scenario with `values[i]` set at `paths[i]` after the base overrides (so a value
    /// replaces the file's and any `--set` one for the same path), checked by every input rule.
    /// The `[uncertainty]` section's paths were tried when the template was loaded and are not
    /// tried again.
    pub fn build(&self, paths: &[NumberPath], values: &[f64]) -> Result<(Scenario, Plan), InputError> {
        let extra: Vec<Override> = paths.iter().zip(values).map(|(path, &value)| path.with_value(value)).collect();
        let mut document = self.document.clone();
        document.apply_overrides(&extra)?;
        let files = TemplateFiles { template: self, extra: &extra };
        let (loaded, _) = convert_scenario(&self.path, &document, &files).map_err(first_problem)?;
        Ok((loaded.scenario, loaded.plan))
    }
}

/// The template's parsed files with the extra overrides applied to copies. A file the template
/// did not read (the scenario's `cell` or `profile` changed by an override) is read from disk.
struct TemplateFiles<'a> {
    template: &'a ScenarioTemplate,
    extra: &'a [Override],
}

impl TemplateFiles<'_> {
    fn on_disk(&self) -> Vec<Override> {
        self.template.base.iter().chain(self.extra).cloned().collect()
    }
}

impl FileSource for TemplateFiles<'_> {
    fn is_file(&self, path: &Path) -> bool {
        let loaded = &self.template.loaded;
        path == loaded.cell_path || path == loaded.profile_path || path.is_file()
    }

    fn cell(&self, path: &Path) -> Result<TomlDocument, InputError> {
        if path != self.template.loaded.cell_path {
            return FilesOnDisk { overrides: &self.on_disk() }.cell(path);
        }
        let mut document = self.template.files.cell.clone();
        document.apply_overrides(self.extra)?;
        Ok(document)
    }

    fn duty(&self, path: &Path) -> Result<DutyFile, InputError> {
        if path != self.template.loaded.profile_path {
            return FilesOnDisk { overrides: &self.on_disk() }.duty(path);
        }
        self.template.files.duty.with_overrides(path, self.extra)
    }
}

/// Parses each of `paths` (the `[uncertainty]` section's or a fit's parameters) once.
pub fn number_paths(paths: &[String]) -> Result<Vec<NumberPath>, InputError> {
    paths.iter().map(|path| NumberPath::parse(path)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::load_scenario;

    const SCENARIO: &str = "examples/van-fleet-bands.toml";

    fn numbers(pairs: &[(&str, f64)]) -> (Vec<NumberPath>, Vec<f64>) {
        let paths = pairs.iter().map(|(p, _)| NumberPath::parse(p).expect("well-formed path")).collect();
        (paths, pairs.iter().map(|(_, v)| *v).collect())
    }

    #[test]
    fn builds_what_loading_with_the_numbers_gives() {
        let base = [crate::input::parse_override("usage.rest_soc_pct=70").expect("valid")];
        let template = ScenarioTemplate::load(Path::new(SCENARIO), &base).expect("demo loads");
        let pairs = [("cell.negative.particle_radius_um", 5.5), ("ambient_c", 23.25), ("profile.start_soc_pct", 95.0)];
        let (paths, values) = numbers(&pairs);
        let built = template.build(&paths, &values).expect("valid values");
        let mut overrides = base.to_vec();
        overrides.extend(pairs.iter().map(|(p, v)| Override::number(p, *v).expect("well-formed path")));
        let loaded = load_scenario(Path::new(SCENARIO), &overrides).expect("valid values");
        assert_eq!(built, (loaded.scenario, loaded.plan));
        let (none, _) = numbers(&[]);
        let unchanged = template.build(&none, &[]).expect("the base loads");
        assert_eq!(unchanged, (template.loaded().scenario.clone(), template.loaded().plan.clone()));
    }

    #[test]
    fn values_meet_the_same_rules_as_set() {
        let template = ScenarioTemplate::load(Path::new(SCENARIO), &[]).expect("demo loads");
        for (path, value) in [("cell.resistance.ohmic_mohm", -1.0), ("ambient_c", f64::NAN), ("profile.nokey", 1.0)] {
            let (paths, values) = numbers(&[(path, value)]);
            let built = template.build(&paths, &values).expect_err(path);
            let loaded = load_scenario(Path::new(SCENARIO), &[Override::number(path, value).expect("well-formed")])
                .expect_err(path);
            assert_eq!(built.to_string(), loaded.to_string());
            assert!(built.is_from_command_line(), "{built}");
        }
    }

    #[test]
    fn series_take_no_profile_values() {
        let template = ScenarioTemplate::load(Path::new("examples/van-day-measured.toml"), &[]).expect("demo loads");
        let (paths, values) = numbers(&[("profile.block.0.repeat", 2.0)]);
        let error = template.build(&paths, &values).expect_err("a series has no profile keys");
        assert!(error.to_string().contains("CSV time series"), "{error}");
        let (paths, values) = numbers(&[("ambient_c", 20.0)]);
        assert!(template.build(&paths, &values).is_ok());
    }
}
