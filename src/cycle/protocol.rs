//! Duty cycles as the cycle model runs them: a flat list of steps (repeat blocks already
//! expanded) or a measured time series.

/// What a step holds fixed. Signs: positive current or power discharges the cell.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Drive {
    /// Constant current, A.
    Current(f64),
    /// Constant power at the terminals, W.
    Power(f64),
    /// Constant terminal voltage, V; the current follows.
    Voltage(f64),
    /// Open circuit.
    Rest,
}

/// A condition that ends a step. Directions follow from the drive: a discharge ends when the
/// voltage falls to the value, a charge when it rises to it; likewise for state of charge.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StepEnd {
    /// Terminal voltage reaches this value, V.
    Voltage(f64),
    /// Current magnitude falls to this value, A (constant-voltage taper).
    CurrentBelow(f64),
    /// Time in the step, s.
    Time(f64),
    /// State of charge reaches this fraction, 0–1.
    Soc(f64),
    /// Charge passed in the step reaches this magnitude, C.
    Charge(f64),
}

#[derive(Debug, Clone, PartialEq)]
pub struct Step {
    pub label: String,
    pub drive: Drive,
    pub ends: Vec<StepEnd>,
}

/// A step profile: the steps in run order, repeats expanded.
#[derive(Debug, Clone, PartialEq)]
pub struct StepProfile {
    pub name: String,
    pub steps: Vec<Step>,
}

/// What a measured time series holds at each sample (held until the next sample).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SeriesSignal {
    CurrentA,
    PowerW,
}

/// A measured duty cycle: value k holds from time_s[k] to time_s[k+1]; the last sample only
/// marks the end.
#[derive(Debug, Clone, PartialEq)]
pub struct TimeSeries {
    pub name: String,
    pub signal: SeriesSignal,
    pub time_s: Vec<f64>,
    pub value: Vec<f64>,
    /// Ambient temperature per sample, K, when the file gives it.
    pub ambient_k: Option<Vec<f64>>,
}

#[derive(Debug, Clone, PartialEq)]
pub enum DutyCycle {
    Steps(StepProfile),
    Series(TimeSeries),
}

impl DutyCycle {
    pub fn name(&self) -> &str {
        match self {
            DutyCycle::Steps(p) => &p.name,
            DutyCycle::Series(s) => &s.name,
        }
    }
}

/// A cell, the duty cycle it runs, and the conditions it runs in.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    pub name: String,
    pub cell: super::Cell,
    pub duty: DutyCycle,
    pub ambient_k: f64,
    /// State of charge the first (warm-up) cycle starts from, 0–1.
    pub start_soc: f64,
    /// The cells in parallel and series, when the scenario describes a pack: the duty cycle is
    /// then the pack's and `cell` is the pack's nominal cell.
    pub pack: Option<super::pack::PackLayout>,
}
