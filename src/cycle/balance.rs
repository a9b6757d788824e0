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

/// Points of the scan for the window ends across the feasible stoichiometries.
const SCAN: usize = 200;
/// The crossing of a window end is located to this, in negative stoichiometry (a billionth of
/// the charge): far below anything reported, and reached in a handful of evaluations.
const CROSSING_TOLERANCE: f64 = 1e-12;

/// The stoichiometry in [a, b] where `ocv` meets `target`, given ocv(a) < target ≤ ocv(b)
/// (or ≥ for the lower end): Illinois false position (regula falsi that halves the retained
/// end's value when the same end is kept twice), stopping once the bracket is narrower than
/// [`CROSSING_TOLERANCE`] or an iterate lands on the target.
fn locate_crossing(ocv: &impl Fn(f64) -> f64, (mut a, fa): (f64, f64), (mut b, fb): (f64, f64), target: f64) -> f64 {
    let (mut fa, mut fb) = (fa - target, fb - target);
    let mut kept = 0;
    for _ in 0..100 {
        if b - a <= CROSSING_TOLERANCE || fa == fb {
            break;
        }
        let m = (a * fb - b * fa) / (fb - fa);
        // An iterate at (or past) an end by rounding falls back to the middle.
        let m = if m <= a || m >= b { 0.5 * (a + b) } else { m };
        let fm = ocv(m) - target;
        if fm == 0.0 {
            return m;
        }
        if (fm < 0.0) == (fa < 0.0) {
            a = m;
            fa = fm;
            if kept == 1 {
                fb *= 0.5;
            }
            kept = 1;
        } else {
            b = m;
            fb = fm;
            if kept == -1 {
                fa *= 0.5;
            }
            kept = -1;
        }
    }
    if fa.abs() < fb.abs() {
        a
    } else {
        b
    }
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
    // end not reached inside the feasible range is held at its bound. The grid's values are
    // kept, so the downward scan for the lower end evaluates nothing again.
    let grid = |i: usize| x_lo + (x_hi - x_lo) * i as f64 / SCAN as f64;
    let mut values = [f64::NAN; SCAN + 1];
    let mut value = |i: usize| {
        if values[i].is_nan() {
            values[i] = ocv(grid(i));
        }
        values[i]
    };
    let top = (1..=SCAN).find(|&i| value(i) >= cell.voltage_max_v);
    let x_full = match top {
        Some(i) if value(i - 1) < cell.voltage_max_v => {
            locate_crossing(&ocv, (grid(i - 1), value(i - 1)), (grid(i), value(i)), cell.voltage_max_v)
        }
        Some(_) => x_lo,
        None => x_hi,
    };
    let top_index = top.unwrap_or(SCAN);
    let bottom = (0..top_index).rev().find(|&i| value(i) <= cell.voltage_min_v);
    let x_empty = match bottom {
        Some(i) => {
            locate_crossing(&ocv, (grid(i), value(i)), (grid(i + 1), value(i + 1)), cell.voltage_min_v).min(x_full)
        }
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Bisection to the last bit, the search the false position replaced.
    fn bisected(f: impl Fn(f64) -> f64, mut a: f64, mut b: f64, target: f64) -> f64 {
        for _ in 0..200 {
            let m = 0.5 * (a + b);
            if f(m) < target {
                a = m;
            } else {
                b = m;
            }
        }
        0.5 * (a + b)
    }

    #[test]
    fn crossings_match_bisection_on_smooth_and_staged_curves() {
        // A cubic, and a staged curve as steep as graphite's plateaus (tanh steps 0.02 wide).
        let cubic = |x: f64| x * x * x;
        let staged = |x: f64| 0.1 + 0.2 * ((x - 0.5) / 0.02).tanh() + 0.05 * ((x - 0.2) / 0.01).tanh();
        for (f, a, b, target) in
            [(&cubic as &dyn Fn(f64) -> f64, 0.0, 1.0, 0.125), (&staged, 0.3, 0.7, 0.2), (&staged, 0.0, 0.6, 0.0)]
        {
            let located = locate_crossing(&f, (a, f(a)), (b, f(b)), target);
            let reference = bisected(f, a, b, target);
            assert!((located - reference).abs() < 10.0 * CROSSING_TOLERANCE, "{located} vs {reference}");
        }
    }
}
