//! Input files → validated structs.
//!
//! Each loader reads one file (formats in `FORMATS.md`), applies the `--set` overrides meant
//! for it, checks every rule and converts to the SI structs of [`crate::cycle`]. Every problem
//! is an [`InputError`] naming the file, line and key; the `check_*` variants return all
//! problems, the `load_*` ones the first. Loaders only read their input files. A scenario's
//! `[uncertainty]` section becomes the [`crate::ensemble::UncertaintySpec`] of its loaded form.
//! A [`ScenarioTemplate`] keeps a scenario's files as parsed, to build it again with numbers
//! set at [`NumberPath`]s (an ensemble's draws, a fit's trial values) without reading them.

mod cell;
mod checks;
mod digest;
mod document;
mod duty;
mod error;
mod fit;
pub mod locate;
mod mechanisms;
mod overrides;
mod pack;
mod plan;
mod plausible;
mod profile;
mod scenario;
mod series;
mod suggest;
mod template;
mod uncertainty;
use crate::material::units;

use std::path::Path;

pub use cell::{check_cell, load_cell, LoadedCell};
pub use digest::{file_digest, InputDigest, InputRole};
pub use duty::load_duty;
pub use error::{InputError, COMMAND_LINE_FLAG_SOURCE, COMMAND_LINE_SOURCE};
pub use fit::{cell_table_with, load_fit, load_measured, DatasetSource, LoadedFit};
pub use overrides::{apply_overrides, parse_override, NumberPath, Override, OverrideTarget};
pub use plan::parse_horizon;
pub use profile::load_profile;
pub use scenario::{check_scenario, load_scenario, load_uncertainty_alone, load_uncertainty_file, LoadedScenario};
pub use series::load_series;
pub use template::{number_paths, ScenarioTemplate};

use document::read_text;

/// A problem with `key` of the scenario at `path` (its overrides applied), found after loading
/// (by running the forecast): placed on the key's line, or on the `--set` value that gave it.
pub fn scenario_problem(path: &Path, overrides: &[Override], key: &str, rule: impl Into<String>) -> InputError {
    let rule = rule.into();
    match document::TomlDocument::read_overridden(path, OverrideTarget::Scenario, overrides) {
        Ok(document) => document.problem(key, rule),
        Err(_) => InputError::new(path, rule).with_key(key),
    }
}

/// The kinds of input file fadecast reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InputKind {
    Cell,
    Profile,
    Series,
    Scenario,
    /// A fit description (`[[dataset]]` and `[[parameter]]`).
    Fit,
    /// Measured aging data: a CSV with a `capacity_ah` column.
    AgingData,
    /// A file holding only an `[uncertainty]` section (such as the one `fit` writes).
    Uncertainty,
}

/// Tells the kind of an input file from its extension and, for TOML, its top-level keys.
pub fn detect_kind(path: &Path) -> Result<InputKind, InputError> {
    match duty::extension(path).as_deref() {
        Some("csv") => {
            // Measured aging data name their capacity; a duty-cycle series never does.
            let text = read_text(path)?;
            let header = text.lines().next().unwrap_or("");
            let aging = header.split(',').any(|column| column.trim() == "capacity_ah");
            return Ok(if aging { InputKind::AgingData } else { InputKind::Series });
        }
        Some("toml") => {}
        _ => {
            return Err(InputError::new(
                path,
                "expected a `.toml` input file (cell, step profile, scenario, fit description or uncertainty \
                 section) or a `.csv` file (time series or measured aging data)",
            ))
        }
    }
    let source = read_text(path)?;
    let document = document::TomlDocument::parse(path, source, OverrideTarget::Scenario)?;
    let table = document.table();
    if table.get("negative").is_some_and(toml::Value::is_table) {
        Ok(InputKind::Cell)
    } else if table.contains_key("block") {
        Ok(InputKind::Profile)
    } else if table.contains_key("cell") && table.contains_key("profile") {
        Ok(InputKind::Scenario)
    } else if table.contains_key("dataset") || table.contains_key("parameter") {
        Ok(InputKind::Fit)
    } else if table.contains_key("uncertainty") && table.len() == 1 {
        Ok(InputKind::Uncertainty)
    } else {
        Err(InputError::new(
            path,
            "cannot tell what this file is: expected a cell file (with a [negative] table), a step \
             profile (with [[block]] tables), a scenario (with `cell` and `profile` keys), a fit \
             description (with [[dataset]] and [[parameter]] tables) or an uncertainty section (an \
             [uncertainty] table alone)",
        ))
    }
}
