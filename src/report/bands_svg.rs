//! Ensemble figures: the median fade curves with shaded quantile bands, and the inputs ranked by
//! their rank correlation with life.

use super::cycle_svg::{padded_range, plot_error};
use super::ReportError;
use crate::ensemble::EnsembleSummary;
use plotters::prelude::*;

const WIDTH_PX: u32 = 1000;
const PANEL_HEIGHT_PX: u32 = 320;
const BAND_COLOUR: RGBColor = RGBColor(31, 119, 180);

/// State of health and resistance: median line, and the band between each symmetric pair of
/// quantiles (outermost lightest), against cycles (days when storing) with years on top.
pub fn bands_svg(summary: &EnsembleSummary, title: &str, cycling: bool) -> Result<String, ReportError> {
    let x_of = |k: usize| if cycling { summary.bands[k].cycle } else { summary.bands[k].day };
    let n = summary.bands.len();
    let x_range = padded_range((0..n).map(x_of), 0.0);
    let last_year = summary.bands.last().map_or(1.0, |b| b.day / 365.25).max(1e-9);
    let last_x = if n > 0 { x_of(n - 1).max(1e-9) } else { 1.0 };
    let years = x_range.start * last_year / last_x..x_range.end * last_year / last_x;
    let q = &summary.quantiles;
    let median = q.iter().position(|&p| (p - 0.5).abs() < 1e-9);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH_PX, 40 + 2 * PANEL_HEIGHT_PX)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let body = root.titled(title, ("sans-serif", 20)).map_err(plot_error)?;
        let areas = body.split_evenly((2, 1));
        for (area, (quantity, label)) in areas.iter().zip([(1usize, "state of health, %"), (2, "resistance, mΩ")]) {
            let values = summary.bands.iter().flat_map(|b| b.values[quantity].iter().copied());
            let mut chart = ChartBuilder::on(area)
                .margin(10)
                .x_label_area_size(35)
                .top_x_label_area_size(30)
                .y_label_area_size(70)
                .build_cartesian_2d(x_range.clone(), padded_range(values, 0.05))
                .map_err(plot_error)?
                .set_secondary_coord(years.clone(), 0.0..1.0);
            chart
                .configure_mesh()
                .x_desc(if cycling { "cycles" } else { "days (storage)" })
                .y_desc(label)
                .draw()
                .map_err(plot_error)?;
            chart.configure_secondary_axes().x_desc("years").y_labels(0).draw().map_err(plot_error)?;
            // Bands between quantile i and its mirror, outermost first.
            for i in 0..q.len() / 2 {
                let j = q.len() - 1 - i;
                let mut outline: Vec<(f64, f64)> =
                    (0..n).map(|k| (x_of(k), summary.bands[k].values[quantity][j])).collect();
                outline.extend((0..n).rev().map(|k| (x_of(k), summary.bands[k].values[quantity][i])));
                let shade = 0.15 + 0.2 * i as f64;
                chart
                    .draw_series(std::iter::once(Polygon::new(outline, BAND_COLOUR.mix(shade).filled())))
                    .map_err(plot_error)?
                    .label(format!(
                        "P{} – P{}",
                        super::ensemble::percent_label(q[i]),
                        super::ensemble::percent_label(q[j])
                    ))
                    .legend(move |(x, y)| {
                        Rectangle::new([(x, y - 5), (x + 20, y + 5)], BAND_COLOUR.mix(shade).filled())
                    });
            }
            if let Some(m) = median {
                chart
                    .draw_series(LineSeries::new(
                        (0..n).map(|k| (x_of(k), summary.bands[k].values[quantity][m])),
                        BLACK.stroke_width(2),
                    ))
                    .map_err(plot_error)?
                    .label("median")
                    .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK.stroke_width(2)));
            }
            chart
                .configure_series_labels()
                .background_style(WHITE.mix(0.8))
                .border_style(BLACK)
                .draw()
                .map_err(plot_error)?;
        }
        root.present().map_err(plot_error)?;
    }
    Ok(svg)
}

/// The uncertain inputs as horizontal bars of their rank correlation with life, strongest on top;
/// each bar's name is written on the other side of zero, so long names never cover a bar.
pub fn sensitivity_svg(summary: &EnsembleSummary, title: &str) -> Result<String, ReportError> {
    use plotters::style::text_anchor::{HPos, Pos, VPos};
    let rows = &summary.sensitivity;
    let count = rows.len().max(1);
    let height = 120 + 40 * count as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH_PX, height)).into_drawing_area();
        root.fill(&WHITE).map_err(plot_error)?;
        let body = root.titled(title, ("sans-serif", 20)).map_err(plot_error)?;
        let mut chart = ChartBuilder::on(&body)
            .margin(10)
            .x_label_area_size(40)
            .y_label_area_size(10)
            .build_cartesian_2d(-1.0f64..1.0f64, 0.0..count as f64)
            .map_err(plot_error)?;
        chart
            .configure_mesh()
            .x_desc(format!("rank correlation with {}", summary.sensitivity_measure))
            .y_labels(0)
            .disable_y_mesh()
            .draw()
            .map_err(plot_error)?;
        // Row i (strongest first) occupies the band [count − 1 − i, count − i].
        let centre = |i: usize| (count - 1 - i) as f64 + 0.5;
        chart
            .draw_series(rows.iter().enumerate().map(|(i, r)| {
                let (a, b) =
                    if r.rank_correlation >= 0.0 { (0.0, r.rank_correlation) } else { (r.rank_correlation, 0.0) };
                let colour = if r.rank_correlation >= 0.0 { BAND_COLOUR } else { RGBColor(214, 39, 40) };
                Rectangle::new([(a, centre(i) - 0.35), (b, centre(i) + 0.35)], colour.mix(0.7).filled())
            }))
            .map_err(plot_error)?;
        chart
            .draw_series(rows.iter().enumerate().map(|(i, r)| {
                let (x, anchor) = if r.rank_correlation >= 0.0 { (-0.02, HPos::Right) } else { (0.02, HPos::Left) };
                let style = TextStyle::from(("sans-serif", 14).into_font()).pos(Pos::new(anchor, VPos::Center));
                Text::new(format!("{} ({:+.2})", r.path, r.rank_correlation), (x, centre(i)), style)
            }))
            .map_err(plot_error)?;
        root.present().map_err(plot_error)?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ensemble::summary::{BandPoint, Sensitivity};

    fn summary() -> EnsembleSummary {
        EnsembleSummary {
            samples: 3,
            counted: 3,
            invalid: 0,
            failed: 0,
            quantiles: vec![0.05, 0.5, 0.95],
            life: Vec::new(),
            warranty: None,
            sensitivity_measure: "end of life (capacity), cycles".into(),
            sensitivity: vec![
                Sensitivity { path: "cell.negative.particle_radius_um".into(), rank_correlation: -0.8 },
                Sensitivity { path: "ambient_c".into(), rank_correlation: 0.3 },
            ],
            bands: (0..4)
                .map(|k| BandPoint {
                    cycle: 100.0 * k as f64,
                    day: 100.0 * k as f64,
                    values: [
                        vec![5.0, 5.1, 5.2],
                        vec![99.0 - k as f64, 100.0 - k as f64, 101.0 - k as f64],
                        vec![15.0, 16.0, 17.0],
                    ],
                })
                .collect(),
            plating_fraction: 0.0,
            warning_counts: Vec::new(),
        }
    }

    #[test]
    fn bands_and_sensitivity_render_with_their_labels() {
        let s = summary();
        let bands = bands_svg(&s, "test bands", true).unwrap();
        for text in ["test bands", "state of health, %", "resistance, mΩ", "median", "P5 – P95", "years"] {
            assert!(bands.contains(text), "missing {text}");
        }
        let sensitivity = sensitivity_svg(&s, "test sensitivity").unwrap();
        assert!(sensitivity.contains("cell.negative.particle_radius_um (-0.80)"));
        assert!(sensitivity.contains("ambient_c (+0.30)"));
    }
}
