//! pack.svg: each cell's state of health (with the pack's capacity end-of-life threshold) and
//! its share of its group's discharge against cycles (days when storing), years on top.

use super::fade_svg::XAxis;
use super::plot::{self, LegendEntry, Mark, Scale};
use super::ReportError;
use crate::forecast::{EndOfLifePoint, FadePoint, PackCellPoint, PackOutcome, Threshold};

const CHART_HEIGHT_PX: u32 = 290;

enum Colouring {
    ByGroup,
    ByCell,
    Grey,
}

/// Renders `pack.svg`.
pub fn pack_svg(
    points: &[FadePoint],
    pack: &PackOutcome,
    end_of_life: &[EndOfLifePoint],
    title: &str,
    cycling: bool,
) -> Result<String, ReportError> {
    let x_of = move |p: &FadePoint| if cycling { p.cycle } else { p.day };
    let x = XAxis::new(points.iter().map(|p| (x_of(p), p.day)), cycling);
    let n = pack.positions.len();
    let threshold = end_of_life.iter().find(|e| e.threshold == Threshold::Capacity).map(|t| t.level_pct);
    type Value = fn(&PackCellPoint) -> f64;
    let panels: [(&str, Value, Option<f64>); 2] = [
        ("cell state of health, %", |c| c.soh_pct, threshold),
        ("share of the group's discharge, %", |c| c.current_share_pct, None),
    ];
    let ranges: Vec<_> = panels
        .iter()
        .map(|(_, value, level)| {
            plot::range_with_level(pack.points.iter().flat_map(|cells| cells.iter().map(value)), *level)
        })
        .collect();
    // Groups in series get a colour each (their cells share it); a single group's cells get
    // one each; beyond the palette every line is grey.
    let groups = pack.positions.iter().map(|p| p.group + 1).max().unwrap_or(0);
    let colouring = if groups > 1 && groups <= plot::SERIES.len() {
        Colouring::ByGroup
    } else if n <= plot::SERIES.len() {
        Colouring::ByCell
    } else {
        Colouring::Grey
    };
    let colour = |i: usize| match colouring {
        Colouring::ByGroup => plot::series_colour(pack.positions[i].group),
        Colouring::ByCell => plot::series_colour(i),
        Colouring::Grey => plot::GREY,
    };
    let mut legend: Vec<LegendEntry> = match colouring {
        Colouring::ByGroup => (0..groups)
            .map(|g| {
                let cells: Vec<usize> = (0..n).filter(|&i| pack.positions[i].group == g).map(|i| i + 1).collect();
                let span = match (cells.first(), cells.last()) {
                    (Some(a), Some(b)) if a != b => format!("cells {a}–{b}"),
                    (Some(a), _) => format!("cell {a}"),
                    _ => "no cells".into(),
                };
                LegendEntry::new(Mark::Line(plot::series_colour(g)), format!("group {}: {span}", g + 1))
            })
            .collect(),
        Colouring::ByCell => (0..n)
            .map(|i| {
                let position = &pack.positions[i];
                LegendEntry::new(
                    Mark::Line(colour(i)),
                    format!("cell {} (group {}, place {})", i + 1, position.group + 1, position.place + 1),
                )
            })
            .collect(),
        Colouring::Grey => vec![LegendEntry::new(Mark::Line(plot::GREY), format!("{n} cells, one line each"))],
    };
    if let (Some(level), true) = (threshold, ranges[0].1) {
        legend.push(LegendEntry::new(
            Mark::Dashed(plot::GREY),
            format!("pack end of life: {} % of fresh capacity", plot::tick_label(level)),
        ));
    }
    let mut svg = String::new();
    {
        let height = plot::title_height(false) + plot::legend_height(&legend) + 2 * CHART_HEIGHT_PX;
        let root = plot::root(&mut svg, height)?;
        let body = plot::titled(&root, title, None)?;
        let body = plot::legend_above(&body, &legend)?;
        let areas = body.split_evenly((2, 1));
        for (((y_desc, value, level), area), (y_range, on_axis)) in panels.iter().zip(&areas).zip(ranges) {
            let (strip, area) = plot::years_strip(area);
            let mut chart = plot::chart(&area, x.range.clone(), y_range, true)?;
            plot::draw_axes(&mut chart, x.desc, Scale::Count, y_desc)?;
            if let (Some(level), true) = (level, on_axis) {
                plot::draw_dashed(&mut chart, vec![(x.range.start, *level), (x.range.end, *level)], plot::GREY)?;
            }
            for i in 0..n {
                let curve = points.iter().zip(&pack.points).map(|(p, cells)| (x_of(p), value(&cells[i])));
                plot::draw_line(&mut chart, curve, colour(i), 2)?;
            }
            plot::draw_years_axis(&strip, &chart, x.years.clone())?;
        }
        root.present().map_err(plot::plot_error)?;
    }
    Ok(svg)
}
