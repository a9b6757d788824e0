//! `fadecast fit FIT.toml`: fit model inputs to measured fade data and write the fitted cell,
//! the fit's record, an uncertainty section for `bands` and a plot.

use super::{print_caution, print_cautions, CliError};
use crate::calibrate::{self, Axis, CalibrationError, FitOptions, FitResult, FittedEnd};
use crate::input::{self, InputError, LoadedFit, Override};
use crate::material::constants::ZERO_CELSIUS_K;
use crate::report;
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
    /// Worker threads for the datasets' forecasts and the Jacobian's columns.
    pub jobs: usize,
    /// Show the model evaluations as they run.
    pub progress: bool,
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
    let pack_source = templates
        .iter()
        .zip(&loaded.sources)
        .find_map(|(t, source)| t.loaded().scenario.pack.is_some().then_some(source));
    if let Some(source) = pack_source {
        return Err(input::InputError::new(
            &source.scenario_path,
            "pack: `fit` fits one cell's parameters to one cell's data; give a scenario without [pack]",
        )
        .into());
    }
    let number_paths = input::number_paths(&paths)?;
    let source = |dataset: usize, values: &[f64]| -> Result<_, String> {
        templates[dataset].build(&number_paths, values).map_err(|e| e.to_string())
    };
    let options = FitOptions { starts: loaded.starts, patience: loaded.patience, ..FitOptions::default() };
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(config.jobs)
        .build()
        .map_err(|e| CliError::Forecast(format!("could not start {} worker threads: {e}", config.jobs)))?;
    // The fit has no fixed number of evaluations: a spinner with the elapsed time shows it runs.
    let spinner = config.progress.then(|| {
        let bar = indicatif::ProgressBar::new_spinner();
        bar.set_style(
            indicatif::ProgressStyle::with_template("{spinner} fitting {msg} [{elapsed_precise}]")
                .unwrap_or_else(|_| indicatif::ProgressStyle::default_spinner()),
        );
        bar.set_message(format!("{} parameters to {} datasets", paths.len(), problem.datasets.len()));
        bar.enable_steady_tick(std::time::Duration::from_millis(120));
        bar
    });
    let fitted = pool.install(|| calibrate::fit(&problem, &source, &options));
    if let Some(bar) = spinner {
        bar.finish_and_clear();
    }
    let result = fitted.map_err(|e| match e {
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
    let svg = report::fit_svg(&result, config.holdout_after, &format!("{}: fit", loaded.name))?;
    let mut text = report::fit_text(&loaded.name, loaded.problem.datasets.len(), &result, config.holdout_after);
    if uncertainty.is_none() {
        text.push_str("\nNo uncertainty.toml: the fit has no finite standard errors to carry into bands.\n");
    }
    // The fit's own files, then each dataset's scenario (with its cell and profile) and data.
    let mut inputs = vec![input::file_digest(input::InputRole::Scenario, &config.fit_file)?];
    inputs.push(input::file_digest(input::InputRole::Cell, &loaded.cell_path)?);
    for source in &loaded.sources {
        for digest in input::ScenarioTemplate::load(&source.scenario_path, &source.overrides)?.input_digests()? {
            if !inputs.contains(&digest) {
                inputs.push(digest);
            }
        }
        inputs.push(input::file_digest(input::InputRole::AgingData, &source.data_path)?);
    }
    let warnings = report::fit_cautions(&result);
    let (tables, calibration) = report::fit_tables(&result);
    let page = report::ReportPage {
        command: "fit",
        title: &loaded.name,
        inputs: &inputs,
        overrides: &[],
        calibration,
        warnings: warnings.clone(),
        tables,
        printed: &text,
        plots: vec![(SVG_NAME, svg.as_str())],
    };
    let page = report::report_html(&page);
    let mut files: Vec<(&str, &[u8])> =
        vec![(CELL_NAME, cell.as_bytes()), (JSON_NAME, json.as_slice()), (SVG_NAME, svg.as_bytes())];
    if let Some(text) = &uncertainty {
        files.push((UNCERTAINTY_NAME, text.as_bytes()));
    }
    files.push((super::forecast::REPORT_NAME, page.as_bytes()));
    let written = report::write_all_atomic(&config.out_dir, &files)?;

    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_cautions(&warnings)?;
    print_caution()?;
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
    // The values must make a loadable cell table (every input rule applies) …
    input::cell_table_with(&loaded.cell_path, &overrides)?;
    // … and are written into the original file's text, which keeps its comments and layout.
    let original = std::fs::read_to_string(&loaded.cell_path)
        .map_err(|e| CliError::Input(InputError::unreadable(&loaded.cell_path, &e)))?;
    let values: Vec<(Vec<String>, f64)> = overrides
        .iter()
        .filter(|o| o.target == input::OverrideTarget::Cell)
        .filter_map(|o| {
            o.value.as_float().or_else(|| o.value.as_integer().map(|i| i as f64)).map(|v| (o.path.clone(), v))
        })
        .collect();
    let mut origin = origin.to_string();
    let others: Vec<&str> =
        result.parameters.iter().filter(|p| !p.path.starts_with("cell.")).map(|p| p.path.as_str()).collect();
    if !others.is_empty() {
        let _ = write!(origin, "\nFitted inputs outside the cell (see fit.json): {}", others.join(", "));
    }
    Ok(report::fitted_cell_toml(&original, &values, &origin)?)
}
