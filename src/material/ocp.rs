//! Open-circuit potentials of electrode materials against Li/Li⁺, as functions of the
//! stoichiometry (fraction of lattice sites filled with lithium).
//!
//! The built-in forms are published fits; their coefficients are reproduced from memory of the
//! cited papers (no copy was at hand), so tests check only their shape (monotone, in range), not
//! pointwise values. A cell file may give its own table of points instead.
//!
//! References:
//! - Graphite (MCMB) and cobalt oxide: M. Doyle, J. Newman, A. S. Gozdz, C. N. Schmutz,
//!   J.-M. Tarascon, J. Electrochem. Soc. 143 (1996) 1890; restated in S. Santhanagopalan,
//!   Q. Guo, P. Ramadass, R. E. White, J. Power Sources 156 (2006) 620.
//! - Graphite and iron phosphate: M. Safari, C. Delacourt, J. Electrochem. Soc. 158 (2011) A562.

use super::fast_exp::{exp, tanh};
use serde::Serialize;

/// Stoichiometries are kept this far inside (0, 1) so every form stays finite.
const STOICH_GUARD: f64 = 1e-6;

/// A published open-circuit potential fit, chosen by name in the cell file. Names say the
/// material and the curve's shape; FORMATS.md lists each one's published source.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum BuiltinOcp {
    /// Mesocarbon-microbead graphite as one smooth curve, no staging steps (Doyle et al. 1996).
    GraphiteSmooth,
    /// Graphite with its staging plateaus and steps (Safari & Delacourt 2011).
    GraphiteStaged,
    /// Lithium cobalt oxide, a layered oxide, sloping (Doyle et al. 1996).
    CobaltOxide,
    /// Lithium iron phosphate: a flat two-phase plateau with steep ends (Safari & Delacourt 2011).
    IronPhosphateFlat,
}

impl BuiltinOcp {
    /// Every built-in form with the name the cell file uses for it.
    pub const ALL: [(&'static str, BuiltinOcp); 4] = [
        ("graphite-smooth", BuiltinOcp::GraphiteSmooth),
        ("graphite-staged", BuiltinOcp::GraphiteStaged),
        ("cobalt-oxide", BuiltinOcp::CobaltOxide),
        ("iron-phosphate-flat", BuiltinOcp::IronPhosphateFlat),
    ];

    /// Looks a form up by its cell-file name.
    pub fn from_name(name: &str) -> Option<BuiltinOcp> {
        Self::ALL.iter().find(|(n, _)| *n == name).map(|(_, f)| *f)
    }

    /// The cell-file name of this form.
    pub fn name(self) -> &'static str {
        Self::ALL.iter().find(|(_, f)| *f == self).map(|(n, _)| *n).unwrap_or("?")
    }

    /// Potential against Li/Li⁺ in volts at stoichiometry `x`.
    pub fn potential(self, x: f64) -> f64 {
        let x = x.clamp(STOICH_GUARD, 1.0 - STOICH_GUARD);
        match self {
            BuiltinOcp::GraphiteSmooth => {
                0.7222 + 0.1387 * x + 0.029 * x.sqrt() - 0.0172 / x
                    + 0.0019 / (x * x.sqrt())
                    + 0.2808 * exp(0.9 - 15.0 * x)
                    - 0.7984 * exp(0.4465 * x - 0.4108)
            }
            BuiltinOcp::GraphiteStaged => {
                0.6379 + 0.5416 * exp(-305.5309 * x) + 0.044 * tanh(-(x - 0.1958) / 0.1088)
                    - 0.1978 * tanh((x - 1.0571) / 0.0854)
                    - 0.6875 * tanh((x + 0.0117) / 0.0529)
                    - 0.0175 * tanh((x - 0.5692) / 0.0875)
            }
            BuiltinOcp::CobaltOxide => {
                // The rational fit has a pole near y ≈ 0.43, below the range it was fitted on;
                // continue it linearly from y = 0.48 so it stays finite and falling.
                if x < COBALT_OXIDE_FIT_MIN {
                    let h = 1e-6;
                    let at = cobalt_oxide_fit(COBALT_OXIDE_FIT_MIN);
                    let slope = (cobalt_oxide_fit(COBALT_OXIDE_FIT_MIN + h) - at) / h;
                    return at + slope * (x - COBALT_OXIDE_FIT_MIN);
                }
                cobalt_oxide_fit(x)
            }
            BuiltinOcp::IronPhosphateFlat => {
                let v = 1.0 - x;
                3.4323 - 0.8428 * (-80.2493 * v.powf(1.3198)).exp() - 3.2474e-6 * (20.2645 * v.powf(3.8003)).exp()
                    + 3.2482e-6 * (20.2646 * v.powf(3.7995)).exp()
            }
        }
    }
}

/// Lowest stoichiometry at which the cobalt-oxide fit is used as published.
const COBALT_OXIDE_FIT_MIN: f64 = 0.48;

/// The published cobalt-oxide rational fit (Doyle et al. 1996).
fn cobalt_oxide_fit(x: f64) -> f64 {
    let y2 = x * x;
    let y4 = y2 * y2;
    let y6 = y4 * y2;
    let y8 = y4 * y4;
    let y10 = y8 * y2;
    (-4.656 + 88.669 * y2 - 401.119 * y4 + 342.909 * y6 - 462.471 * y8 + 433.434 * y10)
        / (-1.0 + 18.933 * y2 - 79.532 * y4 + 37.311 * y6 - 73.083 * y8 + 95.96 * y10)
}

/// An electrode's open-circuit potential: a published form or a table from the cell file.
#[derive(Debug, Clone, PartialEq)]
pub enum OpenCircuit {
    Builtin(BuiltinOcp),
    /// Points (stoichiometry strictly increasing, potential in volts), linearly interpolated and
    /// held flat beyond the ends.
    Table {
        stoich: Vec<f64>,
        potential_v: Vec<f64>,
    },
}

impl OpenCircuit {
    /// Potential against Li/Li⁺ in volts at stoichiometry `x`.
    pub fn potential(&self, x: f64) -> f64 {
        match self {
            OpenCircuit::Builtin(form) => form.potential(x),
            OpenCircuit::Table { stoich, potential_v } => interpolate(stoich, potential_v, x),
        }
    }

    /// dU/dx by a central difference; used by the constant-voltage and balancing solvers.
    pub fn slope(&self, x: f64) -> f64 {
        let h = 1e-6;
        (self.potential(x + h) - self.potential(x - h)) / (2.0 * h)
    }

    /// A short human description for `check`.
    pub fn describe(&self) -> String {
        match self {
            OpenCircuit::Builtin(form) => form.name().to_string(),
            OpenCircuit::Table { stoich, .. } => format!("table of {} points", stoich.len()),
        }
    }
}

fn interpolate(xs: &[f64], ys: &[f64], x: f64) -> f64 {
    if x <= xs[0] {
        return ys[0];
    }
    let last = xs.len() - 1;
    if x >= xs[last] {
        return ys[last];
    }
    let upper = xs.partition_point(|&p| p <= x);
    let (x0, x1) = (xs[upper - 1], xs[upper]);
    let w = (x - x0) / (x1 - x0);
    ys[upper - 1] * (1.0 - w) + ys[upper] * w
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Shape checks only (the coefficients are from memory, see module docs): the potential
    /// falls as lithium fills the host, common practice for intercalation materials, and stays
    /// within the ranges the cited papers plot.
    #[test]
    fn builtin_forms_fall_with_stoichiometry_and_stay_in_range() {
        let cases = [
            (BuiltinOcp::GraphiteSmooth, 0.05, 0.95, 0.0, 1.0),
            (BuiltinOcp::GraphiteStaged, 0.02, 0.95, 0.0, 1.0),
            (BuiltinOcp::CobaltOxide, 0.3, 0.98, 3.5, 5.5),
            (BuiltinOcp::IronPhosphateFlat, 0.02, 0.98, 2.8, 3.8),
        ];
        for (form, lo, hi, vmin, vmax) in cases {
            let mut previous = f64::INFINITY;
            for i in 0..=200 {
                let x = lo + (hi - lo) * i as f64 / 200.0;
                let u = form.potential(x);
                assert!(u <= previous + 1e-9, "{form:?} rises at x={x}");
                assert!(u > vmin && u < vmax, "{form:?} at x={x}: {u} V");
                previous = u;
            }
        }
    }

    #[test]
    fn table_interpolates_and_holds_ends() {
        let ocp = OpenCircuit::Table { stoich: vec![0.0, 0.5, 1.0], potential_v: vec![1.0, 0.5, 0.1] };
        assert!((ocp.potential(0.25) - 0.75).abs() < 1e-12);
        assert_eq!(ocp.potential(-1.0), 1.0);
        assert_eq!(ocp.potential(2.0), 0.1);
    }

    #[test]
    fn names_round_trip() {
        for (name, form) in BuiltinOcp::ALL {
            assert_eq!(BuiltinOcp::from_name(name), Some(form));
            assert_eq!(form.name(), name);
        }
    }
}
