//! The scenario's `[uncertainty]` section → [`crate::ensemble::UncertaintySpec`]: which inputs
//! an ensemble draws, from which distribution each, and which of them move together.
//!
//! A parameter's `path` is a `--set` path, and an ensemble sample is the scenario loaded with
//! its drawn values as extra overrides. So a path is checked the way a sample will use it: the
//! distribution's central value is applied as an override and the files are loaded again. A key
//! the loaders do not know, a key that takes no number, or a central value that breaks a rule
//! comes back against the parameter's entry. Whether a correlation matrix is positive definite
//! is left to the ensemble's sampler, which has to factorise it anyway.

use std::collections::HashMap;

use serde::Deserialize;

use super::checks::Checks;
use super::document::TomlDocument;
use super::error::{first_problem, InputError};
use super::overrides::{Override, OverrideTarget};
use super::suggest;
use crate::ensemble::{CorrelationGroup, Distribution, Sampling, UncertainParameter, UncertaintySpec};

/// The section's own name; a path inside it is no model input.
const SECTION: &str = "uncertainty";

const SAMPLINGS: [(&str, Sampling); 2] =
    [("monte-carlo", Sampling::MonteCarlo), ("latin-hypercube", Sampling::LatinHypercube)];

/// `[uncertainty]` as written.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct UncertaintySection {
    sampling: Option<String>,
    #[serde(default)]
    parameter: Vec<ParameterEntry>,
    #[serde(default)]
    correlation: Vec<CorrelationEntry>,
}

/// `[[uncertainty.parameter]]`: one input and its distribution. Which value keys are required
/// depends on the distribution, so serde takes them all as optional.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ParameterEntry {
    path: String,
    distribution: String,
    mean: Option<f64>,
    sd: Option<f64>,
    median: Option<f64>,
    sigma_ln: Option<f64>,
    low: Option<f64>,
    high: Option<f64>,
    /// Drawn for each cell of a pack apart.
    per_cell: Option<bool>,
}

impl ParameterEntry {
    /// Every value key with its value if given, in the order messages list them.
    fn value_keys(&self) -> [(&'static str, Option<f64>); 6] {
        [
            ("mean", self.mean),
            ("sd", self.sd),
            ("median", self.median),
            ("sigma_ln", self.sigma_ln),
            ("low", self.low),
            ("high", self.high),
        ]
    }
}

/// `[[uncertainty.correlation]]`: parameters drawn together, by path.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct CorrelationEntry {
    parameters: Vec<String>,
    matrix: Vec<Vec<f64>>,
}

/// A distribution as the file names it, with the value keys it takes.
#[derive(Debug, Clone, Copy)]
struct Form {
    name: &'static str,
    shape: Shape,
    keys: &'static [&'static str],
}

#[derive(Debug, Clone, Copy)]
enum Shape {
    Normal,
    LogNormal,
    Uniform,
    TruncatedNormal,
}

const FORMS: [Form; 4] = [
    Form { name: "normal", shape: Shape::Normal, keys: &["mean", "sd"] },
    Form { name: "log-normal", shape: Shape::LogNormal, keys: &["median", "sigma_ln"] },
    Form { name: "uniform", shape: Shape::Uniform, keys: &["low", "high"] },
    Form { name: "truncated-normal", shape: Shape::TruncatedNormal, keys: &["mean", "sd", "low", "high"] },
];

/// The section as a spec, with every rule checked that needs no other file; an absent section
/// is the empty spec. Sampled paths are tried afterwards by [`check_sampled_paths`]. With a
/// problem reported the spec is incomplete, which is harmless: it is then never used.
pub(super) fn convert_uncertainty(checks: &mut Checks<'_>, section: Option<&UncertaintySection>) -> UncertaintySpec {
    let Some(section) = section else {
        return UncertaintySpec::default();
    };
    let sampling = convert_sampling(checks, section.sampling.as_deref());
    let declared: Vec<String> = section.parameter.iter().map(|entry| normalized_path(&entry.path)).collect();
    let mut parameters = Vec::new();
    for (index, entry) in section.parameter.iter().enumerate() {
        check_path_is_new(checks, index, &declared);
        if let Some(parameter) = convert_parameter(checks, index, entry) {
            parameters.push(parameter);
        }
    }
    let groups = convert_correlations(checks, &section.correlation, &declared);
    for (g, group) in groups.iter().enumerate() {
        if let Some(&member) = group.members.iter().find(|&&m| section.parameter[m].per_cell == Some(true)) {
            checks.report(
                &format!("{SECTION}.correlation.{g}.parameters"),
                format!(
                    "`{}` is drawn per cell; per-cell draws are independent and take no correlation",
                    declared[member]
                ),
            );
        }
    }
    UncertaintySpec { parameters, groups, sampling }
}

fn convert_sampling(checks: &mut Checks<'_>, written: Option<&str>) -> Sampling {
    let Some(written) = written else {
        return Sampling::default();
    };
    let name = written.trim();
    if let Some(&(_, sampling)) = SAMPLINGS.iter().find(|(known, _)| *known == name) {
        return sampling;
    }
    let names = SAMPLINGS.map(|(known, _)| known);
    checks.report(
        "uncertainty.sampling",
        format!("unknown sampling `{name}`; {}choose `{}` or `{}`", did_you_mean(name, &names), names[0], names[1]),
    );
    Sampling::default()
}

/// The path as `--set` splits it: segments trimmed, so ` ambient_c` and `ambient_c` are one input.
fn normalized_path(written: &str) -> String {
    written.split('.').map(str::trim).collect::<Vec<_>>().join(".")
}

fn parameter_entry(index: usize) -> String {
    format!("{SECTION}.parameter.{index}")
}

fn parameter_key(index: usize, field: &str) -> String {
    format!("{SECTION}.parameter.{index}.{field}")
}

fn correlation_key(group: usize, field: &str) -> String {
    format!("{SECTION}.correlation.{group}.{field}")
}

/// Reports a path already sampled by an earlier entry: one input, one distribution.
fn check_path_is_new(checks: &mut Checks<'_>, index: usize, declared: &[String]) {
    let path = &declared[index];
    if path.is_empty() {
        return;
    }
    if let Some(first) = declared[..index].iter().position(|earlier| earlier == path) {
        checks.report(
            &parameter_key(index, "path"),
            format!("`{path}` is already sampled by {}; give each input one distribution", parameter_entry(first)),
        );
    }
}

/// The entry as a parameter, or `None` (with the problems reported) if any rule fails.
fn convert_parameter(checks: &mut Checks<'_>, index: usize, entry: &ParameterEntry) -> Option<UncertainParameter> {
    let problems_before = checks.problem_count();
    check_path_syntax(checks, index, &entry.path);
    let distribution = convert_distribution(checks, index, entry)?;
    let per_cell = entry.per_cell.unwrap_or(false);
    let path = normalized_path(&entry.path);
    if per_cell && !path.starts_with("cell.") {
        checks.report(
            &parameter_key(index, "per_cell"),
            format!("only the cell file's values (`cell.…`) are drawn per cell; `{path}` is shared by the pack"),
        );
    }
    (checks.problem_count() == problems_before).then_some(UncertainParameter { path, distribution, per_cell })
}

/// What can be told from the path alone; whether it names a numeric input is tried later.
fn check_path_syntax(checks: &mut Checks<'_>, index: usize, written: &str) {
    let key = parameter_key(index, "path");
    let path = written.trim();
    if path.is_empty() {
        checks.report(&key, "must name an input the way `--set` does, e.g. `cell.negative.particle_radius_um`");
        return;
    }
    match Override::number(path, 0.0) {
        Err(error) => checks.report(&key, format!("`{path}` is not a key path: {}", error.rule)),
        Ok(item) if item.target == OverrideTarget::Scenario && item.path.first().is_some_and(|s| s == SECTION) => {
            checks.report(
                &key,
                format!(
                    "`{path}` lies inside the uncertainty section; sample an input of the cell, profile or scenario"
                ),
            );
        }
        Ok(_) => {}
    }
}

fn convert_distribution(checks: &mut Checks<'_>, index: usize, entry: &ParameterEntry) -> Option<Distribution> {
    let name = entry.distribution.trim();
    let Some(form) = FORMS.iter().find(|form| form.name == name) else {
        let names = FORMS.map(|form| form.name);
        checks.report(
            &parameter_key(index, "distribution"),
            format!("unknown distribution `{name}`; {}distributions: {}", did_you_mean(name, &names), names.join(", ")),
        );
        return None;
    };

    let problems_before = checks.problem_count();
    for (field, value) in entry.value_keys() {
        match (form.keys.contains(&field), value) {
            (false, Some(_)) => checks.report(
                &parameter_key(index, field),
                format!("does not apply to a {} distribution, which takes {}", form.name, listed(form.keys)),
            ),
            (true, None) => checks.report(
                &parameter_key(index, field),
                format!("required key is missing: a {} distribution takes {}", form.name, listed(form.keys)),
            ),
            _ => {}
        }
    }
    if checks.problem_count() > problems_before {
        return None;
    }

    // Every key the form takes is present now; the NaN defaults are never reached.
    let [mean, sd, median, sigma_ln, low, high] = entry.value_keys().map(|(_, value)| value.unwrap_or(f64::NAN));
    let key = |field: &str| parameter_key(index, field);
    let distribution = match form.shape {
        Shape::Normal => {
            checks.finite(&key("mean"), mean);
            checks.positive(&key("sd"), sd);
            Distribution::Normal { mean, sd }
        }
        Shape::LogNormal => {
            checks.positive(&key("median"), median);
            checks.positive(&key("sigma_ln"), sigma_ln);
            Distribution::LogNormal { median, sigma_ln }
        }
        Shape::Uniform => {
            check_bounds(checks, index, low, high);
            Distribution::Uniform { low, high }
        }
        Shape::TruncatedNormal => {
            checks.finite(&key("mean"), mean);
            checks.positive(&key("sd"), sd);
            check_bounds(checks, index, low, high);
            Distribution::TruncatedNormal { mean, sd, low, high }
        }
    };
    (checks.problem_count() == problems_before).then_some(distribution)
}

fn check_bounds(checks: &mut Checks<'_>, index: usize, low: f64, high: f64) {
    let low_key = parameter_key(index, "low");
    let low_finite = checks.finite(&low_key, low);
    let high_finite = checks.finite(&parameter_key(index, "high"), high);
    if !(low_finite && high_finite) || low < high {
        return;
    }
    let problem = if low == high { "bounds enclose no interval" } else { "bounds in the wrong order" };
    checks.report(&low_key, format!("{problem}: low {} must be below high {}", written(low), written(high)));
}

fn convert_correlations(
    checks: &mut Checks<'_>,
    entries: &[CorrelationEntry],
    declared: &[String],
) -> Vec<CorrelationGroup> {
    // The group each parameter (by index) already belongs to.
    let mut group_of: HashMap<usize, usize> = HashMap::new();
    let mut groups = Vec::new();
    for (group, entry) in entries.iter().enumerate() {
        let members = correlation_members(checks, group, &entry.parameters, declared, &mut group_of);
        let matrix = correlation_matrix(checks, group, &entry.matrix, entry.parameters.len());
        groups.push(CorrelationGroup { members, matrix });
    }
    groups
}

/// The listed paths as indices into the declared parameters.
fn correlation_members(
    checks: &mut Checks<'_>,
    group: usize,
    listed_paths: &[String],
    declared: &[String],
    group_of: &mut HashMap<usize, usize>,
) -> Vec<usize> {
    let key = correlation_key(group, "parameters");
    if listed_paths.len() < 2 {
        checks.report(&key, format!("a correlation needs at least two parameters, found {}", listed_paths.len()));
    }
    let mut members = Vec::new();
    for written in listed_paths {
        let path = normalized_path(written);
        let Some(index) = declared.iter().position(|declared_path| *declared_path == path) else {
            let hint = match suggest::nearest(&path, declared.iter().map(String::as_str)) {
                Some(best) => format!("; did you mean `{best}`?"),
                None => String::new(),
            };
            checks.report(&key, format!("`{path}` is not declared in an [[uncertainty.parameter]] entry{hint}"));
            continue;
        };
        if members.contains(&index) {
            checks.report(&key, format!("`{path}` is listed twice"));
        } else if let Some(other) = group_of.get(&index) {
            checks.report(
                &key,
                format!(
                    "`{path}` is already in {SECTION}.correlation.{other}; a parameter belongs to at most one \
                     correlation group"
                ),
            );
        } else {
            group_of.insert(index, group);
            members.push(index);
        }
    }
    members
}

/// The matrix row-major, after checking it is a correlation matrix short of positive definite.
fn correlation_matrix(checks: &mut Checks<'_>, group: usize, rows: &[Vec<f64>], size: usize) -> Vec<f64> {
    let key = correlation_key(group, "matrix");
    if rows.len() != size || rows.iter().any(|row| row.len() != size) {
        let row_lengths: Vec<String> = rows.iter().map(|row| row.len().to_string()).collect();
        checks.report(
            &key,
            format!(
                "must be {size} × {size}, a row and a column per listed parameter; found {} row{} of {} entries",
                rows.len(),
                if rows.len() == 1 { "" } else { "s" },
                if row_lengths.is_empty() { "0".to_string() } else { row_lengths.join(", ") },
            ),
        );
        return Vec::new();
    }
    for (r, row) in rows.iter().enumerate() {
        for (c, &value) in row.iter().enumerate() {
            let at = format!("row {}, column {}", r + 1, c + 1);
            if !value.is_finite() {
                checks.report(&key, format!("{at}: must be a finite number, found {value}"));
            } else if r == c {
                if value != 1.0 {
                    checks.report(
                        &key,
                        format!("{at}: the diagonal must be 1 (a parameter moves fully with itself), found {value}"),
                    );
                }
            } else if !(-1.0..=1.0).contains(&value) {
                checks.report(&key, format!("{at}: a correlation must lie in −1–1, found {value}"));
            } else if c > r && rows[c][r].is_finite() && rows[c][r] != value {
                checks.report(
                    &key,
                    format!("not symmetric: {at} is {value} but row {}, column {} is {}", c + 1, r + 1, rows[c][r]),
                );
            }
        }
    }
    rows.concat()
}

/// Loads the scenario again with extra overrides, to try sampled paths the way a sample will
/// set them.
pub(super) trait ScenarioProbe {
    /// Only the file `extra` addresses, after the command line's overrides and `extra`: is
    /// every key known and of the right type? No value is checked against its rules.
    fn shape(&self, extra: &Override) -> Result<(), InputError>;
    /// Every file and every rule, after the command line's overrides and then `extra`.
    fn load(&self, extra: &[Override]) -> Result<(), Vec<InputError>>;
}

/// Tries each parameter's path with its central value and reports what the loaders reject at
/// the parameter's entry in `document` (the scenario file). Expects a spec whose own rules all
/// passed and a scenario that loads without the tries, so anything rejected is the tries' doing.
pub(super) fn check_sampled_paths(
    document: &TomlDocument,
    spec: &UncertaintySpec,
    probe: &impl ScenarioProbe,
) -> Vec<InputError> {
    if spec.parameters.is_empty() {
        return Vec::new();
    }
    let mut checks = Checks::new(document);
    let mut tries = Vec::new();
    for (index, parameter) in spec.parameters.iter().enumerate() {
        let central = Central::of(&parameter.distribution);
        let key = parameter_key(index, "path");
        let item = match Override::number(&parameter.path, central.value) {
            Ok(item) => item,
            // Unreachable: the path's syntax was checked with the section.
            Err(problem) => {
                checks.report(&key, problem.rule);
                continue;
            }
        };
        match probe.shape(&item) {
            Ok(()) => tries.push((index, central, item)),
            Err(problem) => checks.report(
                &key,
                format!(
                    "`{}` is not a numeric input: {}",
                    parameter.path,
                    without_tried_value(&reason(&problem, &item))
                ),
            ),
        }
    }
    if checks.problem_count() > 0 {
        return checks.finish(()).err().unwrap_or_default();
    }

    // One load with every central value usually settles it; only a failure is worth a load
    // per parameter, to tell which value is at fault.
    let every_central: Vec<Override> = tries.iter().map(|(_, _, item)| item.clone()).collect();
    let Err(together) = probe.load(&every_central) else {
        return Vec::new();
    };
    for (index, central, item) in &tries {
        if let Err(problems) = probe.load(std::slice::from_ref(item)) {
            let key = central.key.map_or_else(|| parameter_entry(*index), |field| parameter_key(*index, field));
            checks.report(
                &key,
                format!(
                    "the central value {} ({}) is not a valid `{}`: {}",
                    written(central.value),
                    central.what,
                    spec.parameters[*index].path,
                    reason(&first_problem(problems), item)
                ),
            );
        }
    }
    if checks.problem_count() == 0 {
        let problem = first_problem(together);
        checks.report(SECTION, format!("the central values are valid one at a time but not together: {problem}"));
    }
    checks.finish(()).err().unwrap_or_default()
}

/// The value a path is tried with: one the distribution draws from its middle.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Central {
    value: f64,
    /// The entry's key that sets it, if one does.
    key: Option<&'static str>,
    /// For messages.
    what: &'static str,
}

impl Central {
    fn of(distribution: &Distribution) -> Self {
        match *distribution {
            Distribution::Normal { mean, .. } => Self { value: mean, key: Some("mean"), what: "the mean" },
            Distribution::LogNormal { median, .. } => Self { value: median, key: Some("median"), what: "the median" },
            Distribution::Uniform { low, high } => {
                Self { value: 0.5 * (low + high), key: None, what: "the midpoint of low and high" }
            }
            // A mean outside the bounds is allowed but never drawn; the nearest bound is.
            Distribution::TruncatedNormal { mean, low, high, .. } if mean < low || mean > high => {
                Self { value: mean.max(low).min(high), key: Some("mean"), what: "the mean moved into low–high" }
            }
            Distribution::TruncatedNormal { mean, .. } => Self { value: mean, key: Some("mean"), what: "the mean" },
        }
    }
}

/// A loader's problem with a tried value: only its rule when it is about the tried key itself.
fn reason(problem: &InputError, tried: &Override) -> String {
    if problem.is_from_command_line() && problem.key.as_deref() == Some(tried.key().as_str()) {
        problem.rule.clone()
    } else {
        problem.to_string()
    }
}

/// "expected text in quotes, found number `25`" → "it takes text in quotes": the number is
/// the one tried, which the file does not contain.
fn without_tried_value(rule: &str) -> String {
    match rule.strip_prefix("expected ").and_then(|rest| rest.rsplit_once(", found ")) {
        Some((expected, _)) => format!("it takes {expected}"),
        None => rule.to_string(),
    }
}

/// A number as it would be written in the file: `4e-22` rather than twenty-one zeros.
fn written(value: f64) -> String {
    if value != 0.0 && !(1e-4..1e6).contains(&value.abs()) {
        format!("{value:e}")
    } else {
        value.to_string()
    }
}

/// "`a` and `b`", "`a`, `b` and `c`".
fn listed(keys: &[&str]) -> String {
    let quoted: Vec<String> = keys.iter().map(|key| format!("`{key}`")).collect();
    match quoted.split_last() {
        Some((last, [])) => last.clone(),
        Some((last, rest)) => format!("{} and {last}", rest.join(", ")),
        None => String::new(),
    }
}

/// "did you mean `x`? " when `typed` is a likely misspelling of one of `names`.
fn did_you_mean(typed: &str, names: &[&str]) -> String {
    suggest::nearest(typed, names.iter().copied()).map(|best| format!("did you mean `{best}`? ")).unwrap_or_default()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn central_values_lie_where_the_distribution_draws() {
        let normal = Central::of(&Distribution::Normal { mean: 3.0, sd: 1.0 });
        assert_eq!((normal.value, normal.key), (3.0, Some("mean")));
        let log_normal = Central::of(&Distribution::LogNormal { median: 2.0, sigma_ln: 0.5 });
        assert_eq!((log_normal.value, log_normal.key), (2.0, Some("median")));
        let uniform = Central::of(&Distribution::Uniform { low: 1.0, high: 2.0 });
        assert_eq!((uniform.value, uniform.key), (1.5, None));
        let inside = Central::of(&Distribution::TruncatedNormal { mean: 1.5, sd: 1.0, low: 1.0, high: 2.0 });
        assert_eq!(inside.value, 1.5);
        let above = Central::of(&Distribution::TruncatedNormal { mean: 9.0, sd: 1.0, low: 1.0, high: 2.0 });
        assert_eq!(above.value, 2.0);
        assert!(above.what.contains("moved"));
    }

    #[test]
    fn numbers_read_as_written() {
        assert_eq!(written(4.0e-22), "4e-22");
        assert_eq!(written(7.5), "7.5");
        assert_eq!(written(0.0), "0");
        assert_eq!(written(-2.5e7), "-2.5e7");
    }

    #[test]
    fn type_errors_name_what_the_key_takes() {
        assert_eq!(without_tried_value("expected text in quotes, found number `25`"), "it takes text in quotes");
        assert_eq!(without_tried_value("unknown key; did you mean `a`?"), "unknown key; did you mean `a`?");
    }

    #[test]
    fn key_lists_read_as_prose() {
        assert_eq!(listed(&["mean", "sd"]), "`mean` and `sd`");
        assert_eq!(listed(&["mean", "sd", "low", "high"]), "`mean`, `sd`, `low` and `high`");
        assert_eq!(listed(&["low"]), "`low`");
    }

    #[test]
    fn paths_are_compared_as_set_splits_them() {
        assert_eq!(normalized_path(" cell . negative.particle_radius_um "), "cell.negative.particle_radius_um");
    }
}
