//! Fit descriptions (`fadecast fit FIT.toml`) and the measured-data CSV files they name, into
//! a [`crate::calibrate::FitProblem`].
//!
//! Each free parameter's path is checked the way the fit will use it: its value is read from
//! the file the path addresses (so a key the files do not have is an error of the parameter's
//! entry), and every dataset's scenario is loaded with the parameter set to its bounds, as
//! `--set` would, so a key that takes no number or bounds that break the key's own rules are
//! caught before any forecast runs.

use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::checks::Checks;
use super::document::TomlDocument;
use super::error::{first_problem, InputError};
use super::overrides::{parse_override, Override, OverrideTarget};
use super::scenario::{load_scenario, LoadedScenario};
use crate::calibrate::{Axis, Dataset, FitProblem, FreeParameter, MeasuredPoint, Weights};

/// The fit file as written.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct FitFile {
    name: Option<String>,
    #[serde(default)]
    dataset: Vec<DatasetEntry>,
    #[serde(default)]
    parameter: Vec<ParameterEntry>,
    weights: Option<WeightsEntry>,
    starts: Option<i64>,
    patience: Option<i64>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct DatasetEntry {
    name: Option<String>,
    data: String,
    scenario: String,
    #[serde(default)]
    set: Vec<String>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ParameterEntry {
    path: String,
    low: f64,
    high: f64,
    #[serde(default)]
    log: bool,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct WeightsEntry {
    capacity_per_ah: Option<f64>,
    resistance_per_mohm: Option<f64>,
}

/// One dataset's files, for building its scenarios during the fit.
#[derive(Debug, Clone, PartialEq)]
pub struct DatasetSource {
    pub scenario_path: PathBuf,
    pub data_path: PathBuf,
    /// The dataset's `set` entries, then the command line's.
    pub overrides: Vec<Override>,
}

/// A fit description, loaded and checked.
#[derive(Debug, Clone)]
pub struct LoadedFit {
    pub name: String,
    pub problem: FitProblem,
    pub sources: Vec<DatasetSource>,
    /// The cell file every dataset's scenario names.
    pub cell_path: PathBuf,
    /// Starts of the optimiser (default 3).
    pub starts: usize,
    /// The optimiser's patience (evaluations per start over parameters + 1; default 30).
    pub patience: usize,
}

/// Reads a fit description, its datasets and scenarios. `overrides` (the command line's) apply
/// to every dataset's scenario after the dataset's own `set` entries.
pub fn load_fit(path: &Path, overrides: &[Override]) -> Result<LoadedFit, InputError> {
    let document = TomlDocument::read(path, OverrideTarget::Scenario)?;
    let file: FitFile = document.deserialize()?;
    let directory = path.parent().unwrap_or(Path::new(""));
    let mut checks = Checks::new(&document);
    if file.dataset.is_empty() {
        checks.report("dataset", "give at least one [[dataset]]");
    }
    if file.parameter.is_empty() {
        checks.report("parameter", "give at least one [[parameter]] to fit");
    }
    let weights = Weights {
        capacity_per_ah: file.weights.as_ref().and_then(|w| w.capacity_per_ah).unwrap_or(1.0),
        resistance_per_mohm: file.weights.as_ref().and_then(|w| w.resistance_per_mohm).unwrap_or(1.0),
    };
    checks.positive("weights.capacity_per_ah", weights.capacity_per_ah);
    checks.non_negative("weights.resistance_per_mohm", weights.resistance_per_mohm);
    let starts = file.starts.unwrap_or(3);
    if !(1..=50).contains(&starts) {
        checks.report("starts", format!("must be 1–50, found {starts}"));
    }
    let patience = file.patience.unwrap_or(crate::calibrate::DEFAULT_PATIENCE as i64);
    if !(1..=1000).contains(&patience) {
        checks.report("patience", format!("must be 1–1000, found {patience}"));
    }
    for (i, p) in file.parameter.iter().enumerate() {
        let key = |k: &str| format!("parameter.{i}.{k}");
        checks.finite(&key("low"), p.low);
        checks.finite(&key("high"), p.high);
        if p.low >= p.high {
            checks.report(&key("high"), format!("must be above low ({}), found {}", p.low, p.high));
        }
        if p.log && p.low <= 0.0 {
            checks.report(&key("low"), format!("must be positive for a log parameter, found {}", p.low));
        }
        if file.parameter[..i].iter().any(|q| q.path.trim() == p.path.trim()) {
            checks.report(&key("path"), format!("`{}` is already a free parameter", p.path));
        }
    }
    checks.finish(()).map_err(first_problem)?;

    let mut sources = Vec::new();
    let mut datasets = Vec::new();
    let mut cell_path: Option<PathBuf> = None;
    let mut first_scenario: Option<LoadedScenario> = None;
    for (d, entry) in file.dataset.iter().enumerate() {
        let mut dataset_overrides = Vec::new();
        for (k, text) in entry.set.iter().enumerate() {
            let parsed =
                parse_override(text).map_err(|e| document.problem(&format!("dataset.{d}.set.{k}"), e.rule.clone()))?;
            dataset_overrides.push(parsed);
        }
        dataset_overrides.extend(overrides.iter().cloned());
        let scenario_path = directory.join(&entry.scenario);
        let data_path = directory.join(&entry.data);
        let loaded = load_scenario(&scenario_path, &dataset_overrides)?;
        match &cell_path {
            None => cell_path = Some(loaded.cell_path.clone()),
            Some(first) if first != &loaded.cell_path => {
                return Err(document.problem(
                    &format!("dataset.{d}.scenario"),
                    format!(
                        "names the cell {}, but the first dataset's names {}: a fit writes one fitted cell",
                        loaded.cell_path.display(),
                        first.display()
                    ),
                ));
            }
            Some(_) => {}
        }
        let name = entry.name.clone().unwrap_or_else(|| format!("dataset {}", d + 1));
        let (axis, points) = load_measured(&data_path)?;
        check_measured_scale(&data_path, &points, &loaded.scenario.cell)?;
        datasets.push(Dataset { name, axis, points });
        sources.push(DatasetSource { scenario_path, data_path, overrides: dataset_overrides });
        first_scenario.get_or_insert(loaded);
    }
    let (Some(cell_path), Some(first_scenario)) = (cell_path, first_scenario) else {
        return Err(document.problem("dataset", "give at least one [[dataset]]"));
    };

    let mut parameters = Vec::new();
    for (i, entry) in file.parameter.iter().enumerate() {
        let path_key = format!("parameter.{i}.path");
        let initial =
            value_at(&entry.path, &sources[0], &first_scenario).map_err(|rule| document.problem(&path_key, rule))?;
        // Both bounds must be values the input rules accept, for every dataset.
        for bound in [entry.low, entry.high] {
            for source in &sources {
                let mut trial = source.overrides.clone();
                trial.push(Override::number(&entry.path, bound).map_err(|e| document.problem(&path_key, e.rule))?);
                load_scenario(&source.scenario_path, &trial)
                    .map_err(|e| document.problem(&path_key, format!("the bound {bound} is not accepted: {e}")))?;
            }
        }
        let initial = initial.clamp(entry.low, entry.high);
        parameters.push(FreeParameter {
            path: entry.path.trim().to_string(),
            low: entry.low,
            high: entry.high,
            log: entry.log,
            initial,
        });
    }

    let fitted_points: usize = datasets.iter().map(|d| d.points.len()).sum();
    if fitted_points < parameters.len() {
        return Err(document.problem(
            "parameter",
            format!("{} parameters are free but the datasets hold only {fitted_points} points", parameters.len()),
        ));
    }
    let name = file.name.unwrap_or_else(|| path.file_stem().map_or("fit".into(), |s| s.to_string_lossy().into()));
    Ok(LoadedFit {
        name,
        problem: FitProblem { datasets, parameters, weights, holdout_after: None },
        sources,
        cell_path,
        starts: usize::try_from(starts).unwrap_or(3),
        patience: usize::try_from(patience).unwrap_or(crate::calibrate::DEFAULT_PATIENCE),
    })
}

/// The cell file as a table with `overrides` aimed at the cell applied: the fitted cell, when
/// they are the fitted values.
pub fn cell_table_with(cell_path: &Path, overrides: &[Override]) -> Result<toml::Table, InputError> {
    let mut document = TomlDocument::read(cell_path, OverrideTarget::Cell)?;
    document.apply_overrides(overrides)?;
    Ok(document.table().clone())
}

/// The number a `--set` path addresses in the files as loaded (after the dataset's overrides),
/// or a rule saying why there is none.
fn value_at(path: &str, source: &DatasetSource, loaded: &LoadedScenario) -> Result<f64, String> {
    let probe = Override::number(path, 0.0).map_err(|e| e.rule)?;
    let file = match probe.target {
        OverrideTarget::Scenario => &source.scenario_path,
        OverrideTarget::Cell => &loaded.cell_path,
        OverrideTarget::Profile => &loaded.profile_path,
    };
    let mut document = TomlDocument::read(file, probe.target).map_err(|e| e.to_string())?;
    document.apply_overrides(&source.overrides).map_err(|e| e.to_string())?;
    let mut value = toml::Value::Table(document.table().clone());
    for segment in &probe.path {
        let next = match &value {
            toml::Value::Table(t) => t.get(segment).cloned(),
            toml::Value::Array(a) => segment.parse::<usize>().ok().and_then(|k| a.get(k).cloned()),
            _ => None,
        };
        value = next.ok_or_else(|| format!("`{path}` does not exist in {}", file.display()))?;
    }
    match value {
        toml::Value::Float(x) => Ok(x),
        toml::Value::Integer(x) => Ok(x as f64),
        _ => Err(format!("`{path}` does not hold a number in {}", file.display())),
    }
}

/// Measured capacity over the cell's nominal capacity: fade data lie within this (a column in
/// mAh is 1000 times off). Common practice, no source.
const CAPACITY_TO_NOMINAL_RANGE: (f64, f64) = (0.2, 2.0);
/// Measured resistance over the cell file's ohmic plus film resistance: a DC resistance is a
/// few times the ohmic part, never a thousand times more or less (a column in Ω). Common
/// practice, no source.
const RESISTANCE_TO_CELL_RANGE: (f64, f64) = (0.05, 100.0);

/// Refuses measured data whose scale cannot belong to the cell (a unit slip in a column):
/// the median of each column against the cell file's own values.
fn check_measured_scale(path: &Path, points: &[MeasuredPoint], cell: &crate::cycle::Cell) -> Result<(), InputError> {
    let median = |mut values: Vec<f64>| -> Option<f64> {
        values.sort_by(f64::total_cmp);
        values.get(values.len() / 2).copied()
    };
    let nominal_ah = cell.nominal_capacity_coulomb / crate::material::constants::SECONDS_PER_HOUR;
    if let Some(capacity) = median(points.iter().map(|p| p.capacity_ah).collect()) {
        let ratio = capacity / nominal_ah;
        if !(CAPACITY_TO_NOMINAL_RANGE.0..=CAPACITY_TO_NOMINAL_RANGE.1).contains(&ratio) {
            let hint = if ratio > 100.0 { " (is the column in mAh? it must be in Ah)" } else { "" };
            return Err(InputError::new(
                path,
                format!(
                "the measured capacities (median {capacity}) are {ratio:.3} times the cell's nominal {nominal_ah} Ah; \
                 they must lie within {}–{} times it{hint}",
                CAPACITY_TO_NOMINAL_RANGE.0, CAPACITY_TO_NOMINAL_RANGE.1
            ),
            )
            .with_key("capacity_ah"));
        }
    }
    let cell_mohm = (cell.ohmic_resistance_ohm + cell.film_resistance_ohm) * 1e3;
    if let Some(resistance) = median(points.iter().filter_map(|p| p.resistance_mohm).collect()) {
        let ratio = resistance / cell_mohm;
        if cell_mohm > 0.0 && !(RESISTANCE_TO_CELL_RANGE.0..=RESISTANCE_TO_CELL_RANGE.1).contains(&ratio) {
            let hint = if ratio < 0.01 { " (is the column in Ω? it must be in mΩ)" } else { "" };
            return Err(InputError::new(
                path,
                format!(
                "the measured resistances (median {resistance}) are {ratio:.4} times the cell file's ohmic plus film \
                 resistance, {cell_mohm:.4} mΩ; they must lie within {}–{} times it{hint}",
                RESISTANCE_TO_CELL_RANGE.0, RESISTANCE_TO_CELL_RANGE.1
            ),
            )
            .with_key("resistance_mohm"));
        }
    }
    Ok(())
}

const KNOWN_COLUMNS: [&str; 5] = ["cycle", "day", "efc", "capacity_ah", "resistance_mohm"];

/// A measured-data CSV: one of `cycle`, `day`, `efc`; `capacity_ah`; optionally
/// `resistance_mohm` (an empty field means not measured at that point).
pub fn load_measured(path: &Path) -> Result<(Axis, Vec<MeasuredPoint>), InputError> {
    let text = super::document::read_text(path)?;
    parse_measured(path, &text)
}

fn parse_measured(path: &Path, text: &str) -> Result<(Axis, Vec<MeasuredPoint>), InputError> {
    const HEADER_LINE: usize = 1;
    let error =
        |line: usize, column: &str, rule: String| InputError::new(path, rule).with_line(Some(line)).with_key(column);
    let mut reader = csv::ReaderBuilder::new().trim(csv::Trim::All).has_headers(true).from_reader(text.as_bytes());
    let header = reader.headers().map_err(|e| InputError::new(path, format!("invalid CSV: {e}")))?.clone();
    for (i, name) in header.iter().enumerate() {
        if !KNOWN_COLUMNS.contains(&name) {
            let rule = format!("unknown column{}", super::suggest::hint(name, &KNOWN_COLUMNS));
            return Err(error(HEADER_LINE, name, rule));
        }
        if header.iter().take(i).any(|earlier| earlier == name) {
            return Err(error(HEADER_LINE, name, "column appears twice".into()));
        }
    }
    let position = |name: &str| header.iter().position(|h| h == name);
    let axes: Vec<(Axis, usize)> =
        [Axis::Cycle, Axis::Day, Axis::Efc].into_iter().filter_map(|a| position(a.column()).map(|p| (a, p))).collect();
    let (axis, x_column) = match axes.as_slice() {
        [one] => *one,
        [] => return Err(error(HEADER_LINE, "cycle", "give one of the columns `cycle`, `day` or `efc`".into())),
        _ => return Err(error(HEADER_LINE, axes[1].0.column(), "give only one of `cycle`, `day` and `efc`".into())),
    };
    let capacity = position("capacity_ah")
        .ok_or_else(|| error(HEADER_LINE, "capacity_ah", "required column is missing".into()))?;
    let resistance = position("resistance_mohm");

    let mut points: Vec<MeasuredPoint> = Vec::new();
    let mut last_line = HEADER_LINE;
    for record in reader.records() {
        let record = record.map_err(|e| match e.kind() {
            csv::ErrorKind::UnequalLengths { pos, expected_len, len } => {
                InputError::new(path, format!("row has {len} fields but the header has {expected_len}"))
                    .with_line(pos.as_ref().and_then(|p| usize::try_from(p.line()).ok()))
            }
            _ => InputError::new(path, format!("invalid CSV: {e}")),
        })?;
        let line = record.position().and_then(|p| usize::try_from(p.line()).ok()).unwrap_or(last_line + 1);
        last_line = line;
        let number = |column: usize, name: &str| -> Result<f64, InputError> {
            let field = record.get(column).unwrap_or("");
            match field.parse::<f64>() {
                Ok(v) if v.is_finite() => Ok(v),
                Ok(_) => Err(error(line, name, format!("must be a finite number, found `{field}`"))),
                Err(_) => Err(error(line, name, format!("expected a number, found `{field:?}`"))),
            }
        };
        let x = number(x_column, axis.column())?;
        if x < 0.0 {
            return Err(error(line, axis.column(), format!("must be ≥ 0, found {x}")));
        }
        if let Some(previous) = points.last() {
            if x <= previous.x {
                let rule = if x == previous.x {
                    format!("{x} is repeated: each point needs its own {}", axis.column())
                } else {
                    format!("must increase from row to row, found {x} after {}", previous.x)
                };
                return Err(error(line, axis.column(), rule));
            }
        }
        let capacity_ah = number(capacity, "capacity_ah")?;
        if capacity_ah <= 0.0 {
            return Err(error(line, "capacity_ah", format!("must be positive, found {capacity_ah}")));
        }
        let resistance_mohm = match resistance {
            Some(column) if !record.get(column).unwrap_or("").is_empty() => {
                let r = number(column, "resistance_mohm")?;
                if r <= 0.0 {
                    return Err(error(line, "resistance_mohm", format!("must be positive, found {r}")));
                }
                Some(r)
            }
            _ => None,
        };
        points.push(MeasuredPoint { x, capacity_ah, resistance_mohm });
    }
    if points.is_empty() {
        return Err(InputError::new(path, "no measured points").with_line(Some(last_line)));
    }
    Ok((axis, points))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> Result<(Axis, Vec<MeasuredPoint>), String> {
        parse_measured(Path::new("m.csv"), text).map_err(|e| e.to_string())
    }

    #[test]
    fn reads_points_with_and_without_resistance() {
        let (axis, points) = parse("day,capacity_ah,resistance_mohm\n0,5.0,16\n30,4.9,\n").unwrap();
        assert_eq!(axis, Axis::Day);
        assert_eq!(points.len(), 2);
        assert_eq!(points[1].resistance_mohm, None);
    }

    #[test]
    fn bad_rows_name_their_line() {
        assert!(parse("cycle,capacity_ah\n0,5\n10,4.9\n5,4.8\n")
            .unwrap_err()
            .starts_with("m.csv:4: cycle: must increase"));
        assert!(parse("cycle,capacity_ah\n0,5\n0,4.9\n").unwrap_err().contains(":3: cycle: 0 is repeated"));
        assert!(parse("cycle,capacity_ah\n0,5\n10,-4.9\n")
            .unwrap_err()
            .starts_with("m.csv:3: capacity_ah: must be positive"));
        assert!(parse("cycle,capacity_ah\n0,NaN\n").unwrap_err().starts_with("m.csv:2: capacity_ah: must be a finite"));
        assert!(parse("cycle,day,capacity_ah\n0,0,5\n").unwrap_err().contains("only one of"));
    }
}
