//! The words for a forecast's typed outcomes: its warnings, why it stopped, and warnings
//! counted over the samples of an ensemble or comparison. Behaviour never reads this text;
//! it reads the types in `crate::forecast`.

use crate::forecast::{ForecastFailure, ForecastWarning, StopReason, WarningKind};
use crate::material::constants::ZERO_CELSIUS_K;
use serde_json::{json, Value};

const OUTSIDE_LIMITS: &str = "Operation outside the cell's limits is outside what this model and the supplier's \
                              data cover; do not rely on this forecast for it.";

/// One warning as a paragraph for the terminal and for JSON.
pub fn warning_text(warning: &ForecastWarning) -> String {
    let celsius = |k: f64| k - ZERO_CELSIUS_K;
    match warning {
        ForecastWarning::Plating { lowest_potential_v, plated_ah } => format!(
            "CAUTION: lithium plating predicted: the negative electrode falls to {:.0} mV against lithium while \
             charging ({} Ah plated over the horizon, reversible and not). Plating is a safety concern (internal \
             short circuits), not only a capacity loss; check the charge protocol against the cell maker's limits \
             and the applicable standards before use.",
            lowest_potential_v * 1e3,
            super::text::sig(*plated_ah, 3)
        ),
        ForecastWarning::ChargeCurrentOverLimit { peak_a, limit_a, step } => format!(
            "WARNING: the profile charges at {peak_a:.1} A in step {step}, above the cell's limit of {limit_a:.1} A \
             (by {:.0} %). {OUTSIDE_LIMITS}",
            100.0 * (peak_a / limit_a - 1.0)
        ),
        ForecastWarning::DischargeCurrentOverLimit { peak_a, limit_a, step } => format!(
            "WARNING: the profile discharges at {peak_a:.1} A in step {step}, above the cell's limit of \
             {limit_a:.1} A (by {:.0} %). {OUTSIDE_LIMITS}",
            100.0 * (peak_a / limit_a - 1.0)
        ),
        ForecastWarning::TemperatureOutsideLimits { coldest_k, hottest_k, min_k, max_k } => format!(
            "WARNING: the cell reaches {:.1}–{:.1} °C, outside its limits of {:.1}–{:.1} °C. {OUTSIDE_LIMITS}",
            celsius(*coldest_k),
            celsius(*hottest_k),
            celsius(*min_k),
            celsius(*max_k)
        ),
        ForecastWarning::HeldAtVoltageLimit { seconds_per_cycle } => format!(
            "WARNING: for {} per cycle the measured series asked for more than the cell's voltage window allows; it \
             was held at the voltage limit there, so each cycle passes less charge than the file does.",
            super::text::duration(*seconds_per_cycle)
        ),
        ForecastWarning::Uncalibrated => "the cell's aging parameters carry no calibration range: treat this \
                                          forecast as illustrative until they are fitted to measured aging data"
            .into(),
        ForecastWarning::BeyondCalibration {
            calibrated,
            horizon_cycles,
            horizon_days,
            horizon_efc,
            temperature_outside_k,
        } => {
            let mut reached = Vec::new();
            let mut fitted = Vec::new();
            if let Some(cycles) = calibrated.cycles {
                fitted.push(format!("{cycles:.0} cycles"));
                reached.push(format!("{horizon_cycles:.0} cycles"));
            }
            if let Some(days) = calibrated.days {
                fitted.push(format!("{days:.0} days"));
                reached.push(format!("{horizon_days:.0} days"));
            }
            if let Some(efc) = calibrated.efc {
                fitted.push(format!("{efc:.0} equivalent full cycles"));
                reached.push(format!("{horizon_efc:.0} equivalent full cycles"));
            }
            let mut text = format!(
                "WARNING: the forecast goes beyond the calibration range: the aging parameters were fitted to data \
                 up to {} and the forecast reaches {}",
                fitted.join(", "),
                reached.join(", ")
            );
            if let (Some(t), Some((low, high))) = (temperature_outside_k, calibrated.temperature_k) {
                text.push_str(&format!(
                    "; it runs at {:.1} °C, outside the fitted {:.1}–{:.1} °C",
                    celsius(*t),
                    celsius(low),
                    celsius(high)
                ));
            }
            text.push_str(": beyond that range the forecast is an extrapolation.");
            text
        }
    }
}

/// A short name of a kind of warning, for counts over samples.
pub fn warning_kind_text(kind: WarningKind) -> &'static str {
    match kind {
        WarningKind::Plating => "lithium plating predicted",
        WarningKind::ChargeCurrentOverLimit => "charge current above the cell's limit",
        WarningKind::DischargeCurrentOverLimit => "discharge current above the cell's limit",
        WarningKind::TemperatureOutsideLimits => "cell temperature outside its limits",
        WarningKind::HeldAtVoltageLimit => "measured series held at the voltage limit",
        WarningKind::Uncalibrated => "aging parameters without a calibration range (illustrative forecast)",
        WarningKind::BeyondCalibration => "forecast beyond the calibration range (extrapolation)",
    }
}

/// Warnings counted over samples, one line each: "… in 200 of 200 samples".
pub fn counted_warning_lines(counts: &[(WarningKind, usize)], samples: usize, what: &str) -> Vec<String> {
    counts
        .iter()
        .filter(|(_, n)| *n > 0)
        .map(|(kind, n)| {
            let prefix = if matches!(kind, WarningKind::Plating) { "CAUTION" } else { "WARNING" };
            format!("{prefix}: {} in {n} of {samples} {what}", warning_kind_text(*kind))
        })
        .collect()
}

/// Counted warnings as JSON objects: kind, count, out of, message.
pub fn counted_warnings_json(counts: &[(WarningKind, usize)], samples: usize, what: &str) -> Vec<Value> {
    counts
        .iter()
        .filter(|(_, n)| *n > 0)
        .map(|(kind, n)| {
            json!({
                "kind": kind,
                "count": n,
                "out_of": samples,
                "message": format!("{} in {n} of {samples} {what}", warning_kind_text(*kind)),
            })
        })
        .collect()
}

/// One warning as JSON: its typed fields plus the message.
pub fn warning_json(warning: &ForecastWarning) -> Value {
    with_message(warning, Some(warning_text(warning)))
}

/// A typed outcome as JSON (its serde fields) with its words added as `message`, when it has any.
pub(super) fn with_message(typed: &impl serde::Serialize, message: Option<String>) -> Value {
    let mut value = serde_json::to_value(typed).unwrap_or(Value::Null);
    if let (Value::Object(map), Some(message)) = (&mut value, message) {
        map.insert("message".into(), Value::String(message));
    }
    value
}

/// What failed, in words.
pub fn failure_text(failure: &ForecastFailure) -> String {
    failure.to_string()
}

/// Why a forecast stopped before its horizon, in words; None when it reached it.
pub fn stop_text(stop: &StopReason, cycling: bool) -> Option<String> {
    let unit = if cycling { "cycle" } else { "day" };
    match stop {
        StopReason::Horizon => None,
        StopReason::Exhausted { at, .. } => Some(format!("no usable capacity left at {unit} {at:.0}")),
        StopReason::Failed { at, failure, .. } => Some(format!("at {unit} {at:.0}: {}", failure_text(failure))),
    }
}

/// A stop reason as JSON: its typed fields plus the message.
pub fn stop_json(stop: &StopReason, cycling: bool) -> Value {
    with_message(stop, stop_text(stop, cycling))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_kind_has_words_and_counts_say_how_many() {
        for kind in WarningKind::ALL {
            assert!(!warning_kind_text(kind).is_empty());
        }
        let lines =
            counted_warning_lines(&[(WarningKind::BeyondCalibration, 200), (WarningKind::Plating, 0)], 200, "samples");
        assert_eq!(lines, vec!["WARNING: forecast beyond the calibration range (extrapolation) in 200 of 200 samples"]);
    }
}
