//! The scenario's `[pack]` section → [`crate::cycle::pack::PackLayout`]: cells in parallel per
//! group and groups in series, interconnect resistance and cooling per position, heat exchange
//! between neighbours.

use serde::Deserialize;

use super::checks::Checks;
use crate::cycle::pack::{Cooling, PackLayout, MAX_PACK_CELLS};
use crate::cycle::Cell;
use crate::material::constants::ZERO_CELSIUS_K;

/// One number for every position, or a list: one per place in a group (every group alike) or
/// one per cell (group by group).
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub(super) enum PerPosition {
    One(f64),
    List(Vec<f64>),
}

/// `[pack]` as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct PackSection {
    parallel: i64,
    series: Option<i64>,
    interconnect_mohm: Option<PerPosition>,
    ambient_offset_c: Option<PerPosition>,
    coolant_inlet_c: Option<f64>,
    coolant_rise_c: Option<f64>,
    neighbour_conductance_w_k: Option<f64>,
}

impl PackSection {
    /// Cells in parallel and groups in series when both are in range (for checking the duty
    /// cycle against the pack before the layout is built).
    pub(super) fn counts(&self) -> Option<(usize, usize)> {
        let (p, s) = (self.parallel, self.series.unwrap_or(1));
        (p >= 1 && s >= 1 && (p * s) as usize <= MAX_PACK_CELLS).then_some((p as usize, s as usize))
    }
}

/// Expands a per-position value to one per cell; reports a list of the wrong length.
fn expand(checks: &mut Checks<'_>, key: &str, value: &PerPosition, parallel: usize, cells: usize) -> Vec<f64> {
    match value {
        PerPosition::One(v) => vec![*v; cells],
        PerPosition::List(list) if list.len() == cells => list.clone(),
        PerPosition::List(list) if list.len() == parallel => (0..cells).map(|i| list[i % parallel]).collect(),
        PerPosition::List(list) => {
            checks.report(
                key,
                format!(
                    "takes one value, one per place in a group ({parallel}) or one per cell ({cells}); found {}",
                    list.len()
                ),
            );
            vec![0.0; cells]
        }
    }
}

/// Checks the section and builds the layout with `cell` at every position.
pub(super) fn convert_pack(checks: &mut Checks<'_>, section: &PackSection, cell: &Cell) -> Option<PackLayout> {
    let series = section.series.unwrap_or(1);
    if section.parallel < 1 {
        checks.report("pack.parallel", format!("must be at least 1, found {}", section.parallel));
    }
    if series < 1 {
        checks.report("pack.series", format!("must be at least 1, found {series}"));
    }
    let (parallel, series) = match section.counts() {
        Some(counts) => counts,
        None => {
            if section.parallel >= 1 && series >= 1 {
                checks.report(
                    "pack.parallel",
                    format!(
                        "a pack holds at most {MAX_PACK_CELLS} cells; {} × {series} is {}",
                        section.parallel,
                        section.parallel * series
                    ),
                );
            }
            return None;
        }
    };
    let cells = parallel * series;
    let before = checks.problem_count();
    let interconnect = match &section.interconnect_mohm {
        None => vec![0.0; cells],
        Some(value) => expand(checks, "pack.interconnect_mohm", value, parallel, cells),
    };
    for v in &interconnect {
        checks.non_negative("pack.interconnect_mohm", *v);
    }
    let cooling = match (&section.ambient_offset_c, section.coolant_inlet_c, section.coolant_rise_c) {
        (Some(_), Some(_), _) | (Some(_), _, Some(_)) => {
            checks.report_conflict(
                "pack.ambient_offset_c",
                "pack.coolant_inlet_c",
                "give either ambient offsets per position or a coolant inlet and rise, not both",
            );
            Cooling::AmbientOffsets(vec![0.0; cells])
        }
        (Some(offsets), None, None) => {
            let offsets = expand(checks, "pack.ambient_offset_c", offsets, parallel, cells);
            for v in &offsets {
                checks.finite("pack.ambient_offset_c", *v);
            }
            Cooling::AmbientOffsets(offsets)
        }
        (None, Some(inlet), rise) => {
            checks.celsius("pack.coolant_inlet_c", inlet);
            let rise = rise.unwrap_or(0.0);
            checks.finite("pack.coolant_rise_c", rise);
            if inlet + rise.min(0.0) <= -ZERO_CELSIUS_K {
                checks.report("pack.coolant_rise_c", "the coolant would fall below absolute zero");
            }
            Cooling::Coolant { inlet_k: inlet + ZERO_CELSIUS_K, rise_k: rise }
        }
        (None, None, Some(_)) => {
            checks.report("pack.coolant_rise_c", "needs `coolant_inlet_c`");
            Cooling::AmbientOffsets(vec![0.0; cells])
        }
        (None, None, None) => Cooling::AmbientOffsets(vec![0.0; cells]),
    };
    let neighbour = section.neighbour_conductance_w_k.unwrap_or(0.0);
    checks.non_negative("pack.neighbour_conductance_w_k", neighbour);
    if checks.problem_count() > before {
        return None;
    }
    Some(PackLayout {
        parallel,
        series,
        cells: vec![cell.clone(); cells],
        interconnect_ohm: interconnect.iter().map(|m| m * 1e-3).collect(),
        cooling,
        neighbour_conductance_w_k: neighbour,
        drawn: Vec::new(),
    })
}
