//! Outputs of `fadecast fit`: the fit's JSON record, the fitted cell file, the uncertainty
//! section `bands` reads (the plot is drawn in `fit_svg.rs`).

use super::text::sig;
use super::ReportError;
use crate::calibrate::{Axis, FitResult, FitWarning, FittedParameter, HoldoutError, ResidualStats, Termination};
use serde::Serialize;
use std::fmt::Write as _;

/// What fit.json holds: the fit's findings without the plotted curves.
#[derive(Serialize)]
struct FitRecord<'a> {
    name: &'a str,
    holdout_after: Option<f64>,
    parameters: &'a [FittedParameter],
    /// Row and column order as `parameters`.
    correlation: &'a [Vec<f64>],
    /// In natural coordinates: ln value for log parameters, the value otherwise.
    covariance: &'a [Vec<f64>],
    residuals: &'a [ResidualStats],
    holdout: &'a [HoldoutError],
    sum_of_squares: f64,
    residual_variance: f64,
    residual_count: usize,
    model_evaluations: usize,
    starts: usize,
    termination: Termination,
    converged: bool,
    warnings: Vec<serde_json::Value>,
    /// Per dataset, the warnings of its forecast at the fitted values.
    forecast_warnings: Vec<serde_json::Value>,
}

/// Why the optimiser stopped, in words.
pub fn termination_text(termination: Termination) -> &'static str {
    match termination {
        Termination::Converged => "converged",
        Termination::Orthogonal => "converged (gradient test)",
        Termination::ResidualsZero => "converged (residuals zero)",
        Termination::LostPatience => "evaluation limit reached",
        Termination::NoImprovementPossible => "no further improvement possible at floating-point precision",
        Termination::NumericalTrouble => "numerical trouble (not-a-number or a failed trial)",
        Termination::BadProblem => "no parameters or residuals to fit",
    }
}

/// One fit warning in words.
pub fn fit_warning_text(warning: &FitWarning) -> String {
    match warning {
        FitWarning::NotConverged { termination } => format!(
            "WARNING: the fit did not converge (the optimiser stopped: {}): the values may not be \
             a minimum and their standard errors may mislead; refit with other starts, bounds or data",
            termination_text(*termination)
        ),
        FitWarning::Singular => "the data do not determine the parameters (JᵀJ is singular): no standard errors".into(),
        FitWarning::StandardErrorExceedsValue { path, standard_error, value } => {
            format!("{path}: standard error {standard_error:.3e} exceeds the value {value:.3e}: the data do not determine it")
        }
        FitWarning::AtBound { path, value, low, high } => {
            format!("{path}: {value:.4e} is at its bound ({low}–{high}): widen the bounds or fix the parameter")
        }
        FitWarning::Correlated { first, second, correlation } => format!(
            "{first} and {second} are correlated {correlation:.3}: the data determine a combination of them, not each"
        ),
    }
}

/// The fit as the terminal shows it: parameters, correlations, residuals and hold-out errors
/// (warnings and the caution are [`fit_cautions`], for stderr).
pub fn fit_text(name: &str, datasets: usize, result: &FitResult, holdout_after: Option<f64>) -> String {
    let mut text = format!("{}: fit of {} parameters to {} datasets\n", name, result.parameters.len(), datasets);
    let _ = writeln!(
        text,
        "  {} model evaluations over {} starts; {} residuals, residual variance {} ({})",
        result.model_evaluations,
        result.starts,
        result.residual_count,
        sig(result.residual_variance, 3),
        termination_text(result.termination)
    );
    text.push_str("Parameters (± one standard error)\n");
    for p in &result.parameters {
        let spread = match p.sigma_ln {
            Some(sigma_ln) => format!("± {} (sigma_ln {})", number(p.standard_error), sig(sigma_ln, 3)),
            None => format!("± {}", number(p.standard_error)),
        };
        let _ = writeln!(text, "  {:<48}{:>11} {spread}   (start {})", p.path, number(p.value), number(p.initial));
    }
    if result.parameters.len() >= 2 {
        text.push_str("Correlation\n");
        for (p, row) in result.parameters.iter().zip(&result.correlation) {
            let cells: Vec<String> = row.iter().map(|c| format!("{c:>7.3}")).collect();
            let _ = writeln!(text, "  {:<48}{}", p.path, cells.join(""));
        }
    }
    text.push_str("Residuals (model − data, fitted points)\n");
    for r in &result.residuals {
        let resistance = r.resistance_rms_mohm.map_or(String::new(), |v| format!(", resistance rms {} mΩ", sig(v, 3)));
        let _ = writeln!(
            text,
            "  {:<24}{} points: capacity rms {} Ah, max {} Ah, mean {} Ah{resistance}",
            r.dataset,
            r.points_fitted,
            sig(r.capacity_rms_ah, 3),
            sig(r.capacity_max_abs_ah, 3),
            sig(r.capacity_mean_ah, 3)
        );
    }
    if let Some(limit) = holdout_after {
        let _ = writeln!(text, "Forecast error beyond {limit} (held-out points)");
        for h in &result.holdout {
            let _ = writeln!(
                text,
                "  {:<24}{} points: state of health rms {} pp, max {} pp",
                h.dataset,
                h.points,
                sig(h.soh_rms_pp, 3),
                sig(h.soh_max_abs_pp, 3)
            );
        }
    }
    text
}

/// The fit's warnings, each dataset's forecast's warnings (named by dataset) and the
/// extrapolation caution, one line each.
pub fn fit_cautions(result: &FitResult) -> Vec<String> {
    let mut lines: Vec<String> = result.warnings.iter().map(fit_warning_text).collect();
    for curve in &result.curves {
        lines.extend(curve.forecast_warnings.iter().map(|w| format!("{}: {}", curve.dataset, super::warning_text(w))));
    }
    lines.push(
        "A fit is only as good as its data: forecasts beyond the fitted range are extrapolations, \
         and the fitted cell's [calibration] table makes forecasts beyond it say so."
            .into(),
    );
    lines
}

/// Four significant figures, in exponent form for the very small or large values rates and
/// diffusivities take.
fn number(value: f64) -> String {
    if value != 0.0 && !(1e-3..1e5).contains(&value.abs()) {
        format!("{value:.3e}")
    } else {
        sig(value, 4)
    }
}

/// fit.json.
pub fn fit_json(result: &FitResult, name: &str, holdout_after: Option<f64>) -> Result<Vec<u8>, ReportError> {
    let record = FitRecord {
        name,
        holdout_after,
        parameters: &result.parameters,
        correlation: &result.correlation,
        covariance: &result.covariance,
        residuals: &result.residuals,
        holdout: &result.holdout,
        sum_of_squares: result.sum_of_squares,
        residual_variance: result.residual_variance,
        residual_count: result.residual_count,
        model_evaluations: result.model_evaluations,
        starts: result.starts,
        termination: result.termination,
        converged: result.converged,
        warnings: result.warnings.iter().map(|w| super::outcome::with_message(w, Some(fit_warning_text(w)))).collect(),
        forecast_warnings: result
            .curves
            .iter()
            .map(|c| {
                serde_json::json!({
                    "dataset": c.dataset,
                    "warnings": c.forecast_warnings.iter().map(super::warning_json).collect::<Vec<_>>(),
                })
            })
            .collect(),
    };
    Ok(super::schema::json_bytes(record)?)
}

/// The fitted cell file: the original cell file's text edited in place — each fitted value and
/// the `[calibration]` table set at its key path (within the cell file), everything else
/// (comments, key order, notation) as it was — under a comment saying where it came from.
/// A changed number keeps its line's comment and its notation (exponent form stays exponent
/// form) and is written with the 6 significant digits of every output.
pub fn fitted_cell_toml(original: &str, values: &[(Vec<String>, f64)], origin: &str) -> Result<String, ReportError> {
    let bad = |what: String| ReportError::Plot(format!("could not edit the cell file: {what}"));
    let mut document: toml_edit::DocumentMut = original.parse().map_err(|e| bad(format!("{e}")))?;
    for (path, value) in values {
        set_number(&mut document, path, *value).map_err(bad)?;
    }
    let mut text = String::new();
    for line in origin.lines() {
        let _ = writeln!(text, "# {line}");
    }
    text.push('\n');
    text.push_str(&document.to_string());
    Ok(text)
}

/// Sets the number at `path`, creating missing tables (at the end of the file).
fn set_number(document: &mut toml_edit::DocumentMut, path: &[String], value: f64) -> Result<(), String> {
    let (last, parents) = path.split_last().ok_or("an empty key path")?;
    let mut item = document.as_item_mut();
    for segment in parents {
        if item.get(segment).is_none() {
            item[segment.as_str()] = toml_edit::table();
        }
        item = &mut item[segment.as_str()];
    }
    let table = item.as_table_like_mut().ok_or_else(|| format!("`{}` is not a table", parents.join(".")))?;
    let old = table.get(last).and_then(toml_edit::Item::as_value);
    let exponent = match old {
        Some(toml_edit::Value::Float(f)) => f.display_repr().contains(['e', 'E']),
        Some(_) => false,
        None => value != 0.0 && !(1e-3..1e6).contains(&value.abs()),
    };
    let rounded = super::schema::round(value);
    let mut repr = if exponent { format!("{rounded:e}") } else { format!("{rounded}") };
    if !repr.contains(['.', 'e', 'E']) {
        repr.push_str(".0");
    }
    let mut new: toml_edit::Value = repr.parse().map_err(|e| format!("{repr}: {e}"))?;
    if let Some(old) = old {
        *new.decor_mut() = old.decor().clone();
    }
    table.insert(last, toml_edit::Item::Value(new));
    Ok(())
}

/// An `[uncertainty]` section with the fitted parameters as one correlated group: log-normal
/// (median, sigma_ln) for log parameters, normal truncated to the fit's bounds otherwise.
/// None when the fit has no finite standard errors to give.
pub fn uncertainty_toml(result: &FitResult, origin: &str) -> Option<String> {
    let finite = result.parameters.iter().all(|p| p.standard_error.is_finite() && p.standard_error > 0.0)
        && result.correlation.iter().flatten().all(|c| c.is_finite());
    if !finite || result.parameters.is_empty() {
        return None;
    }
    let mut text = String::new();
    for line in origin.lines() {
        let _ = writeln!(text, "# {line}");
    }
    text.push_str("\n[uncertainty]\nsampling = \"latin-hypercube\"\n");
    for p in &result.parameters {
        let _ = writeln!(text, "\n[[uncertainty.parameter]]\npath = \"{}\"", p.path);
        match p.sigma_ln {
            Some(sigma_ln) => {
                let _ =
                    writeln!(text, "distribution = \"log-normal\"\nmedian = {:e}\nsigma_ln = {:e}", p.value, sigma_ln);
            }
            None => {
                let _ = writeln!(
                    text,
                    "distribution = \"truncated-normal\"\nmean = {:e}\nsd = {:e}\nlow = {:e}\nhigh = {:e}",
                    p.value, p.standard_error, p.low, p.high
                );
            }
        }
    }
    if result.parameters.len() >= 2 {
        let names: Vec<String> = result.parameters.iter().map(|p| format!("\"{}\"", p.path)).collect();
        let rows: Vec<String> = result
            .correlation
            .iter()
            .map(|row| format!("[{}]", row.iter().map(|c| format!("{c:.6}")).collect::<Vec<_>>().join(", ")))
            .collect();
        let _ = writeln!(
            text,
            "\n[[uncertainty.correlation]]\nparameters = [{}]\nmatrix = [{}]",
            names.join(", "),
            rows.join(", ")
        );
    }
    Some(text)
}

pub(super) fn axis_label(axis: Axis) -> &'static str {
    match axis {
        Axis::Cycle => "cycles",
        Axis::Day => "days",
        Axis::Efc => "equivalent full cycles",
    }
}

#[cfg(test)]
mod fitted_cell_tests {
    use super::*;

    #[test]
    fn the_fitted_cell_keeps_comments_order_and_notation() {
        let original = "# a demo cell\nname = \"x\"\n\n[negative]\nthickness_um = 70.0   # coating\n\
                        diffusivity_m2_s = 5.0e-14 # graphite\nzeta = 1.0\n";
        let values = vec![
            (vec!["negative".to_string(), "diffusivity_m2_s".to_string()], 2.232881251562e-14),
            (vec!["negative".to_string(), "thickness_um".to_string()], 71.234567),
            (vec!["calibration".to_string(), "days".to_string()], 365.0),
        ];
        let text = fitted_cell_toml(original, &values, "fitted here").unwrap();
        assert!(text.starts_with("# fitted here\n\n# a demo cell\n"), "{text}");
        assert!(text.contains("diffusivity_m2_s = 2.23288e-14 # graphite\n"), "exponent form and comment kept: {text}");
        assert!(text.contains("thickness_um = 71.2346   # coating\n"), "{text}");
        // Key order as in the original: thickness, diffusivity, zeta; the new table at the end.
        let at = |key: &str| text.find(key).unwrap();
        assert!(at("thickness_um") < at("diffusivity_m2_s") && at("diffusivity_m2_s") < at("zeta"));
        assert!(text.trim_end().ends_with("[calibration]\ndays = 365.0"), "{text}");
    }
}
