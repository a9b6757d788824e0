//! `fadecast table SCENARIO --ambient-c 10,25,40 --c-rate 0.5,1,2 --soc-window 10-90,0-100`:
//! the scenario's cell under a standard cycle at every condition of the grid, forecast and
//! written as one long-format CSV for system models to interpolate.

use super::{print_caution, print_cautions, CliError};
use crate::compare::{run_table_observed, table_tasks, CompareError, Condition, TableConfig};
use crate::forecast::{ForecastOptions, Horizon, StopReason};
use crate::input::{self, InputError, Override};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use crate::report;
use std::fmt::Write as _;
use std::io::Write;
use std::path::PathBuf;

pub const CSV_NAME: &str = "table.csv";
/// Largest grid one run may ask for: each condition is a forecast (and one per sample).
pub const MAX_CONDITIONS: usize = 1000;
pub const MAX_SAMPLES: u64 = 10_000;

pub struct TableCommandConfig {
    pub scenario: PathBuf,
    /// As given: `10,25,40`, `0.5,1,2`, `10-90,0-100`.
    pub ambient_c: String,
    pub c_rate: String,
    pub soc_window: String,
    pub overrides: Vec<Override>,
    pub sampling: super::Sampling,
    pub horizon: Option<Horizon>,
    pub out_dir: PathBuf,
}

/// Parses a comma-separated list of numbers for `flag`, each checked by `rule`.
pub fn parse_number_list(
    flag: &str,
    text: &str,
    rule: impl Fn(f64) -> Result<(), String>,
) -> Result<Vec<f64>, InputError> {
    let bad = |message: String| InputError::command_line_flag(flag, message);
    let mut values = Vec::new();
    for part in text.split(',') {
        let part = part.trim();
        if part.is_empty() {
            return Err(bad(format!("empty entry in `{text}`; give comma-separated numbers such as 10,25,40")));
        }
        let value: f64 = part.parse().map_err(|_| bad(format!("`{part}` is not a number")))?;
        if !value.is_finite() {
            return Err(bad(format!("`{part}` is not a finite number")));
        }
        rule(value).map_err(bad)?;
        if values.contains(&value) {
            return Err(bad(format!("{value} is listed twice")));
        }
        values.push(value);
    }
    Ok(values)
}

/// Parses `10-90,0-100` into (low, high) fractions, 0 ≤ low < high ≤ 100 %.
pub fn parse_soc_windows(text: &str) -> Result<Vec<(f64, f64)>, InputError> {
    let bad = |message: String| InputError::command_line_flag("--soc-window", message);
    let mut windows = Vec::new();
    for part in text.split(',') {
        let part = part.trim();
        if part.is_empty() {
            return Err(bad(format!("empty entry in `{text}`; give windows such as 10-90,0-100")));
        }
        let expected = || bad(format!("expected LOW-HIGH in percent such as 10-90, found `{part}`"));
        let (low, high) = part.split_once('-').ok_or_else(expected)?;
        let low: f64 = low.trim().parse().map_err(|_| expected())?;
        let high: f64 = high.trim().parse().map_err(|_| expected())?;
        if !(0.0..=100.0).contains(&low) || !(0.0..=100.0).contains(&high) {
            return Err(bad(format!("`{part}`: states of charge lie between 0 and 100 %")));
        }
        if low >= high {
            return Err(bad(format!("`{part}`: the lower state of charge must be below the upper")));
        }
        let window = (low / 100.0, high / 100.0);
        if windows.contains(&window) {
            return Err(bad(format!("`{part}` is listed twice")));
        }
        windows.push(window);
    }
    Ok(windows)
}

pub fn run(config: &TableCommandConfig, out: &mut impl Write) -> Result<(), CliError> {
    let sampling = &config.sampling;
    if sampling.samples > MAX_SAMPLES {
        return Err(InputError::command_line_flag(
            "--samples",
            format!("must be at most {MAX_SAMPLES}, found {}", sampling.samples),
        )
        .into());
    }
    let template = input::ScenarioTemplate::load(&config.scenario, &config.overrides)?;
    let loaded = template.loaded();
    let cell = &loaded.scenario.cell;
    let (t_min_c, t_max_c) = (cell.temperature_min_k - ZERO_CELSIUS_K, cell.temperature_max_k - ZERO_CELSIUS_K);
    let ambients = parse_number_list("--ambient-c", &config.ambient_c, |t| {
        if (t_min_c..=t_max_c).contains(&t) {
            Ok(())
        } else {
            Err(format!("{t} °C lies outside the cell's temperature window of {t_min_c} to {t_max_c} °C"))
        }
    })?;
    let nominal_a = cell.nominal_capacity_coulomb / SECONDS_PER_HOUR;
    let limit_a = cell.max_charge_current_a.min(cell.max_discharge_current_a);
    let c_rates = parse_number_list("--c-rate", &config.c_rate, |c| {
        if c <= 0.0 {
            Err(format!("C-rates must be positive, found {c}"))
        } else if c * nominal_a > limit_a * (1.0 + 1e-9) {
            Err(format!(
                "{c}C is {:.3} A, above the cell's current limit of {limit_a} A (the lower of its charge and discharge limits)",
                c * nominal_a
            ))
        } else {
            Ok(())
        }
    })?;
    let windows = parse_soc_windows(&config.soc_window)?;
    let mut conditions = Vec::new();
    for &ambient_c in &ambients {
        for &c_rate in &c_rates {
            for &(soc_low, soc_high) in &windows {
                conditions.push(Condition { ambient_c, c_rate, soc_low, soc_high });
            }
        }
    }
    if conditions.len() > MAX_CONDITIONS {
        return Err(InputError::command_line_flag(
            "--ambient-c",
            format!("the grid has {} conditions; at most {MAX_CONDITIONS}", conditions.len()),
        )
        .into());
    }
    let horizon = config.horizon.or(loaded.plan.horizon).ok_or_else(|| {
        InputError::new(&config.scenario, "no horizon: add a [horizon] section or give --cycles N or --years Y")
    })?;
    if loaded.plan.usage.cycles_per_day <= 0.0 {
        return Err(InputError::new(
            &config.scenario,
            "a fade table cycles the cell: the scenario's usage needs cycles_per_day above 0",
        )
        .into());
    }
    let mut notes = loaded.warnings.clone();
    let from_file = match &sampling.uncertainty {
        Some(file) => Some(input::load_uncertainty_file(file, &config.scenario, &config.overrides)?),
        None => None,
    };
    let spec = from_file.as_ref().unwrap_or(&loaded.uncertainty);
    let sampler = super::bands::optional_sampler(
        spec,
        sampling.samples,
        sampling.seed,
        &config.scenario,
        "the table has no quantile columns",
        &mut notes,
    )?
    .map(|sampler| sampler.with_cells(loaded.scenario.pack.as_ref().map_or(0, |pack| pack.len())));
    let parameters: Vec<String> = spec.parameters.iter().map(|p| p.path.clone()).collect();
    let paths = input::number_paths(&parameters)?;
    let build = |values: &[f64]| template.build_drawn(spec, &paths, values).map_err(|e| e.to_string());
    let quantiles = sampling.outer_quantiles();
    let table_config = TableConfig {
        samples: sampling.samples,
        horizon,
        options: ForecastOptions::default(),
        jobs: sampling.jobs,
        quantiles: [quantiles.0, 0.5, quantiles.1],
    };
    let nominal = (loaded.scenario.clone(), loaded.plan.clone());
    let progress =
        super::progress_bar(table_tasks(&conditions, sampler.as_ref(), &table_config), sampling.progress, "forecasts");
    let done = || progress.inc(1);
    let results = run_table_observed(&conditions, &nominal, sampler.as_ref(), &table_config, &build, &done).map_err(
        |e| -> CliError {
            match e {
                CompareError::Unrunnable { name, detail, .. } => InputError::command_line_flag(
                    "--c-rate",
                    format!("the standard cycle at {name} cannot run on the cell at beginning of life: {detail}"),
                )
                .into(),
                CompareError::Threads { .. } => CliError::Forecast(e.to_string()),
            }
        },
    )?;
    progress.finish_and_clear();

    let csv = report::table_csv(&results, table_config.quantiles)?;
    let written = report::write_all_atomic(&config.out_dir, &[(CSV_NAME, csv.as_slice())])?;

    let mut text = format!("{}: cell \"{}\"\n", config.scenario.display(), cell.name);
    let _ = writeln!(
        text,
        "  {} conditions ({} ambient × {} C-rate × {} window), standard cycle: CC discharge and CC charge at the C-rate \
         within the window and the cell's voltage limits, 10 min rests",
        conditions.len(),
        ambients.len(),
        c_rates.len(),
        windows.len()
    );
    if let Some(sampler) = &sampler {
        let _ = writeln!(text, "  {} samples per condition (seed {})", sampler.samples(), sampling.seed);
    }
    let (rows, cautions) = report::table_text(&results, notes);
    text.push_str(&rows);
    let failures: Vec<String> = results
        .iter()
        .filter(|r| matches!(r.nominal.stop, StopReason::Failed { .. }))
        .filter_map(|r| report::stop_text(&r.nominal.stop, true).map(|why| format!("{} {why}", r.condition.label())))
        .collect();
    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_cautions(&cautions)?;
    print_caution()?;
    if failures.is_empty() {
        Ok(())
    } else {
        Err(CliError::Forecast(format!("{} (the rows computed so far were written)", failures.join("; "))))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn malformed_grids_are_refused_naming_the_flag() {
        assert_eq!(parse_soc_windows("10-90, 0-100").unwrap(), vec![(0.1, 0.9), (0.0, 1.0)]);
        for bad in ["10-", "90-10", "abc", "0-120", "", "10-90,,0-100", "10-90,10-90", "50-50"] {
            let e = parse_soc_windows(bad).unwrap_err().to_string();
            assert!(e.contains("--soc-window"), "{bad}: {e}");
        }
        let positive = |v: f64| if v > 0.0 { Ok(()) } else { Err("must be positive".to_string()) };
        assert_eq!(parse_number_list("--c-rate", "0.5,1,2", positive).unwrap(), vec![0.5, 1.0, 2.0]);
        for bad in ["", "1,", "a", "1,-1", "1,1", "inf"] {
            assert!(parse_number_list("--c-rate", bad, positive).is_err(), "{bad}");
        }
    }
}
