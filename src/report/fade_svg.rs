//! The fade curve as an SVG figure, four panels against cycles (days when storing) with years
//! on top: state of health and resistance (% of fresh, as the end-of-life thresholds are
//! stated, each with its threshold line), the lithium lost by sink (stacked), and the active
//! material lost per electrode (lines, on their own axis: a different base).

use super::plot::{self, LegendEntry, Mark, Scale};
use super::ReportError;
use crate::aging::{PlotGroup, COMPONENTS};
use crate::forecast::{EndOfLifePoint, FadePoint, ReportScale, Threshold};
use plotters::coord::Shift;
use plotters::prelude::*;
use std::ops::Range;

const CHART_HEIGHT_PX: u32 = 250;
/// The calibrated range's shade, as in fit.svg.
const CALIBRATED: RGBColor = plot::BLUISH_GREEN;
const CALIBRATED_ALPHA: f64 = 0.15;

/// The part of the figure both the cell's and the pack's plots draw: one quantity against the
/// x axis with its end-of-life threshold.
pub(super) struct ThresholdCurve<'a> {
    pub label: &'a str,
    pub y_desc: &'a str,
    pub points: Vec<(f64, f64)>,
    pub threshold: Option<&'a EndOfLifePoint>,
}

/// The horizontal axis shared by a figure's panels.
#[derive(Clone)]
pub(super) struct XAxis {
    pub range: Range<f64>,
    pub years: Range<f64>,
    pub desc: &'static str,
    pub cycling: bool,
    /// The end of the range the aging parameters were fitted to, on this axis (shaded).
    pub calibrated_to: Option<f64>,
}

impl XAxis {
    pub fn new(points: impl Iterator<Item = (f64, f64)> + Clone, cycling: bool) -> XAxis {
        let range = plot::padded_range(points.clone().map(|(x, _)| x), 0.0);
        let years = plot::years_range(&range, points.last());
        XAxis { range, years, desc: if cycling { "cycles" } else { "days (storage)" }, cycling, calibrated_to: None }
    }

    /// Where a threshold was reached on this axis.
    pub fn reached_x(&self, threshold: &EndOfLifePoint) -> Option<f64> {
        threshold.reached.map(|at| if self.cycling { at.cycles } else { at.years * plot::DAYS_PER_YEAR })
    }
}

/// Legend entries for a threshold: its line (or that it lies off the scale), and where it was
/// reached.
pub(super) fn threshold_entries(threshold: &EndOfLifePoint, on_axis: bool, what: &str) -> Vec<LegendEntry> {
    let level = plot::tick_label(threshold.level_pct);
    let reached = if threshold.reached.is_some() { "" } else { ", not reached" };
    let mut entries = vec![if on_axis {
        LegendEntry::new(Mark::Dashed(plot::THRESHOLD), format!("end of life: {level} % of fresh {what}{reached}"))
    } else {
        LegendEntry::new(
            Mark::Dashed(plot::GREY),
            format!("end of life at {level} % of fresh {what}{reached} (off this scale)"),
        )
    }];
    if threshold.reached.is_some() && on_axis {
        entries.push(LegendEntry::new(Mark::Dot(plot::THRESHOLD), "end of life reached"));
    }
    entries
}

/// One panel: the curve, its threshold line and the crossing marker; legend above.
pub(super) fn draw_threshold_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    x: &XAxis,
    curve: &ThresholdCurve,
    what: &str,
) -> Result<(), ReportError> {
    let level = curve.threshold.map(|t| t.level_pct);
    let (y_range, on_axis) = plot::range_with_level(curve.points.iter().map(|p| p.1), level);
    let entries = panel_entries(curve, what, x);
    let chart_area = plot::legend_above(area, &entries)?;
    let (strip, chart_area) = plot::years_strip(&chart_area);
    let mut chart = plot::chart(&chart_area, x.range.clone(), y_range, true)?;
    plot::draw_axes(&mut chart, x.desc, Scale::Count, curve.y_desc)?;
    if let Some(end) = x.calibrated_to {
        plot::shade_x(&mut chart, x.range.start..end.min(x.range.end), CALIBRATED, CALIBRATED_ALPHA)?;
    }
    if let (Some(t), true) = (curve.threshold, on_axis) {
        plot::draw_dashed(&mut chart, vec![(x.range.start, t.level_pct), (x.range.end, t.level_pct)], plot::THRESHOLD)?;
    }
    plot::draw_line(&mut chart, curve.points.iter().copied(), plot::BLUE, 2)?;
    if let Some(t) = curve.threshold {
        if let (Some(at), true) = (x.reached_x(t), on_axis) {
            chart
                .draw_series([Circle::new((at, t.level_pct), 6, plot::THRESHOLD.filled())])
                .map_err(plot::plot_error)?;
        }
    }
    plot::draw_years_axis(&strip, &chart, x.years.clone())
}

/// Renders the fade curve. `cycling` says whether the x axis counts cycles or days.
pub fn fade_svg(
    points: &[FadePoint],
    scale: &ReportScale,
    end_of_life: &[EndOfLifePoint],
    calibrated_to: Option<f64>,
    title: &str,
    cycling: bool,
) -> Result<String, ReportError> {
    let x_of = move |p: &FadePoint| if cycling { p.cycle } else { p.day };
    let x = XAxis { calibrated_to, ..XAxis::new(points.iter().map(|p| (x_of(p), p.day)), cycling) };
    let threshold = |kind| end_of_life.iter().find(|e| e.threshold == kind);
    let curves = [
        ThresholdCurve {
            label: "capacity at reference conditions",
            y_desc: "state of health, %",
            points: points.iter().map(|p| (x_of(p), p.soh_pct)).collect(),
            threshold: threshold(Threshold::Capacity),
        },
        ThresholdCurve {
            label: "DC resistance, 10 s pulse at 50 % SOC",
            y_desc: "resistance, % of fresh",
            points: points.iter().map(|p| (x_of(p), 100.0 + p.resistance_growth_pct)).collect(),
            threshold: threshold(Threshold::Resistance),
        },
    ];
    let percent = |spec, p: &FadePoint| {
        scale.values(spec, &p.state).into_iter().find(|v| v.unit == "pct").map_or(0.0, |v| v.value)
    };
    let layers: Vec<_> = COMPONENTS.iter().filter(|c| c.plot == PlotGroup::LithiumLoss).collect();
    let lines: Vec<_> = COMPONENTS.iter().filter(|c| c.plot == PlotGroup::ActiveMaterial).collect();
    let layer_entries: Vec<LegendEntry> = layers
        .iter()
        .enumerate()
        .map(|(k, spec)| LegendEntry::new(Mark::Area(plot::series_colour(k), 0.75), spec.label))
        .collect();
    let line_entries: Vec<LegendEntry> = lines
        .iter()
        .enumerate()
        .map(|(k, spec)| {
            LegendEntry::new(Mark::Line(plot::series_colour(k)), format!("{}, % of that electrode", spec.label))
        })
        .collect();

    let heights = [
        plot::legend_height(&panel_entries(&curves[0], "capacity", &x)) + CHART_HEIGHT_PX,
        plot::legend_height(&panel_entries(&curves[1], "resistance", &x)) + CHART_HEIGHT_PX,
        plot::legend_height(&layer_entries) + CHART_HEIGHT_PX,
        plot::legend_height(&line_entries) + CHART_HEIGHT_PX,
    ];
    let mut svg = String::new();
    {
        let root = plot::root(&mut svg, plot::title_height(false) + heights.iter().sum::<u32>())?;
        let mut rest = plot::titled(&root, title, None)?;
        let mut areas = Vec::new();
        for h in heights {
            let (area, below) = rest.split_vertically(h);
            areas.push(area);
            rest = below;
        }
        draw_threshold_panel(&areas[0], &x, &curves[0], "capacity")?;
        draw_threshold_panel(&areas[1], &x, &curves[1], "resistance")?;

        // Lithium lost, stacked: each sink's band sits on the ones before it.
        let stacked = |k: usize, p: &FadePoint| layers[..k].iter().map(|s| percent(s, p)).sum::<f64>();
        let top = points.iter().map(|p| stacked(layers.len(), p));
        let area = plot::legend_above(&areas[2], &layer_entries)?;
        let (strip, area) = plot::years_strip(&area);
        let mut chart = plot::chart(&area, x.range.clone(), plot::padded_range(top.chain([0.0]), 0.05), true)?;
        plot::draw_axes(&mut chart, x.desc, Scale::Count, "lithium lost, stacked, %")?;
        for k in 0..layers.len() {
            let upper: Vec<(f64, f64)> = points.iter().map(|p| (x_of(p), stacked(k + 1, p))).collect();
            let lower: Vec<(f64, f64)> = points.iter().map(|p| (x_of(p), stacked(k, p))).collect();
            plot::draw_band(&mut chart, &upper, &lower, plot::series_colour(k), 0.75)?;
        }
        plot::draw_years_axis(&strip, &chart, x.years.clone())?;

        let values = points.iter().flat_map(|p| lines.iter().map(move |s| percent(s, p)));
        let area = plot::legend_above(&areas[3], &line_entries)?;
        let (strip, area) = plot::years_strip(&area);
        let mut chart = plot::chart(&area, x.range.clone(), plot::padded_range(values.chain([0.0]), 0.05), true)?;
        plot::draw_axes(&mut chart, x.desc, Scale::Count, "lost, % of electrode")?;
        for (k, spec) in lines.iter().enumerate() {
            let curve = points.iter().map(|p| (x_of(p), percent(spec, p)));
            plot::draw_line(&mut chart, curve, plot::series_colour(k), 2)?;
        }
        plot::draw_years_axis(&strip, &chart, x.years.clone())?;
        root.present().map_err(plot::plot_error)?;
    }
    Ok(svg)
}

/// The legend of a threshold panel (also sizes the figure before drawing).
pub(super) fn panel_entries(curve: &ThresholdCurve, what: &str, x: &XAxis) -> Vec<LegendEntry> {
    let level = curve.threshold.map(|t| t.level_pct);
    let (_, on_axis) = plot::range_with_level(curve.points.iter().map(|p| p.1), level);
    let mut entries = vec![LegendEntry::new(Mark::Line(plot::BLUE), curve.label)];
    if let Some(t) = curve.threshold {
        entries.extend(threshold_entries(t, on_axis, what));
    }
    if x.calibrated_to.is_some() {
        entries.push(LegendEntry::new(Mark::Area(CALIBRATED, CALIBRATED_ALPHA), "calibrated range (fitted data)"));
    }
    entries
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::forecast::LifeAt;

    #[test]
    fn renders_four_panels_with_thresholds_and_years() {
        let points: Vec<FadePoint> = (0..5)
            .map(|k| {
                let mut point = FadePoint {
                    cycle: 500.0 * k as f64,
                    day: 500.0 * k as f64,
                    soh_pct: 100.0 - 5.0 * k as f64,
                    resistance_growth_pct: 10.0 * k as f64,
                    ..FadePoint::default()
                };
                point.state.move_lithium(crate::aging::Component::LithiumFilmOriginal, 0.005 * k as f64);
                point
            })
            .collect();
        let scale =
            ReportScale { lithium_fresh_ah: 10.0, fresh_capacity_ah: 5.0, neg_radius_nm: 1e4, pos_radius_nm: 1e4 };
        let end_of_life = [
            EndOfLifePoint {
                threshold: Threshold::Capacity,
                level_pct: 85.0,
                reached: Some(LifeAt { cycles: 1500.0, efc: 1500.0, years: 4.1 }),
            },
            EndOfLifePoint { threshold: Threshold::Resistance, level_pct: 200.0, reached: None },
        ];
        let svg = fade_svg(&points, &scale, &end_of_life, Some(500.0), "test fade", true).unwrap();
        for text in [
            "test fade",
            "state of health, %",
            "resistance, % of fresh",
            "end of life: 85 % of fresh capacity",
            "end of life: 200 % of fresh resistance, not reached",
            "film on crack surface",
            "lost, % of electrode",
            "years",
            "\n2000\n",
            "calibrated range (fitted data)",
        ] {
            assert!(svg.contains(text), "missing {text}");
        }
        assert!(!svg.contains("2000.0"), "count axis ticks carry no decimals");
        assert!(fade_svg(&[], &scale, &[], None, "empty", false).is_ok());
    }
}
