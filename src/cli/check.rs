//! `fadecast check FILE...`: load each file, whatever its kind, and print what it describes
//! with the quantities derived from it.

use super::{caution_lines, input_warning_lines, scenario_header, CliError};
use crate::cycle::{balance_cell, simulate_periodic_cycle, Cell, Health, SolverSettings};
use crate::input::{self, InputError, InputKind, Override, OverrideTarget};
use crate::material::constants::SECONDS_PER_HOUR;
use crate::report;
use std::fmt::Write as _;
use std::io::Write;
use std::path::{Path, PathBuf};

/// C-rates in a profile checked on its own are taken relative to a 1 Ah cell.
const ONE_AH_COULOMB: f64 = SECONDS_PER_HOUR;

pub struct CheckConfig {
    pub files: Vec<PathBuf>,
    pub overrides: Vec<Override>,
}

/// Checks every file, even after one fails, so one run lists every bad file.
pub fn run(config: &CheckConfig, out: &mut impl Write) -> Result<(), CliError> {
    let mut failures = Vec::new();
    if let Some(error) = unused_override(config) {
        failures.push(error.into());
    }
    let mut reported = 0;
    for path in &config.files {
        // Each file's report is built in full first, so a failure prints no partial report.
        match check_file(path, &config.overrides) {
            Ok(text) => {
                if reported > 0 {
                    writeln!(out)?;
                }
                out.write_all(text.as_bytes())?;
                reported += 1;
            }
            Err(error) => failures.push(error),
        }
    }
    match failures.len() {
        0 => Ok(()),
        1 => Err(failures.remove(0)),
        _ => Err(CliError::Several(failures)),
    }
}

/// A `--set` value that no checked file takes: a scenario key when no scenario is checked, a
/// `cell.` key with neither a cell nor a scenario, a `profile.` key with neither a profile nor a
/// scenario. Silently ignoring it would report a file as checked with a value it never saw.
fn unused_override(config: &CheckConfig) -> Option<InputError> {
    let kinds: Vec<InputKind> = config.files.iter().filter_map(|path| input::detect_kind(path).ok()).collect();
    let has = |kind: InputKind| kinds.contains(&kind);
    config.overrides.iter().find_map(|item| {
        let taken = match item.target {
            OverrideTarget::Scenario => has(InputKind::Scenario) || has(InputKind::Fit),
            OverrideTarget::Cell => has(InputKind::Cell) || has(InputKind::Scenario) || has(InputKind::Fit),
            OverrideTarget::Profile => has(InputKind::Profile) || has(InputKind::Scenario) || has(InputKind::Fit),
        };
        let hint = if has(InputKind::Cell) {
            format!("; for the cell file write `cell.{}`", item.path.join("."))
        } else if has(InputKind::Profile) {
            format!("; for the step profile write `profile.{}`", item.path.join("."))
        } else {
            String::new()
        };
        let what = match item.target {
            OverrideTarget::Scenario => "a scenario",
            OverrideTarget::Cell => "a cell (or a scenario's cell)",
            OverrideTarget::Profile => "a step profile (or a scenario's profile)",
        };
        (!taken).then(|| {
            InputError::command_line(
                item.key(),
                format!("sets a value of {what}, but no such file is being checked{hint}"),
            )
        })
    })
}

fn check_file(path: &Path, overrides: &[Override]) -> Result<String, CliError> {
    let text = match input::detect_kind(path)? {
        InputKind::Cell => {
            let loaded = input::load_cell(path, overrides)?;
            let mut text = format!("{}: cell \"{}\"\n{}", path.display(), loaded.cell.name, cell_section(&loaded.cell));
            if !loaded.warnings.is_empty() {
                text.push_str("Input warnings\n");
                for warning in &loaded.warnings {
                    let _ = writeln!(text, "  {warning}");
                }
            }
            text
        }
        kind @ (InputKind::Profile | InputKind::Series) => {
            let (duty, start_soc) = input::load_duty(path, ONE_AH_COULOMB, overrides)?;
            let what = if matches!(kind, InputKind::Profile) { "step profile" } else { "measured time series" };
            format!("{}: {what} \"{}\"\n{}", path.display(), duty.name(), report::duty_report(&duty, start_soc, None))
        }
        InputKind::Scenario => check_scenario(path, overrides)?,
        InputKind::Fit => {
            let loaded = input::load_fit(path, overrides)?;
            let scenarios: Vec<String> = loaded.sources.iter().map(|s| s.scenario_path.display().to_string()).collect();
            format!(
                "{}: fit description, cell {}\n{}",
                path.display(),
                loaded.cell_path.display(),
                report::fit_report(&loaded.name, &loaded.problem, &scenarios)
            )
        }
        InputKind::AgingData => {
            let (axis, points) = input::load_measured(path)?;
            format!("{}: measured aging data\n{}", path.display(), report::aging_data_report(axis, &points))
        }
        InputKind::Uncertainty => {
            let spec = input::load_uncertainty_alone(path)?;
            format!("{}: uncertainty section\n{}", path.display(), report::uncertainty_report(&spec))
        }
    };
    Ok(text)
}

fn cell_section(cell: &Cell) -> String {
    let balance = balance_cell(cell, &Health::fresh(cell));
    report::cell_report(cell, balance.as_ref())
}

/// The scenario, its cell and duty cycle, and one simulated periodic cycle.
fn check_scenario(path: &Path, overrides: &[Override]) -> Result<String, CliError> {
    let loaded = input::load_scenario(path, overrides)?;
    let scenario = &loaded.scenario;
    let record = simulate_periodic_cycle(scenario, &Health::fresh(&scenario.cell), &SolverSettings::default())?;
    let capacity_ah = scenario.cell.nominal_capacity_coulomb / SECONDS_PER_HOUR;
    let mut text = scenario_header(path, &loaded);
    // `check` reports what it understood, input warnings included, on standard output.
    text.push_str(&input_warning_lines(&loaded).join("\n"));
    let _ = write!(text, "\nCell \"{}\"\n{}", scenario.cell.name, cell_section(&scenario.cell));
    let _ = write!(
        text,
        "\nDuty cycle \"{}\" (C-rates relative to this cell's {} Ah)\n{}",
        scenario.duty.name(),
        report::text::sig(capacity_ah, 4),
        report::duty_report(&scenario.duty, scenario.start_soc, Some(capacity_ah))
    );
    let _ = writeln!(text, "\nOne periodic cycle at beginning of life");
    let _ = writeln!(text, "  {:<28}{}", "duration", report::text::duration(record.duration_s));
    let _ = writeln!(
        text,
        "  {:<28}{:.3} Ah out, {:.3} Ah in",
        "charge throughput",
        record.charge_out_coulomb / SECONDS_PER_HOUR,
        record.charge_in_coulomb / SECONDS_PER_HOUR
    );
    text.push_str(&caution_lines(&report::cycle_cautions(&record, &scenario.cell)));
    Ok(text)
}
