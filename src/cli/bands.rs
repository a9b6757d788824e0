//! `fadecast bands SCENARIO --samples N`: Monte Carlo over the scenario's `[uncertainty]`
//! section. Samples run in parallel; each finished sample is appended to `DIR/samples.journal`
//! at once, so an interrupted run keeps its work (`--resume` continues it) and shards can be
//! merged exactly (`fadecast merge`). `fadecast merge DIR... --out DIR` lives here too: both
//! end in the same [`finish`], so a merged set of shards writes the same bytes as one run.

use super::forecast::REPORT_NAME;
use super::{print_caution, print_cautions, CliError};
use crate::ensemble::Sampler;
use crate::ensemble::{run_ensemble, summarize, EnsembleConfig, SampleRecord, Shard, Warranty};
use crate::forecast::{report_grid, ForecastOptions, Horizon};
use crate::input::{self, InputError, Override};
use crate::report;
use serde::{Deserialize, Serialize};
use std::collections::BTreeSet;
use std::fmt::Write as _;
use std::fs::{self, OpenOptions};
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::sync::Mutex;

pub const JOURNAL_NAME: &str = "samples.journal";
pub const RUN_NAME: &str = "run.json";
/// Version of `run.json` and the journal's records; 2 since records carry warning kinds and
/// typed stop reasons, 3 since `run.json` holds the inputs' content hashes.
pub const RUN_FORMAT: u32 = 3;
/// Most samples one run may ask for: a million samples keep about 1.2 GB of curves in memory.
pub const MAX_SAMPLES: u64 = 1_000_000;

pub struct BandsConfig {
    pub scenario: PathBuf,
    pub out_dir: PathBuf,
    pub overrides: Vec<Override>,
    pub overrides_text: Vec<String>,
    pub samples: u64,
    pub seed: u64,
    pub jobs: usize,
    pub shard: Shard,
    /// Fractions, ascending.
    pub quantiles: Vec<f64>,
    pub warranty: Option<Warranty>,
    pub horizon: Option<Horizon>,
    pub resume: bool,
    /// Start over even if the directory holds an earlier run's journal.
    pub force: bool,
    pub quiet: bool,
    /// `--uncertainty FILE`: an `[uncertainty]` section that replaces the scenario's.
    pub uncertainty_file: Option<PathBuf>,
}

/// What a run is, written to `DIR/run.json`: shards merge only when all of it but the shard
/// index agrees, and `--resume` only continues a run with the same description. Inputs are
/// compared by content: the same files under other paths (or given by other `--set` spellings
/// that come to the same values) are the same run; one changed value is not.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RunDescription {
    pub format: u32,
    /// The fadecast version that computed the records.
    pub tool_version: String,
    /// The scenario path as given (for the reader; not compared).
    pub scenario: String,
    /// The `--set` values as given (for the reader; their effect is in `inputs`).
    pub overrides: Vec<String>,
    /// Every input file's content hash after overrides.
    pub inputs: Vec<input::InputDigest>,
    pub samples: u64,
    pub seed: u64,
    pub shard_index: u64,
    pub shard_count: u64,
    pub horizon_cycles: Option<f64>,
    pub horizon_years: Option<f64>,
    pub quantiles: Vec<f64>,
    pub warranty_years: Option<f64>,
    pub warranty_soh_pct: Option<f64>,
    pub parameters: Vec<String>,
    pub cycling: bool,
    pub grid: Vec<(f64, f64)>,
    pub scenario_name: String,
    /// Warnings raised while loading the scenario, repeated in every summary of the run.
    pub input_warnings: Vec<String>,
    /// The scenario's end-of-life thresholds, % of fresh, for the plots (absent in runs
    /// written before they were recorded).
    #[serde(default)]
    pub end_of_life_pct: Option<report::ThresholdsPct>,
}

impl RunDescription {
    /// What makes `other` a different run from this one (shard index aside), in words, or
    /// None when both describe the same run.
    fn difference_from(&self, other: &RunDescription) -> Option<String> {
        if self.tool_version != other.tool_version {
            return Some(format!("computed by fadecast {}, this is {}", other.tool_version, self.tool_version));
        }
        for mine in &self.inputs {
            match other.inputs.iter().find(|theirs| theirs.role == mine.role) {
                Some(theirs) if theirs.same_content(mine) => {}
                Some(theirs) => {
                    return Some(format!(
                        "the {} file's content differs (`{}` now, `{}` then, after --set values)",
                        role_name(mine.role),
                        mine.path,
                        theirs.path
                    ))
                }
                None => return Some(format!("the run had no {} file", role_name(mine.role))),
            }
        }
        if let Some(theirs) = other.inputs.iter().find(|t| !self.inputs.iter().any(|m| m.role == t.role)) {
            return Some(format!("the run had a {} file (`{}`) this one lacks", role_name(theirs.role), theirs.path));
        }
        let comparable = |d: &RunDescription| RunDescription {
            shard_index: 0,
            scenario: String::new(),
            overrides: Vec::new(),
            inputs: Vec::new(),
            input_warnings: Vec::new(),
            ..d.clone()
        };
        (comparable(self) != comparable(other))
            .then(|| "samples, seed, shard count, horizon, quantiles, warranty or sampled parameters differ".into())
    }
}

fn role_name(role: input::InputRole) -> &'static str {
    match role {
        input::InputRole::Scenario => "scenario",
        input::InputRole::Cell => "cell",
        input::InputRole::Profile => "step profile",
        input::InputRole::Series => "time series",
        input::InputRole::AgingData => "aging data",
        input::InputRole::Uncertainty => "uncertainty",
    }
}

/// Parses `K/N` (1 ≤ K ≤ N).
pub fn parse_shard(text: &str) -> Result<Shard, InputError> {
    let bad = |rule: &str| InputError::command_line_flag("--shard", format!("{rule}, found `{text}`"));
    let (k, n) = text.split_once('/').ok_or_else(|| bad("expected K/N, such as 2/8"))?;
    let k: u64 = k.trim().parse().map_err(|_| bad("K must be a whole number"))?;
    let n: u64 = n.trim().parse().map_err(|_| bad("N must be a whole number"))?;
    if n == 0 || k == 0 || k > n {
        return Err(bad("K must be between 1 and N"));
    }
    Ok(Shard { index: k, count: n })
}

/// Parses `5,50,95` (percent, strictly between 0 and 100, increasing) into fractions.
pub fn parse_quantiles(text: &str) -> Result<Vec<f64>, InputError> {
    let bad = |rule: String| InputError::command_line_flag("--quantiles", rule);
    let mut out: Vec<f64> = Vec::new();
    for part in text.split(',') {
        let pct: f64 = part.trim().parse().map_err(|_| bad(format!("`{}` is not a number", part.trim())))?;
        if !(pct > 0.0 && pct < 100.0) {
            return Err(bad(format!("quantiles are percents strictly between 0 and 100, found {pct}")));
        }
        if out.last().is_some_and(|&last| pct / 100.0 <= last) {
            return Err(bad("quantiles must increase".into()));
        }
        out.push(pct / 100.0);
    }
    if out.is_empty() {
        return Err(bad("give at least one quantile".into()));
    }
    Ok(out)
}

/// Parses `YEARS:SOH_PCT`, such as `8:70`.
pub fn parse_warranty(text: &str) -> Result<Warranty, InputError> {
    let bad = |rule: &str| InputError::command_line_flag("--warranty", format!("{rule}, found `{text}`"));
    let (years, soh) = text.split_once(':').ok_or_else(|| bad("expected YEARS:SOH_PCT, such as 8:70"))?;
    let years: f64 = years.trim().parse().map_err(|_| bad("YEARS must be a number"))?;
    let soh_pct: f64 = soh.trim().parse().map_err(|_| bad("SOH_PCT must be a number"))?;
    if !(years > 0.0 && years.is_finite()) {
        return Err(bad("YEARS must be positive"));
    }
    if !(soh_pct > 0.0 && soh_pct < 100.0) {
        return Err(bad("SOH_PCT must lie strictly between 0 and 100"));
    }
    Ok(Warranty { years, soh_pct })
}

pub fn run(config: &BandsConfig, out: &mut impl Write) -> Result<(), CliError> {
    if config.samples == 0 || config.samples > MAX_SAMPLES {
        return Err(InputError::command_line_flag(
            "--samples",
            format!("must be between 1 and {MAX_SAMPLES}, found {}", config.samples),
        )
        .into());
    }
    let template = input::ScenarioTemplate::load(&config.scenario, &config.overrides)?;
    let loaded = template.loaded();
    let spec = match &config.uncertainty_file {
        Some(file) => input::load_uncertainty_file(file, &config.scenario, &config.overrides)?,
        None => loaded.uncertainty.clone(),
    };
    if spec.parameters.is_empty() {
        return Err(
            InputError::new(&config.scenario, "no [uncertainty] section: nothing to sample (see FORMATS.md)").into()
        );
    }
    let horizon = config.horizon.or(loaded.plan.horizon).ok_or_else(|| {
        InputError::new(&config.scenario, "no horizon: add a [horizon] section or give --cycles N or --years Y")
    })?;
    let options = ForecastOptions::default();
    let grid = report_grid(&loaded.plan, horizon, &options)
        .map_err(|failure| InputError::command_line_flag("--cycles", report::failure_text(&failure)))?;
    let horizon_years = grid.last().map_or(0.0, |g| g.1 / 365.25);
    if let Some(w) = config.warranty {
        if w.years > horizon_years * (1.0 + 1e-9) {
            return Err(InputError::command_line_flag(
                "--warranty",
                format!("the warranty point at {} years lies beyond the horizon of {horizon_years:.2} years", w.years),
            )
            .into());
        }
    }
    // A pack's cells draw the parameters marked per cell each from their own stream.
    let cells = template.loaded().scenario.pack.as_ref().map_or(0, |pack| pack.len());
    let sampler = Sampler::new(&spec, config.seed, config.samples)
        .map_err(|e| InputError::new(&config.scenario, format!("uncertainty: {e}")))?
        .with_cells(cells);
    let mut inputs = template.input_digests()?;
    if let Some(file) = &config.uncertainty_file {
        inputs.push(input::file_digest(input::InputRole::Uncertainty, file)?);
    }
    let description = RunDescription {
        format: RUN_FORMAT,
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
        scenario: config.scenario.display().to_string(),
        overrides: config.overrides_text.clone(),
        inputs,
        samples: config.samples,
        seed: config.seed,
        shard_index: config.shard.index,
        shard_count: config.shard.count,
        horizon_cycles: match horizon {
            Horizon::Cycles(c) => Some(c),
            Horizon::Years(_) => None,
        },
        horizon_years: match horizon {
            Horizon::Years(y) => Some(y),
            Horizon::Cycles(_) => None,
        },
        quantiles: config.quantiles.clone(),
        warranty_years: config.warranty.map(|w| w.years),
        warranty_soh_pct: config.warranty.map(|w| w.soh_pct),
        parameters: spec.parameters.iter().map(|p| p.path.clone()).collect(),
        cycling: loaded.plan.usage.cycles_per_day > 0.0,
        grid: grid.clone(),
        scenario_name: loaded.scenario.name.clone(),
        input_warnings: loaded.warnings.clone(),
        end_of_life_pct: Some(report::ThresholdsPct {
            capacity: 100.0 * loaded.plan.end_of_life.capacity_fraction,
            resistance: 100.0 * loaded.plan.end_of_life.resistance_fraction,
        }),
    };

    let journal_path = config.out_dir.join(JOURNAL_NAME);
    let mut previous = Vec::new();
    if config.resume {
        let earlier = read_description(&config.out_dir)?;
        let difference = description.difference_from(&earlier).or_else(|| {
            (earlier.shard_index != description.shard_index)
                .then(|| format!("it is shard {}/{}", earlier.shard_index, earlier.shard_count))
        });
        if let Some(difference) = difference {
            return Err(InputError::command_line_flag(
                "--resume",
                format!("{} holds a different run: {difference}; start a new --out", config.out_dir.display()),
            )
            .into());
        }
        let shard = Shard { index: description.shard_index, count: description.shard_count };
        previous = read_journal(&journal_path, shard, description.samples, Completeness::Partial)?;
    } else if !config.force && journal_holds_records(&journal_path) {
        return Err(InputError::command_line_flag(
            "--out",
            format!(
                "{} holds the journal of an earlier run; give --resume to continue it, --force to discard it, \
                 or another --out",
                config.out_dir.display()
            ),
        )
        .into());
    }
    fs::create_dir_all(&config.out_dir)
        .map_err(|source| report::ReportError::Io { path: config.out_dir.clone(), source })?;
    report::write_atomic(
        &config.out_dir,
        RUN_NAME,
        &serde_json::to_vec_pretty(&description).map_err(report::ReportError::from)?,
    )?;
    // Rewrite the journal with only its whole records before appending to it.
    let mut journal_bytes = Vec::new();
    for record in &previous {
        journal_bytes.extend(report::encode_record(record));
    }
    report::write_atomic(&config.out_dir, JOURNAL_NAME, &journal_bytes)?;
    let journal = OpenOptions::new()
        .append(true)
        .open(&journal_path)
        .map_err(|source| report::ReportError::Io { path: journal_path.clone(), source })?;
    let journal = Mutex::new(journal);
    let write_error = Mutex::new(None);

    let done: BTreeSet<u64> = previous.iter().map(|r| r.index).collect();
    let todo = (0..config.samples).filter(|&i| config.shard.contains(i) && !done.contains(&i)).count() as u64;
    let progress = super::progress_bar(todo, !config.quiet && std::io::stderr().is_terminal(), "samples");
    // One sample's inputs: the scenario with the drawn values set, every input rule applied.
    let paths = input::number_paths(&description.parameters)?;
    let build = |values: &[f64]| template.build_drawn(&spec, &paths, values).map_err(|e| e.to_string());
    let ensemble = EnsembleConfig {
        samples: config.samples,
        seed: config.seed,
        shard: config.shard,
        horizon,
        warranty: config.warranty,
        options,
    };
    let observe = |record: &SampleRecord| {
        let bytes = report::encode_record(record);
        if let Ok(mut file) = journal.lock() {
            if let Err(e) = file.write_all(&bytes) {
                if let Ok(mut slot) = write_error.lock() {
                    slot.get_or_insert(e);
                }
            }
        }
        progress.inc(1);
    };
    let fresh = run_ensemble(&sampler, &ensemble, &build, config.jobs, &done, &observe)
        .map_err(|e| CliError::Forecast(format!("could not start {} worker threads: {e}", config.jobs)))?;
    progress.finish_and_clear();
    if let Some(e) = write_error.into_inner().ok().flatten() {
        return Err(report::ReportError::Io { path: journal_path, source: e }.into());
    }
    let mut records = previous;
    records.extend(fresh);
    records.sort_by_key(|r| r.index);
    finish(&description, &records, &config.out_dir, out)
}

/// The sampler of a command that runs with or without samples: None when `--samples` is 0 or
/// the scenario has no [uncertainty] section (then a note says what `--samples` did not do).
pub(super) fn optional_sampler(
    spec: &crate::ensemble::UncertaintySpec,
    samples: u64,
    seed: u64,
    scenario: &Path,
    without_samples: &str,
    notes: &mut Vec<String>,
) -> Result<Option<Sampler>, InputError> {
    if samples > 0 && !spec.parameters.is_empty() {
        let sampler =
            Sampler::new(spec, seed, samples).map_err(|e| InputError::new(scenario, format!("uncertainty: {e}")))?;
        return Ok(Some(sampler));
    }
    if samples > 0 {
        notes.push(format!(
            "--samples {samples} ignored: the scenario has no [uncertainty] section, so {without_samples}"
        ));
    }
    Ok(None)
}

fn read_description(dir: &Path) -> Result<RunDescription, CliError> {
    let path = dir.join(RUN_NAME);
    let text = fs::read_to_string(&path).map_err(|e| InputError::unreadable(&path, &e))?;
    let description: RunDescription = serde_json::from_str(&text)
        .map_err(|e| InputError::new(&path, format!("not a fadecast run description: {e}")))?;
    if description.format != RUN_FORMAT {
        return Err(InputError::new(
            &path,
            format!(
                "written by another version of fadecast (run format {}, this version reads {RUN_FORMAT}): run it again",
                description.format
            ),
        )
        .into());
    }
    Ok(description)
}

/// Writes every output of a run from its records (sorted by index): the same bytes whatever
/// the thread count, shard split or interruptions that produced them.
fn finish(
    description: &RunDescription,
    records: &[SampleRecord],
    out_dir: &Path,
    out: &mut impl Write,
) -> Result<(), CliError> {
    let quantiles = &description.quantiles;
    let warranty = match (description.warranty_years, description.warranty_soh_pct) {
        (Some(years), Some(soh_pct)) => Some(Warranty { years, soh_pct }),
        _ => None,
    };
    let summary = summarize(records, &description.parameters, quantiles, &description.grid, warranty);
    let complete = records.len() as u64
        == (0..description.samples)
            .filter(|&i| (Shard { index: description.shard_index, count: description.shard_count }).contains(i))
            .count() as u64;
    let shard = (description.shard_index, description.shard_count);
    let warnings = report::ensemble_notes(&description.input_warnings, &summary, shard, complete);
    let run_value = serde_json::json!({
        "scenario": description.scenario_name,
        "samples": description.samples,
        "seed": description.seed,
        "shard": format!("{}/{}", description.shard_index, description.shard_count),
        "parameters": description.parameters,
    });
    let samples = report::samples_csv(records, &description.parameters, warranty.is_some())?;
    if summary.statistics_refused() {
        return refuse_statistics(description, records, &summary, &samples, out_dir, out);
    }
    let bands = report::bands_csv(&summary)?;
    let json = report::ensemble_json(&summary, &run_value, &warnings)?;
    let bands_plot =
        report::bands_svg(&summary, description.end_of_life_pct, &description.scenario_name, description.cycling)?;
    let sensitivity = report::sensitivity_svg(&summary, &description.scenario_name)?;
    let mut text = report::ensemble_text(&description.scenario, description.seed, &summary, &[]);
    let (tables, calibration) = report::bands_tables(&summary);
    let page = report::ReportPage {
        command: "bands",
        title: &description.scenario_name,
        inputs: &description.inputs,
        overrides: &description.overrides,
        calibration,
        warnings: warnings.clone(),
        tables,
        printed: &text,
        plots: vec![("bands.svg", bands_plot.as_str()), ("sensitivity.svg", sensitivity.as_str())],
    };
    let page = report::report_html(&page);
    write_journal(out_dir, records)?;
    let description_bytes = serde_json::to_vec_pretty(description).map_err(report::ReportError::from)?;
    let written = report::write_all_atomic(
        out_dir,
        &[
            ("bands.csv", bands.as_slice()),
            ("samples.csv", samples.as_slice()),
            ("summary.json", json.as_slice()),
            ("bands.svg", bands_plot.as_bytes()),
            ("sensitivity.svg", sensitivity.as_bytes()),
            (RUN_NAME, description_bytes.as_slice()),
            (REPORT_NAME, page.as_bytes()),
        ],
    )?;

    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_cautions(&warnings)?;
    print_caution()?;
    Ok(())
}

/// The journal sorted by sample, streamed: at 100 000 samples it is as large as the records.
fn write_journal(out_dir: &Path, records: &[SampleRecord]) -> Result<(), CliError> {
    report::write_atomic_streamed(out_dir, JOURNAL_NAME, |w| {
        for record in records {
            w.write_all(&report::encode_record(record))?;
        }
        Ok(())
    })?;
    Ok(())
}

/// The names of the files that carry a run's statistics.
const STATISTICS_FILES: [&str; 5] = ["bands.csv", "summary.json", "bands.svg", "sensitivity.svg", REPORT_NAME];

/// Ends a run whose left-out samples are too many for statistics: the journal, the run's
/// description and samples.csv (every sample with its drawn values and why it was left out) are
/// written, statistics from an earlier run in the directory are removed, and the run fails.
fn refuse_statistics(
    description: &RunDescription,
    records: &[SampleRecord],
    summary: &crate::ensemble::EnsembleSummary,
    samples_csv: &[u8],
    out_dir: &Path,
    out: &mut impl Write,
) -> Result<(), CliError> {
    write_journal(out_dir, records)?;
    let description_bytes = serde_json::to_vec_pretty(description).map_err(report::ReportError::from)?;
    let written =
        report::write_all_atomic(out_dir, &[("samples.csv", samples_csv), (RUN_NAME, description_bytes.as_slice())])?;
    for name in STATISTICS_FILES {
        let stale = out_dir.join(name);
        if stale.exists() {
            fs::remove_file(&stale).map_err(|source| report::ReportError::Io { path: stale.clone(), source })?;
        }
    }
    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    writeln!(out, "Wrote {}", names.join(", "))?;
    Err(CliError::Forecast(report::statistics_refused_text(summary, crate::ensemble::MOST_LEFT_OUT_FRACTION)))
}

/// Whether a journal exists with at least one byte in it.
fn journal_holds_records(path: &Path) -> bool {
    fs::metadata(path).is_ok_and(|m| m.len() > 0)
}

/// Whether a journal must hold every sample of its shard (`merge`) or may stop short (`--resume`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Completeness {
    Whole,
    Partial,
}

/// The records of a shard's journal, checked: none corrupt, none outside the shard or beyond the
/// run's samples, none twice, and (for a merge) none missing. Errors name the sample.
fn read_journal(
    path: &Path,
    shard: Shard,
    samples: u64,
    completeness: Completeness,
) -> Result<Vec<SampleRecord>, CliError> {
    let bytes = match fs::read(path) {
        Ok(bytes) => bytes,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound && completeness == Completeness::Partial => Vec::new(),
        Err(e) => return Err(InputError::unreadable(path, &e).into()),
    };
    let read = report::decode_journal(&bytes);
    let problem = |rule: String| -> CliError { InputError::new(path, rule).into() };
    match read.ending {
        report::JournalEnding::Corrupt { record, sample } => {
            let which = sample.map_or(String::new(), |s| format!(" (it claims sample {})", s + 1));
            return Err(problem(format!(
                "record {record}{which} fails its checksum: the journal was changed or damaged; \
                 run the shard again (--force) rather than merge or resume it"
            )));
        }
        report::JournalEnding::TornTail if completeness == Completeness::Whole => {
            return Err(problem(format!(
                "ends in a record cut short after {} whole records: the shard was interrupted; finish it with --resume",
                read.records.len()
            )));
        }
        _ => {}
    }
    let mut seen = BTreeSet::new();
    for record in &read.records {
        if record.index >= samples || !shard.contains(record.index) {
            return Err(problem(format!(
                "holds sample {}, which is not one of shard {}/{}'s {samples} samples",
                record.index + 1,
                shard.index,
                shard.count
            )));
        }
        if !seen.insert(record.index) {
            return Err(problem(format!("holds sample {} twice", record.index + 1)));
        }
    }
    if completeness == Completeness::Whole {
        if let Some(missing) = (0..samples).find(|&i| shard.contains(i) && !seen.contains(&i)) {
            let expected = (0..samples).filter(|&i| shard.contains(i)).count();
            return Err(problem(format!(
                "lacks sample {} (holds {} of shard {}/{}'s {expected} samples); finish it with --resume",
                missing + 1,
                seen.len(),
                shard.index,
                shard.count
            )));
        }
    }
    Ok(read.records)
}

/// `fadecast merge DIR... --out DIR`: combines the shards of one run exactly.
pub fn merge(dirs: &[PathBuf], out_dir: &Path, out: &mut impl Write) -> Result<(), CliError> {
    let mut descriptions: Vec<(PathBuf, RunDescription)> = Vec::new();
    let mut records = Vec::new();
    for dir in dirs {
        let d = read_description(dir)?;
        if let Some((earlier, _)) = descriptions.iter().find(|(_, e)| e.shard_index == d.shard_index) {
            return Err(InputError::command_line_flag(
                "merge",
                format!(
                    "shard {}/{} is given twice: {} and {}",
                    d.shard_index,
                    d.shard_count,
                    earlier.display(),
                    dir.display()
                ),
            )
            .into());
        }
        let shard = Shard { index: d.shard_index, count: d.shard_count };
        records.extend(read_journal(&dir.join(JOURNAL_NAME), shard, d.samples, Completeness::Whole)?);
        descriptions.push((dir.clone(), d));
    }
    let Some((first_dir, first)) = descriptions.first() else {
        return Err(InputError::command_line_flag("merge", "give the shard directories to merge").into());
    };
    let (first_dir, first) = (first_dir.clone(), first.clone());
    for (dir, d) in &descriptions {
        if let Some(difference) = d.difference_from(&first) {
            return Err(InputError::new(
                dir.join(RUN_NAME),
                format!("not a shard of the same run as {}: {difference}", first_dir.display()),
            )
            .into());
        }
    }
    if let Some(missing) = (1..=first.shard_count).find(|k| !descriptions.iter().any(|(_, d)| d.shard_index == *k)) {
        return Err(InputError::command_line_flag(
            "merge",
            format!(
                "shard {missing}/{} is missing; give each of the {} shards once",
                first.shard_count, first.shard_count
            ),
        )
        .into());
    }
    records.sort_by_key(|r| r.index);
    let whole = RunDescription { shard_index: 1, shard_count: 1, ..first };
    finish(&whole, &records, out_dir, out)
}
