//! The cycle trace as an SVG figure: stacked panels over time in hours (voltage, current, the
//! negative electrode's potential with the 0 V line below which lithium plates, temperature,
//! surface stress), with the protocol's step boundaries marked in each.
//!
//! Only plotters' SVG backend is used, so text becomes `<text>` elements and no system fonts
//! are needed.

use super::plot::{self, LegendEntry, Mark, Scale};
use super::ReportError;
use crate::cycle::{CycleRecord, TracePoint};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use plotters::prelude::*;
use std::ops::Range;

const CHART_HEIGHT_PX: u32 = 200;
const STEP_COLOUR: RGBColor = plot::GREY;

struct Curve {
    name: &'static str,
    colour: RGBColor,
    points: Vec<(f64, f64)>,
}

struct Panel {
    y_desc: &'static str,
    curves: Vec<Curve>,
    /// A level drawn dashed across the panel, with its legend text.
    level: Option<(f64, &'static str)>,
    legend: Vec<LegendEntry>,
}

/// Renders voltage, current, the negative's potential, temperature and both electrodes'
/// surface stress against time.
pub fn cycle_svg(record: &CycleRecord, title: &str) -> Result<String, ReportError> {
    let series = |value: fn(&TracePoint) -> f64| -> Vec<(f64, f64)> {
        record.trace.iter().map(|p| (p.time_s / SECONDS_PER_HOUR, value(p))).collect()
    };
    let boundaries = step_boundaries_h(&record.trace);
    let single = |y_desc, colour, value| Panel {
        y_desc,
        curves: vec![Curve { name: y_desc, colour, points: series(value) }],
        level: None,
        legend: Vec::new(),
    };
    let mut panels = [
        single("voltage, V", plot::BLACK_OI, |p| p.voltage_v),
        single("current, A (+ discharge)", plot::BLUE, |p| p.current_a),
        Panel {
            y_desc: "negative vs Li/Li⁺, V",
            curves: vec![Curve {
                name: "negative electrode potential at the particle surface",
                colour: plot::BLUISH_GREEN,
                points: series(|p| p.neg_potential_v),
            }],
            level: Some((0.0, "0 V: lithium plates below this line")),
            legend: Vec::new(),
        },
        single("temperature, °C", plot::VERMILLION, |p| p.temperature_k - ZERO_CELSIUS_K),
        Panel {
            y_desc: "surface stress, MPa",
            curves: vec![
                Curve {
                    name: "negative (+ tension)",
                    colour: plot::BLUE,
                    points: series(|p| p.neg_surface_stress_pa * 1e-6),
                },
                Curve {
                    name: "positive (+ tension)",
                    colour: plot::ORANGE,
                    points: series(|p| p.pos_surface_stress_pa * 1e-6),
                },
            ],
            level: None,
            legend: Vec::new(),
        },
    ];
    for (i, panel) in panels.iter_mut().enumerate() {
        if panel.curves.len() > 1 || panel.level.is_some() {
            panel.legend.extend(panel.curves.iter().map(|c| LegendEntry::new(Mark::Line(c.colour), c.name)));
        }
        if let Some((_, text)) = panel.level {
            panel.legend.push(LegendEntry::new(Mark::Dashed(plot::THRESHOLD), text));
        }
        if i == 0 && !boundaries.is_empty() {
            panel.legend.push(LegendEntry::new(Mark::Dashed(STEP_COLOUR), "step boundary (every panel)"));
        }
    }
    let time_h = plot::padded_range(record.trace.iter().map(|p| p.time_s / SECONDS_PER_HOUR), 0.0);
    let heights: Vec<u32> = panels.iter().map(|p| plot::legend_height(&p.legend) + CHART_HEIGHT_PX).collect();
    let mut svg = String::new();
    {
        let root = plot::root(&mut svg, plot::title_height(false) + heights.iter().sum::<u32>())?;
        let mut rest = plot::titled(&root, title, None)?;
        for (panel, height) in panels.iter().zip(heights) {
            let (area, below) = rest.split_vertically(height);
            rest = below;
            draw_panel(&area, panel, time_h.clone(), &boundaries)?;
        }
        root.present().map_err(plot::plot_error)?;
    }
    Ok(svg)
}

/// Times (h) at which the trace passes from one protocol step to the next.
fn step_boundaries_h(trace: &[TracePoint]) -> Vec<f64> {
    trace.windows(2).filter(|w| w[0].step != w[1].step).map(|w| w[0].time_s / SECONDS_PER_HOUR).collect()
}

fn draw_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    panel: &Panel,
    time_h: Range<f64>,
    boundaries: &[f64],
) -> Result<(), ReportError> {
    let values = panel.curves.iter().flat_map(|c| c.points.iter().map(|p| p.1));
    let level = panel.level.map(|(v, _)| v);
    let (y_range, _) = plot::range_with_level(values, level);
    // The plating line is always shown: its distance from the curve is the point of the panel.
    let y_range = match level {
        Some(v) => plot::padded_range([y_range.start, y_range.end, v].into_iter(), 0.0),
        None => y_range,
    };
    let area = plot::legend_above(area, &panel.legend)?;
    let mut chart = plot::chart(&area, time_h.clone(), y_range.clone(), false)?;
    plot::draw_axes(&mut chart, "time, h", Scale::Value, panel.y_desc)?;
    for &t in boundaries {
        chart
            .draw_series(DashedLineSeries::new(
                [(t, y_range.start), (t, y_range.end)],
                4,
                4,
                STEP_COLOUR.mix(0.7).stroke_width(1),
            ))
            .map_err(plot::plot_error)?;
    }
    if let Some(v) = level {
        plot::draw_dashed(&mut chart, vec![(time_h.start, v), (time_h.end, v)], plot::THRESHOLD)?;
    }
    for curve in &panel.curves {
        plot::draw_line(&mut chart, curve.points.iter().copied(), curve.colour, 2)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn point(time_s: f64, current_a: f64, step: usize) -> TracePoint {
        TracePoint { time_s, current_a, voltage_v: 3.7, temperature_k: 300.0, step, ..TracePoint::default() }
    }

    #[test]
    fn renders_five_labelled_panels_with_steps_and_the_plating_line() {
        let record = CycleRecord {
            trace: vec![point(0.0, 5.0, 0), point(1800.0, 5.0, 0), point(3600.0, -2.5, 1), point(7200.0, -2.5, 1)],
            ..CycleRecord::default()
        };
        let svg = cycle_svg(&record, "test cycle").unwrap();
        assert!(svg.starts_with("<svg"));
        for text in [
            "test cycle",
            "voltage, V",
            "temperature, °C",
            "negative vs Li/Li⁺, V",
            "0 V: lithium plates below this line",
            "step boundary",
            "negative (+ tension)",
            "positive (+ tension)",
        ] {
            assert!(svg.contains(text), "missing {text}");
        }
        assert_eq!(svg.matches("time, h").count(), 5);
        assert_eq!(step_boundaries_h(&record.trace), vec![0.5]);
    }

    #[test]
    fn empty_trace_still_renders() {
        assert!(cycle_svg(&CycleRecord::default(), "empty").is_ok());
    }

    #[test]
    fn flat_series_gets_a_drawable_range() {
        assert_eq!(plot::padded_range([2.0, 2.0].into_iter(), 0.05), 1.5..2.5);
        assert_eq!(plot::padded_range(std::iter::empty(), 0.05), 0.0..1.0);
    }
}
