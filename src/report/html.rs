//! `report.html`: one self-contained page per run (no external assets; the plots inline as
//! SVG) with the inputs and their content hashes, the calibration status, every caution and
//! warning, the headline figures and the plots. Each command builds a [`ReportPage`] from its
//! typed results; [`report_html`] writes the page.

use super::ensemble::percent_label;
use super::text::sig;
use crate::aging::CalibrationRange;
use crate::calibrate::FitResult;
use crate::compare::AlternativeSummary;
use crate::ensemble::EnsembleSummary;
use crate::forecast::{Forecast, Threshold, WarningKind};
use crate::input::{InputDigest, InputRole};
use std::fmt::Write as _;

/// Said on every page beside the standards caution: the figures are estimates, not promises.
const ESTIMATES_CAUTION: &str = "End-of-life figures and warranty odds on this page are model estimates from the \
     inputs listed above. A warranty or service-life commitment needs test evidence on the cells concerned and \
     review under the applicable standards, local codes and licensed engineering practice.";

/// A table of the page: caption, header and rows (already formatted).
pub struct HtmlTable {
    pub caption: String,
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

/// Everything a run's page shows.
pub struct ReportPage<'a> {
    /// The command that made the run (`forecast`, `bands` …).
    pub command: &'a str,
    pub title: &'a str,
    pub inputs: &'a [InputDigest],
    /// The `--set` values as given.
    pub overrides: &'a [String],
    pub calibration: String,
    /// Warnings and cautions of the run (each a paragraph).
    pub warnings: Vec<String>,
    pub tables: Vec<HtmlTable>,
    /// The summary the command printed.
    pub printed: &'a str,
    /// (file name, SVG text) of each plot.
    pub plots: Vec<(&'a str, &'a str)>,
}

fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            _ => out.push(c),
        }
    }
    out
}

const STYLE: &str = "body{font-family:sans-serif;max-width:60rem;margin:1.5rem auto;padding:0 1rem;color:#111;\
line-height:1.4}h1{font-size:1.5rem}h2{font-size:1.2rem;margin-top:2rem;border-bottom:1px solid #ccc}\
table{border-collapse:collapse;margin:0.5rem 0}td,th{border:1px solid #bbb;padding:0.2rem 0.5rem;text-align:left;\
vertical-align:top}th{background:#eee}code{font-size:0.85rem;word-break:break-all}\
.caution{background:#fff4e0;border-left:4px solid #d55e00;padding:0.4rem 0.8rem;margin:0.5rem 0}\
figure{margin:1rem 0}figure svg{max-width:100%;height:auto;border:1px solid #ddd}\
figcaption{font-size:0.9rem;color:#444}pre{background:#f6f6f6;padding:0.6rem;overflow-x:auto;font-size:0.8rem}";

fn table_html(out: &mut String, table: &HtmlTable) {
    let _ = write!(out, "<table><caption>{}</caption><tr>", escape(&table.caption));
    for h in &table.header {
        let _ = write!(out, "<th>{}</th>", escape(h));
    }
    out.push_str("</tr>\n");
    for row in &table.rows {
        out.push_str("<tr>");
        for cell in row {
            let _ = write!(out, "<td>{}</td>", escape(cell));
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</table>\n");
}

/// The page as one HTML document.
pub fn report_html(page: &ReportPage) -> String {
    let mut out = String::new();
    let _ = write!(
        out,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>{} — fadecast {}</title>\
         <style>{STYLE}</style></head><body>\n<h1>{}</h1>\n<p>fadecast {} {} · <code>fadecast {}</code></p>\n",
        escape(page.title),
        escape(page.command),
        escape(page.title),
        escape(page.command),
        env!("CARGO_PKG_VERSION"),
        escape(page.command),
    );
    out.push_str("<h2>Cautions and warnings</h2>\n");
    for text in page.warnings.iter().map(String::as_str).chain([ESTIMATES_CAUTION, crate::CAUTION]) {
        let _ = writeln!(out, "<div class=\"caution\">{}</div>", escape(text));
    }
    let _ = writeln!(out, "<h2>Calibration</h2>\n<p>{}</p>", escape(&page.calibration));
    out.push_str("<h2>Headline figures</h2>\n");
    for table in &page.tables {
        table_html(&mut out, table);
    }
    out.push_str("<h2>Plots</h2>\n");
    for (name, svg) in &page.plots {
        let _ = writeln!(out, "<figure>{svg}<figcaption>{}</figcaption></figure>", escape(name));
    }
    out.push_str("<h2>Inputs</h2>\n");
    let inputs = HtmlTable {
        caption: "Files read, with the SHA-256 of their content after the --set overrides".into(),
        header: vec!["role".into(), "path".into(), "SHA-256".into()],
        rows: page.inputs.iter().map(|d| vec![role_name(d.role).into(), d.path.clone(), d.sha256.clone()]).collect(),
    };
    table_html(&mut out, &inputs);
    if !page.overrides.is_empty() {
        let _ = writeln!(out, "<p>Overrides: <code>{}</code></p>", escape(&page.overrides.join(" ")));
    }
    let _ = writeln!(out, "<h2>Summary as printed</h2>\n<pre>{}</pre>\n</body></html>", escape(page.printed));
    out
}

fn role_name(role: InputRole) -> &'static str {
    match role {
        InputRole::Scenario => "scenario",
        InputRole::Cell => "cell",
        InputRole::Profile => "profile",
        InputRole::Series => "series",
        InputRole::Uncertainty => "uncertainty",
        InputRole::AgingData => "aging data",
    }
}

/// The calibration status of one forecast: its cell's calibrated range and whether the
/// forecast stays inside it.
pub fn calibration_status(range: Option<&CalibrationRange>, kinds: &[WarningKind]) -> String {
    let Some(range) = range else {
        return "Not calibrated: the cell's aging parameters carry no calibration range, so this forecast is \
                illustrative until they are fitted to measured aging data (fadecast fit)."
            .into();
    };
    let mut parts = Vec::new();
    if let Some(c) = range.cycles {
        parts.push(format!("{} cycles", sig(c, 3)));
    }
    if let Some(d) = range.days {
        parts.push(format!("{} days", sig(d, 3)));
    }
    if let Some(e) = range.efc {
        parts.push(format!("{} equivalent full cycles", sig(e, 3)));
    }
    if let Some((lo, hi)) = range.temperature_k {
        let c = |k: f64| sig(k - crate::material::constants::ZERO_CELSIUS_K, 3);
        parts.push(format!("{}–{} °C", c(lo), c(hi)));
    }
    let beyond = if kinds.contains(&WarningKind::BeyondCalibration) {
        " This forecast goes beyond that range: treat what lies beyond as extrapolation."
    } else {
        " This forecast stays within it."
    };
    format!("Calibrated on aging data up to {}.{beyond}", parts.join(", "))
}

/// Calibration status over the samples of an ensemble or an alternative.
fn counted_calibration(counts: &[(WarningKind, usize)], samples: u64) -> String {
    let count = |kind| counts.iter().find(|(k, _)| *k == kind).map_or(0, |(_, n)| *n);
    let (none, beyond) = (count(WarningKind::Uncalibrated), count(WarningKind::BeyondCalibration));
    let mut text = String::new();
    if none > 0 {
        let _ = write!(text, "Not calibrated in {none} of {samples} samples (illustrative). ");
    }
    if beyond > 0 {
        let _ = write!(text, "Beyond the calibrated range in {beyond} of {samples} samples (extrapolation). ");
    }
    if text.is_empty() {
        text.push_str("Calibrated; every sample stays within the calibrated range.");
    }
    text.trim_end().to_string()
}

/// A number to `digits` significant digits, in exponent form when very small or large.
fn figure(value: f64, digits: usize) -> String {
    let size = value.abs();
    if size != 0.0 && !(1e-3..1e6).contains(&size) {
        format!("{:.*e}", digits.saturating_sub(1), value)
    } else {
        sig(value, digits)
    }
}

fn life_cell(cycles: f64, years: f64) -> String {
    format!("{} cycles ({} years)", sig(cycles, 4), sig(years, 3))
}

/// The headline of a forecast: end of life per threshold and the state at the horizon.
pub fn forecast_tables(forecast: &Forecast, cycling: bool) -> Vec<HtmlTable> {
    let mut rows: Vec<Vec<String>> = forecast
        .end_of_life
        .iter()
        .map(|e| {
            let what = match e.threshold {
                Threshold::Capacity => "capacity",
                Threshold::Resistance => "resistance",
            };
            let when = match e.reached {
                Some(at) if cycling => life_cell(at.cycles, at.years),
                Some(at) => format!("{} years", sig(at.years, 3)),
                None => "not reached within the horizon".into(),
            };
            vec![format!("end of life, {what} at {} % of fresh", sig(e.level_pct, 3)), when]
        })
        .collect();
    if let Some(last) = forecast.points.last() {
        let at = if cycling { format!("{} cycles", sig(last.cycle, 4)) } else { format!("{} days", sig(last.day, 4)) };
        rows.push(vec![format!("state of health at the horizon ({at})"), format!("{} %", sig(last.soh_pct, 4))]);
        rows.push(vec![
            format!("resistance at the horizon ({at})"),
            format!("{} % of fresh", sig(100.0 + last.resistance_growth_pct, 4)),
        ]);
    }
    vec![HtmlTable { caption: "Forecast".into(), header: vec!["quantity".into(), "value".into()], rows }]
}

/// The headline of an ensemble: life quantiles per threshold and the warranty odds.
pub fn bands_tables(summary: &EnsembleSummary) -> (Vec<HtmlTable>, String) {
    let mut header = vec!["end of life".into(), "reached by".into()];
    header.extend(summary.quantiles.iter().map(|p| format!("P{}", percent_label(*p))));
    let rows = summary
        .life
        .iter()
        .map(|life| {
            let mut row =
                vec![life.threshold.to_string(), format!("{:.1} % of samples", 100.0 * life.reached_fraction)];
            row.extend(life.cycles.iter().zip(&life.years).map(|(c, y)| match (c.value, y.value) {
                (Some(c), Some(y)) => life_cell(c, y),
                _ => "not reached".into(),
            }));
            row
        })
        .collect();
    let mut tables =
        vec![HtmlTable { caption: format!("End of life over {} counted samples", summary.counted), header, rows }];
    if let Some(w) = summary.warranty {
        tables.push(HtmlTable {
            caption: "Warranty odds".into(),
            header: vec!["warranty point".into(), "met by".into(), "95 % interval (Clopper–Pearson)".into()],
            rows: vec![vec![
                format!("≥ {} % state of health at {} years", sig(w.soh_pct, 3), sig(w.years, 3)),
                format!("{:.1} % ({} of {})", 100.0 * w.probability, w.met, w.trials),
                format!("{:.1}–{:.1} %", 100.0 * w.interval_95.0, 100.0 * w.interval_95.1),
            ]],
        });
    }
    if !summary.sensitivity.is_empty() {
        let noise = super::rank_correlation_noise(summary.counted);
        tables.push(HtmlTable {
            caption: format!(
                "Rank correlation with {}{}",
                summary.sensitivity_measure,
                noise.map_or(String::new(), |n| format!(" (|ρ| under {n:.2} is Monte Carlo noise)"))
            ),
            header: vec!["input".into(), "key".into(), "ρ".into()],
            rows: summary
                .sensitivity
                .iter()
                .map(|s| vec![super::readable_path(&s.path), s.path.clone(), format!("{:+.2}", s.rank_correlation)])
                .collect(),
        });
    }
    (tables, counted_calibration(&summary.warning_counts, summary.counted))
}

/// The headline of a comparison: one row per alternative.
pub fn compare_tables(
    summaries: &[AlternativeSummary],
    sampled: bool,
    quantiles: (f64, f64),
) -> (Vec<HtmlTable>, String) {
    let [low, _, high] = super::compare::quantile_labels(quantiles);
    let spread = |s: &crate::compare::Spread, unit: &str| {
        let finite = |v: f64| if v.is_finite() { sig(v, 4) } else { "beyond horizon".into() };
        match (s.low, s.high) {
            (Some(lo), Some(hi)) if sampled => {
                format!("{} {unit} (P{low} {} – P{high} {})", finite(s.median), finite(lo), finite(hi))
            }
            _ => format!("{} {unit}", finite(s.median)),
        }
    };
    let rows = summaries
        .iter()
        .map(|s| {
            vec![
                s.name.clone(),
                spread(&s.life_cycles, "cycles"),
                spread(&s.life_years, "years"),
                spread(&s.soh_at_horizon_pct, "%"),
                s.paired.as_ref().map_or("reference".into(), |d| {
                    if !sampled {
                        // One forecast each: there is no sample to pair.
                        "— (no samples)".into()
                    } else if d.pairs > 0 {
                        format!("{:.0} % of {} pairs", 100.0 * d.probability_outlasts, d.pairs)
                    } else {
                        "no usable pairs".into()
                    }
                }),
                format!("{:.0} %", 100.0 * s.plating_fraction),
                format!("{} °C", sig(s.peak_temperature_c, 3)),
            ]
        })
        .collect();
    let header = [
        "alternative",
        if sampled { "life (median)" } else { "life" },
        "life in years",
        "state of health at horizon",
        "outlasts the first",
        "plating predicted",
        "peak temperature",
    ];
    let caption = if sampled {
        "Comparison on the same samples (life censored at the horizon reads \"beyond horizon\")"
    } else {
        "One deterministic forecast each (life censored at the horizon reads \"beyond horizon\")"
    };
    let tables =
        vec![HtmlTable { caption: caption.into(), header: header.iter().map(|h| h.to_string()).collect(), rows }];
    let calibration = summaries
        .iter()
        .map(|s| format!("{}: {}", s.name, counted_calibration(&s.warning_counts, s.usable as u64)))
        .collect::<Vec<_>>()
        .join(" ");
    (tables, calibration)
}

/// The headline of a fit: the fitted values, residuals and hold-out errors.
pub fn fit_tables(result: &FitResult) -> (Vec<HtmlTable>, String) {
    let mut tables = vec![HtmlTable {
        caption: "Fitted parameters".into(),
        header: vec!["parameter".into(), "key".into(), "value".into(), "standard error".into(), "bounds".into()],
        rows: result
            .parameters
            .iter()
            .map(|p| {
                vec![
                    super::readable_path(&p.path),
                    p.path.clone(),
                    figure(p.value, 4),
                    figure(p.standard_error, 2),
                    format!("{} – {}", figure(p.low, 3), figure(p.high, 3)),
                ]
            })
            .collect(),
    }];
    tables.push(HtmlTable {
        caption: "Residuals at the fitted points (model − data)".into(),
        header: vec!["dataset".into(), "points".into(), "capacity RMS, Ah".into(), "resistance RMS, mΩ".into()],
        rows: result
            .residuals
            .iter()
            .map(|r| {
                vec![
                    r.dataset.clone(),
                    r.points_fitted.to_string(),
                    sig(r.capacity_rms_ah, 3),
                    r.resistance_rms_mohm.map_or("—".into(), |v| sig(v, 3)),
                ]
            })
            .collect(),
    });
    if !result.holdout.is_empty() {
        tables.push(HtmlTable {
            caption: "Held-out points (forecast from the fit)".into(),
            header: vec!["dataset".into(), "points".into(), "state of health RMS, pp".into(), "largest, pp".into()],
            rows: result
                .holdout
                .iter()
                .map(|h| vec![h.dataset.clone(), h.points.to_string(), sig(h.soh_rms_pp, 3), sig(h.soh_max_abs_pp, 3)])
                .collect(),
        });
    }
    let ranges: Vec<String> = result
        .curves
        .iter()
        .map(|c| {
            format!(
                "{}: up to {} {}",
                c.dataset,
                sig(c.x_data.iter().zip(&c.fitted).filter(|(_, f)| **f).map(|(x, _)| *x).fold(0.0, f64::max), 4),
                super::fit::axis_label(c.axis)
            )
        })
        .collect();
    let converged = if result.converged { "converged" } else { "did not meet its convergence tests" };
    let calibration = format!(
        "This run makes the calibration: the fit {converged}; the fitted cell's calibrated range is the fitted data ({}).",
        ranges.join("; ")
    );
    (tables, calibration)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn page_is_self_contained_and_escaped() {
        let inputs = [InputDigest { role: InputRole::Scenario, path: "a<b>.toml".into(), sha256: "ab12".into() }];
        let page = ReportPage {
            command: "forecast",
            title: "Van & fleet",
            inputs: &inputs,
            overrides: &[],
            calibration: "Not calibrated".into(),
            warnings: vec!["CAUTION: lithium plating predicted".into()],
            tables: vec![HtmlTable {
                caption: "Forecast".into(),
                header: vec!["quantity".into(), "value".into()],
                rows: vec![vec!["end of life".into(), "1200 cycles".into()]],
            }],
            printed: "printed <summary>",
            plots: vec![("fade.svg", "<svg viewBox=\"0 0 10 10\"></svg>")],
        };
        let html = report_html(&page);
        for text in [
            "<h1>Van &amp; fleet</h1>",
            "a&lt;b&gt;.toml",
            "ab12",
            "CAUTION: lithium plating predicted",
            "applicable standards",
            "<svg viewBox=\"0 0 10 10\"></svg>",
            "printed &lt;summary&gt;",
            "1200 cycles",
        ] {
            assert!(html.contains(text), "missing {text}");
        }
        // Nothing fetched from elsewhere: no links, scripts or external sources.
        for external in ["href=", "src=", "<script", "<link", "url("] {
            assert!(!html.contains(external), "{external}");
        }
    }

    #[test]
    fn tiny_values_read_in_exponent_form() {
        assert_eq!(figure(2.257e-20, 4), "2.257e-20");
        assert_eq!(figure(0.5708, 4), sig(0.5708, 4));
    }

    #[test]
    fn calibration_status_follows_the_range_and_the_warnings() {
        assert!(calibration_status(None, &[]).starts_with("Not calibrated"));
        let range =
            CalibrationRange { cycles: None, days: Some(180.0), efc: None, temperature_k: Some((298.15, 313.15)) };
        let inside = calibration_status(Some(&range), &[]);
        assert!(
            inside.contains("180 days") && inside.contains("25–40 °C") && inside.contains("stays within"),
            "{inside}"
        );
        assert!(calibration_status(Some(&range), &[WarningKind::BeyondCalibration]).contains("extrapolation"));
    }
}
