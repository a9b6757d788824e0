//! Electrode balancing: where each electrode sits at the two ends of the voltage window at
//! equilibrium, given the lithium inventory and the active material left in each electrode.
//!
//! Lithium is conserved between the electrodes, x·Q_neg + y·Q_pos = Q_Li, and the end states
//! solve U_pos(y) − U_neg(x) = V_max and V_min. Reference: C. R. Birkl, M. R. Roberts,
//! E. McTurk, P. G. Bruce, D. A. Howey, J. Power Sources 341 (2017) 373; M. Dubarry,
//! C. Truchot, B. Y. Liaw, J. Power Sources 219 (2012) 204.

use super::{Cell, Health};

/// Low-rate (equilibrium) state of the cell at the two ends of its voltage window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Balance {
    /// Charge between the window ends at equilibrium, C.
    pub capacity_coulomb: f64,
    pub neg_stoich_full: f64,
    pub neg_stoich_empty: f64,
    pub pos_stoich_full: f64,
    pub pos_stoich_empty: f64,
    /// Q_neg / Q_pos of the active material present.
    pub np_ratio: f64,
    pub neg_capacity_coulomb: f64,
    pub pos_capacity_coulomb: f64,
}

/// Balances the cell at reference temperature. None when no lithium can be cycled in the
/// window (the inventory or an electrode is gone).
pub fn balance_cell(cell: &Cell, health: &Health) -> Option<Balance> {
    let q_neg = cell.negative.capacity_coulomb() * health.neg_active_scale;
    let q_pos = cell.positive.capacity_coulomb() * health.pos_active_scale;
    let lithium = health.lithium_inventory_coulomb;
    if q_neg <= 0.0 || q_pos <= 0.0 || lithium <= 0.0 {
        return None;
    }
    let pos_stoich = |x: f64| (lithium - x * q_neg) / q_pos;
    let ocv = |x: f64| cell.positive.ocp.potential(pos_stoich(x)) - cell.negative.ocp.potential(x);
    // Feasible negative stoichiometries keep both electrodes within 0–1.
    let guard = 1e-6;
    let x_lo = ((lithium - q_pos) / q_neg).max(0.0) + guard;
    let x_hi = (lithium / q_neg).min(1.0) - guard;
    if x_hi <= x_lo {
        return None;
    }
    // OCV rises with x (charging fills the negative). Scan upward for the first crossing of
    // each window end, so a fit misbehaving beyond the window cannot mislead the search; an
    // end not reached inside the feasible range is held at its bound.
    const SCAN: usize = 200;
    let grid = |i: usize| x_lo + (x_hi - x_lo) * i as f64 / SCAN as f64;
    let bisect = |mut a: f64, mut b: f64, target: f64| {
        for _ in 0..60 {
            let m = 0.5 * (a + b);
            if ocv(m) < target {
                a = m;
            } else {
                b = m;
            }
        }
        0.5 * (a + b)
    };
    let top = (1..=SCAN).find(|&i| ocv(grid(i)) >= cell.voltage_max_v);
    let x_full = match top {
        Some(i) if ocv(grid(i - 1)) < cell.voltage_max_v => bisect(grid(i - 1), grid(i), cell.voltage_max_v),
        Some(_) => x_lo,
        None => x_hi,
    };
    let top_index = top.unwrap_or(SCAN);
    let bottom = (0..top_index).rev().find(|&i| ocv(grid(i)) <= cell.voltage_min_v);
    let x_empty = match bottom {
        Some(i) => bisect(grid(i), grid(i + 1), cell.voltage_min_v).min(x_full),
        None => x_lo,
    };
    Some(Balance {
        capacity_coulomb: (x_full - x_empty) * q_neg,
        neg_stoich_full: x_full,
        neg_stoich_empty: x_empty,
        pos_stoich_full: pos_stoich(x_full),
        pos_stoich_empty: pos_stoich(x_empty),
        np_ratio: q_neg / q_pos,
        neg_capacity_coulomb: q_neg,
        pos_capacity_coulomb: q_pos,
    })
}

impl Balance {
    /// Energy between the window ends at equilibrium, J: Q_neg ∫ OCV dx over the window
    /// (Simpson's rule). Apart from the balance itself because only reports read it, and it
    /// costs more than finding the window.
    pub fn energy_j(&self, cell: &Cell) -> f64 {
        let lithium =
            self.neg_stoich_full * self.neg_capacity_coulomb + self.pos_stoich_full * self.pos_capacity_coulomb;
        let pos_stoich = |x: f64| (lithium - x * self.neg_capacity_coulomb) / self.pos_capacity_coulomb;
        let ocv = |x: f64| cell.positive.ocp.potential(pos_stoich(x)) - cell.negative.ocp.potential(x);
        let intervals = 400;
        let h = (self.neg_stoich_full - self.neg_stoich_empty) / intervals as f64;
        let mut sum = ocv(self.neg_stoich_empty) + ocv(self.neg_stoich_full);
        for i in 1..intervals {
            sum += ocv(self.neg_stoich_empty + i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 };
        }
        self.neg_capacity_coulomb * sum * h / 3.0
    }

    /// State of charge (0–1) of a given mean negative stoichiometry.
    pub fn soc_of_neg_stoich(&self, x: f64) -> f64 {
        (x - self.neg_stoich_empty) / (self.neg_stoich_full - self.neg_stoich_empty)
    }

    /// Mean stoichiometries of both electrodes at a state of charge at equilibrium.
    pub fn stoich_at_soc(&self, soc: f64, health: &Health) -> (f64, f64) {
        let x = self.neg_stoich_empty + soc * (self.neg_stoich_full - self.neg_stoich_empty);
        let y = (health.lithium_inventory_coulomb - x * self.neg_capacity_coulomb) / self.pos_capacity_coulomb;
        (x, y)
    }
}
