//! The cycle model: one duty cycle of a cell at a given state of health, in seconds of
//! simulated time.
//!
//! Single particle per electrode ([`diffusion`]), Butler–Volmer kinetics ([`kinetics`]),
//! a lumped ohmic and film resistance, a lumped thermal balance with Bernardi's heat
//! ([`thermal`]) and diffusion-induced stress ([`stress`]) make the cell's response over one
//! time step ([`response`]); protocol stepping with accurate step ends runs a duty cycle
//! through it ([`stepper`]). [`balance`] finds the electrode stoichiometries at the voltage
//! window, which gives the low-rate capacity.

pub mod balance;
pub mod cell;
pub mod diffusion;
pub mod kinetics;
pub mod pack;
pub mod protocol;
pub mod record;
pub mod response;
pub mod stepper;
pub mod stress;
pub mod thermal;

pub use balance::{balance_cell, Balance};
pub use cell::{Cell, Electrode};
pub use protocol::{Drive, DutyCycle, Scenario, SeriesSignal, Step, StepEnd, StepProfile, TimeSeries};
pub use record::{CycleRecord, EndReason, RampStart, StepSummary, StressHistory, TracePoint};
pub use response::{CellModel, CellState, Health};
pub use stepper::{
    simulate_cycle, simulate_periodic_cycle, simulate_periodic_with, CycleError, CycleRun, SolverSettings,
    MAX_CYCLE_DURATION_S, MAX_STEP_DURATION_S,
};
