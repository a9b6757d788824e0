//! A pack's cells over life: `pack.csv` (long format, one row per cell per reported point),
//! the summary lines naming the
//! weakest cell and what sets it apart (`pack.svg` is drawn in `pack_svg.rs`).

use super::ReportError;
use crate::forecast::{FadePoint, LifeAt, PackOutcome};
use crate::material::constants::ZERO_CELSIUS_K;
use std::fmt::Write as _;

/// Columns of `pack.csv`.
pub const PACK_CSV_HEADER: [&str; 14] = [
    "cycle",
    "day",
    "years",
    "cell",
    "group",
    "place",
    "interconnect_mohm",
    "cycle_ambient_c",
    "capacity_ah",
    "soh_pct",
    "resistance_mohm",
    "current_share_pct",
    "peak_temperature_c",
    "lithium_total",
];

/// Renders `pack.csv`: one row per cell per reported point (cells counted from 1).
pub fn pack_csv(points: &[FadePoint], pack: &PackOutcome) -> Result<Vec<u8>, ReportError> {
    let mut writer = csv::Writer::from_writer(Vec::new());
    writer.write_record(PACK_CSV_HEADER)?;
    for (point, cells) in points.iter().zip(&pack.points) {
        for (i, (cell, position)) in cells.iter().zip(&pack.positions).enumerate() {
            writer.write_record([
                point.cycle.to_string(),
                point.day.to_string(),
                (point.day / 365.25).to_string(),
                (i + 1).to_string(),
                (position.group + 1).to_string(),
                (position.place + 1).to_string(),
                (position.interconnect_ohm * 1e3).to_string(),
                (position.cycle_ambient_k - ZERO_CELSIUS_K).to_string(),
                cell.capacity_ah.to_string(),
                cell.soh_pct.to_string(),
                cell.resistance_mohm.to_string(),
                cell.current_share_pct.to_string(),
                cell.peak_temperature_c.to_string(),
                cell.lithium_total.to_string(),
            ])?;
        }
    }
    writer.into_inner().map_err(|err| ReportError::Csv(err.into_error().into()))
}

/// (min, max, standard deviation) of a set of values.
fn spread(values: impl Iterator<Item = f64> + Clone) -> (f64, f64, f64) {
    let n = values.clone().count().max(1) as f64;
    let mean = values.clone().sum::<f64>() / n;
    let var = values.clone().map(|v| (v - mean).powi(2)).sum::<f64>() / n;
    let (lo, hi) = values.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| (lo.min(v), hi.max(v)));
    (lo, hi, var.sqrt())
}

fn life_text(life: Option<LifeAt>, cycling: bool) -> String {
    match life {
        Some(l) if cycling => format!("{:.0} cycles ({:.1} years)", l.cycles, l.years),
        Some(l) => format!("{:.1} years", l.years),
        None => "not within the horizon".to_string(),
    }
}

/// The pack's summary lines: layout, the cells' spread at the start and the horizon, and the
/// weakest cell with its position, cooling, interconnect, current share, temperature and any
/// values drawn for it.
pub fn pack_text(pack: &PackOutcome, cycling: bool) -> String {
    let mut out = String::new();
    let n = pack.positions.len();
    let _ = writeln!(
        out,
        "\nPack: {} in parallel × {} in series ({n} cells); capacity is the weakest group's",
        pack.parallel, pack.series
    );
    for (label, k) in [("fresh", 0usize), ("at the horizon", pack.points.len().saturating_sub(1))] {
        let Some(cells) = pack.points.get(k) else { continue };
        let (lo, hi, sd) = spread(cells.iter().map(|c| c.soh_pct));
        let (s_lo, s_hi, _) = spread(cells.iter().map(|c| c.current_share_pct));
        let (t_lo, t_hi, _) = spread(cells.iter().map(|c| c.peak_temperature_c));
        let _ = writeln!(
            out,
            "  {label:<32}cell state of health {lo:.2}–{hi:.2} % (sd {sd:.2}); discharge share {s_lo:.1}–{s_hi:.1} %; peak {t_lo:.1}–{t_hi:.1} °C"
        );
    }
    if let (Some(weakest), Some(last)) = (pack.weakest(), pack.points.last()) {
        let position = &pack.positions[weakest];
        let cell = &last[weakest];
        let _ = writeln!(
            out,
            "  weakest cell                    cell {} (group {}, place {}): {:.2} % state of health, {:.1} % of its group's discharge, peak {:.1} °C",
            weakest + 1,
            position.group + 1,
            position.place + 1,
            cell.soh_pct,
            cell.current_share_pct,
            cell.peak_temperature_c
        );
        let group_mean_ic: f64 =
            pack.positions.iter().filter(|p| p.group == position.group).map(|p| p.interconnect_ohm).sum::<f64>()
                / pack.parallel as f64;
        let mean_ambient: f64 = pack.positions.iter().map(|p| p.cycle_ambient_k).sum::<f64>() / n as f64;
        let _ = writeln!(
            out,
            "    why                           interconnect {:.2} mΩ (group mean {:.2} mΩ), position at {:.1} °C while cycling (pack mean {:.1} °C)",
            position.interconnect_ohm * 1e3,
            group_mean_ic * 1e3,
            position.cycle_ambient_k - ZERO_CELSIUS_K,
            mean_ambient - ZERO_CELSIUS_K
        );
        if let Some(drawn) = pack.drawn.get(weakest).filter(|d| !d.is_empty()) {
            let values: Vec<String> = drawn.iter().map(|(path, v)| format!("{path} = {v:.4e}")).collect();
            let _ = writeln!(out, "    drawn for it                  {}", values.join(", "));
        }
        let _ =
            writeln!(out, "    its end of life (capacity)    {}", life_text(pack.cell_end_of_life[weakest], cycling));
    }
    let first = pack
        .cell_end_of_life
        .iter()
        .enumerate()
        .filter_map(|(i, l)| l.map(|l| (i, l)))
        .min_by(|a, b| a.1.years.total_cmp(&b.1.years));
    if let Some((i, life)) = first {
        let _ = writeln!(out, "  first cell to end its life      cell {} at {}", i + 1, life_text(Some(life), cycling));
    }
    out
}
