//! Lithium plating on the negative electrode during charge.
//!
//! Where the negative surface potential against Li/Li⁺ falls below zero while charging,
//! lithium deposits at the Butler–Volmer rate i = i₀(T)[exp(−α F φ/RT) − exp((1−α) F φ/RT)]
//! (φ < 0), over the negative's whole surface, never more than the applied current. A fixed
//! fraction is lost for good (isolated "dead" lithium); the rest strips back.
//!
//! References: P. Arora, M. Doyle, R. E. White, J. Electrochem. Soc. 146 (1999) 3543 (the
//! plating criterion, from memory); M. Petzl, M. A. Danzer, J. Power Sources 254 (2014) 80
//! (reversible and irreversible plated lithium).

use super::{negative_surfaces, AgingContext, AgingState, Component, Mechanism, Registration, Side, TableReader};
use crate::cycle::TracePoint;
use crate::material::arrhenius_factor;
use crate::material::constants::{FARADAY, GAS_CONSTANT};

/// Plating current density at a negative potential against lithium, A/m² (0 when φ ≥ 0).
pub fn plating_current_density(p: &PlatingParams, potential_v: f64, temperature_k: f64) -> f64 {
    if potential_v >= 0.0 {
        return 0.0;
    }
    let f = FARADAY / (GAS_CONSTANT * temperature_k);
    let i0 = p.exchange_current_a_m2 * arrhenius_factor(p.activation_j_mol, temperature_k, p.reference_temperature_k);
    i0 * ((-p.transfer_coefficient * f * potential_v).exp() - ((1.0 - p.transfer_coefficient) * f * potential_v).exp())
}

/// Charge plated over a trace, C: only while charging (trapezoidal rule).
pub fn plated_charge(p: &PlatingParams, trace: &[TracePoint], area_m2: f64) -> f64 {
    super::trapezoid(trace, |t| {
        if t.current_a < 0.0 {
            (plating_current_density(p, t.neg_potential_v, t.temperature_k) * area_m2).min(-t.current_a)
        } else {
            0.0
        }
    })
}

/// Lithium plating on the negative electrode (Butler–Volmer against Li/Li⁺).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlatingParams {
    /// Exchange current density of lithium deposition, A/m².
    pub exchange_current_a_m2: f64,
    pub activation_j_mol: f64,
    pub transfer_coefficient: f64,
    /// Fraction of plated lithium lost for good (the rest strips back).
    pub irreversible_fraction: f64,
    pub reference_temperature_k: f64,
}

/// `[negative.plating]` as written.
#[derive(Debug, Default, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlatingSection {
    #[serde(default = "super::params::switched_on")]
    pub enabled: bool,
    exchange_current_a_m2: Option<f64>,
    activation_kj_mol: Option<f64>,
    transfer_coefficient: Option<f64>,
    irreversible_fraction: Option<f64>,
    reference_temperature_c: Option<f64>,
}

impl PlatingSection {
    /// The parameters in SI units, each value checked against its rule.
    pub fn read(&self, rules: &mut dyn TableReader) -> PlatingParams {
        let irreversible_fraction = rules.fraction("irreversible_fraction", self.irreversible_fraction);
        PlatingParams {
            exchange_current_a_m2: rules.positive("exchange_current_a_m2", self.exchange_current_a_m2),
            activation_j_mol: rules.activation_j_mol("activation_kj_mol", self.activation_kj_mol),
            transfer_coefficient: rules.transfer_coefficient(self.transfer_coefficient),
            irreversible_fraction,
            reference_temperature_k: rules.reference_temperature_k(self.reference_temperature_c),
        }
    }
}

impl super::params::MechanismTable for PlatingSection {
    fn enabled(&self) -> bool {
        self.enabled
    }

    fn store(&self, rules: &mut dyn TableReader, side: Side, aging: &mut super::AgingParams) {
        let _ = side;
        aging.plating = Some(self.read(rules));
    }
}

/// `[negative.plating]`.
pub const REGISTRATION: Registration = Registration {
    table: Some("plating"),
    models: "lithium plating",
    sides: &[Side::Negative],
    laws: |a| a.plating.map(|_| Box::new(Plating) as Box<dyn Mechanism>).into_iter().collect(),
};

#[derive(Debug, Clone, Copy)]
pub struct Plating;

impl Mechanism for Plating {
    fn name(&self) -> &'static str {
        "lithium plating"
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let (Some(record), Some(params)) = (context.record, &context.aging.plating) else { return };
        let s = negative_surfaces(context.cell, context.aging, state);
        let plated = plated_charge(params, &record.trace, s.original_m2 + s.crack_m2()) / context.lithium_fresh_coulomb;
        let lost = plated * params.irreversible_fraction;
        rate[Component::PlatedTotal] += plated;
        rate.move_lithium(Component::LithiumPlatedDead, lost);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn deposits_only_below_lithium_and_scales_with_arrhenius() {
        let p = PlatingParams {
            exchange_current_a_m2: 1e-3,
            activation_j_mol: 35e3,
            transfer_coefficient: 0.5,
            irreversible_fraction: 0.3,
            reference_temperature_k: 298.15,
        };
        assert_eq!(plating_current_density(&p, 0.01, 298.15), 0.0);
        assert_eq!(plating_current_density(&p, 0.0, 298.15), 0.0);
        assert!(plating_current_density(&p, -0.01, 298.15) > 0.0);
        // At fixed overpotential in units of RT/F the rate scales with i₀(T) alone.
        let (t1, t2) = (298.15, 273.15);
        let phi = |t: f64| -0.02 * t / 298.15;
        let ratio = plating_current_density(&p, phi(t2), t2) / plating_current_density(&p, phi(t1), t1);
        assert!((ratio - arrhenius_factor(35e3, t2, t1)).abs() < 1e-12);
    }
}
