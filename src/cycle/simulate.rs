//! Protocol stepping: runs a duty cycle through the particle, kinetic and thermal models.
//! (skeleton: implementation in progress)

use super::{CycleRecord, Scenario};
use thiserror::Error;

/// The slow (aging) state as the cycle model sees it. `Health::fresh` is beginning of life.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Health {
    /// Cyclable lithium held in both electrodes, as charge, C.
    pub lithium_inventory_coulomb: f64,
    /// Fraction of each electrode's active material still connected, 0–1.
    pub neg_active_scale: f64,
    pub pos_active_scale: f64,
    /// Series resistance added by aging (film growth, contact loss), Ω.
    pub added_resistance_ohm: f64,
}

impl Health {
    pub fn fresh(cell: &super::Cell) -> Health {
        Health {
            lithium_inventory_coulomb: cell.lithium_inventory_coulomb(),
            neg_active_scale: 1.0,
            pos_active_scale: 1.0,
            added_resistance_ohm: 0.0,
        }
    }
}

/// Step-size and tolerance settings; the defaults suit cycle-life work.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolverSettings {
    /// Largest change of state of charge in one time step.
    pub max_soc_step: f64,
    /// Largest change of terminal voltage in one time step, V.
    pub max_voltage_step_v: f64,
    /// Longest time step under load and at rest, s.
    pub max_dt_load_s: f64,
    pub max_dt_rest_s: f64,
    /// Tolerance on a located voltage end, V.
    pub voltage_end_tolerance_v: f64,
    /// A step running longer than this never ends, s.
    pub max_step_duration_s: f64,
    /// Warm-up cycles allowed to reach the periodic state, and the stoichiometry change that
    /// counts as periodic.
    pub max_warmup_cycles: usize,
    pub periodic_tolerance: f64,
}

impl Default for SolverSettings {
    fn default() -> Self {
        SolverSettings {
            max_soc_step: 0.01,
            max_voltage_step_v: 0.01,
            max_dt_load_s: 120.0,
            max_dt_rest_s: 600.0,
            voltage_end_tolerance_v: 2e-4,
            max_step_duration_s: 7.0 * 86_400.0,
            max_warmup_cycles: 8,
            periodic_tolerance: 1e-4,
        }
    }
}

/// Why a cycle could not be simulated; carries where it stopped.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum CycleError {
    #[error("step {step} ({label}) at t = {time_s:.1} s: {detail}")]
    Failed { step: usize, label: String, time_s: f64, detail: String },
}

/// Simulates the scenario's duty cycle once at the given health, starting from the periodic
/// state (the state the previous identical cycle ended in), and returns the record.
pub fn simulate_periodic_cycle(
    _scenario: &Scenario,
    _health: &Health,
    _settings: &SolverSettings,
) -> Result<CycleRecord, CycleError> {
    todo!()
}

/// Placeholder for the single-pass API (implementation in progress).
pub fn simulate_cycle() {}

#[derive(Debug, Clone, PartialEq)]
pub struct CellState;
