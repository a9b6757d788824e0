//! A pack's cells over life: `pack.csv` (long format, one row per cell per reported point),
//! the summary lines naming the
//! weakest cell and what sets it apart (`pack.svg` is drawn in `pack_svg.rs`).

use super::schema::number;
use super::ReportError;
use crate::forecast::{FadePoint, LifeAt, PackOutcome};
use crate::material::constants::ZERO_CELSIUS_K;
use std::fmt::Write as _;

/// Columns of `pack.csv`.
pub const PACK_CSV_HEADER: [&str; 16] = [
    "cycle",
    "day",
    "years",
    "efc",
    "throughput_ah",
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
            // The time axes are the pack's (its throughput and equivalent full cycles).
            writer.write_record([
                number(point.cycle),
                number(point.day),
                number(point.day / 365.25),
                number(point.efc),
                number(point.throughput_ah),
                (i + 1).to_string(),
                (position.group + 1).to_string(),
                (position.place + 1).to_string(),
                number(position.interconnect_ohm * 1e3),
                number(position.cycle_ambient_k - ZERO_CELSIUS_K),
                number(cell.capacity_ah),
                number(cell.soh_pct),
                number(cell.resistance_mohm),
                number(cell.current_share_pct),
                number(cell.peak_temperature_c),
                number(cell.lithium_total),
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

/// The pack's part of `summary.json`: layout, the cells' spread at the start and the horizon,
/// every cell at the horizon, the weakest cell and the first cell to end its life.
#[derive(serde::Serialize)]
pub struct PackSummary {
    pub parallel: usize,
    pub series: usize,
    pub fresh: PackSpread,
    pub at_horizon: PackSpread,
    pub cells: Vec<PackCellSummary>,
    /// 1-based cell numbers, as in `pack.csv`.
    pub weakest_cell: Option<usize>,
    pub first_cell_to_end_life: Option<usize>,
}

/// The cells' spread of each quantity.
#[derive(serde::Serialize)]
pub struct PackSpread {
    pub soh_pct: Spread,
    pub current_share_pct: Spread,
    pub peak_temperature_c: Spread,
}

/// Minimum, maximum and (population) standard deviation over the cells.
#[derive(serde::Serialize)]
pub struct Spread {
    pub min: f64,
    pub max: f64,
    pub sd: f64,
}

impl Spread {
    fn of(values: impl Iterator<Item = f64> + Clone) -> Spread {
        let (min, max, sd) = spread(values);
        Spread { min, max, sd }
    }
}

#[derive(serde::Serialize)]
pub struct PackCellSummary {
    pub cell: usize,
    pub group: usize,
    pub place: usize,
    pub interconnect_mohm: f64,
    pub cycle_ambient_c: f64,
    pub soh_pct: f64,
    pub resistance_mohm: f64,
    pub current_share_pct: f64,
    pub peak_temperature_c: f64,
    /// The cell's own end of life by the pack's capacity threshold: `null` plus the flag when
    /// not reached within the horizon.
    pub life_capacity_cycles: Option<f64>,
    pub life_capacity_years: Option<f64>,
    pub life_capacity_censored: bool,
    /// Values drawn for this cell (parameter path → value), when cells are drawn apart.
    pub drawn: std::collections::BTreeMap<String, f64>,
}

/// The pack summary, or None when the forecast reported no point.
pub fn pack_summary(pack: &PackOutcome) -> Option<PackSummary> {
    let spread_at = |cells: &[crate::forecast::PackCellPoint]| PackSpread {
        soh_pct: Spread::of(cells.iter().map(|c| c.soh_pct)),
        current_share_pct: Spread::of(cells.iter().map(|c| c.current_share_pct)),
        peak_temperature_c: Spread::of(cells.iter().map(|c| c.peak_temperature_c)),
    };
    let (first, last) = (pack.points.first()?, pack.points.last()?);
    let cells = pack
        .positions
        .iter()
        .zip(last)
        .enumerate()
        .map(|(i, (position, point))| PackCellSummary {
            cell: i + 1,
            group: position.group + 1,
            place: position.place + 1,
            interconnect_mohm: position.interconnect_ohm * 1e3,
            cycle_ambient_c: position.cycle_ambient_k - ZERO_CELSIUS_K,
            soh_pct: point.soh_pct,
            resistance_mohm: point.resistance_mohm,
            current_share_pct: point.current_share_pct,
            peak_temperature_c: point.peak_temperature_c,
            life_capacity_cycles: pack.cell_end_of_life[i].map(|l| l.cycles),
            life_capacity_years: pack.cell_end_of_life[i].map(|l| l.years),
            life_capacity_censored: pack.cell_end_of_life[i].is_none(),
            drawn: pack.drawn.get(i).map(|d| d.iter().cloned().collect()).unwrap_or_default(),
        })
        .collect();
    let first_to_end = pack
        .cell_end_of_life
        .iter()
        .enumerate()
        .filter_map(|(i, l)| l.map(|l| (i, l)))
        .min_by(|a, b| a.1.years.total_cmp(&b.1.years))
        .map(|(i, _)| i + 1);
    Some(PackSummary {
        parallel: pack.parallel,
        series: pack.series,
        fresh: spread_at(first),
        at_horizon: spread_at(last),
        cells,
        weakest_cell: pack.weakest().map(|i| i + 1),
        first_cell_to_end_life: first_to_end,
    })
}
