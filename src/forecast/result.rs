//! What a forecast returns: the fade curve at reported points, end of life, and diagnostics.

use serde::Serialize;

/// One reported point of the fade curve. Lithium losses are fractions of the fresh cell's
/// cyclable lithium; capacities are at reference conditions unless said otherwise.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct FadePoint {
    pub cycle: f64,
    pub day: f64,
    /// Equivalent full cycles: discharge throughput over the fresh balanced capacity.
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
    pub lithium_film_original_pct: f64,
    pub lithium_film_crack_pct: f64,
    pub lithium_plating_pct: f64,
    /// Lithium held in active material that was lost (cut off from the electrode), %.
    pub lithium_stranded_pct: f64,
    pub neg_active_lost_pct: f64,
    pub pos_active_lost_pct: f64,
    pub film_original_nm: f64,
    pub film_crack_nm: f64,
    pub neg_crack_nm: f64,
    pub pos_crack_nm: f64,
    /// Lithium plated in total (reversible and irreversible), % of the fresh inventory.
    pub plated_total_pct: f64,
    /// Peak cell temperature of the last simulated cycle at or before this point, °C.
    pub peak_temperature_c: f64,
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
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum StopReason {
    Horizon,
    /// The cell has no charge left to cycle in its voltage window (far past any end of life).
    Exhausted {
        cycle: f64,
    },
    /// The cycle model or the integrator failed; the detail says where and why.
    Failed {
        cycle: f64,
        detail: String,
    },
}

/// Share of the capacity lost at the horizon attributed to each mechanism, % of fresh
/// lithium (loss of lithium inventory) or of each electrode (loss of active material).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct LossByMechanism {
    pub film_original_pct: f64,
    pub film_crack_pct: f64,
    pub plating_pct: f64,
    pub stranded_pct: f64,
    pub neg_active_pct: f64,
    pub pos_active_pct: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Forecast {
    pub points: Vec<FadePoint>,
    pub end_of_life: Vec<EndOfLifePoint>,
    pub stop: StopReason,
    pub loss_at_horizon: LossByMechanism,
    /// Cycles the cycle model actually simulated.
    pub simulated_cycles: usize,
    /// Integrator statistics (cycle jumping): accepted and rejected steps.
    pub accepted_steps: usize,
    pub rejected_steps: usize,
    pub every_cycle: bool,
    pub fresh_capacity_ah: f64,
    pub fresh_resistance_mohm: f64,
    /// Plain-language warnings (plating, limits, extrapolation).
    pub warnings: Vec<String>,
    /// The slow state at the last reported point (for conservation checks and restarts).
    #[serde(skip)]
    pub final_state: Option<crate::aging::AgingState>,
}
