//! Plain-text summary of one simulated cycle, and the cautions it calls for.

use super::text::{duration, percent, sig};
use crate::cycle::{Cell, CycleRecord};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use std::fmt::Write;

use crate::cycle::cell::LIMIT_SLACK;

/// Totals, extremes and the step table of `record`.
pub fn cycle_summary(record: &CycleRecord) -> String {
    let ah = |coulomb: f64| coulomb / SECONDS_PER_HOUR;
    let wh = |joule: f64| joule / SECONDS_PER_HOUR;
    let celsius = |kelvin: f64| kelvin - ZERO_CELSIUS_K;
    let mpa = |pa: f64| pa * 1e-6;
    let mut out = String::new();
    let mut line = |label: &str, value: String| {
        let _ = writeln!(out, "  {label:<32}{value}");
    };
    line("duration", duration(record.duration_s));
    line("charge out / in", format!("{:.3} / {:.3} Ah", ah(record.charge_out_coulomb), ah(record.charge_in_coulomb)));
    line(
        "energy out / in",
        format!(
            "{:.2} / {:.2} Wh (round-trip efficiency {})",
            wh(record.energy_out_j),
            wh(record.energy_in_j),
            percent(record.energy_out_j, record.energy_in_j)
        ),
    );
    line(
        "temperature",
        format!(
            "peak {:.1} °C, lowest {:.1} °C",
            celsius(record.peak_temperature_k),
            celsius(record.min_temperature_k)
        ),
    );
    line(
        "negative surface stress",
        format!(
            "{} … {} MPa (+ tension)",
            sig(mpa(record.neg_stress_min_pa), 3),
            sig(mpa(record.neg_stress_max_pa), 3)
        ),
    );
    line(
        "positive surface stress",
        format!(
            "{} … {} MPa (+ tension)",
            sig(mpa(record.pos_stress_min_pa), 3),
            sig(mpa(record.pos_stress_max_pa), 3)
        ),
    );
    line("lowest negative potential", format!("{:.4} V vs Li/Li⁺", record.neg_potential_min_v));
    line(
        "peak current",
        format!(
            "charge {} A, discharge {} A",
            sig(record.peak_charge_current_a, 4),
            sig(record.peak_discharge_current_a, 4)
        ),
    );
    line(
        "warm-up cycles to periodic",
        format!("{} (start state changed {:.1e} over the last)", record.warmup_cycles, record.periodic_residual),
    );
    line("time steps", record.time_steps.to_string());

    let _ = writeln!(out, "\n  Steps (charge positive out of the cell)");
    let _ = writeln!(out, "  {:>4}  {:<24}{:>12}{:>12}  ended by", "#", "label", "duration", "charge, Ah");
    for step in &record.steps {
        let _ = writeln!(
            out,
            "  {:>4}  {:<24}{:>12}{:>12.3}  {}",
            step.index + 1,
            step.label,
            duration(step.duration_s),
            ah(step.charge_coulomb),
            step.end.describe()
        );
    }
    out
}

/// Warnings for what the cycle did that needs a person's attention: predicted plating and
/// operation outside the cell's current or temperature limits. Empty when there is none.
pub fn cycle_cautions(record: &CycleRecord, cell: &Cell) -> Vec<String> {
    let over = |value: f64, limit: f64| value > limit * (1.0 + LIMIT_SLACK);
    let celsius = |kelvin: f64| kelvin - ZERO_CELSIUS_K;
    let mut cautions = Vec::new();
    if record.neg_potential_min_v < 0.0 {
        cautions.push(format!(
            "CAUTION: lithium plating predicted: the negative electrode's surface potential \
             reaches {:.4} V vs Li/Li⁺ (below 0 V). Plating is a safety matter (metallic lithium \
             can short the cell internally), not only a capacity loss. This reduced model cannot \
             rule it in or out; establish safe charging by testing under the applicable \
             standards and the cell supplier's limits.",
            record.neg_potential_min_v
        ));
    }
    let outside_limits = "Operation outside the cell's limits is outside what this model \
                          and the supplier's data cover; do not rely on this forecast for it.";
    if over(record.peak_charge_current_a, cell.max_charge_current_a) {
        cautions.push(format!(
            "WARNING: peak charge current {} A exceeds the cell's limit of {} A. {outside_limits}",
            sig(record.peak_charge_current_a, 4),
            sig(cell.max_charge_current_a, 4)
        ));
    }
    if over(record.peak_discharge_current_a, cell.max_discharge_current_a) {
        cautions.push(format!(
            "WARNING: peak discharge current {} A exceeds the cell's limit of {} A. \
             {outside_limits}",
            sig(record.peak_discharge_current_a, 4),
            sig(cell.max_discharge_current_a, 4)
        ));
    }
    if record.peak_temperature_k > cell.temperature_max_k {
        cautions.push(format!(
            "WARNING: peak temperature {:.1} °C exceeds the cell's maximum of {:.1} °C. \
             {outside_limits}",
            celsius(record.peak_temperature_k),
            celsius(cell.temperature_max_k)
        ));
    }
    if record.min_temperature_k < cell.temperature_min_k {
        cautions.push(format!(
            "WARNING: temperature falls to {:.1} °C, below the cell's minimum of {:.1} °C. \
             {outside_limits}",
            celsius(record.min_temperature_k),
            celsius(cell.temperature_min_k)
        ));
    }
    if record.voltage_limited_s > 0.0 {
        cautions.push(format!(
            "WARNING: for {} the measured series asked for more than the cell's voltage window allows; it \
             was derated there (held at the voltage limit), so this cycle passes less charge than the file does.",
            duration(record.voltage_limited_s)
        ));
    }
    cautions
}
