//! What a forecast returns: the fade curve at reported points, end of life, why it stopped,
//! and typed warnings carrying the numbers involved (text is made in `src/report`).

use crate::aging::{AgingState, CalibrationRange, Component, ComponentSpec, Measure, Side, COMPONENTS};
use serde::Serialize;

/// Equivalent full cycles: discharge throughput over the cell's nominal (rated) capacity.
/// The one definition every `efc` value comes from (FORMATS.md says the same).
pub fn equivalent_full_cycles(throughput_ah: f64, nominal_capacity_ah: f64) -> f64 {
    throughput_ah / nominal_capacity_ah
}

/// One reported point of the fade curve. Capacities are at reference conditions unless said
/// otherwise; the slow state's own quantities are in `state` (see [`ReportScale`] for the
/// units they are reported in).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct FadePoint {
    pub cycle: f64,
    pub day: f64,
    /// Equivalent full cycles ([`equivalent_full_cycles`]).
    pub efc: f64,
    /// Discharge throughput, Ah.
    pub throughput_ah: f64,
    /// Energy delivered on discharge, Wh.
    pub energy_wh: f64,
    /// Capacity at reference conditions (low rate, reference temperature, voltage window), Ah.
    pub capacity_ah: f64,
    /// Capacity delivered under the duty cycle itself (last simulated cycle at or before this
    /// point), Ah.
    pub duty_capacity_ah: f64,
    /// Capacity over the fresh capacity, %.
    pub soh_pct: f64,
    /// DC resistance from a 10 s 1C discharge pulse at 50 % state of charge and the reference
    /// temperature, mΩ.
    pub resistance_mohm: f64,
    pub resistance_growth_pct: f64,
    /// Capacity lost to lithium taken by film and plating: fresh capacity less the capacity of
    /// the fresh electrodes holding the lithium those sinks left, Ah.
    pub fade_lithium_ah: f64,
    /// The rest of the capacity lost: active material lost together with the lithium it held,
    /// Ah. The two add up to the fresh capacity less `capacity_ah`.
    pub fade_active_material_ah: f64,
    /// Mean film thickness on crack surface, nm.
    pub film_crack_nm: f64,
    /// Peak cell temperature of the last simulated cycle at or before this point, °C.
    pub peak_temperature_c: f64,
    /// The slow state at this point.
    pub state: AgingState,
}

/// What the slow state's values are reported against.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct ReportScale {
    /// Cyclable lithium of the fresh cell, Ah (the unit of every lithium fraction).
    pub lithium_fresh_ah: f64,
    /// Capacity of the fresh cell at reference conditions, Ah (lithium lost is given in % of it).
    pub fresh_capacity_ah: f64,
    pub neg_radius_nm: f64,
    pub pos_radius_nm: f64,
}

/// One reported value of a slow-state component.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReportedValue {
    pub spec: &'static ComponentSpec,
    /// Unit suffix of the column: `ah`, `pct`, `nm`, `wh`.
    pub unit: &'static str,
    pub value: f64,
}

impl ReportScale {
    /// The reported values of one component in a state: lithium in Ah and in % of the fresh
    /// capacity (its own share, without the parts reported apart), electrode fractions in %,
    /// crack lengths no longer than the particle radius.
    pub fn values(&self, spec: &'static ComponentSpec, state: &AgingState) -> Vec<ReportedValue> {
        let raw = state[spec.component];
        let value = |unit, value| ReportedValue { spec, unit, value };
        match spec.measure {
            Measure::LithiumInventory => vec![value("ah", raw * self.lithium_fresh_ah)],
            Measure::LithiumLost | Measure::LithiumCounted => {
                let ah = state.own_share(spec.component) * self.lithium_fresh_ah;
                vec![value("ah", ah), value("pct", 100.0 * ah / self.fresh_capacity_ah)]
            }
            Measure::Nanometres => vec![value("nm", raw)],
            Measure::CrackNanometres(_) => vec![value("nm", self.crack_nm_of(state, spec.component))],
            Measure::ElectrodeFraction => vec![value("pct", 100.0 * raw)],
            Measure::AmpereHours => vec![value("ah", raw)],
            Measure::WattHours => vec![value("wh", raw)],
        }
    }

    /// Every reported value of a state, in table order.
    pub fn all_values(&self, state: &AgingState) -> Vec<ReportedValue> {
        COMPONENTS.iter().flat_map(|spec| self.values(spec, state)).collect()
    }

    /// Crack length of one electrode as reported, nm: no longer than the particle radius (the
    /// integrator may step slightly past it; the physics caps it in `aging::crack_length_m`).
    pub fn crack_nm(&self, state: &AgingState, side: Side) -> f64 {
        match side {
            Side::Negative => self.crack_nm_of(state, Component::NegCrackNm),
            Side::Positive => self.crack_nm_of(state, Component::PosCrackNm),
        }
    }

    /// Any crack component as reported, nm, no longer than its electrode's particle radius.
    pub fn crack_nm_of(&self, state: &AgingState, component: Component) -> f64 {
        let radius = match COMPONENTS[component as usize].measure {
            Measure::CrackNanometres(Side::Positive) => self.pos_radius_nm,
            _ => self.neg_radius_nm,
        };
        state[component].min(radius)
    }

    /// Lithium of one sink in Ah (its own share).
    pub fn lithium_ah(&self, state: &AgingState, component: Component) -> f64 {
        state.own_share(component) * self.lithium_fresh_ah
    }
}

/// Which threshold an end of life refers to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Threshold {
    Capacity,
    Resistance,
}

/// Where a threshold was crossed (interpolated between reported points), or None.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EndOfLifePoint {
    pub threshold: Threshold,
    /// The threshold itself, % of fresh.
    pub level_pct: f64,
    pub reached: Option<LifeAt>,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LifeAt {
    pub cycles: f64,
    pub efc: f64,
    pub years: f64,
}

/// Why the forecast stopped.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum StopReason {
    Horizon,
    /// The cell has no charge left to cycle in its voltage window (far past any end of life).
    Exhausted {
        /// Cycle (day when storing) at which it was found.
        at: f64,
        /// State of health at the last reported point, %.
        last_soh_pct: Option<f64>,
    },
    /// The cycle model or the integrator failed.
    Failed {
        /// Cycle (day when storing) at which it failed.
        at: f64,
        /// State of health at the last reported point, %.
        last_soh_pct: Option<f64>,
        failure: ForecastFailure,
    },
}

/// What failed, with the detail the failing part gave.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize, thiserror::Error)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum ForecastFailure {
    #[error("the fresh cell has no charge in its voltage window")]
    FreshCellEmpty,
    #[error("the resistance pulse cannot be run on the fresh cell")]
    FreshPulse,
    /// The horizon does not suit the usage (cycles asked of a storage-only scenario).
    #[error("storage-only usage (0 cycles per day) needs a horizon in years")]
    HorizonNeedsYears,
    /// The fresh cell's duty cycle takes longer than the usage leaves it: the cycles asked
    /// for do not fit in a day.
    #[error(
        "{cycles_per_day} cycles a day of {:.2} h each need {:.1} h a day; at most {:.3} such cycles fit in a day",
        cycle_duration_s / 3600.0,
        cycles_per_day * cycle_duration_s / 3600.0,
        86_400.0 / cycle_duration_s
    )]
    UsageExceedsDay { cycles_per_day: f64, cycle_duration_s: f64 },
    /// One duty cycle could not be simulated.
    #[error("{detail}")]
    Cycle { detail: String },
    /// The cycle-jumping integrator gave up.
    #[error("integrator: {detail}")]
    Integrator { detail: String },
}

/// Kinds of warning, for counting over samples and alternatives. The discriminant is the bit
/// in a [`WarningSet`] (and in the ensemble journal): append new kinds, never reorder.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum WarningKind {
    Plating = 0,
    ChargeCurrentOverLimit = 1,
    DischargeCurrentOverLimit = 2,
    TemperatureOutsideLimits = 3,
    HeldAtVoltageLimit = 4,
    Uncalibrated = 5,
    BeyondCalibration = 6,
}

impl WarningKind {
    /// The kind's key in CSV and JSON (as serde writes it).
    pub fn key(self) -> &'static str {
        match self {
            WarningKind::Plating => "plating",
            WarningKind::ChargeCurrentOverLimit => "charge_current_over_limit",
            WarningKind::DischargeCurrentOverLimit => "discharge_current_over_limit",
            WarningKind::TemperatureOutsideLimits => "temperature_outside_limits",
            WarningKind::HeldAtVoltageLimit => "held_at_voltage_limit",
            WarningKind::Uncalibrated => "uncalibrated",
            WarningKind::BeyondCalibration => "beyond_calibration",
        }
    }

    pub const ALL: [WarningKind; 7] = [
        WarningKind::Plating,
        WarningKind::ChargeCurrentOverLimit,
        WarningKind::DischargeCurrentOverLimit,
        WarningKind::TemperatureOutsideLimits,
        WarningKind::HeldAtVoltageLimit,
        WarningKind::Uncalibrated,
        WarningKind::BeyondCalibration,
    ];
}

/// A set of warning kinds (one bit each).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Hash)]
pub struct WarningSet(pub u16);

impl WarningSet {
    pub fn insert(&mut self, kind: WarningKind) {
        self.0 |= 1 << kind as u16;
    }

    pub fn contains(self, kind: WarningKind) -> bool {
        self.0 & (1 << kind as u16) != 0
    }

    pub fn kinds(self) -> impl Iterator<Item = WarningKind> {
        WarningKind::ALL.into_iter().filter(move |k| self.contains(*k))
    }

    pub fn of(warnings: &[ForecastWarning]) -> WarningSet {
        let mut set = WarningSet::default();
        for w in warnings {
            set.insert(w.kind());
        }
        set
    }
}

/// Something a forecast's reader must know, with the numbers involved.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum ForecastWarning {
    /// The negative electrode fell below 0 V against lithium while charging.
    Plating {
        /// Lowest negative potential against Li/Li⁺ over the simulated cycles, V.
        lowest_potential_v: f64,
        /// Lithium plated in total over the horizon (reversible and not), Ah.
        plated_ah: f64,
    },
    ChargeCurrentOverLimit {
        peak_a: f64,
        limit_a: f64,
        /// Step of the duty cycle (1-based) where the peak was reached.
        step: usize,
    },
    DischargeCurrentOverLimit {
        peak_a: f64,
        limit_a: f64,
        step: usize,
    },
    TemperatureOutsideLimits {
        coldest_k: f64,
        hottest_k: f64,
        min_k: f64,
        max_k: f64,
    },
    /// A measured series asked for more than the voltage window allows and was held at the
    /// limit (derated), so the simulated cycle passes less charge than the file.
    HeldAtVoltageLimit {
        /// Longest time per cycle held at the limit, s.
        seconds_per_cycle: f64,
    },
    /// The cell's aging parameters carry no calibration range.
    Uncalibrated,
    /// The horizon runs past the aging data the parameters were calibrated on.
    BeyondCalibration {
        calibrated: CalibrationRange,
        horizon_cycles: f64,
        horizon_days: f64,
        horizon_efc: f64,
        /// Temperatures at which the forecast runs outside the calibrated ones, K.
        temperature_outside_k: Option<f64>,
    },
}

impl ForecastWarning {
    pub fn kind(&self) -> WarningKind {
        match self {
            ForecastWarning::Plating { .. } => WarningKind::Plating,
            ForecastWarning::ChargeCurrentOverLimit { .. } => WarningKind::ChargeCurrentOverLimit,
            ForecastWarning::DischargeCurrentOverLimit { .. } => WarningKind::DischargeCurrentOverLimit,
            ForecastWarning::TemperatureOutsideLimits { .. } => WarningKind::TemperatureOutsideLimits,
            ForecastWarning::HeldAtVoltageLimit { .. } => WarningKind::HeldAtVoltageLimit,
            ForecastWarning::Uncalibrated => WarningKind::Uncalibrated,
            ForecastWarning::BeyondCalibration { .. } => WarningKind::BeyondCalibration,
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Forecast {
    pub points: Vec<FadePoint>,
    pub end_of_life: Vec<EndOfLifePoint>,
    pub stop: StopReason,
    /// Cycles the cycle model actually simulated.
    pub simulated_cycles: usize,
    /// Integrator statistics (cycle jumping): accepted and rejected steps.
    pub accepted_steps: usize,
    pub rejected_steps: usize,
    pub every_cycle: bool,
    pub fresh_capacity_ah: f64,
    pub fresh_resistance_mohm: f64,
    /// The units the slow state is reported in.
    pub scale: ReportScale,
    /// Plating, limits, calibration: typed, with the numbers involved.
    pub warnings: Vec<ForecastWarning>,
    /// The slow state at the last reported point (for conservation checks and restarts).
    pub final_state: Option<AgingState>,
    /// The negative's interface-resistance rise at the last reported point, by cause.
    pub interface_rise: Option<crate::aging::InterfaceRise>,
}

impl Forecast {
    pub fn warning_set(&self) -> WarningSet {
        WarningSet::of(&self.warnings)
    }
}
