//! `fadecast forecast SCENARIO`: integrate the aging state over the horizon (cycle jumping, or
//! every cycle for reference), write the fade curve, its summary and plot, print the summary.

use super::{print_caution, scenario_header, CliError};
use crate::forecast::{run_forecast, ForecastOptions, Horizon, StopReason};
use crate::input::{self, InputError, Override};
use crate::report;
use std::fmt::Write as _;
use std::io::Write;
use std::path::PathBuf;

pub const CSV_NAME: &str = "fade.csv";
pub const JSON_NAME: &str = "summary.json";
pub const SVG_NAME: &str = "fade.svg";

pub struct ForecastConfig {
    pub scenario: PathBuf,
    pub out_dir: PathBuf,
    pub overrides: Vec<Override>,
    /// From `--cycles` / `--years`; None means the scenario's own horizon.
    pub horizon: Option<Horizon>,
    pub every_cycle: bool,
}

pub fn run(config: &ForecastConfig, out: &mut impl Write) -> Result<(), CliError> {
    let loaded = input::load_scenario(&config.scenario, &config.overrides)?;
    let horizon = config.horizon.or(loaded.plan.horizon).ok_or_else(|| {
        InputError::new(&config.scenario, "no horizon: add a [horizon] section or give --cycles N or --years Y")
    })?;
    let cycling = loaded.plan.usage.cycles_per_day > 0.0;
    if !cycling && matches!(horizon, Horizon::Cycles(_)) {
        return Err(InputError::command_line_flag(
            "--cycles",
            "a storage-only scenario (0 cycles per day) needs --years",
        )
        .into());
    }
    let scenario = &loaded.scenario;
    let options = ForecastOptions { every_cycle: config.every_cycle, ..ForecastOptions::default() };
    let forecast = run_forecast(scenario, &loaded.plan, horizon, &options);
    if let Some(error) = super::usage_problem(&config.scenario, &config.overrides, &forecast.stop) {
        return Err(error.into());
    }

    // Render everything before touching the disk; a failed run still keeps the rows it computed.
    let csv = report::fade_csv(&forecast.points, &forecast.scale)?;
    let json = report::forecast_json(&forecast, &scenario.name, &scenario.cell.name, cycling)?;
    let svg = report::fade_svg(&forecast.points, &forecast.scale, &format!("{}: forecast", scenario.name), cycling)?;
    let written = report::write_all_atomic(
        &config.out_dir,
        &[(CSV_NAME, csv.as_slice()), (JSON_NAME, json.as_slice()), (SVG_NAME, svg.as_bytes())],
    )?;

    let mut text = scenario_header(&config.scenario, &loaded);
    text.push_str(&report::forecast_text(&forecast, cycling));
    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_caution(out)?;
    match &forecast.stop {
        StopReason::Failed { last_soh_pct, .. } => {
            let why = report::stop_text(&forecast.stop, cycling).unwrap_or_default();
            let reached =
                last_soh_pct.map_or(String::new(), |soh| format!("; last reported state: {soh:.2} % state of health"));
            Err(CliError::Forecast(format!(
                "{why}{reached} (the {} rows computed so far were written)",
                forecast.points.len()
            )))
        }
        _ => Ok(()),
    }
}
