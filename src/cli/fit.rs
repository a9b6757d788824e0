//! `fadecast fit FIT.toml`: fit model inputs to measured fade data and write the fitted cell,
//! the fit's record, an uncertainty section for `bands` and a plot.

use super::{print_caution, CliError};
use crate::calibrate::{self, Axis, CalibrationError, FitOptions, FitResult, FittedEnd};
use crate::input::{self, InputError, LoadedFit, Override};
use crate::material::constants::ZERO_CELSIUS_K;
use crate::report::{self, text::sig};
use std::fmt::Write as _;
use std::io::Write;
use std::path::PathBuf;

pub const CELL_NAME: &str = "fitted-cell.toml";
pub const JSON_NAME: &str = "fit.json";
pub const UNCERTAINTY_NAME: &str = "uncertainty.toml";
pub const SVG_NAME: &str = "fit.svg";

pub struct FitConfig {
    pub fit_file: PathBuf,
    pub out_dir: PathBuf,
    pub overrides: Vec<Override>,
    /// Fit only points up to this (on each dataset's axis); report the error beyond.
    pub holdout_after: Option<f64>,
}

pub fn run(config: &FitConfig, out: &mut impl Write) -> Result<(), CliError> {
    if let Some(limit) = config.holdout_after {
        if !(limit.is_finite() && limit > 0.0) {
            return Err(
                InputError::command_line_flag("--holdout-after", format!("must be positive, found {limit}")).into()
            );
        }
    }
    let loaded = input::load_fit(&config.fit_file, &config.overrides)?;
    let mut problem = loaded.problem.clone();
    problem.holdout_after = config.holdout_after;
    let paths: Vec<String> = problem.parameters.iter().map(|p| p.path.clone()).collect();
    // Each trial is the dataset's scenario with the trial values set, so every input rule
    // applies to them as to a `--set` value.
    let templates = loaded
        .sources
        .iter()
        .map(|source| input::ScenarioTemplate::load(&source.scenario_path, &source.overrides))
        .collect::<Result<Vec<_>, _>>()?;
    let number_paths = input::number_paths(&paths)?;
    let source = |dataset: usize, values: &[f64]| -> Result<_, String> {
        templates[dataset].build(&number_paths, values).map_err(|e| e.to_string())
    };
    let options = FitOptions { starts: loaded.starts, patience: loaded.patience, ..FitOptions::default() };
    let result = calibrate::fit(&problem, &source, &options).map_err(|e| match e {
        CalibrationError::TooFewPoints { .. } => {
            CliError::Input(InputError::new(&config.fit_file, format!("{e} (with --holdout-after)")))
        }
        other => CliError::Forecast(format!("while fitting: {other}")),
    })?;

    let origin = format!(
        "Fitted by fadecast fit from {} ({} datasets, {} free parameters).\n\
         Valid within the data it was fitted to (see [calibration]); forecasts beyond it are warned about.",
        config.fit_file.display(),
        problem.datasets.len(),
        paths.len()
    );
    let cell = fitted_cell(&loaded, &result, &origin)?;
    let json = report::fit_json(&result, &loaded.name, config.holdout_after)?;
    let uncertainty = report::uncertainty_toml(&result, &origin);
    let svg = report::fit_svg(&result, &format!("{}: fit", loaded.name))?;
    let mut files: Vec<(&str, &[u8])> =
        vec![(CELL_NAME, cell.as_bytes()), (JSON_NAME, json.as_slice()), (SVG_NAME, svg.as_bytes())];
    if let Some(text) = &uncertainty {
        files.push((UNCERTAINTY_NAME, text.as_bytes()));
    }
    let written = report::write_all_atomic(&config.out_dir, &files)?;

    let mut text = summary(&loaded, &result, config.holdout_after);
    if uncertainty.is_none() {
        text.push_str("\nNo uncertainty.toml: the fit has no finite standard errors to carry into bands.\n");
    }
    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_caution(out)?;
    Ok(())
}

/// The cell file with the fitted cell values and a `[calibration]` table spanning the fitted
/// points only (held-out points are not calibration): per axis the data used, up to the
/// model's position at the last fitted point, and the ambient temperatures fitted.
fn fitted_cell(loaded: &LoadedFit, result: &FitResult, origin: &str) -> Result<String, CliError> {
    let mut overrides = Vec::new();
    for p in &result.parameters {
        overrides.push(Override::number(&p.path, p.value)?);
    }
    let furthest = |axis: Axis, of: fn(&FittedEnd) -> f64| {
        result.curves.iter().filter(|c| c.axis == axis).map(|c| of(&c.fitted_end)).fold(0.0, f64::max)
    };
    for (axis, key, of) in [
        (Axis::Cycle, "cell.calibration.cycles", (|e: &FittedEnd| e.cycles) as fn(&FittedEnd) -> f64),
        (Axis::Day, "cell.calibration.days", |e| e.days),
        (Axis::Efc, "cell.calibration.efc", |e| e.efc),
    ] {
        let end = furthest(axis, of);
        if end > 0.0 {
            overrides.push(Override::number(key, end)?);
        }
    }
    let low = result.curves.iter().map(|c| c.ambient_k.0).fold(f64::INFINITY, f64::min);
    let high = result.curves.iter().map(|c| c.ambient_k.1).fold(f64::NEG_INFINITY, f64::max);
    if low.is_finite() && high.is_finite() {
        overrides.push(Override::number("cell.calibration.min_temperature_c", low - ZERO_CELSIUS_K)?);
        overrides.push(Override::number("cell.calibration.max_temperature_c", high - ZERO_CELSIUS_K)?);
    }
    let table = input::cell_table_with(&loaded.cell_path, &overrides)?;
    let mut origin = origin.to_string();
    let others: Vec<&str> =
        result.parameters.iter().filter(|p| !p.path.starts_with("cell.")).map(|p| p.path.as_str()).collect();
    if !others.is_empty() {
        let _ = write!(origin, "\nFitted inputs outside the cell (see fit.json): {}", others.join(", "));
    }
    Ok(report::fitted_cell_toml(&table, &origin)?)
}

fn summary(loaded: &LoadedFit, result: &FitResult, holdout_after: Option<f64>) -> String {
    let mut text = format!(
        "{}: fit of {} parameters to {} datasets\n",
        loaded.name,
        result.parameters.len(),
        loaded.problem.datasets.len()
    );
    let _ = writeln!(
        text,
        "  {} model evaluations over {} starts; {} residuals, residual variance {} ({})",
        result.model_evaluations,
        result.starts,
        result.residual_count,
        sig(result.residual_variance, 3),
        result.termination
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
    let forecast_warnings: Vec<String> = result
        .curves
        .iter()
        .flat_map(|c| c.forecast_warnings.iter().map(move |w| format!("{}: {}", c.dataset, report::warning_text(w))))
        .collect();
    if !result.warnings.is_empty() || !forecast_warnings.is_empty() {
        text.push_str("Warnings\n");
        for w in &result.warnings {
            let _ = writeln!(text, "  {}", report::fit_warning_text(w));
        }
        for w in &forecast_warnings {
            let _ = writeln!(text, "  {w}");
        }
    }
    text.push_str(
        "\nA fit is only as good as its data: forecasts beyond the fitted range are extrapolations, \
         and the fitted cell's [calibration] table makes forecasts beyond it say so.\n",
    );
    text
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
