//! The aging model: a slow state that changes a little each cycle, and one file per
//! mechanism that turns the record of one simulated cycle (and the idle time after it) into
//! rates of change of that state per cycle.
//!
//! Adding a mechanism: one new file with a type implementing [`Mechanism`], its parameters in
//! [`params`], and one line in [`mechanisms_for`].

pub mod active_loss;
pub mod crack_film;
pub mod cracking;
pub mod film;
pub mod film_breathing;
pub mod params;
pub mod plating;
pub mod state;

pub use params::{
    ActiveLossParams, AgingParams, CalibrationRange, CrackingParams, FilmBreathingParams, FilmParams, PlatingParams,
};
pub use state::{
    crack_length_m, film_resistance_ohm, health_of, negative_surfaces, AgingState, Component, ComponentSpec, Measure,
    PlotGroup, Surfaces, COMPONENTS, COMPONENT_COUNT,
};

use crate::cycle::{Cell, CycleRecord};

/// Which electrode a per-electrode mechanism acts on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    Negative,
    Positive,
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
    /// Cyclable lithium of the fresh cell, C (the unit of every lithium fraction).
    pub lithium_fresh_coulomb: f64,
}

/// One aging law. It adds its rates of change of the slow state, per cycle, to `rate`.
pub trait Mechanism: Send + Sync {
    fn name(&self) -> &'static str;
    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState);
}

/// The mechanisms a cell's file switches on, in a fixed order.
pub fn mechanisms_for(a: &AgingParams) -> Vec<Box<dyn Mechanism>> {
    let mut list: Vec<Box<dyn Mechanism>> = Vec::new();
    if let Some(p) = a.film {
        list.push(Box::new(film::FilmOnOriginalSurface { params: p }));
        if a.neg_cracking.is_some() {
            list.push(Box::new(crack_film::FilmOnCrackSurface { film: p }));
        }
        if let Some(b) = a.film_breathing {
            list.push(Box::new(film_breathing::FilmBreathing { params: b, film: p }));
        }
    }
    if let Some(p) = a.neg_cracking {
        list.push(Box::new(cracking::Cracking { side: Side::Negative, params: p }));
    }
    if let Some(p) = a.pos_cracking {
        list.push(Box::new(cracking::Cracking { side: Side::Positive, params: p }));
    }
    if let Some(p) = a.plating {
        list.push(Box::new(plating::Plating { params: p }));
    }
    if let Some(p) = a.neg_active_loss {
        list.push(Box::new(active_loss::ActiveLoss { side: Side::Negative, params: p }));
    }
    if let Some(p) = a.pos_active_loss {
        list.push(Box::new(active_loss::ActiveLoss { side: Side::Positive, params: p }));
    }
    list
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
