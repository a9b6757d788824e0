//! The aging model: a slow state that changes a little each cycle, and one file per
//! mechanism that turns the record of one simulated cycle (and the idle time after it) into
//! rates of change of that state per cycle.
//!
//! Adding a mechanism (DEVELOPERS.md has the recipe): one new file declaring its parameters,
//! the cell-file table they are read from, its [`Mechanism`] and its registration; one line in
//! [`REGISTRY`] and one field in [`AgingParams`]; a row in [`state::COMPONENTS`] if it has
//! state of its own.

pub mod active_loss;
pub mod crack_film;
pub mod cracking;
pub mod electrolyte_oxidation;
pub mod film;
pub mod film_breathing;
pub mod fracture;
pub mod params;
pub mod plating;
pub mod rainflow;
pub mod state;

pub use active_loss::ActiveLossParams;
pub use cracking::CrackingParams;
pub use electrolyte_oxidation::ElectrolyteOxidationParams;
pub use film::FilmParams;
pub use film_breathing::FilmBreathingParams;
pub use params::{CalibrationRange, MechanismTable, TableReader};
pub use plating::PlatingParams;
pub use state::{
    crack_length_m, film_resistance_ohm, health_of, interface_rise, negative_surfaces, AgingState, BinFilm, Component,
    ComponentSpec, InterfaceRise, Measure, PlotGroup, Surfaces, COMPONENTS, COMPONENT_COUNT, CRACK_FILM_BINS,
    STATE_LEN,
};

/// Every aging law of a cell, with its parameters, stored once; `None` means switched off.
/// One field per registered mechanism table and electrode.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AgingParams {
    pub film: Option<FilmParams>,
    pub film_breathing: Option<FilmBreathingParams>,
    pub neg_cracking: Option<CrackingParams>,
    pub pos_cracking: Option<CrackingParams>,
    pub plating: Option<PlatingParams>,
    pub neg_active_loss: Option<ActiveLossParams>,
    pub pos_active_loss: Option<ActiveLossParams>,
    pub electrolyte_oxidation: Option<ElectrolyteOxidationParams>,
}

/// One mechanism as registered: the cell-file table its parameters come from (None for a law
/// that follows from others), the electrodes it may sit under, and the laws it puts to work
/// for a cell's parameters. The table itself is declared and read in the mechanism's file
/// (its `…Section` type).
#[derive(Clone, Copy)]
pub struct Registration {
    /// Table name under `[negative.…]` / `[positive.…]`.
    pub table: Option<&'static str>,
    /// What it models, in a few words (for messages about misplaced tables).
    pub models: &'static str,
    pub sides: &'static [Side],
    /// The laws this registration switches on for a cell's parameters, in order.
    pub laws: fn(&AgingParams) -> Vec<Box<dyn Mechanism>>,
}

/// Every mechanism, in the order their rates are added (which fixes the floating-point sums, so
/// keep it: appending is safe).
pub const REGISTRY: &[Registration] = &[
    film::REGISTRATION,
    crack_film::REGISTRATION,
    film_breathing::REGISTRATION,
    cracking::REGISTRATION,
    plating::REGISTRATION,
    active_loss::REGISTRATION,
    electrolyte_oxidation::REGISTRATION,
];

/// The registration of a cell-file table, by its name.
pub fn registration_of(table: &str) -> Option<&'static Registration> {
    REGISTRY.iter().find(|r| r.table == Some(table))
}

use crate::cycle::{Cell, CycleRecord};

/// Which electrode a per-electrode mechanism acts on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    Negative,
    Positive,
}

impl Side {
    /// The electrode's table in a cell file (`[negative]`, `[positive]`).
    pub fn key(self) -> &'static str {
        match self {
            Side::Negative => "negative",
            Side::Positive => "positive",
        }
    }
}

/// What a mechanism may read to compute its rates for one cycle.
#[derive(Debug, Clone, Copy)]
pub struct AgingContext<'a> {
    pub cell: &'a Cell,
    /// The cell's aging laws.
    pub aging: &'a AgingParams,
    /// The simulated duty cycle; None for a storage-only day.
    pub record: Option<&'a CycleRecord>,
    /// Idle time at rest after the cycle, s.
    pub idle_s: f64,
    pub idle_temperature_k: f64,
    /// Negative electrode potential against Li/Li⁺ while idle, V.
    pub idle_neg_potential_v: f64,
    /// Positive electrode potential against Li/Li⁺ while idle, V, and its stoichiometry.
    pub idle_pos_potential_v: f64,
    pub idle_pos_stoich: f64,
    /// Cyclable lithium of the fresh cell, C (the unit of every lithium fraction).
    pub lithium_fresh_coulomb: f64,
}

/// One aging law. It adds its rates of change of the slow state, per cycle, to `rate`.
pub trait Mechanism: Send + Sync {
    fn name(&self) -> &'static str;
    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState);
}

/// The mechanisms a cell's parameters switch on, in registry order.
pub fn mechanisms_for(a: &AgingParams) -> Vec<Box<dyn Mechanism>> {
    REGISTRY.iter().flat_map(|r| (r.laws)(a)).collect()
}

/// ∫ f dt over a trace by the trapezoidal rule (each point's dt is the step that ended there).
pub fn trapezoid(trace: &[crate::cycle::TracePoint], f: impl Fn(&crate::cycle::TracePoint) -> f64) -> f64 {
    let mut previous = match trace.first() {
        Some(p) => f(p),
        None => return 0.0,
    };
    let mut sum = 0.0;
    for p in &trace[1..] {
        let value = f(p);
        sum += 0.5 * (previous + value) * p.dt_s;
        previous = value;
    }
    sum
}

/// Time-weighted mean temperature of a cycle, K.
pub fn mean_temperature_k(record: &CycleRecord) -> f64 {
    let time: f64 = record.trace.iter().map(|p| p.dt_s).sum();
    if time <= 0.0 {
        return record.trace.first().map_or(f64::NAN, |p| p.temperature_k);
    }
    trapezoid(&record.trace, |p| p.temperature_k) / time
}
