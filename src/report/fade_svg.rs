//! The fade curve as an SVG figure: state of health, resistance growth and the lithium lost to
//! each mechanism against cycles (days when storing), with years on the top axis.

use super::cycle_svg::{padded_range, plot_error};
use super::ReportError;
use crate::aging::{PlotGroup, COMPONENTS};
use crate::forecast::{FadePoint, ReportScale};
use plotters::prelude::*;

const WIDTH_PX: u32 = 1000;
const PANEL_HEIGHT_PX: u32 = 300;
const TITLE_HEIGHT_PX: u32 = 40;

/// Colours of the loss bands, in stacking order (the table's lithium sinks, in order).
const BAND_COLOURS: [RGBColor; 6] = [
    RGBColor(31, 119, 180),
    RGBColor(23, 190, 207),
    RGBColor(255, 127, 14),
    RGBColor(214, 39, 40),
    RGBColor(148, 103, 189),
    RGBColor(127, 127, 127),
];
/// Colours of the active-material lines.
const LINE_COLOURS: [RGBColor; 2] = [BLACK, RGBColor(140, 86, 75)];

type Value = fn(&FadePoint) -> f64;
/// A panel of line curves: its y label and (name, colour, value) per curve.
type LinePanel<'a> = (&'a str, &'a [(&'a str, RGBColor, Value)]);

/// Renders the fade curve. `cycling` says whether the x axis counts cycles or days.
pub fn fade_svg(points: &[FadePoint], scale: &ReportScale, title: &str, cycling: bool) -> Result<String, ReportError> {
    let x_of = move |p: &FadePoint| if cycling { p.cycle } else { p.day };
    let x_label = if cycling { "cycles" } else { "days (storage)" };
    let x_range = padded_range(points.iter().map(x_of), 0.0);
    let last_year = points.last().map_or(1.0, |p| p.day / 365.25).max(1e-9);
    let last_x = points.last().map_or(1.0, x_of).max(1e-9);
    let years_range = x_range.start * last_year / last_x..x_range.end * last_year / last_x;

    let height = TITLE_HEIGHT_PX + 3 * PANEL_HEIGHT_PX;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH_PX, height)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let body = root.titled(title, ("sans-serif", 20)).map_err(plot_error)?;
        let areas = body.split_evenly((3, 1));
        let lines: [LinePanel; 2] = [
            ("state of health, %", &[("capacity at reference conditions", BLACK, |p| p.soh_pct)]),
            (
                "resistance growth, %",
                &[("DC resistance, 10 s pulse at 50 % SOC", RGBColor(44, 160, 44), |p| p.resistance_growth_pct)],
            ),
        ];
        for ((y_label, curves), area) in lines.iter().zip(&areas) {
            let values = curves.iter().flat_map(|(_, _, f)| points.iter().map(f));
            let mut chart = ChartBuilder::on(area)
                .margin(10)
                .x_label_area_size(35)
                .top_x_label_area_size(30)
                .y_label_area_size(70)
                .build_cartesian_2d(x_range.clone(), padded_range(values, 0.05))
                .map_err(plot_error)?
                .set_secondary_coord(years_range.clone(), 0.0..1.0);
            chart.configure_mesh().x_desc(x_label).y_desc(*y_label).draw().map_err(plot_error)?;
            chart.configure_secondary_axes().x_desc("years").y_labels(0).draw().map_err(plot_error)?;
            for (name, colour, value) in curves.iter() {
                let colour = *colour;
                chart
                    .draw_series(LineSeries::new(points.iter().map(|p| (x_of(p), value(p))), colour.stroke_width(2)))
                    .map_err(plot_error)?
                    .label(*name)
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2)));
            }
            chart
                .configure_series_labels()
                .background_style(WHITE.mix(0.8))
                .border_style(BLACK)
                .draw()
                .map_err(plot_error)?;
        }
        draw_losses(&areas[2], points, scale, x_range, years_range, x_label, x_of)?;
        root.present().map_err(plot_error)?;
    }
    Ok(svg)
}

/// Stacked bands of lithium lost by sink (% of the fresh capacity), with active-material loss
/// (% of each electrode) as lines; both read from the slow-state table's plot groups.
fn draw_losses<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    points: &[FadePoint],
    scale: &ReportScale,
    x_range: std::ops::Range<f64>,
    years_range: std::ops::Range<f64>,
    x_label: &str,
    x_of: impl Fn(&FadePoint) -> f64,
) -> Result<(), ReportError> {
    let percent = |spec, p: &FadePoint| {
        scale.values(spec, &p.state).into_iter().find(|v| v.unit == "pct").map_or(0.0, |v| v.value)
    };
    let layers: Vec<_> = COMPONENTS.iter().filter(|c| c.plot == PlotGroup::LithiumLoss).collect();
    let lines: Vec<_> = COMPONENTS.iter().filter(|c| c.plot == PlotGroup::ActiveMaterial).collect();
    let stacked_top = |p: &FadePoint| layers.iter().map(|spec| percent(spec, p)).sum::<f64>();
    let values = points.iter().flat_map(|p| {
        let mut v = vec![stacked_top(p), 0.0];
        v.extend(lines.iter().map(|spec| percent(spec, p)));
        v
    });
    let mut chart = ChartBuilder::on(area)
        .margin(10)
        .x_label_area_size(35)
        .top_x_label_area_size(30)
        .y_label_area_size(70)
        .build_cartesian_2d(x_range, padded_range(values, 0.05))
        .map_err(plot_error)?
        .set_secondary_coord(years_range, 0.0..1.0);
    chart.configure_mesh().x_desc(x_label).y_desc("lost, %").draw().map_err(plot_error)?;
    chart.configure_secondary_axes().x_desc("years").y_labels(0).draw().map_err(plot_error)?;
    for (k, spec) in layers.iter().enumerate() {
        let below = |p: &FadePoint| layers[..k].iter().map(|s| percent(s, p)).sum::<f64>();
        let above = |p: &FadePoint| below(p) + percent(spec, p);
        // A band between two curves: the upper points, then the lower ones reversed.
        let mut outline: Vec<(f64, f64)> = points.iter().map(|p| (x_of(p), above(p))).collect();
        outline.extend(points.iter().rev().map(|p| (x_of(p), below(p))));
        let colour = BAND_COLOURS[k % BAND_COLOURS.len()];
        chart
            .draw_series(std::iter::once(Polygon::new(outline, colour.mix(0.5).filled())))
            .map_err(plot_error)?
            .label(format!("lithium, % of fresh capacity: {}", spec.label))
            .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 20, y + 5)], colour.mix(0.5).filled()));
    }
    for (k, spec) in lines.iter().enumerate() {
        let colour = LINE_COLOURS[k % LINE_COLOURS.len()];
        chart
            .draw_series(LineSeries::new(points.iter().map(|p| (x_of(p), percent(spec, p))), colour.stroke_width(2)))
            .map_err(plot_error)?
            .label(format!("{}, % of the electrode", spec.label))
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2)));
    }
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperLeft)
        .background_style(WHITE.mix(0.8))
        .border_style(BLACK)
        .draw()
        .map_err(plot_error)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn renders_three_panels_with_years() {
        let points: Vec<FadePoint> = (0..5)
            .map(|k| {
                let mut point = FadePoint {
                    cycle: 100.0 * k as f64,
                    day: 100.0 * k as f64,
                    soh_pct: 100.0 - k as f64,
                    ..FadePoint::default()
                };
                point.state.move_lithium(crate::aging::Component::LithiumFilmOriginal, 0.005 * k as f64);
                point
            })
            .collect();
        let scale =
            ReportScale { lithium_fresh_ah: 10.0, fresh_capacity_ah: 5.0, neg_radius_nm: 1e4, pos_radius_nm: 1e4 };
        let svg = fade_svg(&points, &scale, "test fade", true).unwrap();
        for text in ["test fade", "state of health, %", "resistance growth, %", "film on crack surface", "years"] {
            assert!(svg.contains(text), "missing {text}");
        }
        assert!(fade_svg(&[], &scale, "empty", false).is_ok());
    }
}
