//! Lithium plating on the negative electrode: what the cycle's plating leaves in the slow state.
//!
//! The cycle model takes plating's current out of intercalation (`cycle::response`): at every
//! step the negative's current splits into intercalation and lithium-metal deposition or
//! stripping, both driven by the same electrode potential φ against Li/Li⁺, the latter by
//! Butler–Volmer kinetics i = i₀(T)[exp((1−α)Fφ/RT) − exp(−αFφ/RT)]. A fixed share of the
//! lithium deposited is isolated at once (dead, electrically disconnected); the rest strips back
//! while φ > 0 — on discharge, and at rest by re-intercalating into the graphite beside it — and
//! what is still plated when the cycle ends re-intercalates during the idle time. Per cycle
//! this mechanism counts the lithium deposited (`plated_total`) and moves the dead share out of
//! the cyclable inventory.
//!
//! References: P. Arora, M. Doyle, R. E. White, J. Electrochem. Soc. 146 (1999) 3543 (plating
//! as a side reaction below 0 V vs Li/Li⁺ in parallel with intercalation, from memory);
//! M. Petzl, M. A. Danzer, J. Power Sources 254 (2014) 80 (reversible and irreversible plated
//! lithium, stripping on discharge); X.-G. Yang, Y. Leng, G. Zhang, S. Ge, C.-Y. Wang, J. Power
//! Sources 360 (2017) 28 (plated lithium partly stripped, partly turned dead; from memory);
//! E. J. McShane et al., ACS Energy Lett. 5 (2020) 2045 (plating exchange current of order
//! 10 A/m² and stripping efficiency of order two thirds on graphite, fitted to titration; journal
//! details from memory).

use super::{AgingContext, AgingState, Component, Mechanism, Registration, Side, TableReader};

/// Lithium plating on the negative electrode: the Butler–Volmer kinetics of lithium metal and
/// the share of deposited lithium isolated at once (the cycle model splits the current with
/// them; see [`crate::cycle::kinetics::PlatingKinetics`]).
pub type PlatingParams = crate::cycle::kinetics::PlatingKinetics;

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

    fn add_rates(&self, context: &AgingContext, _state: &AgingState, rate: &mut AgingState) {
        let (Some(record), Some(params)) = (context.record, &context.aging.plating) else { return };
        let plated = record.plated_coulomb / context.lithium_fresh_coulomb;
        rate[Component::PlatedTotal] += plated;
        rate.move_lithium(Component::LithiumPlatedDead, plated * params.irreversible_fraction);
    }
}
