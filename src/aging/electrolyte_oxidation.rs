//! Electrolyte oxidation at the positive electrode at high potential.
//!
//! Carbonate solvents oxidise on the charged positive's surface at a rate that rises
//! exponentially with the positive's potential φ₊ against Li/Li⁺ and with temperature:
//! i_ox = i_ref·A(T)·exp(α F (φ₊ − U_ref)/(R T)) per unit of positive surface (a Tafel law; A the
//! Arrhenius factor). The electrons it gives the positive are self-discharge, recovered on the
//! next charge; the lasting costs counted here are lithium bound in the positive's surface film
//! (a share of the oxidation charge) and positive host lost to the acidic products (transition
//! metal dissolution and surface reconstruction; host capacity lost per oxidation charge), the
//! lost host stranding the lithium it held. The positive's potential is that of the cycle's trace
//! and, while idle, its open-circuit potential at the rest state of charge.
//!
//! References: J. Vetter et al., J. Power Sources 147 (2005) 269 (ageing mechanisms of positive
//! electrodes: electrolyte oxidation, surface films, metal dissolution; from memory);
//! A. J. Smith, J. C. Burns, J. R. Dahn, Electrochem. Solid-State Lett. 14 (2011) A39
//! (parasitic currents measured by high-precision coulometry rise with potential and
//! temperature; from memory).

use super::{AgingContext, AgingState, Component, Mechanism, Registration, Side, TableReader};
use crate::material::arrhenius_factor;
use crate::material::constants::{FARADAY, GAS_CONSTANT};

/// Oxidation current density at positive potential φ₊ and temperature, A/m².
pub fn oxidation_current_density(p: &ElectrolyteOxidationParams, potential_v: f64, temperature_k: f64) -> f64 {
    p.current_density_a_m2
        * arrhenius_factor(p.activation_j_mol, temperature_k, p.reference_temperature_k)
        * (p.transfer_coefficient * FARADAY * (potential_v - p.reference_potential_v) / (GAS_CONSTANT * temperature_k))
            .exp()
}

/// Electrolyte oxidation on the positive electrode (Tafel in the positive's potential).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ElectrolyteOxidationParams {
    /// Oxidation current density at the reference potential and temperature, A/m².
    pub current_density_a_m2: f64,
    pub activation_j_mol: f64,
    /// Anodic transfer coefficient of the oxidation.
    pub transfer_coefficient: f64,
    /// Positive potential against Li/Li⁺ at which the current density is stated, V.
    pub reference_potential_v: f64,
    /// Share of the oxidation charge that ends as lithium bound in the positive's film.
    pub lithium_share: f64,
    /// Positive host capacity lost per oxidation charge (C per C).
    pub host_loss_share: f64,
    pub reference_temperature_k: f64,
}

/// `[positive.electrolyte_oxidation]` as written.
#[derive(Debug, Default, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ElectrolyteOxidationSection {
    #[serde(default = "super::params::switched_on")]
    pub enabled: bool,
    current_density_a_m2: Option<f64>,
    activation_kj_mol: Option<f64>,
    transfer_coefficient: Option<f64>,
    reference_potential_v: Option<f64>,
    lithium_share: Option<f64>,
    host_loss_share: Option<f64>,
    reference_temperature_c: Option<f64>,
}

impl ElectrolyteOxidationSection {
    /// The parameters in SI units, each value checked against its rule.
    pub fn read(&self, rules: &mut dyn TableReader) -> ElectrolyteOxidationParams {
        let reference_potential_v = rules.positive("reference_potential_v", self.reference_potential_v);
        ElectrolyteOxidationParams {
            current_density_a_m2: rules.positive("current_density_a_m2", self.current_density_a_m2),
            activation_j_mol: rules.activation_j_mol("activation_kj_mol", self.activation_kj_mol),
            transfer_coefficient: rules.transfer_coefficient(self.transfer_coefficient),
            reference_potential_v,
            lithium_share: rules.fraction("lithium_share", self.lithium_share),
            host_loss_share: rules.non_negative("host_loss_share", self.host_loss_share),
            reference_temperature_k: rules.reference_temperature_k(self.reference_temperature_c),
        }
    }
}

impl super::params::MechanismTable for ElectrolyteOxidationSection {
    fn enabled(&self) -> bool {
        self.enabled
    }

    fn store(&self, rules: &mut dyn TableReader, side: Side, aging: &mut super::AgingParams) {
        let _ = side;
        aging.electrolyte_oxidation = Some(self.read(rules));
    }
}

/// `[positive.electrolyte_oxidation]`.
pub const REGISTRATION: Registration = Registration {
    table: Some("electrolyte_oxidation"),
    models: "electrolyte oxidation",
    sides: &[Side::Positive],
    laws: |a| {
        a.electrolyte_oxidation.map(|_| Box::new(ElectrolyteOxidation) as Box<dyn Mechanism>).into_iter().collect()
    },
};

#[derive(Debug, Clone, Copy)]
pub struct ElectrolyteOxidation;

impl Mechanism for ElectrolyteOxidation {
    fn name(&self) -> &'static str {
        "electrolyte oxidation (positive)"
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let Some(p) = &context.aging.electrolyte_oxidation else { return };
        let cell = context.cell;
        let remaining = 1.0 - state[Component::PosActiveLost];
        let area = cell.positive.surface_area_m2() * remaining;
        // Oxidation charge per cycle (C) and its integral weighted by the positive's mean
        // stoichiometry (for the lithium held by the host it destroys).
        let (mut charge, mut weighted) = (0.0, 0.0);
        if let Some(record) = context.record {
            charge += area
                * super::trapezoid(&record.trace, |t| oxidation_current_density(p, t.pos_potential_v, t.temperature_k));
            weighted += area
                * super::trapezoid(&record.trace, |t| {
                    oxidation_current_density(p, t.pos_potential_v, t.temperature_k) * t.pos_mean_stoich
                });
        }
        let idle = area
            * oxidation_current_density(p, context.idle_pos_potential_v, context.idle_temperature_k)
            * context.idle_s;
        charge += idle;
        weighted += idle * context.idle_pos_stoich;
        let host_lost = p.host_loss_share * charge / cell.positive.capacity_coulomb();
        rate[Component::PosActiveLost] += host_lost;
        rate.move_lithium(Component::LithiumPositiveFilm, p.lithium_share * charge / context.lithium_fresh_coulomb);
        rate.move_lithium(Component::LithiumStranded, p.host_loss_share * weighted / context.lithium_fresh_coulomb);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rises_tenfold_per_tafel_decade_and_scales_with_arrhenius() {
        // Tafel law (derived): at α = ½ and 25 °C the current rises tenfold every
        // 2·ln(10)·RT/F ≈ 118 mV; at the reference potential it scales with A(T) alone.
        let p = ElectrolyteOxidationParams {
            current_density_a_m2: 1e-7,
            activation_j_mol: 60e3,
            transfer_coefficient: 0.5,
            reference_potential_v: 4.1,
            lithium_share: 0.5,
            host_loss_share: 0.5,
            reference_temperature_k: 298.15,
        };
        let t = 298.15;
        let decade = 2.0 * 10f64.ln() * GAS_CONSTANT * t / FARADAY;
        let ratio = oxidation_current_density(&p, 4.1 + decade, t) / oxidation_current_density(&p, 4.1, t);
        assert!((ratio - 10.0).abs() < 1e-9, "{ratio}");
        let hot = oxidation_current_density(&p, 4.1, 318.15) / oxidation_current_density(&p, 4.1, t);
        assert!((hot - arrhenius_factor(60e3, 318.15, t)).abs() < 1e-12 * hot);
    }
}
