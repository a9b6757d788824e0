//! `fadecast forecast SCENARIO`: integrate the aging state over the horizon (cycle jumping, or
//! every cycle for reference), write the fade curve, its summary and plot, print the summary.

use super::{input_warning_lines, print_caution, print_cautions, scenario_header, CliError};
use crate::forecast::{run_forecast, ForecastOptions, Horizon, StopReason};
use crate::input::{self, InputError, Override};
use crate::report;
use std::fmt::Write as _;
use std::io::Write;
use std::path::PathBuf;

pub const CSV_NAME: &str = "fade.csv";
pub const JSON_NAME: &str = "summary.json";
pub const SVG_NAME: &str = "fade.svg";
pub const PACK_CSV_NAME: &str = "pack.csv";
pub const PACK_SVG_NAME: &str = "pack.svg";
/// The run as one self-contained page (every command that forecasts writes one).
pub const REPORT_NAME: &str = "report.html";

pub struct ForecastConfig {
    pub scenario: PathBuf,
    pub out_dir: PathBuf,
    pub overrides: Vec<Override>,
    /// From `--cycles` / `--years`; None means the scenario's own horizon.
    pub horizon: Option<Horizon>,
    pub every_cycle: bool,
    /// Seed of a pack's cells drawn apart.
    pub seed: u64,
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
    let (drawn_scenario, drawn_plan) = draw_cells(config, &loaded)?;
    let scenario = &drawn_scenario;
    let options = ForecastOptions { every_cycle: config.every_cycle, ..ForecastOptions::default() };
    let forecast = run_forecast(scenario, &drawn_plan, horizon, &options);
    if let Some(error) = super::usage_problem(&config.scenario, &config.overrides, &forecast.stop) {
        return Err(error.into());
    }

    // Render everything before touching the disk; a failed run still keeps the rows it computed.
    let csv = report::fade_csv(&forecast.points, &forecast.scale)?;
    let json = report::forecast_json(&forecast, &scenario.name, &scenario.cell.name, cycling)?;
    let svg = report::fade_svg(
        &forecast.points,
        &forecast.scale,
        &forecast.end_of_life,
        // The fitted range on this plot's axis (cycles when cycling, days when storing).
        drawn_plan.calibration.and_then(|c| if cycling { c.cycles } else { c.days }),
        &format!("{}: forecast", scenario.name),
        cycling,
    )?;
    let mut text = scenario_header(&config.scenario, &loaded);
    text.push_str(&report::forecast_text(&forecast, cycling));
    let mut plots = vec![(SVG_NAME, svg.clone())];
    let mut files = vec![(CSV_NAME, csv), (JSON_NAME, json), (SVG_NAME, svg.into_bytes())];
    if let Some(pack) = &forecast.pack {
        files.push((PACK_CSV_NAME, report::pack_csv(&forecast.points, pack)?));
        let title = format!("{}: cells of the pack", scenario.name);
        let svg = report::pack_svg(&forecast.points, pack, &forecast.end_of_life, &title, cycling)?;
        files.push((PACK_SVG_NAME, svg.clone().into_bytes()));
        plots.push((PACK_SVG_NAME, svg));
        text.push_str(&report::pack_text(pack, cycling));
    }
    let inputs = input::ScenarioTemplate::load(&config.scenario, &config.overrides)?.input_digests()?;
    let kinds: Vec<_> = forecast.warnings.iter().map(|w| w.kind()).collect();
    let mut warnings: Vec<String> = loaded.warnings.clone();
    warnings.extend(forecast.warnings.iter().map(report::warning_text));
    warnings.extend(report::stop_text(&forecast.stop, cycling));
    let page = report::ReportPage {
        command: "forecast",
        title: &scenario.name,
        inputs: &inputs,
        overrides: &[],
        calibration: report::calibration_status(drawn_plan.calibration.as_ref(), &kinds),
        warnings,
        tables: report::forecast_tables(&forecast, cycling),
        printed: &text,
        plots: plots.iter().map(|(name, svg)| (*name, svg.as_str())).collect(),
    };
    files.push((REPORT_NAME, report::report_html(&page).into_bytes()));
    let borrowed: Vec<(&str, &[u8])> = files.iter().map(|(name, bytes)| (*name, bytes.as_slice())).collect();
    let written = report::write_all_atomic(&config.out_dir, &borrowed)?;

    let mut cautions = input_warning_lines(&loaded);
    cautions.extend(report::forecast_warning_lines(&forecast));
    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_cautions(&cautions)?;
    print_caution()?;
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

/// The scenario as forecast: a pack whose `[uncertainty]` marks parameters per cell has each
/// cell drawn apart (sample 0 of `--seed`, cell c from the stream of (seed, 0, c)); every
/// other input keeps the files' (and `--set`) values.
fn draw_cells(
    config: &ForecastConfig,
    loaded: &input::LoadedScenario,
) -> Result<(crate::cycle::Scenario, crate::forecast::Plan), CliError> {
    let cells = loaded.scenario.pack.as_ref().map_or(0, |pack| pack.len());
    if cells == 0 || !loaded.uncertainty.has_per_cell() {
        return Ok((loaded.scenario.clone(), loaded.plan.clone()));
    }
    let spec = crate::ensemble::UncertaintySpec {
        parameters: loaded.uncertainty.parameters.iter().filter(|p| p.per_cell).cloned().collect(),
        groups: Vec::new(),
        sampling: crate::ensemble::Sampling::MonteCarlo,
    };
    let sampler = crate::ensemble::Sampler::new(&spec, config.seed, 1)
        .map_err(|e| InputError::new(&config.scenario, format!("uncertainty: {e}")))?
        .with_cells(cells);
    let template = input::ScenarioTemplate::load(&config.scenario, &config.overrides)?;
    let paths: Vec<String> = spec.parameters.iter().map(|p| p.path.clone()).collect();
    let paths = input::number_paths(&paths)?;
    // Sample 0's own values of the per-cell parameters are not used: only the cells' are.
    let mut values = sampler.draw_for_build(0);
    values[..paths.len()].fill(f64::NAN);
    let mut nominal = spec.clone();
    nominal.parameters.iter_mut().for_each(|p| p.per_cell = true);
    Ok(template.build_drawn(&nominal, &paths, &values)?)
}
