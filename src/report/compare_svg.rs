//! compare.svg: each alternative's median state of health against cycles (days when storing),
//! its band between the outer quantiles lightly shaded and edged in the same colour so overlapping bands stay
//! apart, the end-of-life threshold, and years on the top axis.

use super::plot::{self, LegendEntry, Mark, Scale};
use super::ReportError;
use crate::compare::{AlternativeSummary, CurveBand};

const CHART_HEIGHT_PX: u32 = 420;
const BAND_ALPHA: f64 = 0.12;

pub fn compare_svg(
    summaries: &[AlternativeSummary],
    capacity_end_of_life_pct: Option<f64>,
    quantiles: (f64, f64),
    title: &str,
    cycling: bool,
) -> Result<String, ReportError> {
    let [low, _, high] = super::compare::quantile_labels(quantiles);
    let x_of = |b: &CurveBand| if cycling { b.cycle } else { b.day };
    let longest = summaries.iter().filter_map(|s| s.curve.last()).max_by(|a, b| x_of(a).total_cmp(&x_of(b)));
    let x_range = plot::padded_range(summaries.iter().flat_map(|s| s.curve.iter().map(x_of)), 0.0);
    let years = plot::years_range(&x_range, longest.map(|b| (x_of(b), b.day)));
    let values = summaries.iter().flat_map(|s| s.curve.iter().flat_map(|b| [b.low, b.high]));
    let (y_range, on_axis) = plot::range_with_level(values, capacity_end_of_life_pct);
    let banded = |s: &AlternativeSummary| s.curve.iter().any(|b| b.high > b.low);
    let mut legend: Vec<LegendEntry> = summaries
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let label = if banded(s) { format!("{}: median, P{low} – P{high}", s.name) } else { s.name.clone() };
            LegendEntry::new(Mark::Line(plot::series_colour(i)), label)
        })
        .collect();
    if let Some(level) = capacity_end_of_life_pct {
        let level_text = plot::tick_label(level);
        legend.push(if on_axis {
            LegendEntry::new(Mark::Dashed(plot::GREY), format!("end of life: {level_text} % of fresh capacity"))
        } else {
            LegendEntry::new(Mark::Dashed(plot::GREY), format!("end of life at {level_text} % (off this scale)"))
        });
    }
    let mut svg = String::new();
    {
        let root = plot::root(&mut svg, plot::title_height(false) + plot::legend_height(&legend) + CHART_HEIGHT_PX)?;
        let body = plot::titled(&root, title, None)?;
        let area = plot::legend_above(&body, &legend)?;
        let (strip, area) = plot::years_strip(&area);
        let mut chart = plot::chart(&area, x_range.clone(), y_range, true)?;
        plot::draw_axes(
            &mut chart,
            if cycling { "cycles" } else { "days (storage)" },
            Scale::Count,
            "state of health, %",
        )?;
        // The threshold is grey here: every colour of the palette may be an alternative's.
        if let (Some(level), true) = (capacity_end_of_life_pct, on_axis) {
            plot::draw_dashed(&mut chart, vec![(x_range.start, level), (x_range.end, level)], plot::GREY)?;
        }
        for (i, s) in summaries.iter().enumerate() {
            let colour = plot::series_colour(i);
            if banded(s) {
                let upper: Vec<(f64, f64)> = s.curve.iter().map(|b| (x_of(b), b.high)).collect();
                let lower: Vec<(f64, f64)> = s.curve.iter().map(|b| (x_of(b), b.low)).collect();
                plot::draw_band(&mut chart, &upper, &lower, colour, BAND_ALPHA)?;
                plot::draw_line(&mut chart, upper, colour, 1)?;
                plot::draw_line(&mut chart, lower, colour, 1)?;
            }
        }
        // Medians last, so no band covers them.
        for (i, s) in summaries.iter().enumerate() {
            plot::draw_line(&mut chart, s.curve.iter().map(|b| (x_of(b), b.median)), plot::series_colour(i), 3)?;
        }
        plot::draw_years_axis(&strip, &chart, years)?;
        root.present().map_err(plot::plot_error)?;
    }
    Ok(svg)
}
