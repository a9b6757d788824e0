//! The fade curve as an SVG figure: state of health, resistance growth and the lithium lost to
//! each mechanism against cycles (days when storing), with years on the top axis.

use super::cycle_svg::{padded_range, plot_error};
use super::ReportError;
use crate::forecast::FadePoint;
use plotters::prelude::*;

const WIDTH_PX: u32 = 1000;
const PANEL_HEIGHT_PX: u32 = 300;
const TITLE_HEIGHT_PX: u32 = 40;

/// Colours of the loss bands, in stacking order.
const BANDS: [(&str, RGBColor); 4] = [
    ("film on original surface", RGBColor(31, 119, 180)),
    ("film on crack surface", RGBColor(255, 127, 14)),
    ("plating (irreversible)", RGBColor(214, 39, 40)),
    ("stranded in lost active material", RGBColor(148, 103, 189)),
];

type Value = fn(&FadePoint) -> f64;
/// A panel of line curves: its y label and (name, colour, value) per curve.
type LinePanel<'a> = (&'a str, &'a [(&'a str, RGBColor, Value)]);

/// Renders the fade curve. `cycling` says whether the x axis counts cycles or days.
pub fn fade_svg(points: &[FadePoint], title: &str, cycling: bool) -> Result<String, ReportError> {
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
        draw_losses(&areas[2], points, x_range, years_range, x_label, x_of)?;
        root.present().map_err(plot_error)?;
    }
    Ok(svg)
}

/// Stacked bands of lithium lost by mechanism, with active-material loss as lines.
fn draw_losses<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    points: &[FadePoint],
    x_range: std::ops::Range<f64>,
    years_range: std::ops::Range<f64>,
    x_label: &str,
    x_of: impl Fn(&FadePoint) -> f64,
) -> Result<(), ReportError> {
    let layers: [Value; 4] = [
        |p| p.lithium_film_original_pct,
        |p| p.lithium_film_crack_pct,
        |p| p.lithium_plating_pct,
        |p| p.lithium_stranded_pct,
    ];
    let stacked_top = |p: &FadePoint| layers.iter().map(|f| f(p)).sum::<f64>();
    let values = points.iter().flat_map(|p| [stacked_top(p), p.neg_active_lost_pct, p.pos_active_lost_pct, 0.0]);
    let mut chart = ChartBuilder::on(area)
        .margin(10)
        .x_label_area_size(35)
        .top_x_label_area_size(30)
        .y_label_area_size(70)
        .build_cartesian_2d(x_range, padded_range(values, 0.05))
        .map_err(plot_error)?
        .set_secondary_coord(years_range, 0.0..1.0);
    chart.configure_mesh().x_desc(x_label).y_desc("lost, % of fresh").draw().map_err(plot_error)?;
    chart.configure_secondary_axes().x_desc("years").y_labels(0).draw().map_err(plot_error)?;
    for (k, (name, colour)) in BANDS.iter().enumerate() {
        let below = |p: &FadePoint| layers[..k].iter().map(|f| f(p)).sum::<f64>();
        let above = |p: &FadePoint| below(p) + layers[k](p);
        // A band between two curves: the upper points, then the lower ones reversed.
        let mut outline: Vec<(f64, f64)> = points.iter().map(|p| (x_of(p), above(p))).collect();
        outline.extend(points.iter().rev().map(|p| (x_of(p), below(p))));
        let colour = *colour;
        chart
            .draw_series(std::iter::once(Polygon::new(outline, colour.mix(0.5).filled())))
            .map_err(plot_error)?
            .label(format!("lithium: {name}"))
            .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 20, y + 5)], colour.mix(0.5).filled()));
    }
    let lines: [(&str, RGBColor, Value); 2] = [
        ("active material, negative", BLACK, |p| p.neg_active_lost_pct),
        ("active material, positive", RGBColor(140, 86, 75), |p| p.pos_active_lost_pct),
    ];
    for (name, colour, value) in lines {
        chart
            .draw_series(LineSeries::new(points.iter().map(|p| (x_of(p), value(p))), colour.stroke_width(2)))
            .map_err(plot_error)?
            .label(name)
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
            .map(|k| FadePoint {
                cycle: 100.0 * k as f64,
                day: 100.0 * k as f64,
                soh_pct: 100.0 - k as f64,
                lithium_film_original_pct: 0.5 * k as f64,
                ..FadePoint::default()
            })
            .collect();
        let svg = fade_svg(&points, "test fade", true).unwrap();
        for text in ["test fade", "state of health, %", "resistance growth, %", "film on crack surface", "years"] {
            assert!(svg.contains(text), "missing {text}");
        }
        assert!(fade_svg(&[], "empty", false).is_ok());
    }
}
