//! The cycle model: one duty cycle of a cell at a given state of health, in seconds of
//! simulated time.
//!
//! Single particle per electrode ([`diffusion`]), Butler–Volmer kinetics ([`kinetics`]),
//! a lumped ohmic and film resistance, a lumped thermal balance with Bernardi's heat
//! ([`thermal`]), diffusion-induced stress ([`stress`]) and protocol stepping with accurate
//! step ends ([`simulate`]). [`balance`] finds the electrode stoichiometries at the voltage
//! window, which gives the low-rate capacity.

pub mod balance;
pub mod cell;
pub mod diffusion;
pub mod kinetics;
pub mod protocol;
pub mod record;
pub mod simulate;
pub mod stress;
pub mod thermal;

pub use balance::{balance_cell, Balance};
pub use cell::{Cell, Electrode};
pub use protocol::{Drive, DutyCycle, Scenario, SeriesSignal, Step, StepEnd, StepProfile, TimeSeries};
pub use record::{CycleRecord, EndReason, StepSummary, TracePoint};
pub use simulate::{
    simulate_cycle, simulate_periodic_cycle, simulate_periodic_with, CellModel, CellState, CycleError, CycleRun,
    Health, SolverSettings,
};
