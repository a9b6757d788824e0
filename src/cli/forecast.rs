//! `fadecast forecast SCENARIO`: integrate the aging state over the horizon (cycle jumping, or
//! every cycle for reference), write the fade curve, its summary and plot, print the summary.

use super::{caution_lines, print_caution, scenario_header, CliError};
use crate::forecast::{run_forecast, Forecast, ForecastOptions, Horizon, StopReason, Threshold};
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

    // Render everything before touching the disk; a failed run still keeps the rows it computed.
    let csv = report::fade_csv(&forecast.points)?;
    let json = report::forecast_json(&forecast, &scenario.name, &scenario.cell.name)?;
    let svg = report::fade_svg(&forecast.points, &format!("{}: forecast", scenario.name), cycling)?;
    let written = report::write_all_atomic(
        &config.out_dir,
        &[(CSV_NAME, csv.as_slice()), (JSON_NAME, json.as_slice()), (SVG_NAME, svg.as_bytes())],
    )?;

    let mut text = scenario_header(&config.scenario, &loaded);
    text.push_str(&summary(&forecast, cycling));
    text.push_str(&caution_lines(&forecast.warnings));
    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_caution(out)?;
    match &forecast.stop {
        StopReason::Failed { cycle, detail } => {
            let reached = forecast.points.last().map_or(String::new(), |p| {
                format!("; last reported state: {:.2} % state of health, {:.2} mΩ", p.soh_pct, p.resistance_mohm)
            });
            Err(CliError::Forecast(format!(
                "at {} {cycle:.0}: {detail}{reached} (the {} rows computed so far were written)",
                if cycling { "cycle" } else { "day" },
                forecast.points.len()
            )))
        }
        _ => Ok(()),
    }
}

/// The human summary of a forecast.
fn summary(f: &Forecast, cycling: bool) -> String {
    let mut s = String::new();
    let Some(last) = f.points.last() else {
        return "\nNo forecast points were computed.\n".into();
    };
    let mode = if f.every_cycle { "every cycle simulated" } else { "cycle jumping" };
    let span = if cycling {
        format!("{:.0} cycles, {:.1} years", last.cycle, last.day / 365.25)
    } else {
        format!("{:.1} years of storage", last.day / 365.25)
    };
    let _ = writeln!(
        s,
        "\nForecast over {span} ({mode}: {} cycles simulated, {} integrator steps)",
        f.simulated_cycles, f.accepted_steps
    );
    let _ = writeln!(
        s,
        "  {:<34}{:.3} Ah, {:.2} mΩ",
        "fresh capacity, resistance", f.fresh_capacity_ah, f.fresh_resistance_mohm
    );
    let _ = writeln!(
        s,
        "  {:<34}{:.3} Ah ({:.1} % state of health), {:.2} mΩ ({:+.1} %)",
        "at the horizon", last.capacity_ah, last.soh_pct, last.resistance_mohm, last.resistance_growth_pct
    );
    if cycling {
        let _ = writeln!(
            s,
            "  {:<34}{:.0} equivalent full cycles, {:.0} Ah delivered",
            "throughput", last.efc, last.throughput_ah
        );
    }
    s.push_str("  End of life\n");
    for e in &f.end_of_life {
        let what = match e.threshold {
            Threshold::Capacity => format!("capacity {:.0} %", e.level_pct),
            Threshold::Resistance => format!("resistance {:.0} %", e.level_pct),
        };
        let when = match e.reached {
            Some(at) if cycling => {
                format!("cycle {:.0} ({:.0} equivalent full cycles, {:.1} years)", at.cycles, at.efc, at.years)
            }
            Some(at) => format!("{:.1} years", at.years),
            None => "not reached within the horizon".into(),
        };
        let _ = writeln!(s, "    {what:<32}{when}");
    }
    let l = &f.loss_at_horizon;
    s.push_str("  Lost by the horizon (% of fresh)\n");
    let _ = writeln!(
        s,
        "    {:<32}film on original surface {:.2}, on crack surface {:.2}, plating {:.3}, in lost active material {:.2}",
        "lithium",
        l.film_original_pct,
        l.film_crack_pct,
        l.plating_pct,
        l.stranded_pct
    );
    let _ =
        writeln!(s, "    {:<32}negative {:.2}, positive {:.2}", "active material", l.neg_active_pct, l.pos_active_pct);
    let _ = writeln!(
        s,
        "    {:<32}film {:.0} nm on original, {:.0} nm on crack surface; crack length {:.0} nm (negative)",
        "state", last.film_original_nm, last.film_crack_nm, last.neg_crack_nm
    );
    if let StopReason::Exhausted { cycle } = f.stop {
        let _ = writeln!(
            s,
            "  The cell had no usable capacity left at {} {cycle:.0}; the forecast stops there.",
            if cycling { "cycle" } else { "day" }
        );
    }
    s
}
