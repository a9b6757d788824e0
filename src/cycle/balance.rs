//! Electrode balancing: stoichiometries at the ends of the voltage window at equilibrium.
//! (skeleton)
use super::{Cell, Health};

/// Low-rate (equilibrium) state of the cell at the two ends of its voltage window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Balance {
    pub capacity_coulomb: f64,
    pub energy_j: f64,
    pub neg_stoich_full: f64,
    pub neg_stoich_empty: f64,
    pub pos_stoich_full: f64,
    pub pos_stoich_empty: f64,
    /// Q_neg / Q_pos of the active material present.
    pub np_ratio: f64,
}

pub fn balance_cell(_cell: &Cell, _health: &Health) -> Option<Balance> {
    todo!()
}
