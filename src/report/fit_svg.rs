//! fit.svg: per dataset, the measured capacity (fitted points filled, held-out points hollow),
//! the model at the fitted values, the calibrated range shaded and the hold-out limit; the
//! measured and modelled resistance when the data give resistance; and the residuals.

use super::fit::axis_label;
use super::plot::{self, LegendEntry, Mark, Scale};
use super::ReportError;
use crate::calibrate::{FitResult, FittedCurve};
use plotters::prelude::*;
use std::ops::Range;

const CURVE_HEIGHT_PX: u32 = 260;
const RESIDUAL_HEIGHT_PX: u32 = 170;
const MODEL: RGBColor = plot::BLUE;
const HELD_OUT: RGBColor = plot::VERMILLION;
const CALIBRATED: RGBColor = plot::BLUISH_GREEN;

/// The x span of a dataset's fitted (not held-out) points: its calibrated range.
fn fitted_span(curve: &FittedCurve) -> Option<Range<f64>> {
    let fitted = curve.x_data.iter().zip(&curve.fitted).filter(|(_, &f)| f).map(|(&x, _)| x);
    let (lo, hi) = fitted.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| (lo.min(x), hi.max(x)));
    (lo <= hi).then(|| lo.min(0.0)..hi)
}

fn legend(curve: &FittedCurve, holdout_after: Option<f64>) -> Vec<LegendEntry> {
    let mut entries = vec![
        LegendEntry::new(Mark::Dot(plot::BLACK_OI), "measured, fitted"),
        LegendEntry::new(Mark::Line(MODEL), "model at the fitted values"),
        LegendEntry::new(Mark::Area(CALIBRATED, 0.15), "calibrated range"),
    ];
    if curve.fitted.iter().any(|f| !f) {
        entries.insert(1, LegendEntry::new(Mark::Ring(HELD_OUT), "measured, held out"));
    }
    if let Some(limit) = holdout_after {
        entries.push(LegendEntry::new(Mark::Dashed(HELD_OUT), format!("hold-out limit ({})", plot::tick_label(limit))));
    }
    entries
}

fn has_resistance(curve: &FittedCurve) -> bool {
    curve.resistance_data_mohm.iter().any(Option::is_some) && !curve.resistance_mohm.is_empty()
}

fn dataset_height(curve: &FittedCurve, holdout_after: Option<f64>) -> u32 {
    plot::title_height(false)
        + plot::legend_height(&legend(curve, holdout_after))
        + CURVE_HEIGHT_PX * (1 + u32::from(has_resistance(curve)))
        + RESIDUAL_HEIGHT_PX
}

/// Renders the fit; `holdout_after` is `--holdout-after` (on each dataset's own axis).
pub fn fit_svg(result: &FitResult, holdout_after: Option<f64>, title: &str) -> Result<String, ReportError> {
    let heights: Vec<u32> = result.curves.iter().map(|c| dataset_height(c, holdout_after)).collect();
    let mut svg = String::new();
    {
        let root = plot::root(&mut svg, plot::title_height(false) + heights.iter().sum::<u32>().max(100))?;
        let mut rest = plot::titled(&root, title, None)?;
        for (curve, height) in result.curves.iter().zip(heights) {
            let (area, below) = rest.split_vertically(height);
            rest = below;
            draw_dataset(&area, curve, holdout_after)?;
        }
        root.present().map_err(plot::plot_error)?;
    }
    Ok(svg)
}

fn draw_dataset<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    curve: &FittedCurve,
    holdout_after: Option<f64>,
) -> Result<(), ReportError> {
    let area = plot::titled(area, &format!("dataset: {}", curve.dataset), None)?;
    let area = plot::legend_above(&area, &legend(curve, holdout_after))?;
    let resistance = has_resistance(curve);
    let (capacity_area, rest) = area.split_vertically(CURVE_HEIGHT_PX);
    let (resistance_area, residual_area) =
        if resistance { rest.split_vertically(CURVE_HEIGHT_PX) } else { (rest.clone(), rest) };
    let x_range = plot::padded_range(curve.x.iter().chain(&curve.x_data).copied(), 0.02);
    let x_desc = axis_label(curve.axis);
    let span = fitted_span(curve);
    let limit = holdout_after.filter(|l| x_range.contains(l));
    // What every panel of the dataset shares: the calibrated range and the hold-out limit.
    let decorate = |chart: &mut plot::Chart<'_, DB>| -> Result<(), ReportError> {
        if let Some(span) = &span {
            plot::shade_x(chart, span.clone(), CALIBRATED, 0.15)?;
        }
        if let Some(limit) = limit {
            let y = chart.y_range();
            plot::draw_dashed(chart, vec![(limit, y.start), (limit, y.end)], HELD_OUT)?;
        }
        Ok(())
    };
    type Points = Vec<(f64, f64)>;
    // Measured points split into (fitted, held out).
    let measured = |values: &[Option<f64>]| -> (Points, Points) {
        let points = curve.x_data.iter().zip(values).zip(&curve.fitted);
        let (mut fitted, mut held) = (Vec::new(), Vec::new());
        for ((&x, v), &f) in points {
            if let Some(v) = v {
                if f {
                    fitted.push((x, *v))
                } else {
                    held.push((x, *v))
                }
            }
        }
        (fitted, held)
    };

    let capacity: Vec<Option<f64>> = curve.capacity_data_ah.iter().map(|&c| Some(c)).collect();
    let mut panels = vec![(&capacity_area, "capacity, Ah", &curve.capacity_ah, capacity)];
    if resistance {
        panels.push((&resistance_area, "resistance, mΩ", &curve.resistance_mohm, curve.resistance_data_mohm.clone()));
    }
    for (panel_area, y_desc, model, data) in panels {
        let (fitted, held) = measured(&data);
        let values = model.iter().copied().chain(fitted.iter().chain(&held).map(|p| p.1));
        let mut chart = plot::chart(panel_area, x_range.clone(), plot::padded_range(values, 0.05), false)?;
        plot::draw_axes(&mut chart, x_desc, Scale::Count, y_desc)?;
        decorate(&mut chart)?;
        plot::draw_line(&mut chart, curve.x.iter().copied().zip(model.iter().copied()), MODEL, 2)?;
        chart.draw_series(fitted.iter().map(|&p| Circle::new(p, 4, BLACK.filled()))).map_err(plot::plot_error)?;
        chart
            .draw_series(held.iter().map(|&p| Circle::new(p, 4, HELD_OUT.stroke_width(2))))
            .map_err(plot::plot_error)?;
    }

    let residual_range = plot::padded_range(curve.capacity_residual_ah.iter().copied().chain([0.0]), 0.1);
    let mut residuals = plot::chart(&residual_area, x_range.clone(), residual_range, false)?;
    plot::draw_axes(&mut residuals, x_desc, Scale::Count, "model − data, Ah")?;
    decorate(&mut residuals)?;
    plot::draw_line(&mut residuals, [(x_range.start, 0.0), (x_range.end, 0.0)], plot::GREY, 1)?;
    let points = curve.x_data.iter().zip(&curve.capacity_residual_ah).zip(&curve.fitted);
    residuals
        .draw_series(points.map(|((&x, &r), &f)| {
            let style = if f { BLACK.filled() } else { HELD_OUT.stroke_width(2) };
            Circle::new((x, r), 4, style)
        }))
        .map_err(plot::plot_error)?;
    Ok(())
}
