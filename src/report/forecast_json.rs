//! The forecast summary as JSON: end of life per threshold, values at the horizon, loss by
//! mechanism, how much was simulated, and every warning.

use super::ReportError;
use crate::forecast::{Forecast, LifeAt, StopReason};
use serde_json::{json, Value};

fn life(reached: &Option<LifeAt>) -> Value {
    match reached {
        Some(at) => json!({ "cycles": at.cycles, "efc": at.efc, "years": at.years }),
        None => json!("not reached"),
    }
}

/// Renders the summary of a forecast of `scenario` on `cell`.
pub fn forecast_json(forecast: &Forecast, scenario: &str, cell: &str) -> Result<Vec<u8>, ReportError> {
    let last = forecast.points.last();
    let end_of_life: Vec<Value> = forecast
        .end_of_life
        .iter()
        .map(|e| json!({ "threshold": e.threshold, "level_pct": e.level_pct, "end_of_life": life(&e.reached) }))
        .collect();
    let stop = match &forecast.stop {
        StopReason::Horizon => json!({ "kind": "horizon" }),
        StopReason::Exhausted { cycle } => json!({ "kind": "exhausted", "cycle": cycle }),
        StopReason::Failed { cycle, detail } => json!({ "kind": "failed", "cycle": cycle, "detail": detail }),
    };
    let summary = json!({
        "scenario": scenario,
        "cell": cell,
        "mode": if forecast.every_cycle { "every cycle" } else { "cycle jumping" },
        "fresh": { "capacity_ah": forecast.fresh_capacity_ah, "resistance_mohm": forecast.fresh_resistance_mohm },
        "end_of_life": end_of_life,
        "at_horizon": last,
        "loss_by_mechanism_at_horizon": forecast.loss_at_horizon,
        "simulated_cycles": forecast.simulated_cycles,
        "integrator": { "accepted_steps": forecast.accepted_steps, "rejected_steps": forecast.rejected_steps },
        "stop": stop,
        "warnings": forecast.warnings,
        "caution": crate::CAUTION,
    });
    let mut bytes = serde_json::to_vec_pretty(&summary)?;
    bytes.push(b'\n');
    Ok(bytes)
}
