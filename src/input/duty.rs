//! The duty cycle a scenario names: a `.toml` step profile or a `.csv` measured series.

use std::path::Path;

use super::document::TomlDocument;
use super::error::{first_problem, InputError};
use super::overrides::{Override, OverrideTarget};
use super::profile::{check_profile_document, check_profile_shape, VoltageWindow};
use super::series::load_series;
use crate::cycle::{DutyCycle, SeriesSignal, TimeSeries};
use crate::material::constants::SECONDS_PER_HOUR;

/// A measured series starts from a full cell unless the scenario says otherwise.
const SERIES_START_SOC: f64 = 1.0;

/// Reads a duty cycle, choosing the format by extension. Returns it with the start state of
/// charge the file asks for (fraction; 1 for a CSV series). C-rates are relative to
/// `nominal_capacity_coulomb`.
pub fn load_duty(
    path: &Path,
    nominal_capacity_coulomb: f64,
    overrides: &[Override],
) -> Result<(DutyCycle, f64), InputError> {
    check_duty(path, nominal_capacity_coulomb, None, overrides).map_err(first_problem)
}

pub(crate) fn check_duty(
    path: &Path,
    nominal_capacity_coulomb: f64,
    window: Option<VoltageWindow>,
    overrides: &[Override],
) -> Result<(DutyCycle, f64), Vec<InputError>> {
    let file = read_duty(path, overrides).map_err(|e| vec![e])?;
    check_duty_file(path, &file, nominal_capacity_coulomb, window)
}

/// A duty-cycle file as read, its overrides applied, before its rules are checked.
#[derive(Debug, Clone)]
pub(crate) enum DutyFile {
    Profile(TomlDocument),
    Series(TimeSeries),
}

/// Reads the duty-cycle file at `path`, choosing the format by extension, and applies the
/// overrides meant for it (a CSV series takes none).
pub(crate) fn read_duty(path: &Path, overrides: &[Override]) -> Result<DutyFile, InputError> {
    match extension(path).as_deref() {
        Some("toml") => TomlDocument::read_overridden(path, OverrideTarget::Profile, overrides).map(DutyFile::Profile),
        Some("csv") => {
            reject_profile_overrides(path, overrides)?;
            load_series(path).map(DutyFile::Series)
        }
        _ => Err(not_a_duty_cycle(path)),
    }
}

impl DutyFile {
    /// This file with `extra` overrides applied after those it has; `path` is where it was read.
    pub(crate) fn with_overrides(&self, path: &Path, extra: &[Override]) -> Result<Self, InputError> {
        match self {
            DutyFile::Profile(document) => {
                let mut document = document.clone();
                document.apply_overrides(extra)?;
                Ok(DutyFile::Profile(document))
            }
            DutyFile::Series(series) => {
                reject_profile_overrides(path, extra)?;
                Ok(DutyFile::Series(series.clone()))
            }
        }
    }
}

/// [`check_duty`] on a duty-cycle file already read.
pub(crate) fn check_duty_file(
    path: &Path,
    file: &DutyFile,
    nominal_capacity_coulomb: f64,
    window: Option<VoltageWindow>,
) -> Result<(DutyCycle, f64), Vec<InputError>> {
    match file {
        DutyFile::Profile(document) => check_profile_document(document, nominal_capacity_coulomb, window)
            .map(|(profile, start_soc)| (DutyCycle::Steps(profile), start_soc)),
        DutyFile::Series(series) => {
            if let Some(window) = window {
                check_series_against_cell(path, series, nominal_capacity_coulomb, window).map_err(|e| vec![e])?;
            }
            Ok((DutyCycle::Series(series.clone()), SERIES_START_SOC))
        }
    }
}

/// A measured current or power beyond [`super::profile::MAX_C_RATE`] times the cell's rating
/// cannot be this cell's duty (a pack's current, a kW column read as W): refused at the first
/// such row, which the rule names by its number and time.
fn check_series_against_cell(
    path: &Path,
    series: &TimeSeries,
    nominal_capacity_coulomb: f64,
    window: VoltageWindow,
) -> Result<(), InputError> {
    let amps_per_c_rate = nominal_capacity_coulomb / SECONDS_PER_HOUR;
    let (column, per_c_rate, unit) = match series.signal {
        SeriesSignal::CurrentA => ("current_a", amps_per_c_rate, "A"),
        SeriesSignal::PowerW => ("power_w", window.watts_per_c_rate(amps_per_c_rate), "W"),
    };
    let most = super::profile::MAX_C_RATE;
    let found = series.value.iter().zip(&series.time_s).enumerate().find(|(_, (v, _))| v.abs() / per_c_rate > most);
    match found {
        Some((row, (value, time))) => Err(InputError::new(
            path,
            format!(
            "row {} (time {time} s): {value} {unit} is {:.0} times the cell's rating (1 C = {per_c_rate:.4} {unit}); \
             at most {most} C is plausible for one cell",
            row + 1,
            value.abs() / per_c_rate
        ),
        )
        .with_key(column)),
        None => Ok(()),
    }
}

/// Whether `overrides` leave the duty-cycle file well-formed (known keys, values of the right
/// type); no value is checked against its rules. A CSV series takes no `profile.…` keys.
pub(crate) fn check_duty_shape(path: &Path, overrides: &[Override]) -> Result<(), InputError> {
    match extension(path).as_deref() {
        Some("toml") => check_profile_shape(path, overrides),
        Some("csv") => reject_profile_overrides(path, overrides),
        _ => Err(not_a_duty_cycle(path)),
    }
}

fn reject_profile_overrides(series_path: &Path, overrides: &[Override]) -> Result<(), InputError> {
    match overrides.iter().find(|o| o.target == OverrideTarget::Profile) {
        Some(item) => Err(InputError::command_line(
            item.key(),
            format!(
                "`{}` is a CSV time series; `--set profile.…` applies only to TOML step profiles",
                series_path.display()
            ),
        )),
        None => Ok(()),
    }
}

fn not_a_duty_cycle(path: &Path) -> InputError {
    InputError::new(path, "a duty cycle must be a `.toml` step profile or a `.csv` time series")
}

/// The lower-cased extension, if any.
pub(crate) fn extension(path: &Path) -> Option<String> {
    path.extension().map(|e| e.to_string_lossy().to_ascii_lowercase())
}
