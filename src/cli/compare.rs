//! `fadecast compare SCENARIO --profile A.toml --profile B.toml [--variant 'NAME: k=v ...']`:
//! alternatives forecast on the same drawn samples, compared pairwise against the first.
//!
//! The alternatives, in order: each `--profile` (the scenario with its profile replaced), then
//! each `--variant` (the scenario with the variant's overrides). Without any `--profile` the
//! scenario itself, as given, is the first alternative ("scenario"), so
//! `--variant 'hot: ambient_c=40'` compares the scenario with a hotter version of itself.

use super::{print_caution, print_cautions, CliError};
use crate::compare::{self, summarize_comparison_at, Alternative, CompareConfig, CompareError};
use crate::ensemble::SampleStatus;
use crate::forecast::{ForecastOptions, Horizon};
use crate::input::{self, InputError, Override, OverrideTarget};
use crate::report;
use std::fmt::Write as _;
use std::io::Write;
use std::path::{Path, PathBuf};

pub const CSV_NAME: &str = "compare.csv";
pub const SVG_NAME: &str = "compare.svg";
/// Most samples a comparison may ask for, per alternative.
pub const MAX_SAMPLES: u64 = 100_000;

pub struct CompareCommandConfig {
    pub scenario: PathBuf,
    pub profiles: Vec<PathBuf>,
    /// `NAME: key=value key=value`, as given.
    pub variants: Vec<String>,
    pub overrides: Vec<Override>,
    /// Samples 0: each alternative once, deterministically.
    pub sampling: super::Sampling,
    pub horizon: Option<Horizon>,
    pub out_dir: PathBuf,
}

/// Where an alternative came from, to name it in errors.
struct AlternativeSource {
    name: String,
    flag: &'static str,
    given: String,
    overrides: Vec<Override>,
}

/// Parses `NAME: key=value key=value` into the name and its overrides.
pub fn parse_variant(text: &str) -> Result<(String, Vec<Override>), InputError> {
    let bad = |rule: &str| InputError::command_line_flag("--variant", format!("{rule}, found `{text}`"));
    let (name, settings) = text.split_once(':').ok_or_else(|| bad("expected `NAME: key=value ...`"))?;
    let name = name.trim();
    if name.is_empty() {
        return Err(bad("the variant needs a name before `:`"));
    }
    let overrides = settings_of(settings)
        .iter()
        .map(|s| super::command_line_override(s).map_err(|e| InputError::command_line_flag("--variant", e.to_string())))
        .collect::<Result<Vec<_>, _>>()?;
    if overrides.is_empty() {
        return Err(bad("give at least one key=value after the name"));
    }
    Ok((name.to_string(), overrides))
}

/// `key=value key=value` split into settings at white space outside brackets, braces and
/// quotes, so a value is any TOML value: `usage.monthly_ambient_c=[1, 2, 3]`, `name="a b"`.
fn settings_of(text: &str) -> Vec<String> {
    let mut settings = Vec::new();
    let mut current = String::new();
    let (mut depth, mut quote): (i32, Option<char>) = (0, None);
    for c in text.chars() {
        match (quote, c) {
            (Some(q), c) if c == q => quote = None,
            (Some(_), _) => {}
            (None, '"' | '\'') => quote = Some(c),
            (None, '[' | '{') => depth += 1,
            (None, ']' | '}') => depth -= 1,
            (None, c) if c.is_whitespace() && depth <= 0 => {
                if !current.is_empty() {
                    settings.push(std::mem::take(&mut current));
                }
                continue;
            }
            _ => {}
        }
        current.push(c);
    }
    if !current.is_empty() {
        settings.push(current);
    }
    settings
}

/// The scenario's `profile` replaced by a file given on the command line (made absolute, as the
/// scenario resolves its own paths against its directory).
fn profile_override(path: &Path) -> Result<Override, InputError> {
    let absolute = std::fs::canonicalize(path).map_err(|e| InputError::unreadable(path, &e))?;
    let text = absolute.display().to_string();
    Ok(Override {
        target: OverrideTarget::Scenario,
        path: vec!["profile".into()],
        value: toml::Value::String(text.clone()),
        text: format!("profile={text}"),
    })
}

fn alternative_sources(config: &CompareCommandConfig) -> Result<Vec<AlternativeSource>, InputError> {
    let mut sources = Vec::new();
    if config.profiles.is_empty() {
        sources.push(AlternativeSource {
            name: "scenario".into(),
            flag: "SCENARIO",
            given: config.scenario.display().to_string(),
            overrides: Vec::new(),
        });
    }
    for path in &config.profiles {
        let name = path.file_stem().map_or_else(|| path.display().to_string(), |s| s.to_string_lossy().into_owned());
        sources.push(AlternativeSource {
            name,
            flag: "--profile",
            given: path.display().to_string(),
            overrides: vec![profile_override(path)?],
        });
    }
    for text in &config.variants {
        let (name, overrides) = parse_variant(text)?;
        sources.push(AlternativeSource { name, flag: "--variant", given: text.clone(), overrides });
    }
    if sources.len() < 2 {
        return Err(InputError::command_line_flag(
            "--profile",
            "give at least two alternatives: two --profile files, or --variant settings to compare with the scenario",
        ));
    }
    for (i, s) in sources.iter().enumerate() {
        if sources[..i].iter().any(|other| other.name == s.name) {
            return Err(InputError::command_line_flag(
                s.flag,
                format!("two alternatives are named \"{}\"; give each a distinct name", s.name),
            ));
        }
    }
    Ok(sources)
}

/// A variant that sets an input the `[uncertainty]` section samples would be silently undone
/// by the draws (later overrides win), so it is refused.
fn refuse_variants_of_sampled_inputs(sources: &[AlternativeSource], parameters: &[String]) -> Result<(), InputError> {
    for source in sources.iter().filter(|s| s.flag == "--variant") {
        for o in &source.overrides {
            let key = o.key();
            if parameters.iter().any(|p| *p == key || p.starts_with(&format!("{key}."))) {
                return Err(InputError::command_line_flag(
                    "--variant",
                    format!(
                        "\"{}\" sets `{key}`, which the scenario's [uncertainty] section samples, so every draw would \
                         replace it; compare without --samples, or take `{key}` out of [uncertainty]",
                        source.name
                    ),
                ));
            }
        }
    }
    Ok(())
}

pub fn run(config: &CompareCommandConfig, out: &mut impl Write) -> Result<(), CliError> {
    let sampling = &config.sampling;
    if sampling.samples > MAX_SAMPLES {
        return Err(InputError::command_line_flag(
            "--samples",
            format!("must be at most {MAX_SAMPLES}, found {}", sampling.samples),
        )
        .into());
    }
    let sources = alternative_sources(config)?;
    let overrides_of = |source: &AlternativeSource| -> Vec<Override> {
        config.overrides.iter().chain(&source.overrides).cloned().collect()
    };
    let templates = sources
        .iter()
        .map(|source| input::ScenarioTemplate::load(&config.scenario, &overrides_of(source)))
        .collect::<Result<Vec<_>, _>>()?;
    let alternatives: Vec<Alternative> = sources
        .iter()
        .zip(&templates)
        .map(|(source, template)| Alternative {
            name: source.name.clone(),
            scenario: template.loaded().scenario.clone(),
            plan: template.loaded().plan.clone(),
        })
        .collect();
    let Some(first) = templates.first().map(input::ScenarioTemplate::loaded) else {
        unreachable!("at least two alternatives")
    };
    let horizon = config.horizon.or(first.plan.horizon).ok_or_else(|| {
        InputError::new(&config.scenario, "no horizon: add a [horizon] section or give --cycles N or --years Y")
    })?;
    let cycling = first.plan.usage.cycles_per_day > 0.0;
    if !cycling && matches!(horizon, Horizon::Cycles(_)) {
        return Err(InputError::command_line_flag(
            "--cycles",
            "a storage-only scenario (0 cycles per day) needs --years",
        )
        .into());
    }
    let mut notes: Vec<String> = first.warnings.clone();
    let from_file = match &sampling.uncertainty {
        Some(file) => Some(input::load_uncertainty_file(file, &config.scenario, &config.overrides)?),
        None => None,
    };
    let spec = from_file.as_ref().unwrap_or(&first.uncertainty);
    let sampler = super::bands::optional_sampler(
        spec,
        sampling.samples,
        sampling.seed,
        &config.scenario,
        "each alternative ran once",
        &mut notes,
    )?
    .map(|sampler| sampler.with_cells(first.scenario.pack.as_ref().map_or(0, |pack| pack.len())));
    let parameters: Vec<String> = spec.parameters.iter().map(|p| p.path.clone()).collect();
    if sampler.is_some() {
        refuse_variants_of_sampled_inputs(&sources, &parameters)?;
    }
    // One sample of one alternative: the alternative's scenario with the drawn values set,
    // every input rule applied.
    let paths = input::number_paths(&parameters)?;
    let build = |alternative: usize, values: &[f64]| {
        templates[alternative].build_drawn(spec, &paths, values).map_err(|e| e.to_string())
    };
    let compare_config =
        CompareConfig { samples: sampling.samples, horizon, options: ForecastOptions::default(), jobs: sampling.jobs };
    let tasks = compare::comparison_tasks(&alternatives, sampler.as_ref(), &compare_config);
    // One task per sample when sampling, else one per alternative.
    let unit = if sampler.is_some() && sampling.samples > 0 { "samples" } else { "alternatives" };
    let progress = super::progress_bar(tasks, sampling.progress, unit);
    let done = || progress.inc(1);
    let comparison = compare::run_comparison_observed(&alternatives, sampler.as_ref(), &compare_config, &build, &done)
        .map_err(|e| -> CliError {
            match e {
                CompareError::Unrunnable { index, detail, .. } => {
                    let s = &sources[index];
                    InputError::command_line_flag(
                        s.flag,
                        format!("{}: cannot run on the cell at beginning of life: {detail}", s.given),
                    )
                    .into()
                }
                CompareError::Threads { .. } => CliError::Forecast(e.to_string()),
            }
        })?;
    progress.finish_and_clear();
    let quantiles = sampling.outer_quantiles();
    let summaries = summarize_comparison_at(&comparison, quantiles);

    let csv = report::compare_csv(&summaries, quantiles)?;
    let svg = report::compare_svg(
        &summaries,
        Some(100.0 * first.plan.end_of_life.capacity_fraction),
        quantiles,
        &format!("{}: compared", first.scenario.name),
        cycling,
    )?;

    let mut text = format!("{}: scenario \"{}\"\n", config.scenario.display(), first.scenario.name);
    if let Some(sampler) = &sampler {
        let _ = writeln!(
            text,
            "  {} samples of {} uncertain inputs (seed {}), the same draws for every alternative",
            sampler.samples(),
            sampler.parameter_count(),
            sampling.seed
        );
    }
    text.push_str(&report::compare_text(&summaries, comparison.sampled, quantiles));
    let cautions = report::compare_cautions(notes, &summaries, &comparison);
    // Every alternative's files, each listed once (alternatives often share the cell).
    let mut inputs: Vec<input::InputDigest> = Vec::new();
    for template in &templates {
        for digest in template.input_digests()? {
            if !inputs.contains(&digest) {
                inputs.push(digest);
            }
        }
    }
    let (tables, calibration) = report::compare_tables(&summaries, comparison.sampled, quantiles);
    let page = report::ReportPage {
        command: "compare",
        title: &first.scenario.name,
        inputs: &inputs,
        overrides: &[],
        calibration,
        warnings: cautions.clone(),
        tables,
        printed: &text,
        plots: vec![(SVG_NAME, svg.as_str())],
    };
    let page = report::report_html(&page);
    let written = report::write_all_atomic(
        &config.out_dir,
        &[(CSV_NAME, csv.as_slice()), (SVG_NAME, svg.as_bytes()), (super::forecast::REPORT_NAME, page.as_bytes())],
    )?;
    let names: Vec<String> = written.iter().map(|p| p.display().to_string()).collect();
    let _ = writeln!(text, "\nWrote {}", names.join(", "));
    out.write_all(text.as_bytes())?;
    print_cautions(&cautions)?;
    print_caution()?;
    // A deterministic comparison with an alternative that has no result is a failed run, as a
    // failed `forecast` is (its outputs were still written, with that alternative's row blank).
    let failed: Vec<String> = comparison
        .outcomes
        .iter()
        .zip(&comparison.names)
        .filter_map(|(outcomes, name)| match outcomes.first().map(|o| (&o.status, o.life)) {
            Some((SampleStatus::Failed { stop, cycling }, None)) if !comparison.sampled => {
                Some(format!("\"{name}\" {}", report::stop_text(stop, *cycling).unwrap_or_default()))
            }
            _ => None,
        })
        .collect();
    if failed.is_empty() {
        Ok(())
    } else {
        Err(CliError::Forecast(failed.join("; ")))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn variants_are_a_name_and_overrides() {
        let (name, overrides) = parse_variant("hot depot: ambient_c=40 cell.limits.max_charge_current_a=8").unwrap();
        assert_eq!(name, "hot depot");
        assert_eq!(overrides.len(), 2);
        let (_, overrides) =
            parse_variant("mild: usage.monthly_ambient_c=[1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12] ambient_c=20")
                .unwrap();
        assert_eq!(overrides.len(), 2);
        assert_eq!(overrides[0].value.as_array().map(Vec::len), Some(12), "a list value is one TOML array");
        for bad in ["ambient_c=40", ": ambient_c=40", "hot:", "hot: ambient_c"] {
            let e = parse_variant(bad).unwrap_err().to_string();
            assert!(e.contains("--variant"), "{bad}: {e}");
        }
    }
}
