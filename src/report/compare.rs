//! Comparison and fade-table outputs as bytes and text: compare.csv, the printed comparison
//! table and table.csv (compare.svg is drawn in `compare_svg.rs`).

use super::ReportError;
use crate::compare::{AlternativeSummary, Comparison, ConditionResult, Spread, TABLE_QUANTILES};
use crate::forecast::{ForecastWarning, WarningKind};
use std::fmt::Write as _;

const DAYS_PER_YEAR: f64 = 365.25;

/// A number for a CSV cell: blank when absent or undefined, `inf` for a life beyond the
/// horizon (censored samples reach that quantile).
fn cell(v: Option<f64>) -> String {
    match v {
        Some(v) if v.is_nan() => String::new(),
        Some(v) if v == f64::INFINITY => "inf".into(),
        Some(v) => v.to_string(),
        None => String::new(),
    }
}

fn spread_cells(s: &Spread) -> [String; 3] {
    [cell(s.p10), cell(Some(s.p50)), cell(s.p90)]
}

/// The header of compare.csv.
pub const COMPARE_CSV_HEADER: [&str; 31] = [
    "alternative",
    "samples_usable",
    "samples_censored",
    "samples_left_out",
    "life_cycles_p10",
    "life_cycles_p50",
    "life_cycles_p90",
    "life_efc_p10",
    "life_efc_p50",
    "life_efc_p90",
    "life_years_p10",
    "life_years_p50",
    "life_years_p90",
    "energy_to_end_of_life_wh_p10",
    "energy_to_end_of_life_wh_p50",
    "energy_to_end_of_life_wh_p90",
    "soh_at_horizon_pct_p10",
    "soh_at_horizon_pct_p50",
    "soh_at_horizon_pct_p90",
    "charge_time_h",
    "peak_temperature_c",
    "plating_predicted",
    "plating_fraction",
    "life_difference_cycles_p50",
    "life_difference_cycles_p5",
    "life_difference_cycles_p95",
    "life_difference_efc_p50",
    "life_difference_efc_p5",
    "life_difference_efc_p95",
    "probability_outlasts_first",
    "warnings",
];

/// compare.csv: one row per alternative; the difference columns are blank for the first
/// (the reference), and the outer quantiles blank when the comparison ran deterministically.
pub fn compare_csv(summaries: &[AlternativeSummary]) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    writer.write_record(COMPARE_CSV_HEADER)?;
    for s in summaries {
        let mut row =
            vec![s.name.clone(), s.usable.to_string(), s.censored.to_string(), (s.invalid + s.failed).to_string()];
        for spread in [&s.life_cycles, &s.life_efc, &s.life_years, &s.energy_to_end_wh, &s.soh_at_horizon_pct] {
            row.extend(spread_cells(spread));
        }
        row.push(cell(Some(s.charge_time_s / 3600.0)));
        row.push(cell(Some(s.peak_temperature_c)));
        row.push(if s.plating_fraction > 0.0 { "yes" } else { "no" }.into());
        row.push(cell(Some(s.plating_fraction)));
        match &s.paired {
            Some(d) => {
                row.push(cell(Some(d.median_cycles)));
                row.push(cell(d.interval_cycles.map(|i| i.0)));
                row.push(cell(d.interval_cycles.map(|i| i.1)));
                row.push(cell(Some(d.median_efc)));
                row.push(cell(d.interval_efc.map(|i| i.0)));
                row.push(cell(d.interval_efc.map(|i| i.1)));
                row.push(cell(Some(d.probability_outlasts)));
            }
            None => row.extend(std::iter::repeat_n(String::new(), 7)),
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

fn shown_spread(s: &Spread, decimals: usize) -> String {
    match (s.p10, s.p90) {
        (Some(lo), Some(hi)) => {
            format!("{} ({} – {})", shown(s.p50, decimals), shown(lo, decimals), shown(hi, decimals))
        }
        _ => shown(s.p50, decimals),
    }
}

/// The comparison as printed: one block per alternative, life with its P10–P90 range when
/// sampled, and the paired difference against the first alternative.
pub fn compare_text(summaries: &[AlternativeSummary], sampled: bool) -> String {
    let mut out = String::new();
    let Some(first) = summaries.first() else { return out };
    let how = if sampled { "median (P10 – P90) over the samples" } else { "one deterministic forecast each" };
    let _ = writeln!(out, "\nComparison against \"{}\" ({how})", first.name);
    for s in summaries {
        let _ = writeln!(out, "  {}", s.name);
        let _ = writeln!(out, "    {:<38}{}", "end of life, cycles", shown_spread(&s.life_cycles, 0));
        let _ = writeln!(out, "    {:<38}{}", "end of life, equivalent full cycles", shown_spread(&s.life_efc, 0));
        let _ = writeln!(out, "    {:<38}{}", "end of life, years", shown_spread(&s.life_years, 2));
        let _ = writeln!(
            out,
            "    {:<38}{}",
            "energy to end of life, kWh",
            shown_spread(
                &Spread {
                    p10: s.energy_to_end_wh.p10.map(|v| v / 1000.0),
                    p50: s.energy_to_end_wh.p50 / 1000.0,
                    p90: s.energy_to_end_wh.p90.map(|v| v / 1000.0),
                },
                1
            )
        );
        let _ = writeln!(out, "    {:<38}{}", "state of health at horizon, %", shown_spread(&s.soh_at_horizon_pct, 1));
        let _ = writeln!(out, "    {:<38}{:.2} h", "charge time per cycle", s.charge_time_s / 3600.0);
        let _ = writeln!(out, "    {:<38}{:.1} °C", "peak temperature", s.peak_temperature_c);
        let plating = if s.plating_fraction > 0.0 {
            format!("YES ({:.0} % of samples)", 100.0 * s.plating_fraction)
        } else {
            "no".into()
        };
        let _ = writeln!(out, "    {:<38}{plating}", "lithium plating predicted");
        if s.censored > 0 {
            let _ = writeln!(
                out,
                "    {:<38}{} of {} samples still alive at the horizon (censored: life is longer)",
                "censored", s.censored, s.usable
            );
        }
        if s.invalid + s.failed > 0 {
            let _ = writeln!(
                out,
                "    {:<38}{} samples (invalid draws {}, forecasts failed {})",
                "left out",
                s.invalid + s.failed,
                s.invalid,
                s.failed
            );
        }
        if let Some(d) = s.paired.filter(|d| d.pairs == 0) {
            let _ =
                writeln!(out, "    {:<38}no sample usable in both (of {} pairs)", "life vs first (paired)", d.pairs);
        }
        if let Some(d) = s.paired.filter(|d| d.pairs > 0) {
            let interval =
                d.interval_cycles.map_or(String::new(), |(lo, hi)| format!(" (90 % interval {lo:+.0} to {hi:+.0})"));
            let _ = writeln!(out, "    {:<38}{:+.0} cycles{interval}", "life vs first (paired)", d.median_cycles);
            let _ = writeln!(
                out,
                "    {:<38}{:.0} % of {} pairs",
                "outlasts the first",
                100.0 * d.probability_outlasts,
                d.pairs
            );
            if d.censored_pairs > 0 {
                let _ = writeln!(
                    out,
                    "    {:<38}{} pairs involve a life beyond the horizon: their differences are bounds",
                    "", d.censored_pairs
                );
            }
        }
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
pub fn table_csv(results: &[ConditionResult]) -> Result<Vec<u8>, ReportError> {
    let sampled = results.iter().any(|r| r.quantiles.is_some());
    let mut writer = csv::Writer::from_writer(Vec::new());
    let mut header: Vec<String> = TABLE_CSV_HEADER.iter().map(|s| s.to_string()).collect();
    if sampled {
        for quantity in ["soh_pct", "resistance_growth_pct"] {
            for p in TABLE_QUANTILES {
                header.push(format!("{quantity}_p{}", super::ensemble::percent_label(p)));
            }
        }
    }
    writer.write_record(&header)?;
    for r in results {
        let c = &r.condition;
        for (k, p) in r.nominal.points.iter().enumerate() {
            let mut row = vec![
                cell(Some(c.ambient_c)),
                cell(Some(c.c_rate)),
                cell(Some(c.soc_low * 100.0)),
                cell(Some(c.soc_high * 100.0)),
                cell(Some(p.cycle)),
                cell(Some(p.day)),
                cell(Some(p.day / DAYS_PER_YEAR)),
                cell(Some(p.efc)),
                cell(Some(p.throughput_ah)),
                cell(Some(p.energy_wh)),
                cell(Some(p.capacity_ah)),
                cell(Some(p.soh_pct)),
                cell(Some(p.resistance_mohm)),
                cell(Some(p.resistance_growth_pct)),
                // The condition's forecast as a whole, from its typed warnings.
                if r.nominal.warning_set().contains(WarningKind::Plating) { "yes" } else { "no" }.into(),
                r.nominal.warning_set().kinds().map(WarningKind::key).collect::<Vec<_>>().join(";"),
            ];
            if sampled {
                let q = r.quantiles.as_ref().and_then(|q| q.get(k));
                for quantity in 0..2 {
                    for j in 0..TABLE_QUANTILES.len() {
                        row.push(cell(q.map(|q| q[quantity][j])));
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
                cautions.push(format!("{label}: {}", super::warning_text(w)));
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
    cautions.extend(other_warnings.into_iter().map(super::warning_text));
    (text, cautions)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::Condition;
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
        let csv =
            String::from_utf8(table_csv(&[condition_with(vec![plating]), condition_with(vec![])]).unwrap()).unwrap();
        let header: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
        let column = header.iter().position(|h| *h == "plating_predicted").unwrap();
        let flags: Vec<&str> = csv.lines().skip(1).map(|l| l.split(',').nth(column).unwrap()).collect();
        assert_eq!(flags, ["yes", "no"]);
    }
}
