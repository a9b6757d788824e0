//! The command layer: argument definitions (clap stays inside this module), one handler per
//! command, and the mapping of failures to exit codes. Handlers load inputs, call the physics
//! and hand results to [`crate::report`]; they do no physics themselves.

mod bands;
mod check;
mod compare;
mod cycle;
mod fit;
mod forecast;
mod table;

use crate::cycle::{CycleError, DutyCycle};
use crate::input::{self, InputError, LoadedScenario, Override};
use crate::material::constants::ZERO_CELSIUS_K;
use crate::report::text::sig;
use crate::report::ReportError;
use clap::{Args, CommandFactory, Parser, Subcommand};
use std::fmt::Write as _;
use std::io::Write;
use std::path::{Path, PathBuf};
use thiserror::Error;

#[derive(Debug, Parser)]
#[command(
    name = "fadecast",
    version,
    about = "Physics-based forecasts of lithium-ion capacity fade and resistance growth",
    long_about = "Physics-based forecasts of lithium-ion capacity fade and resistance growth.\n\n\
                  Results are engineering estimates from a reduced model; they do not replace \
                  qualification and abuse testing."
)]
struct Arguments {
    #[command(flatten)]
    overrides: OverrideArgs,

    #[command(subcommand)]
    command: Command,
}

/// `--set`, accepted before and after the command name. (A clap `global` argument would
/// drop the occurrences before the command when more follow it, so each level has its own
/// and [`run`] joins them in command-line order.)
#[derive(Debug, Args)]
struct OverrideArgs {
    /// Override an input value (repeatable), e.g. --set ambient_c=40
    ///
    /// A plain key changes the scenario (`ambient_c=40`), `cell.` its cell
    /// (`cell.negative.particle_radius_um=4`), `profile.` its step profile
    /// (`profile.block.0.step.0.charge_c=1.5`, blocks and steps counted from 0).
    #[arg(long = "set", value_name = "KEY=VALUE")]
    set: Vec<String>,
}

/// `--cycles N | --years Y`: a horizon that overrides the scenario's. Checked by fadecast
/// itself (not clap), so a negative or doubled horizon gets the one-line input error.
#[derive(Debug, Args)]
struct HorizonArgs {
    /// Horizon in cycles (overrides the scenario's).
    #[arg(long, value_name = "N", allow_negative_numbers = true)]
    cycles: Option<f64>,
    /// Horizon in years (overrides the scenario's).
    #[arg(long, value_name = "Y", allow_negative_numbers = true)]
    years: Option<f64>,
}

impl HorizonArgs {
    fn parse(&self) -> Result<Option<crate::forecast::Horizon>, InputError> {
        input::parse_horizon(self.cycles, self.years)
    }
}

/// The options every sampling command shares (`bands`, `compare`, `table`), one definition
/// flattened into each so they read and behave alike.
#[derive(Debug, Args)]
struct SamplingArgs {
    /// Number of samples (bands: required, all shards together; compare and table: per
    /// alternative or condition, 0 for one run of the nominal inputs).
    #[arg(long, value_name = "N")]
    samples: Option<u64>,
    /// Random seed: the same seed gives the same numbers, bit for bit.
    #[arg(long, value_name = "S", default_value_t = 1)]
    seed: u64,
    /// Worker threads (default: the machine's cores).
    #[arg(long, value_name = "J")]
    jobs: Option<usize>,
    /// Quantiles in percent (compare and table report the median and the outermost two).
    #[arg(long, value_name = "LIST", default_value = "5,50,95")]
    quantiles: String,
    /// Sample this file's [uncertainty] section instead of the scenario's (for example the
    /// uncertainty.toml `fadecast fit` writes).
    #[arg(long, value_name = "FILE")]
    uncertainty: Option<PathBuf>,
    /// No progress bar.
    #[arg(long)]
    quiet: bool,
}

/// The sampling options, checked.
struct Sampling {
    samples: u64,
    seed: u64,
    jobs: usize,
    /// Fractions, ascending.
    quantiles: Vec<f64>,
    uncertainty: Option<PathBuf>,
    /// Whether to show progress (a terminal and no --quiet).
    progress: bool,
}

impl SamplingArgs {
    fn parse(self) -> Result<Sampling, InputError> {
        use std::io::IsTerminal;
        Ok(Sampling {
            samples: self.samples.unwrap_or(0),
            seed: self.seed,
            jobs: parse_jobs(self.jobs)?,
            quantiles: bands::parse_quantiles(&self.quantiles)?,
            uncertainty: self.uncertainty,
            progress: !self.quiet && std::io::stderr().is_terminal(),
        })
    }
}

impl Sampling {
    /// The outer quantiles compare and table report beside the median.
    fn outer_quantiles(&self) -> (f64, f64) {
        let low = self.quantiles.first().copied().unwrap_or(0.05).min(0.5);
        let high = self.quantiles.last().copied().unwrap_or(0.95).max(0.5);
        (low, high)
    }
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Load input files and print what they describe
    ///
    /// Accepts cell, step-profile, time-series and scenario files (the kind is detected) and
    /// prints the quantities derived from each: electrode capacities and balance for a cell,
    /// the steps in words for a profile, totals for a series, and for a scenario its cell plus
    /// one simulated cycle.
    Check {
        /// Files to check; each file's kind is detected.
        #[arg(required = true, value_name = "FILE")]
        files: Vec<PathBuf>,
        #[command(flatten)]
        overrides: OverrideArgs,
    },
    /// Simulate one duty cycle and write its trace and plot
    ///
    /// Runs the scenario's duty cycle on the fresh cell until the cycle repeats itself
    /// (periodic state), then writes DIR/cycle.csv (the trace) and DIR/cycle.svg (voltage,
    /// current, temperature and surface stress over time) and prints a summary.
    Cycle {
        /// Scenario file (TOML).
        scenario: PathBuf,
        /// Directory for the outputs; created if missing.
        #[arg(long, value_name = "DIR", default_value = "cycle")]
        out: PathBuf,
        #[command(flatten)]
        overrides: OverrideArgs,
    },
    /// Forecast capacity fade and resistance growth over thousands of cycles or years
    ///
    /// Integrates the aging mechanisms over the horizon by cycle jumping (an adaptive
    /// integrator that simulates only the cycles it needs), or every cycle with
    /// --every-cycle. Writes DIR/fade.csv (one row per reported point), DIR/summary.json
    /// (end of life per threshold, values at the horizon, loss by mechanism, warnings) and
    /// DIR/fade.svg, and prints a summary.
    Forecast {
        /// Scenario file (TOML).
        scenario: PathBuf,
        /// Directory for the outputs; created if missing.
        #[arg(long, value_name = "DIR", default_value = "forecast")]
        out: PathBuf,
        #[command(flatten)]
        horizon: HorizonArgs,
        /// Simulate every cycle (the reference the jumping is checked against).
        #[arg(long)]
        every_cycle: bool,
        /// Seed of a pack's cells drawn apart (parameters marked `per_cell` in
        /// [uncertainty]); cell c draws from a stream seeded by (seed, 0, c).
        #[arg(long, value_name = "S", default_value_t = 1)]
        seed: u64,
        #[command(flatten)]
        overrides: OverrideArgs,
    },
    /// Monte Carlo bands, end-of-life distribution and warranty odds
    ///
    /// Draws the scenario's [uncertainty] inputs, forecasts every sample in parallel and writes
    /// DIR/bands.csv (quantiles per reported point), DIR/samples.csv (one row per sample),
    /// DIR/summary.json (end-of-life quantiles with Monte Carlo errors, warranty odds with a
    /// 95 % Clopper–Pearson interval, rank correlations), DIR/bands.svg and
    /// DIR/sensitivity.svg. Sample i draws from a stream seeded by (seed, i): the numbers do
    /// not depend on --jobs or on the split into shards.
    Bands {
        /// Scenario file (TOML) with an [uncertainty] section.
        scenario: PathBuf,
        #[command(flatten)]
        sampling: SamplingArgs,
        /// Run only shard K of N (sample i belongs to shard i mod N + 1); merge with `fadecast merge`.
        #[arg(long, value_name = "K/N")]
        shard: Option<String>,
        /// Warranty point: state of health still at least SOH_PCT after YEARS.
        #[arg(long, value_name = "YEARS:SOH_PCT")]
        warranty: Option<String>,
        /// Directory for the outputs and the run's journal; created if missing.
        #[arg(long, value_name = "DIR", default_value = "bands")]
        out: PathBuf,
        #[command(flatten)]
        horizon: HorizonArgs,
        /// Continue the interrupted run in DIR, keeping the samples it finished.
        #[arg(long)]
        resume: bool,
        /// Start over in a DIR that holds an earlier run's journal, discarding it.
        #[arg(long, conflicts_with = "resume")]
        force: bool,
        #[command(flatten)]
        overrides: OverrideArgs,
    },
    /// Compare charge protocols, limits or windows on the same drawn samples
    ///
    /// Alternatives: each --profile (the scenario with that step profile), then each --variant
    /// (the scenario with the variant's overrides); without --profile the scenario itself is the
    /// first. Every alternative runs on the same samples of the scenario's [uncertainty] section
    /// (common random numbers), so differences against the first are paired; without samples
    /// each runs once. Prints the comparison and writes DIR/compare.csv and DIR/compare.svg.
    Compare {
        /// Scenario file (TOML).
        scenario: PathBuf,
        /// A step profile to compare (repeatable); its file name names the alternative.
        #[arg(long = "profile", value_name = "FILE")]
        profiles: Vec<PathBuf>,
        /// An alternative given by overrides (repeatable), e.g. 'hot depot: ambient_c=40'.
        #[arg(long = "variant", value_name = "'NAME: KEY=VALUE ...'")]
        variants: Vec<String>,
        #[command(flatten)]
        sampling: SamplingArgs,
        #[command(flatten)]
        horizon: HorizonArgs,
        /// Directory for the outputs; created if missing.
        #[arg(long, value_name = "DIR", default_value = "compare")]
        out: PathBuf,
        #[command(flatten)]
        overrides: OverrideArgs,
    },
    /// Fade table over a grid of ambient, C-rate and state-of-charge window, for system models
    ///
    /// Runs the scenario's cell under a standard cycle (constant-current discharge and charge
    /// at the C-rate within the window and the cell's voltage limits, 10 min rests) at each
    /// condition and writes DIR/table.csv: one row per condition and reported point; with
    /// --samples, quantile columns (p5, p50, p95) of state of health and resistance growth.
    Table {
        /// Scenario file (TOML): its cell, usage, horizon and end of life are used.
        scenario: PathBuf,
        /// Ambient temperatures, °C, comma-separated.
        #[arg(long = "ambient-c", value_name = "LIST", allow_hyphen_values = true)]
        ambient_c: String,
        /// C-rates of charge and discharge, comma-separated.
        #[arg(long = "c-rate", value_name = "LIST", allow_hyphen_values = true)]
        c_rate: String,
        /// State-of-charge windows in percent, LOW-HIGH, comma-separated.
        #[arg(long = "soc-window", value_name = "LIST", allow_hyphen_values = true)]
        soc_window: String,
        #[command(flatten)]
        sampling: SamplingArgs,
        #[command(flatten)]
        horizon: HorizonArgs,
        /// Directory for the outputs; created if missing.
        #[arg(long, value_name = "DIR", default_value = "table")]
        out: PathBuf,
        #[command(flatten)]
        overrides: OverrideArgs,
    },
    /// Fit model inputs to measured capacity (and resistance) data
    ///
    /// Reads a fit description (datasets of measured points, each with the scenario it was
    /// measured under, and the free parameters with bounds; FORMATS.md), fits by bounded
    /// Levenberg–Marquardt from several starts and writes DIR/fitted-cell.toml (the cell with
    /// the fitted values, usable by every command), DIR/fit.json (values, standard errors,
    /// correlations, residuals, model evaluations), DIR/uncertainty.toml (for `bands
    /// --uncertainty`) and DIR/fit.svg (data, fitted curves and residuals).
    Fit {
        /// Fit description (TOML).
        fit: PathBuf,
        /// Fit only the points up to N (cycles, days or equivalent full cycles, as each dataset
        /// counts) and report the forecast error on the rest.
        #[arg(long, value_name = "N", allow_negative_numbers = true)]
        holdout_after: Option<f64>,
        /// Worker threads for the datasets' forecasts (default: the machine's cores).
        #[arg(long, value_name = "J")]
        jobs: Option<usize>,
        /// No progress bar.
        #[arg(long)]
        quiet: bool,
        /// Directory for the outputs; created if missing.
        #[arg(long, value_name = "DIR", default_value = "fit")]
        out: PathBuf,
        #[command(flatten)]
        overrides: OverrideArgs,
    },
    /// Print a shell completion script, generated from these definitions
    ///
    /// For example `fadecast completions bash > ~/.local/share/bash-completion/completions/fadecast`
    /// or `fadecast completions zsh > "${fpath[1]}/_fadecast"`.
    Completions {
        /// The shell to complete in.
        #[arg(value_enum)]
        shell: clap_complete::Shell,
    },
    /// Print the manual page (roff), generated from these definitions
    ///
    /// For example `fadecast man > fadecast.1 && man ./fadecast.1`.
    Man,
    /// Combine the shards of one `bands` run into the outputs of a single run
    Merge {
        /// The shards' output directories.
        #[arg(required = true, value_name = "DIR")]
        shards: Vec<PathBuf>,
        /// Directory for the merged outputs; created if missing.
        #[arg(long, value_name = "DIR", default_value = "merge")]
        out: PathBuf,
    },
}

/// Why a command failed. [`CliError::exit_code`] says which exit code it maps to.
#[derive(Debug, Error)]
pub enum CliError {
    #[error("{0}")]
    Input(#[from] InputError),
    /// The message carries the step and time the simulation reached.
    #[error("simulation failed: {0}")]
    Cycle(#[from] CycleError),
    #[error("{0}")]
    Report(#[from] ReportError),
    /// The forecast stopped early; the message says where and why.
    #[error("forecast failed {0}")]
    Forecast(String),
    #[error("could not write to standard output: {0}")]
    Stdout(#[from] std::io::Error),
    /// Several files failed (`check` goes on past a bad file); one line each.
    #[error("{}", .0.iter().map(ToString::to_string).collect::<Vec<_>>().join("\n"))]
    Several(Vec<CliError>),
}

impl CliError {
    /// 2 for bad input (as clap uses for bad arguments), 1 for a runtime failure.
    pub fn exit_code(&self) -> u8 {
        match self {
            CliError::Input(_) => 2,
            // An output directory that may not be written is the user's path to fix, like any
            // other bad argument; a full disk or a failing device is a runtime failure.
            CliError::Report(ReportError::Io { source, .. })
                if matches!(
                    source.kind(),
                    std::io::ErrorKind::PermissionDenied
                        | std::io::ErrorKind::ReadOnlyFilesystem
                        | std::io::ErrorKind::NotADirectory
                        | std::io::ErrorKind::AlreadyExists
                ) =>
            {
                2
            }
            CliError::Cycle(_) | CliError::Forecast(_) | CliError::Report(_) | CliError::Stdout(_) => 1,
            CliError::Several(errors) => errors.iter().map(CliError::exit_code).max().unwrap_or(1),
        }
    }
}

/// Parses the process arguments and runs the command. Argument errors print clap's usage and
/// exit with code 2 from here; every other failure is returned.
pub fn run() -> Result<(), CliError> {
    let Arguments { overrides: before_command, command } = Arguments::parse();
    let mut stdout = std::io::stdout().lock();
    check_out_dir(&command)?;
    match command {
        Command::Check { files, overrides } => {
            let overrides = parse_overrides(&before_command, &overrides)?;
            check::run(&check::CheckConfig { files, overrides }, &mut stdout)
        }
        Command::Cycle { scenario, out, overrides } => {
            let overrides = parse_overrides(&before_command, &overrides)?;
            cycle::run(&cycle::CycleConfig { scenario, out_dir: out, overrides }, &mut stdout)
        }
        Command::Forecast { scenario, out, horizon, every_cycle, seed, overrides } => {
            let overrides = parse_overrides(&before_command, &overrides)?;
            let horizon = horizon.parse()?;
            let config = forecast::ForecastConfig { scenario, out_dir: out, overrides, horizon, every_cycle, seed };
            forecast::run(&config, &mut stdout)
        }
        Command::Bands { scenario, sampling, shard, warranty, out, horizon, resume, force, overrides } => {
            let overrides_text: Vec<String> = before_command.set.iter().chain(&overrides.set).cloned().collect();
            let overrides = parse_overrides(&before_command, &overrides)?;
            if sampling.samples.is_none() {
                return Err(InputError::command_line_flag("--samples", "bands needs --samples N").into());
            }
            let sampling = sampling.parse()?;
            let config = bands::BandsConfig {
                scenario,
                out_dir: out,
                overrides,
                overrides_text,
                samples: sampling.samples,
                seed: sampling.seed,
                jobs: sampling.jobs,
                shard: shard.as_deref().map(bands::parse_shard).transpose()?.unwrap_or(crate::ensemble::Shard::WHOLE),
                quantiles: sampling.quantiles,
                warranty: warranty.as_deref().map(bands::parse_warranty).transpose()?,
                horizon: horizon.parse()?,
                resume,
                force,
                quiet: !sampling.progress,
                uncertainty_file: sampling.uncertainty,
            };
            bands::run(&config, &mut stdout)
        }
        Command::Compare { scenario, profiles, variants, sampling, horizon, out, overrides } => {
            let overrides = parse_overrides(&before_command, &overrides)?;
            let config = compare::CompareCommandConfig {
                scenario,
                profiles,
                variants,
                overrides,
                sampling: sampling.parse()?,
                horizon: horizon.parse()?,
                out_dir: out,
            };
            compare::run(&config, &mut stdout)
        }
        Command::Table { scenario, ambient_c, c_rate, soc_window, sampling, horizon, out, overrides } => {
            let overrides = parse_overrides(&before_command, &overrides)?;
            let config = table::TableCommandConfig {
                scenario,
                ambient_c,
                c_rate,
                soc_window,
                overrides,
                sampling: sampling.parse()?,
                horizon: horizon.parse()?,
                out_dir: out,
            };
            table::run(&config, &mut stdout)
        }
        Command::Fit { fit, holdout_after, jobs, quiet, out, overrides } => {
            use std::io::IsTerminal;
            let overrides = parse_overrides(&before_command, &overrides)?;
            let config = fit::FitConfig {
                fit_file: fit,
                out_dir: out,
                overrides,
                holdout_after,
                jobs: parse_jobs(jobs)?,
                progress: !quiet && std::io::stderr().is_terminal(),
            };
            fit::run(&config, &mut stdout)
        }
        Command::Merge { shards, out } => bands::merge(&shards, &out, &mut stdout),
        Command::Completions { shell } => {
            clap_complete::generate(shell, &mut Arguments::command(), "fadecast", &mut stdout);
            Ok(())
        }
        Command::Man => {
            clap_mangen::Man::new(Arguments::command()).render(&mut stdout)?;
            Ok(())
        }
    }
}

/// Refuses, before any work, an output directory that cannot be one: a path that is a file,
/// or lies under a file, or (for `merge`) one of the shard directories being merged.
fn check_out_dir(command: &Command) -> Result<(), InputError> {
    let (out, inputs): (&Path, &[PathBuf]) = match command {
        Command::Check { .. } | Command::Completions { .. } | Command::Man => return Ok(()),
        Command::Cycle { out, .. }
        | Command::Forecast { out, .. }
        | Command::Bands { out, .. }
        | Command::Compare { out, .. }
        | Command::Table { out, .. }
        | Command::Fit { out, .. } => (out, &[]),
        Command::Merge { out, shards } => (out, shards),
    };
    let same = |a: &Path, b: &Path| match (std::fs::canonicalize(a), std::fs::canonicalize(b)) {
        (Ok(a), Ok(b)) => a == b,
        _ => a == b,
    };
    if let Some(input) = inputs.iter().find(|input| same(out, input)) {
        return Err(InputError::command_line_flag(
            "--out",
            format!("`{}` is one of the inputs being merged; give a new directory", input.display()),
        ));
    }
    // The nearest part of the path that exists must be a directory.
    let mut existing = Some(out);
    while let Some(path) = existing {
        if path.as_os_str().is_empty() {
            break;
        }
        if let Ok(metadata) = std::fs::metadata(path) {
            if metadata.is_dir() {
                return Ok(());
            }
            let rule = if path == out {
                format!("`{}` is a file, not a directory; give a directory (created if missing)", out.display())
            } else {
                format!(
                    "`{}` is a file, so `{}` cannot be created; give another directory",
                    path.display(),
                    out.display()
                )
            };
            return Err(InputError::command_line_flag("--out", rule));
        }
        existing = path.parent();
    }
    Ok(())
}

/// Worker threads allowed per core: more only add memory and switching, never speed.
const MAX_JOBS_PER_CORE: usize = 8;

/// `--jobs`, defaulting to the machine's cores; 0 is refused, and so is more than
/// [`MAX_JOBS_PER_CORE`] per core (a slip of the finger that would start thousands of threads).
fn parse_jobs(jobs: Option<usize>) -> Result<usize, InputError> {
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
    let jobs = jobs.unwrap_or(cores);
    if jobs == 0 {
        return Err(InputError::command_line_flag("--jobs", "must be at least 1"));
    }
    let most = MAX_JOBS_PER_CORE * cores;
    if jobs > most {
        return Err(InputError::command_line_flag(
            "--jobs",
            format!("at most {most} ({MAX_JOBS_PER_CORE} per core on this machine's {cores}), found {jobs}"),
        ));
    }
    Ok(jobs)
}

/// The `--set` values given before and after the command name, in that order.
fn parse_overrides(before_command: &OverrideArgs, after_command: &OverrideArgs) -> Result<Vec<Override>, InputError> {
    before_command.set.iter().chain(&after_command.set).map(|text| command_line_override(text)).collect()
}

/// A `KEY=VALUE` from the command line. A file named there (`cell=…`, `profile=…`) is relative
/// to the current directory, as every other path on the command line is, not to the scenario
/// file: it is made absolute here.
fn command_line_override(text: &str) -> Result<Override, InputError> {
    let mut item = input::parse_override(text)?;
    let names_a_file = item.target == input::OverrideTarget::Scenario
        && matches!(item.path.as_slice(), [key] if key == "cell" || key == "profile");
    if let (true, toml::Value::String(path)) = (names_a_file, &item.value) {
        let path = Path::new(path);
        if path.is_relative() {
            if let Ok(here) = std::env::current_dir() {
                item.value = toml::Value::String(here.join(path).display().to_string());
            }
        }
    }
    Ok(item)
}

/// The forecast's stop as an input error, when it stopped because the scenario's usage asks
/// more of a day than the duty cycle leaves (a rule of the inputs only a simulated cycle shows).
fn usage_problem(scenario: &Path, overrides: &[Override], stop: &crate::forecast::StopReason) -> Option<InputError> {
    match stop {
        crate::forecast::StopReason::Failed {
            failure: failure @ crate::forecast::ForecastFailure::UsageExceedsDay { .. },
            ..
        } => Some(input::scenario_problem(scenario, overrides, "usage.cycles_per_day", failure.to_string())),
        _ => None,
    }
}

/// The standards caution, once per run of a command that computes results, on standard error
/// with the other cautions (results go to standard output, so they can be piped apart).
fn print_caution() -> std::io::Result<()> {
    writeln!(std::io::stderr().lock(), "\n{}", crate::CAUTION)
}

/// Warnings and cautions, one paragraph each, on standard error.
/// A progress bar on stderr counting `total` tasks of `unit`, hidden when `show` is false.
fn progress_bar(total: u64, show: bool, unit: &str) -> indicatif::ProgressBar {
    if !show {
        return indicatif::ProgressBar::hidden();
    }
    let bar = indicatif::ProgressBar::new(total);
    let template = format!("{{bar:40}} {{pos}}/{{len}} {unit}  {{elapsed}} elapsed, {{eta}} to go");
    if let Ok(style) = indicatif::ProgressStyle::with_template(&template) {
        bar.set_style(style);
    }
    bar
}

fn print_cautions(cautions: &[String]) -> std::io::Result<()> {
    if cautions.is_empty() {
        return Ok(());
    }
    std::io::stderr().lock().write_all(caution_lines(cautions).as_bytes())
}

/// The label of each step of the duty cycle, by 0-based step index (a series is one step).
fn step_labels(duty: &DutyCycle) -> Vec<String> {
    match duty {
        DutyCycle::Steps(profile) => profile.steps.iter().map(|s| s.label.clone()).collect(),
        DutyCycle::Series(series) => vec![series.name.clone()],
    }
}

/// What a loaded scenario combines (its warnings: [`input_warning_lines`]).
fn scenario_header(path: &Path, loaded: &LoadedScenario) -> String {
    let scenario = &loaded.scenario;
    let mut out = format!("{}: scenario \"{}\"\n", path.display(), scenario.name);
    let _ = writeln!(out, "  {:<28}\"{}\" ({})", "cell", scenario.cell.name, loaded.cell_path.display());
    let _ = writeln!(out, "  {:<28}\"{}\" ({})", "duty cycle", scenario.duty.name(), loaded.profile_path.display());
    let _ = writeln!(out, "  {:<28}{} °C", "ambient", sig(scenario.ambient_k - ZERO_CELSIUS_K, 4));
    let _ = writeln!(out, "  {:<28}{:.0} %", "start state of charge", scenario.start_soc * 100.0);
    out
}

/// The warnings loading a scenario raised, as one caution paragraph (none when there are none).
fn input_warning_lines(loaded: &LoadedScenario) -> Vec<String> {
    if loaded.warnings.is_empty() {
        return Vec::new();
    }
    let lines: Vec<String> = loaded.warnings.iter().map(|w| format!("  {w}")).collect();
    vec![format!("Input warnings\n{}", lines.join("\n"))]
}

/// Cautions as printed: one paragraph each, set off from the report above.
fn caution_lines(cautions: &[String]) -> String {
    cautions.iter().map(|c| format!("\n{c}\n")).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn argument_definitions_are_consistent() {
        Arguments::command().debug_assert();
    }

    #[test]
    fn input_errors_exit_2_and_runtime_failures_exit_1() {
        let input = || CliError::Input(InputError::new("cell.toml", "must be positive"));
        let runtime = || {
            CliError::Cycle(CycleError::Failed {
                step: 2,
                label: "charge".into(),
                time_s: 10.0,
                detail: "no convergence".into(),
            })
        };
        assert_eq!(input().exit_code(), 2);
        assert_eq!(runtime().exit_code(), 1);
        assert_eq!(CliError::Several(vec![runtime(), input()]).exit_code(), 2);
        assert_eq!(CliError::Several(vec![runtime(), runtime()]).to_string().lines().count(), 2);
    }

    #[test]
    fn set_is_accepted_before_and_after_the_command() {
        let parsed =
            Arguments::try_parse_from(["fadecast", "--set", "a=1", "cycle", "s.toml", "--set", "b=2", "--set", "c=3"])
                .unwrap();
        assert_eq!(parsed.overrides.set, ["a=1"]);
        match parsed.command {
            Command::Cycle { out, overrides, .. } => {
                assert_eq!(overrides.set, ["b=2", "c=3"]);
                assert_eq!(out, Path::new("cycle"), "each command's outputs default to a directory of its name");
            }
            other => panic!("parsed as {other:?}"),
        }
    }
}
