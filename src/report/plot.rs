//! What every figure shares: size and fonts chosen for a report page, the Okabe–Ito palette,
//! tick labels, legends in their own strip outside the data, and the marks (threshold lines,
//! shaded ranges) the figures draw.
//!
//! Sizes: a figure is [`WIDTH_PX`] wide; scaled to 16 cm on an A4 page one pixel is
//! 453.5 pt / 800 ≈ 0.57 pt, so the 15 px tick and legend text prints at about 8.5 pt.

use super::ReportError;
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use std::ops::Range;

pub(super) const WIDTH_PX: u32 = 800;
/// Tick labels and legend text (≈ 8.5 pt at 16 cm wide).
pub(super) const TEXT_PX: u32 = 15;
/// Axis descriptions.
const AXIS_DESC_PX: u32 = 16;
const TITLE_PX: u32 = 19;
const FONT: &str = "sans-serif";

/// The Okabe–Ito colour-blind-safe palette (Okabe and Ito, "Color Universal Design", 2008).
pub(super) const BLACK_OI: RGBColor = RGBColor(0, 0, 0);
pub(super) const ORANGE: RGBColor = RGBColor(230, 159, 0);
pub(super) const SKY_BLUE: RGBColor = RGBColor(86, 180, 233);
pub(super) const BLUISH_GREEN: RGBColor = RGBColor(0, 158, 115);
pub(super) const BLUE: RGBColor = RGBColor(0, 114, 178);
pub(super) const VERMILLION: RGBColor = RGBColor(213, 94, 0);
pub(super) const REDDISH_PURPLE: RGBColor = RGBColor(204, 121, 167);
pub(super) const YELLOW: RGBColor = RGBColor(240, 228, 66);
/// Grey for reference lines and shaded ranges that are not data.
pub(super) const GREY: RGBColor = RGBColor(120, 120, 120);

/// Series colours in the order they are handed out; yellow last, as it is faint on white.
pub(super) const SERIES: [RGBColor; 8] =
    [BLUE, VERMILLION, BLUISH_GREEN, REDDISH_PURPLE, ORANGE, SKY_BLUE, BLACK_OI, YELLOW];

/// Colour of end-of-life threshold lines and their crossing markers.
pub(super) const THRESHOLD: RGBColor = VERMILLION;

pub(super) fn series_colour(i: usize) -> RGBColor {
    SERIES[i % SERIES.len()]
}

pub(super) type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// How a legend entry is drawn.
#[derive(Debug, Clone, Copy)]
pub(super) enum Mark {
    Line(RGBColor),
    Dashed(RGBColor),
    /// A filled area at the given opacity.
    Area(RGBColor, f64),
    Dot(RGBColor),
    Ring(RGBColor),
    /// A large point with a black outline (the warranty point).
    Target(RGBColor),
}

pub(super) struct LegendEntry {
    pub mark: Mark,
    pub label: String,
}

impl LegendEntry {
    pub fn new(mark: Mark, label: impl Into<String>) -> Self {
        LegendEntry { mark, label: label.into() }
    }
}

const LEGEND_ROW_PX: u32 = 22;
const LEGEND_MARK_PX: u32 = 28;
/// Width of one character of the legend's text, generous for DejaVu Sans at [`TEXT_PX`].
const CHAR_PX: f64 = 0.6 * TEXT_PX as f64;
const LEGEND_LEFT_PX: u32 = 80;

fn entry_width(entry: &LegendEntry) -> u32 {
    LEGEND_MARK_PX + 6 + (entry.label.chars().count() as f64 * CHAR_PX).ceil() as u32 + 22
}

/// The entries laid out in rows that fit `width`: each row is the indices of its entries.
fn legend_rows(entries: &[LegendEntry], width: u32) -> Vec<Vec<usize>> {
    let mut rows: Vec<Vec<usize>> = Vec::new();
    let mut used = u32::MAX;
    for (i, entry) in entries.iter().enumerate() {
        let w = entry_width(entry);
        if used.saturating_add(w) > width.saturating_sub(LEGEND_LEFT_PX) {
            rows.push(Vec::new());
            used = 0;
        }
        rows.last_mut().expect("a row was just pushed").push(i);
        used += w;
    }
    rows
}

/// Height of the strip that holds `entries` above a chart of the figure's width.
pub(super) fn legend_height(entries: &[LegendEntry]) -> u32 {
    if entries.is_empty() {
        return 0;
    }
    legend_rows(entries, WIDTH_PX).len() as u32 * LEGEND_ROW_PX + 8
}

/// Splits a panel into its legend strip (on top) and the chart's area, and draws the legend.
pub(super) fn legend_above<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    entries: &[LegendEntry],
) -> Result<DrawingArea<DB, Shift>, ReportError> {
    let height = legend_height(entries);
    if height == 0 {
        return Ok(area.clone());
    }
    let (strip, rest) = area.split_vertically(height);
    let width = strip.dim_in_pixel().0;
    let text = TextStyle::from((FONT, TEXT_PX).into_font()).pos(plotters::style::text_anchor::Pos::new(
        plotters::style::text_anchor::HPos::Left,
        plotters::style::text_anchor::VPos::Center,
    ));
    for (row, indices) in legend_rows(entries, width).iter().enumerate() {
        let y = 4 + row as i32 * LEGEND_ROW_PX as i32 + LEGEND_ROW_PX as i32 / 2;
        let mut x = LEGEND_LEFT_PX as i32;
        for &i in indices {
            let entry = &entries[i];
            draw_mark(&strip, entry.mark, x, y)?;
            strip
                .draw(&Text::new(entry.label.clone(), (x + LEGEND_MARK_PX as i32 + 6, y), text.clone()))
                .map_err(plot_error)?;
            x += entry_width(entry) as i32;
        }
    }
    Ok(rest)
}

fn draw_mark<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, mark: Mark, x: i32, y: i32) -> Result<(), ReportError> {
    let w = LEGEND_MARK_PX as i32;
    let result = match mark {
        Mark::Line(c) => area.draw(&PathElement::new(vec![(x, y), (x + w, y)], c.stroke_width(3))),
        Mark::Dashed(c) => (0..3).try_for_each(|k| {
            area.draw(&PathElement::new(vec![(x + 10 * k, y), (x + 10 * k + 6, y)], c.stroke_width(2)))
        }),
        Mark::Area(c, alpha) => area.draw(&Rectangle::new([(x, y - 7), (x + w, y + 7)], c.mix(alpha).filled())),
        Mark::Dot(c) => area.draw(&Circle::new((x + w / 2, y), 4, c.filled())),
        Mark::Ring(c) => area.draw(&Circle::new((x + w / 2, y), 4, c.stroke_width(2))),
        Mark::Target(c) => area
            .draw(&Circle::new((x + w / 2, y), 7, c.filled()))
            .and_then(|_| area.draw(&Circle::new((x + w / 2, y), 7, BLACK.stroke_width(2)))),
    };
    result.map_err(plot_error)
}

/// Height of a title block: the title, and a smaller subtitle line when there is one.
pub(super) fn title_height(subtitle: bool) -> u32 {
    if subtitle {
        60
    } else {
        38
    }
}

/// Draws the figure's title (and subtitle) and returns the area below it.
pub(super) fn titled<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    title: &str,
    subtitle: Option<&str>,
) -> Result<DrawingArea<DB, Shift>, ReportError> {
    use plotters::style::text_anchor::{HPos, Pos, VPos};
    let (head, body) = root.split_vertically(title_height(subtitle.is_some()));
    let centre = head.dim_in_pixel().0 as i32 / 2;
    let style = |px: u32| TextStyle::from((FONT, px).into_font()).pos(Pos::new(HPos::Center, VPos::Top));
    head.draw(&Text::new(title.to_string(), (centre, 8), style(TITLE_PX))).map_err(plot_error)?;
    if let Some(subtitle) = subtitle {
        head.draw(&Text::new(subtitle.to_string(), (centre, 34), style(TEXT_PX))).map_err(plot_error)?;
    }
    Ok(body)
}

/// A chart over `x` and `y` with room for the axes' labels. The right margin keeps the last
/// tick's label whole.
pub(super) fn chart<'a, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    x: Range<f64>,
    y: Range<f64>,
    top_axis: bool,
) -> Result<Chart<'a, DB>, ReportError> {
    ChartBuilder::on(area)
        .margin_top(if top_axis { 0 } else { 12 })
        .margin_bottom(4)
        .margin_left(8)
        .margin_right(36)
        .x_label_area_size(48)
        .y_label_area_size(78)
        .build_cartesian_2d(x, y)
        .map_err(plot_error)
}

/// Height of the strip above a chart that holds its years axis.
pub(super) const YEARS_STRIP_PX: u32 = 52;

/// Splits off the strip above a chart for its years axis: (strip, chart's area).
pub(super) fn years_strip<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
) -> (DrawingArea<DB, Shift>, DrawingArea<DB, Shift>) {
    area.split_vertically(YEARS_STRIP_PX)
}

/// What an axis counts: whole numbers only (cycles, days, samples) or any value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Scale {
    Count,
    Value,
}

/// A tick's label with no trailing zeros (`500`, not `500.0`; `0.25`).
pub(super) fn tick_label(value: f64) -> String {
    let rounded = format!("{value:.6}");
    let trimmed = rounded.trim_end_matches('0').trim_end_matches('.');
    if trimmed == "-0" {
        "0".into()
    } else {
        trimmed.into()
    }
}

/// A count axis labels whole-number ticks only.
fn count_tick_label(value: f64) -> String {
    if (value - value.round()).abs() < 1e-6 {
        tick_label(value.round())
    } else {
        String::new()
    }
}

fn formatter(scale: Scale) -> fn(&f64) -> String {
    match scale {
        Scale::Count => |v| count_tick_label(*v),
        Scale::Value => |v| tick_label(*v),
    }
}

/// Draws the grid, the axes and their labels at report size.
pub(super) fn draw_axes<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    x_desc: &str,
    x_scale: Scale,
    y_desc: &str,
) -> Result<(), ReportError> {
    let x_format = formatter(x_scale);
    let y_format = formatter(Scale::Value);
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .x_labels(8)
        .y_labels(7)
        .max_light_lines(0)
        .bold_line_style(BLACK.mix(0.12))
        .axis_style(BLACK.mix(0.8))
        .label_style((FONT, TEXT_PX))
        .axis_desc_style((FONT, AXIS_DESC_PX))
        .x_label_formatter(&x_format)
        .y_label_formatter(&y_format)
        .draw()
        .map_err(plot_error)
}

/// Draws the years axis in `strip` (from [`years_strip`]) along the top of `chart`, whose x
/// axis runs over `years` converted to years.
pub(super) fn draw_years_axis<DB: DrawingBackend>(
    strip: &DrawingArea<DB, Shift>,
    chart: &Chart<'_, DB>,
    years: Range<f64>,
) -> Result<(), ReportError> {
    use plotters::style::text_anchor::{HPos, Pos, VPos};
    let x = chart.x_range();
    let top = chart.y_range().end;
    let (base_x, _) = strip.get_base_pixel();
    let bottom = strip.dim_in_pixel().1 as i32 - 1;
    let pixel = |year: f64| {
        let at = x.start + (year - years.start) / (years.end - years.start) * (x.end - x.start);
        chart.backend_coord(&(at, top)).0 - base_x
    };
    let (left, right) = (pixel(years.start), pixel(years.end));
    strip.draw(&PathElement::new(vec![(left, bottom), (right, bottom)], BLACK.mix(0.8))).map_err(plot_error)?;
    let label = TextStyle::from((FONT, TEXT_PX).into_font()).pos(Pos::new(HPos::Center, VPos::Bottom));
    for year in nice_ticks(years.clone(), 8) {
        let px = pixel(year);
        strip.draw(&PathElement::new(vec![(px, bottom), (px, bottom - 5)], BLACK.mix(0.8))).map_err(plot_error)?;
        strip.draw(&Text::new(tick_label(year), (px, bottom - 7), label.clone())).map_err(plot_error)?;
    }
    let desc = TextStyle::from((FONT, AXIS_DESC_PX).into_font()).pos(Pos::new(HPos::Center, VPos::Top));
    strip.draw(&Text::new("years".to_string(), ((left + right) / 2, 6), desc)).map_err(plot_error)
}

/// Round tick values (1, 2 or 5 × 10ᵏ apart) inside `range`, at most about `most` of them.
pub(super) fn nice_ticks(range: Range<f64>, most: usize) -> Vec<f64> {
    let span = range.end - range.start;
    if !(span.is_finite() && span > 0.0) {
        return Vec::new();
    }
    let rough = span / most.max(1) as f64;
    let power = 10f64.powf(rough.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0].iter().map(|m| m * power).find(|s| *s >= rough).unwrap_or(10.0 * power);
    let first = (range.start / step).ceil() as i64;
    let last = (range.end / step + 1e-9).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

/// A solid curve.
pub(super) fn draw_line<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    points: impl IntoIterator<Item = (f64, f64)>,
    colour: RGBColor,
    width: u32,
) -> Result<(), ReportError> {
    chart.draw_series(LineSeries::new(points, colour.stroke_width(width))).map_err(plot_error)?;
    Ok(())
}

/// A dashed line through the given points (threshold and reference lines).
pub(super) fn draw_dashed<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    points: Vec<(f64, f64)>,
    colour: RGBColor,
) -> Result<(), ReportError> {
    chart.draw_series(DashedLineSeries::new(points, 8, 5, colour.stroke_width(2))).map_err(plot_error)?;
    Ok(())
}

/// The area between two curves given on the same x values.
pub(super) fn draw_band<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    upper: &[(f64, f64)],
    lower: &[(f64, f64)],
    colour: RGBColor,
    alpha: f64,
) -> Result<(), ReportError> {
    let mut outline = upper.to_vec();
    outline.extend(lower.iter().rev());
    chart.draw_series(std::iter::once(Polygon::new(outline, colour.mix(alpha).filled()))).map_err(plot_error)?;
    Ok(())
}

/// A shaded stretch of the x axis across the whole height (a calibrated range).
pub(super) fn shade_x<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    x: Range<f64>,
    colour: RGBColor,
    alpha: f64,
) -> Result<(), ReportError> {
    let y = chart.y_range();
    chart
        .draw_series(std::iter::once(Rectangle::new([(x.start, y.start), (x.end, y.end)], colour.mix(alpha).filled())))
        .map_err(plot_error)?;
    Ok(())
}

/// The warranty point: a large dot with a black outline.
pub(super) fn draw_target<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    at: (f64, f64),
    colour: RGBColor,
) -> Result<(), ReportError> {
    chart
        .draw_series([Circle::new(at, 7, colour.filled()), Circle::new(at, 7, BLACK.stroke_width(2))])
        .map_err(plot_error)?;
    Ok(())
}

/// The y range of `values` with room for `level` (a threshold): the distance to the threshold
/// is what a reader looks for, so it joins the axis unless the data would shrink to under a
/// fiftieth of the height; whether the level is on the axis.
pub(super) fn range_with_level(values: impl Iterator<Item = f64>, level: Option<f64>) -> (Range<f64>, bool) {
    let data = padded_range(values, 0.05);
    let Some(level) = level.filter(|l| l.is_finite()) else { return (data, false) };
    let span = data.end - data.start;
    if data.contains(&level) {
        return (data, true);
    }
    let widened = padded_range([data.start, data.end, level].into_iter(), 0.05);
    if widened.end - widened.start <= 50.0 * span {
        (widened, true)
    } else {
        (data, false)
    }
}

/// The x position at `years` along a curve given as (x, day) points, linear between them;
/// None outside the curve.
pub(super) fn x_at_years(points: impl Iterator<Item = (f64, f64)>, years: f64) -> Option<f64> {
    let day = years * DAYS_PER_YEAR;
    let points: Vec<(f64, f64)> = points.collect();
    points.windows(2).find(|w| w[0].1 <= day && day <= w[1].1).map(|w| {
        let span = w[1].1 - w[0].1;
        if span <= 0.0 {
            w[0].0
        } else {
            w[0].0 + (w[1].0 - w[0].0) * (day - w[0].1) / span
        }
    })
}

pub(super) const DAYS_PER_YEAR: f64 = 365.25;

/// The years axis's range for an x range, from the last point's (x, day).
pub(super) fn years_range(x: &Range<f64>, last: Option<(f64, f64)>) -> Range<f64> {
    let (last_x, last_day) = last.unwrap_or((1.0, DAYS_PER_YEAR));
    let per_x = if last_x > 0.0 { last_day / DAYS_PER_YEAR / last_x } else { 1.0 };
    x.start * per_x..x.end * per_x
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

/// A new figure's root area on `svg`, filled white.
pub(super) fn root(svg: &mut String, height: u32) -> Result<DrawingArea<SVGBackend<'_>, Shift>, ReportError> {
    let root = SVGBackend::with_string(svg, (WIDTH_PX, height)).into_drawing_area();
    root.fill(&WHITE).map_err(plot_error)?;
    Ok(root)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_drop_trailing_zeros() {
        assert_eq!(tick_label(500.0), "500");
        assert_eq!(tick_label(3000.0), "3000");
        assert_eq!(tick_label(0.25), "0.25");
        assert_eq!(tick_label(0.1 + 0.2), "0.3");
        assert_eq!(tick_label(-0.0), "0");
        assert_eq!(count_tick_label(2.5), "");
        assert_eq!(count_tick_label(1500.0000001), "1500");
    }

    #[test]
    fn legends_wrap_to_the_width() {
        let entries: Vec<LegendEntry> =
            (0..6).map(|i| LegendEntry::new(Mark::Line(BLUE), format!("a fairly long legend entry {i}"))).collect();
        let rows = legend_rows(&entries, WIDTH_PX);
        assert!(rows.len() > 1 && rows.len() < 6, "{rows:?}");
        assert_eq!(rows.iter().map(Vec::len).sum::<usize>(), 6);
        assert_eq!(legend_height(&[]), 0);
    }

    #[test]
    fn a_near_threshold_joins_the_axis_and_a_far_one_does_not() {
        let (range, shown) = range_with_level([90.0, 100.0].into_iter(), Some(80.0));
        assert!(shown && range.start < 80.0);
        let (range, shown) = range_with_level([100.0, 110.0].into_iter(), Some(200.0));
        assert!(shown && range.end > 200.0);
        let (range, shown) = range_with_level([100.0, 101.0].into_iter(), Some(200.0));
        assert!(!shown && range.end < 200.0);
    }

    #[test]
    fn nice_ticks_are_round() {
        assert_eq!(nice_ticks(0.0..8.2, 8), vec![0.0, 2.0, 4.0, 6.0, 8.0]);
        assert_eq!(nice_ticks(0.0..3000.0, 8), vec![0.0, 500.0, 1000.0, 1500.0, 2000.0, 2500.0, 3000.0]);
        assert!(nice_ticks(1.0..1.0, 8).is_empty());
    }

    #[test]
    fn warranty_years_map_to_the_x_axis() {
        let curve = [(0.0, 0.0), (365.25, 365.25), (730.5, 730.5)];
        assert_eq!(x_at_years(curve.into_iter(), 1.5), Some(547.875));
        assert_eq!(x_at_years(curve.into_iter(), 3.0), None);
    }
}
