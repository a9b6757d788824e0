//! The cycle trace as an SVG figure: four stacked panels over time in hours.
//!
//! Only plotters' SVG backend is used, so text becomes `<text>` elements and no system fonts
//! are needed.

use super::ReportError;
use crate::cycle::CycleRecord;
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use plotters::prelude::*;
use std::ops::Range;

const WIDTH_PX: u32 = 1000;
const PANEL_HEIGHT_PX: u32 = 260;
const TITLE_HEIGHT_PX: u32 = 40;

const NEGATIVE_COLOUR: RGBColor = RGBColor(31, 119, 180);
const POSITIVE_COLOUR: RGBColor = RGBColor(214, 39, 40);

struct Curve {
    name: &'static str,
    colour: RGBColor,
    points: Vec<(f64, f64)>,
}

struct Panel {
    y_label: &'static str,
    curves: Vec<Curve>,
}

/// Renders voltage, current, temperature and both electrodes' surface stress against time.
pub fn cycle_svg(record: &CycleRecord, title: &str) -> Result<String, ReportError> {
    let series = |value: fn(&crate::cycle::TracePoint) -> f64| -> Vec<(f64, f64)> {
        record.trace.iter().map(|p| (p.time_s / SECONDS_PER_HOUR, value(p))).collect()
    };
    let single = |y_label, colour, value| Panel {
        y_label,
        curves: vec![Curve { name: y_label, colour, points: series(value) }],
    };
    let panels = [
        single("voltage, V", BLACK, |p| p.voltage_v),
        single("current, A (+ discharge)", NEGATIVE_COLOUR, |p| p.current_a),
        single("temperature, °C", POSITIVE_COLOUR, |p| p.temperature_k - ZERO_CELSIUS_K),
        Panel {
            y_label: "surface stress, MPa (+ tension)",
            curves: vec![
                Curve { name: "negative", colour: NEGATIVE_COLOUR, points: series(|p| p.neg_surface_stress_pa * 1e-6) },
                Curve { name: "positive", colour: POSITIVE_COLOUR, points: series(|p| p.pos_surface_stress_pa * 1e-6) },
            ],
        },
    ];
    let time_h = padded_range(record.trace.iter().map(|p| p.time_s / SECONDS_PER_HOUR), 0.0);

    let height = TITLE_HEIGHT_PX + PANEL_HEIGHT_PX * panels.len() as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH_PX, height)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let body = root.titled(title, ("sans-serif", 20)).map_err(plot_error)?;
        let areas = body.split_evenly((panels.len(), 1));
        for (panel, area) in panels.iter().zip(&areas) {
            draw_panel(area, panel, time_h.clone())?;
        }
        root.present().map_err(plot_error)?;
    }
    Ok(svg)
}

fn draw_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    panel: &Panel,
    time_h: Range<f64>,
) -> Result<(), ReportError> {
    let values = panel.curves.iter().flat_map(|c| c.points.iter().map(|p| p.1));
    let mut chart = ChartBuilder::on(area)
        .margin(10)
        .x_label_area_size(35)
        .y_label_area_size(70)
        .build_cartesian_2d(time_h, padded_range(values, 0.05))
        .map_err(plot_error)?;
    chart.configure_mesh().x_desc("time, h").y_desc(panel.y_label).draw().map_err(plot_error)?;
    for curve in &panel.curves {
        let colour = curve.colour;
        chart
            .draw_series(LineSeries::new(curve.points.iter().copied(), colour.stroke_width(2)))
            .map_err(plot_error)?
            .label(curve.name)
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2)));
    }
    if panel.curves.len() > 1 {
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.8))
            .border_style(BLACK)
            .draw()
            .map_err(plot_error)?;
    }
    Ok(())
}

/// The span of `values` widened by `margin` of itself on each side. A flat or empty series gets
/// a unit-wide span so the axis can still be drawn.
pub(super) fn padded_range(values: impl Iterator<Item = f64>, margin: f64) -> Range<f64> {
    let (lo, hi) =
        values.filter(|v| v.is_finite()).fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| (lo.min(v), hi.max(v)));
    if lo > hi {
        return 0.0..1.0;
    }
    let span = hi - lo;
    if span <= 1e-12 * lo.abs().max(1.0) {
        return lo - 0.5..hi + 0.5;
    }
    lo - margin * span..hi + margin * span
}

pub(super) fn plot_error(err: impl std::fmt::Display) -> ReportError {
    ReportError::Plot(err.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cycle::TracePoint;

    fn point(time_s: f64, current_a: f64) -> TracePoint {
        TracePoint { time_s, current_a, voltage_v: 3.7, temperature_k: 300.0, ..TracePoint::default() }
    }

    #[test]
    fn renders_four_labelled_panels() {
        let record = CycleRecord {
            trace: vec![point(0.0, 5.0), point(1800.0, 5.0), point(3600.0, -2.5)],
            ..CycleRecord::default()
        };
        let svg = cycle_svg(&record, "test cycle").unwrap();
        assert!(svg.starts_with("<svg"));
        for text in ["test cycle", "voltage, V", "temperature, °C", "negative", "positive"] {
            assert!(svg.contains(text), "missing {text}");
        }
        assert_eq!(svg.matches("time, h").count(), 4);
    }

    #[test]
    fn empty_trace_still_renders() {
        assert!(cycle_svg(&CycleRecord::default(), "empty").is_ok());
    }

    #[test]
    fn flat_series_gets_a_drawable_range() {
        assert_eq!(padded_range([2.0, 2.0].into_iter(), 0.05), 1.5..2.5);
        assert_eq!(padded_range(std::iter::empty(), 0.05), 0.0..1.0);
    }
}
