//! The forecast as the terminal shows it.

use super::outcome::{stop_text, warning_text};
use crate::aging::{Component, Measure, Side, COMPONENTS};
use crate::forecast::{Forecast, StopReason, Threshold};
use std::fmt::Write as _;

/// The human summary of a forecast, its stop reason and its warnings.
pub fn forecast_text(f: &Forecast, cycling: bool) -> String {
    let mut s = String::new();
    let Some(last) = f.points.last() else {
        let mut s = "\nNo forecast points were computed.\n".to_string();
        if let Some(why) = stop_text(&f.stop, cycling) {
            let _ = writeln!(s, "The forecast stopped {why}.");
        }
        return s;
    };
    let mode = if f.every_cycle { "every cycle simulated" } else { "cycle jumping" };
    let span = if cycling {
        format!("{:.0} cycles, {:.1} years", last.cycle, last.day / 365.25)
    } else {
        format!("{:.1} years of storage", last.day / 365.25)
    };
    let _ = writeln!(
        s,
        "\nForecast over {span} ({mode}: {} cycles simulated, {} integrator steps)",
        f.simulated_cycles, f.accepted_steps
    );
    let _ = writeln!(
        s,
        "  {:<34}{:.3} Ah, {:.2} mΩ",
        "fresh capacity, resistance", f.fresh_capacity_ah, f.fresh_resistance_mohm
    );
    let _ = writeln!(
        s,
        "  {:<34}{:.3} Ah ({:.1} % state of health), {:.2} mΩ ({:+.1} %)",
        "at the horizon", last.capacity_ah, last.soh_pct, last.resistance_mohm, last.resistance_growth_pct
    );
    if cycling {
        let _ = writeln!(
            s,
            "  {:<34}{:.0} equivalent full cycles, {:.0} Ah delivered",
            "throughput", last.efc, last.throughput_ah
        );
    }
    s.push_str("  End of life\n");
    for e in &f.end_of_life {
        let what = match e.threshold {
            Threshold::Capacity => format!("capacity {:.0} %", e.level_pct),
            Threshold::Resistance => format!("resistance {:.0} %", e.level_pct),
        };
        let when = match e.reached {
            Some(at) if cycling => {
                format!("cycle {:.0} ({:.0} equivalent full cycles, {:.1} years)", at.cycles, at.efc, at.years)
            }
            Some(at) => format!("{:.1} years", at.years),
            None => "not reached within the horizon".into(),
        };
        let _ = writeln!(s, "    {what:<32}{when}");
    }
    let _ = writeln!(
        s,
        "  {:<34}{:.3} Ah: {:.3} Ah to lithium taken by film and plating, {:.3} Ah to active material lost",
        "capacity lost by the horizon",
        last.fade_lithium_ah + last.fade_active_material_ah,
        last.fade_lithium_ah,
        last.fade_active_material_ah
    );
    let scale = &f.scale;
    let sinks: Vec<String> = COMPONENTS
        .iter()
        .filter(|c| c.measure == Measure::LithiumLost)
        .map(|c| format!("{} {}", c.label, super::text::sig(scale.lithium_ah(&last.state, c.component), 3)))
        .collect();
    let _ = writeln!(s, "  {:<34}{} (Ah)", "lithium lost", sinks.join(", "));
    let shares: Vec<String> = last
        .state
        .sink_shares()
        .iter()
        .map(|(c, share)| format!("{} {:.0} %", COMPONENTS[*c as usize].label, 100.0 * share))
        .collect();
    if !shares.is_empty() {
        let _ = writeln!(s, "  {:<34}{}", "share of the lithium lost", shares.join(", "));
    }
    if let Some(rise) = &f.interface_rise {
        let _ = writeln!(
            s,
            "  {:<34}{:+.2} mΩ in all; negative interface: film on original surface {:+.2}, crack faces {:+.2}, lost active area {:+.2} mΩ",
            "resistance rise",
            last.resistance_mohm - f.fresh_resistance_mohm,
            rise.film_original_ohm * 1e3,
            rise.crack_faces_ohm * 1e3,
            rise.lost_area_ohm * 1e3
        );
    }
    let _ = writeln!(
        s,
        "  {:<34}negative {:.2}, positive {:.2} (% of each electrode)",
        "active material lost",
        100.0 * last.state[Component::NegActiveLost],
        100.0 * last.state[Component::PosActiveLost]
    );
    let _ = writeln!(
        s,
        "  {:<34}film {:.0} nm on original, {:.0} nm mean on crack faces; negative cracks {:.0} nm deep from the surface, {:.0} nm from the centre",
        "state",
        last.state[Component::FilmOriginalNm],
        last.film_crack_nm,
        scale.crack_nm(&last.state, Side::Negative),
        scale.crack_nm_of(&last.state, Component::NegCentreCrackNm)
    );
    match &f.stop {
        StopReason::Exhausted { at, .. } => {
            let _ = writeln!(
                s,
                "  The cell had no usable capacity left at {} {at:.0}; the forecast stops there.",
                if cycling { "cycle" } else { "day" }
            );
        }
        StopReason::Failed { .. } => {
            if let Some(why) = stop_text(&f.stop, cycling) {
                let _ = writeln!(s, "  The forecast failed {why}.");
            }
        }
        StopReason::Horizon => {}
    }
    s
}

/// The forecast's warnings in words, one paragraph each (for standard error).
pub fn forecast_warning_lines(f: &Forecast) -> Vec<String> {
    f.warnings.iter().map(warning_text).collect()
}
