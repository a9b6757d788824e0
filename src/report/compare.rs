//! Comparison and fade-table outputs as bytes and text: compare.csv, the printed comparison
//! table and table.csv (compare.svg is drawn in `compare_svg.rs`).

use super::schema::{flag, number};
use super::ReportError;
use crate::compare::{AlternativeSummary, Comparison, ConditionResult, Spread};
use crate::forecast::{ForecastWarning, WarningKind};
use std::fmt::Write as _;

const DAYS_PER_YEAR: f64 = 365.25;

/// The quantile labels of a comparison's columns, low to high (`5`, `50`, `95`).
pub(super) fn quantile_labels((low, high): (f64, f64)) -> [String; 3] {
    [low, 0.5, high].map(super::ensemble::percent_label)
}

/// The header of compare.csv for outer quantiles `(low, high)`: each quantity's low quantile,
/// median and high quantile, `life_censored_p*` saying which life quantiles lie beyond the
/// horizon (their life and energy cells are empty).
pub fn compare_csv_header(quantiles: (f64, f64)) -> Vec<String> {
    let labels = quantile_labels(quantiles);
    let mut header: Vec<String> =
        ["alternative", "samples_usable", "samples_censored", "samples_left_out"].map(String::from).to_vec();
    for quantity in
        ["life_cycles", "life_efc", "life_years", "life_censored", "energy_to_end_of_life_wh", "soh_at_horizon_pct"]
    {
        header.extend(labels.iter().map(|p| format!("{quantity}_p{p}")));
    }
    header.extend(["charge_time_h", "peak_temperature_c", "plating_predicted", "plating_fraction"].map(String::from));
    for quantity in ["life_difference_cycles", "life_difference_efc"] {
        header.extend(labels.iter().map(|p| format!("{quantity}_p{p}")));
    }
    header.extend(["probability_outlasts_first", "warnings"].map(String::from));
    header
}

/// A spread's three values; a deterministic comparison's one run is every quantile of itself.
fn spread_values(s: &Spread) -> [f64; 3] {
    [s.low.unwrap_or(s.median), s.median, s.high.unwrap_or(s.median)]
}

/// compare.csv: one row per alternative; the difference columns are empty for the first (the
/// reference). A life quantile beyond the horizon is empty, with `life_censored_p*` true.
pub fn compare_csv(summaries: &[AlternativeSummary], quantiles: (f64, f64)) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    writer.write_record(compare_csv_header(quantiles))?;
    for s in summaries {
        let mut row =
            vec![s.name.clone(), s.usable.to_string(), s.censored.to_string(), (s.invalid + s.failed).to_string()];
        for spread in [&s.life_cycles, &s.life_efc, &s.life_years] {
            row.extend(spread_values(spread).map(number));
        }
        row.extend(spread_values(&s.life_cycles).map(|v| flag(v == f64::INFINITY).to_string()));
        row.extend(spread_values(&s.energy_to_end_wh).map(number));
        row.extend(spread_values(&s.soh_at_horizon_pct).map(number));
        row.push(number(s.charge_time_s / 3600.0));
        row.push(number(s.peak_temperature_c));
        row.push(flag(s.plating_fraction > 0.0).into());
        row.push(number(s.plating_fraction));
        match &s.paired {
            Some(d) if d.pairs > 0 => {
                for (median, interval) in [(d.median_cycles, d.interval_cycles), (d.median_efc, d.interval_efc)] {
                    let (lo, hi) = interval.unwrap_or((median, median));
                    row.extend([lo, median, hi].map(number));
                }
                row.push(number(d.probability_outlasts));
            }
            _ => row.extend(std::iter::repeat_n(String::new(), 7)),
        }
        let runs = s.usable + s.invalid + s.failed;
        row.push(counted_kinds(&s.warning_counts, runs));
        writer.write_record(&row)?;
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

/// A life or other quantity in the printed table: "> horizon" when censored samples reach it.
fn shown(v: f64, decimals: usize) -> String {
    if v == f64::INFINITY {
        "> horizon".into()
    } else if v.is_nan() {
        "–".into()
    } else {
        format!("{v:.decimals$}")
    }
}

fn shown_spread(s: &Spread, decimals: usize, scale: f64) -> String {
    match (s.low, s.high) {
        // Every sample outlives the horizon: one "> horizon" says it.
        (Some(lo), _) if lo == f64::INFINITY => shown(lo, decimals),
        (Some(lo), Some(hi)) => format!(
            "{} ({}–{})",
            shown(s.median * scale, decimals),
            shown(lo * scale, decimals),
            shown(hi * scale, decimals)
        ),
        _ => shown(s.median * scale, decimals),
    }
}

/// The comparison as printed: a side-by-side table, one column per alternative and one row per
/// quantity (median with the low–high quantile range when sampled), then the paired difference
/// against the first alternative. Pair statistics are printed only when samples were drawn.
pub fn compare_text(summaries: &[AlternativeSummary], sampled: bool, quantiles: (f64, f64)) -> String {
    let mut out = String::new();
    let Some(first) = summaries.first() else { return out };
    let [low, _, high] = quantile_labels(quantiles);
    let how = if sampled {
        format!("median (P{low}–P{high}) over the samples")
    } else {
        "one deterministic forecast each".into()
    };
    let _ = writeln!(out, "\nComparison against \"{}\" ({how})", first.name);
    let mut rows: Vec<(String, Vec<String>)> = vec![
        ("end of life, cycles".into(), summaries.iter().map(|s| shown_spread(&s.life_cycles, 0, 1.0)).collect()),
        ("end of life, EFC".into(), summaries.iter().map(|s| shown_spread(&s.life_efc, 0, 1.0)).collect()),
        ("end of life, years".into(), summaries.iter().map(|s| shown_spread(&s.life_years, 2, 1.0)).collect()),
        (
            "energy to end of life, kWh".into(),
            summaries.iter().map(|s| shown_spread(&s.energy_to_end_wh, 1, 1e-3)).collect(),
        ),
        ("SOH at horizon, %".into(), summaries.iter().map(|s| shown_spread(&s.soh_at_horizon_pct, 1, 1.0)).collect()),
        (
            "charge time per cycle, h".into(),
            summaries.iter().map(|s| format!("{:.2}", s.charge_time_s / 3600.0)).collect(),
        ),
        ("peak temperature, °C".into(), summaries.iter().map(|s| format!("{:.1}", s.peak_temperature_c)).collect()),
        (
            "lithium plating".into(),
            summaries
                .iter()
                .map(|s| match (s.plating_fraction > 0.0, sampled) {
                    (false, _) => "no".into(),
                    (true, false) => "YES".into(),
                    (true, true) => format!("YES ({:.0} %)", 100.0 * s.plating_fraction),
                })
                .collect(),
        ),
    ];
    if summaries.iter().any(|s| s.censored > 0) && sampled {
        rows.push((
            "alive at horizon".into(),
            summaries.iter().map(|s| format!("{} of {}", s.censored, s.usable)).collect(),
        ));
    }
    if summaries.iter().any(|s| s.invalid + s.failed > 0) {
        rows.push(("left out".into(), summaries.iter().map(|s| (s.invalid + s.failed).to_string()).collect()));
    }
    let difference = |s: &AlternativeSummary| match &s.paired {
        None => "(reference)".to_string(),
        Some(d) if d.pairs == 0 => "no usable pair".into(),
        Some(d) => match d.interval_cycles {
            Some((lo, hi)) if sampled => format!("{:+.0} ({lo:+.0} to {hi:+.0})", d.median_cycles),
            _ => format!("{:+.0}", d.median_cycles),
        },
    };
    rows.push((
        if sampled { "life vs first, cycles (paired)".into() } else { "life vs first, cycles".into() },
        summaries.iter().map(difference).collect(),
    ));
    if sampled {
        rows.push((
            "outlasts the first".into(),
            summaries
                .iter()
                .map(|s| match &s.paired {
                    Some(d) if d.pairs > 0 => format!("{:.0} % of {} pairs", 100.0 * d.probability_outlasts, d.pairs),
                    Some(_) => "–".into(),
                    None => String::new(),
                })
                .collect(),
        ));
    }
    let label_width = rows.iter().map(|(l, _)| l.chars().count()).max().unwrap_or(0) + 2;
    let widths: Vec<usize> = (0..summaries.len())
        .map(|a| {
            rows.iter()
                .map(|(_, cells)| cells[a].chars().count())
                .chain([summaries[a].name.chars().count()])
                .max()
                .unwrap_or(0)
                + 2
        })
        .collect();
    let pad = |text: &str, width: usize| format!("{text}{}", " ".repeat(width.saturating_sub(text.chars().count())));
    let mut line = format!("  {}", pad("", label_width));
    for (s, w) in summaries.iter().zip(&widths) {
        line.push_str(&pad(&s.name, *w));
    }
    let _ = writeln!(out, "{}", line.trim_end());
    for (label, cells) in &rows {
        let mut line = format!("  {}", pad(label, label_width));
        for (cell, w) in cells.iter().zip(&widths) {
            line.push_str(&pad(cell, *w));
        }
        let _ = writeln!(out, "{}", line.trim_end());
    }
    let censored_pairs: usize = summaries.iter().filter_map(|s| s.paired.map(|d| d.censored_pairs)).sum();
    if sampled && censored_pairs > 0 {
        let _ =
            writeln!(out, "  {censored_pairs} pairs involve a life beyond the horizon: their differences are bounds");
    }
    out
}

/// The columns of table.csv before the quantile columns.
pub const TABLE_CSV_HEADER: [&str; 16] = [
    "ambient_c",
    "c_rate",
    "soc_low_pct",
    "soc_high_pct",
    "cycle",
    "day",
    "years",
    "efc",
    "throughput_ah",
    "energy_wh",
    "capacity_ah",
    "soh_pct",
    "resistance_mohm",
    "resistance_growth_pct",
    "plating_predicted",
    "warnings",
];

/// Warning kinds with their counts, `kind:count/runs` separated by `;` (empty when none).
fn counted_kinds(counts: &[(WarningKind, usize)], runs: usize) -> String {
    counts.iter().map(|(kind, n)| format!("{}:{n}/{runs}", kind.key())).collect::<Vec<_>>().join(";")
}

/// table.csv, long format: one row per condition and reported point of the nominal forecast;
/// with samples, `soh_pct_p5`, `soh_pct_p50`, `soh_pct_p95` and the same for resistance growth.
pub fn table_csv(results: &[ConditionResult], quantiles: [f64; 3]) -> Result<Vec<u8>, ReportError> {
    let sampled = results.iter().any(|r| r.quantiles.is_some());
    let mut writer = csv::Writer::from_writer(Vec::new());
    let mut header: Vec<String> = TABLE_CSV_HEADER.iter().map(|s| s.to_string()).collect();
    if sampled {
        for quantity in ["soh_pct", "resistance_growth_pct"] {
            for p in quantiles {
                header.push(format!("{quantity}_p{}", super::ensemble::percent_label(p)));
            }
        }
    }
    writer.write_record(&header)?;
    for r in results {
        let c = &r.condition;
        for (k, p) in r.nominal.points.iter().enumerate() {
            let mut row = vec![
                number(c.ambient_c),
                number(c.c_rate),
                number(c.soc_low * 100.0),
                number(c.soc_high * 100.0),
                number(p.cycle),
                number(p.day),
                number(p.day / DAYS_PER_YEAR),
                number(p.efc),
                number(p.throughput_ah),
                number(p.energy_wh),
                number(p.capacity_ah),
                number(p.soh_pct),
                number(p.resistance_mohm),
                number(p.resistance_growth_pct),
                // The condition's forecast as a whole, from its typed warnings.
                flag(r.nominal.warning_set().contains(WarningKind::Plating)).into(),
                r.nominal.warning_set().kinds().map(WarningKind::key).collect::<Vec<_>>().join(";"),
            ];
            if sampled {
                let q = r.quantiles.as_ref().and_then(|q| q.get(k));
                for quantity in 0..2 {
                    for j in 0..quantiles.len() {
                        row.push(q.map_or(String::new(), |q| number(q[quantity][j])));
                    }
                }
            }
            writer.write_record(&row)?;
        }
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

/// The cautions of a comparison: the scenario's notes, plating per alternative, samples left
/// out, the forecasts' own warnings (once when every alternative raised the same, else naming
/// the alternatives; in full with their numbers for one run each, counted when sampled) and
/// the closing reminder that a ranking is a model estimate.
pub fn compare_cautions(notes: Vec<String>, summaries: &[AlternativeSummary], comparison: &Comparison) -> Vec<String> {
    let mut cautions = notes;
    for s in summaries {
        if s.plating_fraction > 0.0 {
            cautions.push(format!(
                "\"{}\": lithium plating predicted in {:.0} % of runs — a safety concern, not only a capacity loss; \
                 do not adopt this protocol without testing it against the cell maker's limits and the applicable standards",
                s.name,
                100.0 * s.plating_fraction
            ));
        }
        if s.invalid + s.failed > 0 {
            cautions.push(format!(
                "\"{}\": {} samples were left out of its statistics ({} drew inputs breaking an input rule, {} forecasts failed before end of life)",
                s.name, s.invalid + s.failed, s.invalid, s.failed
            ));
        }
    }
    // The forecasts' own warnings (limits, calibration; plating is flagged above): once when
    // every alternative raised the same, otherwise naming the alternatives that did.
    let mut raised: Vec<(String, Vec<String>)> = Vec::new();
    for (s, outcomes) in summaries.iter().zip(&comparison.outcomes) {
        let runs = s.usable + s.invalid + s.failed;
        let others: Vec<(WarningKind, usize)> =
            s.warning_counts.iter().copied().filter(|(kind, _)| *kind != WarningKind::Plating).collect();
        // One run each: the warnings in full, with their numbers; sampled: counted by kind.
        let lines = match (comparison.sampled, outcomes.first()) {
            (false, Some(only)) => only
                .warning_details
                .iter()
                .filter(|w| w.kind() != WarningKind::Plating)
                .map(super::warning_text)
                .collect(),
            _ => super::counted_warning_lines(&others, runs, "samples"),
        };
        for line in lines {
            match raised.iter_mut().find(|(l, _)| *l == line) {
                Some((_, names)) => names.push(s.name.clone()),
                None => raised.push((line, vec![s.name.clone()])),
            }
        }
    }
    for (line, names) in raised {
        if names.len() == summaries.len() {
            cautions.push(line);
        } else {
            let names: Vec<String> = names.iter().map(|n| format!("\"{n}\"")).collect();
            cautions.push(format!("{}: {line}", names.join(", ")));
        }
    }
    cautions.push(
        "each alternative's life is a model estimate; choose a protocol on test evidence, not on this ranking alone"
            .into(),
    );
    cautions
}

/// A fade table's rows at the horizon as the terminal shows them, and its cautions: the
/// scenario's notes, plating per condition (from the typed warning), samples left out, and
/// each other kind of warning once.
pub fn table_text(results: &[ConditionResult], notes: Vec<String>) -> (String, Vec<String>) {
    let mut text = String::new();
    let _ = writeln!(text, "\n  {:<28}{:>14}{:>14}{:>18}", "condition", "horizon EFC", "SOH, %", "resistance, %");
    let mut cautions = notes;
    let mut other_warnings: Vec<&ForecastWarning> = Vec::new();
    let mut plating: Vec<(String, &ForecastWarning)> = Vec::new();
    for r in results {
        let label = r.condition.label();
        if let Some(last) = r.nominal.points.last() {
            let _ = writeln!(
                text,
                "  {:<28}{:>14.0}{:>14.1}{:>+18.1}",
                label, last.efc, last.soh_pct, last.resistance_growth_pct
            );
        }
        for w in &r.nominal.warnings {
            if w.kind() == WarningKind::Plating {
                plating.push((label.clone(), w));
            } else if !other_warnings.iter().any(|o| o.kind() == w.kind()) {
                other_warnings.push(w);
            }
        }
        if r.samples_left_out > 0 {
            cautions.push(format!(
                "{label}: {} samples left out of the quantiles (invalid draws or forecasts stopping before the horizon)",
                r.samples_left_out
            ));
        }
    }
    // Plating: the conditions named once, then the warning's words once (they do not depend on
    // the condition beyond the numbers, which table.csv holds per condition).
    if let Some((_, first)) = plating.first() {
        let conditions: Vec<&str> = plating.iter().map(|(label, _)| label.as_str()).collect();
        cautions.push(format!(
            "lithium plating predicted at {} of {} conditions: {}",
            plating.len(),
            results.len(),
            conditions.join("; ")
        ));
        cautions.push(super::warning_text(first));
    }
    cautions.extend(other_warnings.into_iter().map(super::warning_text));
    (text, cautions)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::{Condition, TABLE_QUANTILES};
    use crate::forecast::{FadePoint, Forecast, ForecastWarning, StopReason};

    fn condition_with(warnings: Vec<ForecastWarning>) -> ConditionResult {
        ConditionResult {
            condition: Condition { ambient_c: 0.0, c_rate: 2.0, soc_low: 0.0, soc_high: 1.0 },
            nominal: Forecast {
                points: vec![FadePoint::default()],
                end_of_life: vec![],
                stop: StopReason::Horizon,
                simulated_cycles: 0,
                accepted_steps: 0,
                rejected_steps: 0,
                every_cycle: false,
                fresh_capacity_ah: 5.0,
                fresh_resistance_mohm: 16.0,
                scale: Default::default(),
                warnings,
                final_state: None,
                interface_rise: None,
                pack: None,
            },
            quantiles: None,
            samples_left_out: 0,
        }
    }

    #[test]
    fn the_plating_column_reads_the_typed_warning_not_its_words() {
        // Whatever src/report says about plating, the flag follows `WarningKind::Plating`.
        let plating = ForecastWarning::Plating { lowest_potential_v: -0.01, plated_ah: 0.002 };
        let csv = String::from_utf8(
            table_csv(&[condition_with(vec![plating]), condition_with(vec![])], TABLE_QUANTILES).unwrap(),
        )
        .unwrap();
        let header: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
        let column = header.iter().position(|h| *h == "plating_predicted").unwrap();
        let flags: Vec<&str> = csv.lines().skip(1).map(|l| l.split(',').nth(column).unwrap()).collect();
        assert_eq!(flags, ["true", "false"]);
    }
}
