//! Ensemble figures: the median fade curves with shaded quantile bands, end-of-life thresholds
//! and the warranty point; and the inputs ranked by their rank correlation with life, with the
//! band inside which a correlation is Monte Carlo noise.

use super::ensemble::percent_label;
use super::plot::{self, LegendEntry, Mark, Scale};
use super::ReportError;
use crate::ensemble::EnsembleSummary;
use plotters::prelude::*;

const CHART_HEIGHT_PX: u32 = 280;
const BAND_COLOUR: RGBColor = plot::BLUE;

/// End-of-life thresholds of a run, % of fresh.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct ThresholdsPct {
    pub capacity: f64,
    pub resistance: f64,
}

/// State of health and resistance: median line, and the band between each symmetric pair of
/// quantiles (outermost lightest), against cycles (days when storing) with years on top.
/// Resistance is shown as % of the median fresh value, the way its threshold is stated.
pub fn bands_svg(
    summary: &EnsembleSummary,
    thresholds: Option<ThresholdsPct>,
    scenario_name: &str,
    cycling: bool,
) -> Result<String, ReportError> {
    let x_of = |k: usize| if cycling { summary.bands[k].cycle } else { summary.bands[k].day };
    let n = summary.bands.len();
    let x_range = plot::padded_range((0..n).map(x_of), 0.0);
    let years = plot::years_range(&x_range, summary.bands.last().map(|b| (x_of(n - 1), b.day)));
    let q = &summary.quantiles;
    let median = q.iter().position(|&p| (p - 0.5).abs() < 1e-9);
    // Resistance relative to the median (or middle quantile) at the first point, the fresh cell.
    let middle = median.unwrap_or(q.len() / 2);
    let fresh_mohm = summary.bands.first().and_then(|b| b.values[2].get(middle).copied()).filter(|v| *v > 0.0);
    let resistance_scale = fresh_mohm.map_or(1.0, |r| 100.0 / r);
    let resistance_desc = if fresh_mohm.is_some() { "resistance, % of median fresh" } else { "resistance, mΩ" };
    let panels = [
        (1usize, "state of health, %", 1.0, thresholds.map(|t| (t.capacity, "capacity"))),
        (
            2,
            resistance_desc,
            resistance_scale,
            thresholds.filter(|_| fresh_mohm.is_some()).map(|t| (t.resistance, "resistance")),
        ),
    ];
    let warranty_x = summary
        .warranty
        .and_then(|w| plot::x_at_years((0..n).map(|k| (x_of(k), summary.bands[k].day)), w.years).map(|x| (x, w)));

    let legend = |quantity: usize, level: Option<(f64, &str)>, on_axis: bool| {
        let mut entries: Vec<LegendEntry> = (0..q.len() / 2)
            .map(|i| {
                let j = q.len() - 1 - i;
                LegendEntry::new(
                    Mark::Area(BAND_COLOUR, shade(i)),
                    format!("P{} – P{}", percent_label(q[i]), percent_label(q[j])),
                )
            })
            .collect();
        if median.is_some() {
            entries.push(LegendEntry::new(Mark::Line(plot::BLACK_OI), "median"));
        }
        if let Some((level, what)) = level {
            let level = plot::tick_label(level);
            entries.push(if on_axis {
                LegendEntry::new(Mark::Dashed(plot::THRESHOLD), format!("end of life: {level} % of fresh {what}"))
            } else {
                LegendEntry::new(Mark::Dashed(plot::GREY), format!("end of life at {level} % (off this scale)"))
            });
        }
        if let (1, Some((_, w))) = (quantity, warranty_x) {
            entries.push(LegendEntry::new(
                Mark::Target(plot::ORANGE),
                format!(
                    "warranty: ≥ {} % at {} years, met by {:.0} % (95 % interval {:.0}–{:.0} %)",
                    plot::tick_label(w.soh_pct),
                    plot::tick_label(w.years),
                    100.0 * w.probability,
                    100.0 * w.interval_95.0,
                    100.0 * w.interval_95.1
                ),
            ));
        }
        entries
    };
    let ranges: Vec<_> = panels
        .iter()
        .map(|&(quantity, _, scale, level)| {
            let mut values: Vec<f64> =
                summary.bands.iter().flat_map(|b| b.values[quantity].iter().map(|v| v * scale)).collect();
            if let (1, Some((_, w))) = (quantity, warranty_x) {
                values.push(w.soh_pct);
            }
            plot::range_with_level(values.into_iter(), level.map(|l| l.0))
        })
        .collect();
    let legends: Vec<_> =
        panels.iter().zip(&ranges).map(|(&(quantity, _, _, level), (_, on))| legend(quantity, level, *on)).collect();
    let heights: Vec<u32> = legends.iter().map(|l| plot::legend_height(l) + CHART_HEIGHT_PX).collect();
    let subtitle = format!("{} samples: median and quantile bands", summary.counted);

    let mut svg = String::new();
    {
        let root = plot::root(&mut svg, plot::title_height(true) + heights.iter().sum::<u32>())?;
        let mut rest = plot::titled(&root, scenario_name, Some(&subtitle))?;
        for (k, &(quantity, y_desc, scale, level)) in panels.iter().enumerate() {
            let (area, below) = rest.split_vertically(heights[k]);
            rest = below;
            let area = plot::legend_above(&area, &legends[k])?;
            let (strip, area) = plot::years_strip(&area);
            let (y_range, on_axis) = ranges[k].clone();
            let mut chart = plot::chart(&area, x_range.clone(), y_range, true)?;
            plot::draw_axes(&mut chart, if cycling { "cycles" } else { "days (storage)" }, Scale::Count, y_desc)?;
            let at = |k: usize, p: usize| (x_of(k), summary.bands[k].values[quantity][p] * scale);
            // Bands between quantile i and its mirror, outermost first.
            for i in 0..q.len() / 2 {
                let j = q.len() - 1 - i;
                let upper: Vec<(f64, f64)> = (0..n).map(|k| at(k, j)).collect();
                let lower: Vec<(f64, f64)> = (0..n).map(|k| at(k, i)).collect();
                plot::draw_band(&mut chart, &upper, &lower, BAND_COLOUR, shade(i))?;
            }
            if let (Some((level, _)), true) = (level, on_axis) {
                plot::draw_dashed(&mut chart, vec![(x_range.start, level), (x_range.end, level)], plot::THRESHOLD)?;
            }
            if let Some(m) = median {
                plot::draw_line(&mut chart, (0..n).map(|k| at(k, m)), plot::BLACK_OI, 2)?;
            }
            if let (1, Some((x, w))) = (quantity, warranty_x) {
                plot::draw_target(&mut chart, (x, w.soh_pct), plot::ORANGE)?;
            }
            plot::draw_years_axis(&strip, &chart, years.clone())?;
        }
        root.present().map_err(plot::plot_error)?;
    }
    Ok(svg)
}

/// Opacity of the band between quantile pair `i` (0 outermost): inner bands darker.
fn shade(i: usize) -> f64 {
    0.18 + 0.17 * i as f64
}

/// A key path in words: `cell.negative.film.reaction_rate_m_s` → `negative › film › reaction
/// rate, m/s`. The unit suffixes are the input files' (FORMATS.md, units in names).
pub fn readable_path(path: &str) -> String {
    const UNITS: [(&str, &str); 22] = [
        ("_m2_s", "m²/s"),
        ("_m_s", "m/s"),
        ("_kj_mol", "kJ/mol"),
        ("_j_mol", "J/mol"),
        ("_per_cycle", "per cycle"),
        ("_per_day", "per day"),
        ("_mohm", "mΩ"),
        ("_ohm", "Ω"),
        ("_um", "µm"),
        ("_nm", "nm"),
        ("_mpa", "MPa"),
        ("_gpa", "GPa"),
        ("_pct", "%"),
        ("_ah", "Ah"),
        ("_wh", "Wh"),
        ("_c", "°C"),
        ("_k", "K"),
        ("_s", "s"),
        ("_h", "h"),
        ("_a", "A"),
        ("_v", "V"),
        ("_w", "W"),
    ];
    let mut parts: Vec<&str> = path.split('.').collect();
    if parts.len() > 1 && parts[0] == "cell" {
        parts.remove(0);
    }
    let last = parts.pop().unwrap_or_default();
    let (name, unit) = UNITS
        .iter()
        .find_map(|(suffix, unit)| last.strip_suffix(suffix).filter(|n| !n.is_empty()).map(|n| (n, Some(*unit))))
        .unwrap_or((last, None));
    let mut words: Vec<String> = parts.iter().map(|p| p.replace('_', " ")).collect();
    words.push(name.replace('_', " "));
    let joined = words.join(" › ");
    match unit {
        Some(unit) => format!("{joined}, {unit}"),
        None => joined,
    }
}

/// Half-width of the band inside which a rank correlation is indistinguishable from zero at
/// `samples` (95 %): for independent inputs Spearman's ρ is near normal with standard error
/// 1/√(n − 1) (the usual large-sample result; Kendall and Stuart, The Advanced Theory of
/// Statistics, vol. 2, from memory).
pub fn rank_correlation_noise(samples: u64) -> Option<f64> {
    (samples > 2).then(|| 1.96 / ((samples - 1) as f64).sqrt())
}

/// The uncertain inputs as horizontal bars of their rank correlation with life, strongest on
/// top; each bar's name is written on the other side of zero, so long names never cover a bar.
pub fn sensitivity_svg(summary: &EnsembleSummary, scenario_name: &str) -> Result<String, ReportError> {
    use plotters::style::text_anchor::{HPos, Pos, VPos};
    let rows = &summary.sensitivity;
    let count = rows.len().max(1);
    let noise = rank_correlation_noise(summary.counted);
    let mut legend = vec![
        LegendEntry::new(Mark::Area(plot::BLUE, 0.8), "more of the input, longer life"),
        LegendEntry::new(Mark::Area(plot::VERMILLION, 0.8), "more of the input, shorter life"),
    ];
    if let Some(noise) = noise {
        legend.push(LegendEntry::new(
            Mark::Area(plot::GREY, 0.25),
            format!("Monte Carlo noise at {} samples (|ρ| < {:.2}, 95 %)", summary.counted, noise),
        ));
    }
    let height = plot::title_height(true) + plot::legend_height(&legend) + 70 + 42 * count as u32;
    let subtitle = format!("what drives {}", summary.sensitivity_measure);
    let mut svg = String::new();
    {
        let root = plot::root(&mut svg, height)?;
        let body = plot::titled(&root, scenario_name, Some(&subtitle))?;
        let area = plot::legend_above(&body, &legend)?;
        let mut chart = plot::chart(&area, -1.0..1.0, 0.0..count as f64, false)?;
        chart
            .configure_mesh()
            .x_desc("Spearman rank correlation with life")
            .y_labels(0)
            .disable_y_mesh()
            .max_light_lines(0)
            .bold_line_style(BLACK.mix(0.12))
            .label_style(("sans-serif", plot::TEXT_PX))
            .axis_desc_style(("sans-serif", plot::TEXT_PX + 1))
            .x_label_formatter(&|v| plot::tick_label(*v))
            .draw()
            .map_err(plot::plot_error)?;
        if let Some(noise) = noise.filter(|n| *n < 1.0) {
            plot::shade_x(&mut chart, -noise..noise, plot::GREY, 0.25)?;
        }
        // Row i (strongest first) occupies the band [count − 1 − i, count − i].
        let centre = |i: usize| (count - 1 - i) as f64 + 0.5;
        chart
            .draw_series(rows.iter().enumerate().map(|(i, r)| {
                let (a, b) =
                    if r.rank_correlation >= 0.0 { (0.0, r.rank_correlation) } else { (r.rank_correlation, 0.0) };
                let colour = if r.rank_correlation >= 0.0 { plot::BLUE } else { plot::VERMILLION };
                Rectangle::new([(a, centre(i) - 0.32), (b, centre(i) + 0.32)], colour.mix(0.8).filled())
            }))
            .map_err(plot::plot_error)?;
        plot::draw_line(&mut chart, [(0.0, 0.0), (0.0, count as f64)], plot::BLACK_OI, 1)?;
        chart
            .draw_series(rows.iter().enumerate().map(|(i, r)| {
                let (x, anchor) = if r.rank_correlation >= 0.0 { (-0.02, HPos::Right) } else { (0.02, HPos::Left) };
                let style =
                    TextStyle::from(("sans-serif", plot::TEXT_PX).into_font()).pos(Pos::new(anchor, VPos::Center));
                Text::new(format!("{} ({:+.2})", readable_path(&r.path), r.rank_correlation), (x, centre(i)), style)
            }))
            .map_err(plot::plot_error)?;
        root.present().map_err(plot::plot_error)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ensemble::summary::WarrantyOdds;
    use crate::ensemble::summary::{BandPoint, Sensitivity};

    fn summary() -> EnsembleSummary {
        EnsembleSummary {
            samples: 101,
            counted: 101,
            invalid: 0,
            failed: 0,
            quantiles: vec![0.05, 0.5, 0.95],
            life: Vec::new(),
            warranty: Some(WarrantyOdds {
                years: 1.0,
                soh_pct: 98.0,
                met: 90,
                trials: 101,
                probability: 0.89,
                interval_95: (0.81, 0.94),
            }),
            sensitivity_measure: "end of life (capacity), cycles".into(),
            sensitivity: vec![
                Sensitivity { path: "cell.negative.particle_radius_um".into(), rank_correlation: -0.8 },
                Sensitivity { path: "ambient_c".into(), rank_correlation: 0.3 },
            ],
            bands: (0..4)
                .map(|k| BandPoint {
                    cycle: 500.0 * k as f64,
                    day: 200.0 * k as f64,
                    values: [
                        vec![5.0, 5.1, 5.2],
                        vec![99.0 - k as f64, 100.0 - k as f64, 101.0 - k as f64],
                        vec![15.0, 16.0 + k as f64, 17.0 + 2.0 * k as f64],
                    ],
                })
                .collect(),
            plating_fraction: 0.0,
            warning_counts: Vec::new(),
        }
    }

    #[test]
    fn bands_carry_thresholds_warranty_and_one_title() {
        let s = summary();
        let thresholds = ThresholdsPct { capacity: 95.0, resistance: 200.0 };
        let bands = bands_svg(&s, Some(thresholds), "test bands", true).unwrap();
        for text in [
            "test bands",
            "101 samples: median and quantile bands",
            "state of health, %",
            "resistance, % of median fresh",
            "median",
            "P5 – P95",
            "end of life: 95 % of fresh capacity",
            "warranty: ≥ 98 % at 1 years, met by 89 % (95 % interval 81–94 %)",
            "years",
        ] {
            assert!(bands.contains(text), "missing {text}");
        }
        assert_eq!(bands.matches("test bands").count(), 1);
        assert!(bands_svg(&s, None, "no thresholds", false).is_ok());
    }

    #[test]
    fn sensitivity_names_inputs_in_words_and_shows_the_noise_band() {
        let sensitivity = sensitivity_svg(&summary(), "test sensitivity").unwrap();
        assert!(sensitivity.contains("negative › particle radius, µm (-0.80)"), "{sensitivity}");
        assert!(sensitivity.contains("ambient, °C (+0.30)"));
        // 1.96 / √100 = 0.196.
        assert!(sensitivity.contains("Monte Carlo noise at 101 samples (|ρ| &lt; 0.20, 95 %)"), "{sensitivity}");
        assert!(sensitivity.contains("more of the input, shorter life"));
    }

    #[test]
    fn key_paths_read_as_words() {
        assert_eq!(readable_path("cell.negative.film.reaction_rate_m_s"), "negative › film › reaction rate, m/s");
        assert_eq!(
            readable_path("cell.negative.film.interstitial_diffusivity_m2_s"),
            "negative › film › interstitial diffusivity, m²/s"
        );
        assert_eq!(
            readable_path("cell.negative.active_loss.rate_per_cycle"),
            "negative › active loss › rate, per cycle"
        );
        assert_eq!(readable_path("usage.monthly_ambient_c"), "usage › monthly ambient, °C");
        assert_eq!(readable_path("seed"), "seed");
        assert_eq!(rank_correlation_noise(2), None);
    }
}
