//! Film (SEI) growth on the original surface of the negative electrode.
//!
//! Mixed control: solvent reduced at the electrode surface at a rate k(φ, T) limited by its
//! diffusion through the film already there. Per unit area the lithium consumed is
//! N = c_sol k / (1 + k δ / D_sol), with k = k_ref·A_k(T)·exp(−α F (φ − U_ref)/(R T)) and
//! D_sol = D_ref·A_D(T) (A: Arrhenius factors); the film thickens as dδ/dt = V̄ N. At a fixed
//! potential this integrates in closed form (the Deal–Grove relation)
//! δ²/(2 D c V̄) + δ/(k c V̄) = t + t₀: linear growth while reaction-limited, √t once
//! diffusion-limited, crossing over at δ ≈ 2 D / k.
//!
//! References: H. J. Ploehn, P. Ramadass, R. E. White, J. Electrochem. Soc. 151 (2004) A456;
//! M. Safari, M. Morcrette, A. Teyssot, C. Delacourt, J. Electrochem. Soc. 156 (2009) A145;
//! H. J. Pinson, M. Z. Bazant, J. Electrochem. Soc. 160 (2013) A243; B. E. Deal, A. S. Grove,
//! J. Appl. Phys. 36 (1965) 3770 (the integrated form).

use super::{AgingContext, AgingState, Component, Mechanism, Registration, Side, TableReader};
use crate::cycle::TracePoint;
use crate::material::arrhenius_factor;
use crate::material::constants::{FARADAY, GAS_CONSTANT};
use crate::material::units::{CUBIC_CENTIMETRE, NANO};

/// Reaction rate constant of film formation at potential φ (V vs Li/Li⁺) and temperature, m/s.
pub fn reaction_rate(p: &FilmParams, potential_v: f64, temperature_k: f64) -> f64 {
    p.reaction_rate_m_s
        * arrhenius_factor(p.reaction_activation_j_mol, temperature_k, p.reference_temperature_k)
        * (-p.transfer_coefficient * FARADAY * (potential_v - p.reference_potential_v) / (GAS_CONSTANT * temperature_k))
            .exp()
}

/// Solvent diffusivity in the film at a temperature, m²/s.
pub fn solvent_diffusivity(p: &FilmParams, temperature_k: f64) -> f64 {
    p.solvent_diffusivity_m2_s
        * arrhenius_factor(p.solvent_diffusivity_activation_j_mol, temperature_k, p.reference_temperature_k)
}

/// Lithium consumed per unit area and time under a film of thickness δ, mol/(m² s).
pub fn flux(p: &FilmParams, thickness_m: f64, potential_v: f64, temperature_k: f64) -> f64 {
    let k = reaction_rate(p, potential_v, temperature_k);
    p.solvent_concentration_mol_m3 * k / (1.0 + k * thickness_m / solvent_diffusivity(p, temperature_k))
}

/// Film growth over `time_s` at a fixed potential and temperature from thickness δ₀, m: the
/// exact Deal–Grove increment Δ = 2t / (B + √(B² + 4at)), a = 1/(2DcV̄), B = 2aδ₀ + 1/(kcV̄).
pub fn growth_at_fixed_conditions(
    p: &FilmParams,
    thickness_m: f64,
    potential_v: f64,
    temperature_k: f64,
    time_s: f64,
) -> f64 {
    if time_s <= 0.0 {
        return 0.0;
    }
    let cv = p.solvent_concentration_mol_m3 * p.molar_volume_m3_mol;
    let a = 1.0 / (2.0 * solvent_diffusivity(p, temperature_k) * cv);
    let b = 2.0 * a * thickness_m + 1.0 / (reaction_rate(p, potential_v, temperature_k) * cv);
    2.0 * time_s / (b + (b * b + 4.0 * a * time_s).sqrt())
}

/// Film growth over one cycle on a surface that carried `thickness_m` at its start: the trace
/// (thickness held over the cycle, its change being tiny) plus the idle time after it, m.
pub fn growth_per_cycle(p: &FilmParams, thickness_m: f64, context: &AgingContext) -> f64 {
    let cycling: f64 = context.record.map_or(0.0, |r| trace_integral(p, thickness_m, &r.trace));
    cycling * p.molar_volume_m3_mol
        + growth_at_fixed_conditions(
            p,
            thickness_m,
            context.idle_neg_potential_v,
            context.idle_temperature_k,
            context.idle_s,
        )
}

/// ∫ N dt over a cycle trace by the trapezoidal rule, mol/m² (second order, so the small
/// changes of the time grid from one simulated cycle to the next barely move the result).
fn trace_integral(p: &FilmParams, thickness_m: f64, trace: &[TracePoint]) -> f64 {
    super::trapezoid(trace, |t| flux(p, thickness_m, t.neg_potential_v, t.temperature_k))
}

/// Film (SEI) growth on the negative electrode by a mixed reaction / solvent-diffusion law.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FilmParams {
    /// Reaction rate constant k at the reference potential and temperature, m/s.
    pub reaction_rate_m_s: f64,
    pub reaction_activation_j_mol: f64,
    /// Diffusivity of solvent through the film, m²/s.
    pub solvent_diffusivity_m2_s: f64,
    pub solvent_diffusivity_activation_j_mol: f64,
    /// Solvent concentration in the electrolyte at the film's outer surface, mol/m³.
    pub solvent_concentration_mol_m3: f64,
    /// Cathodic transfer coefficient of the film-forming reaction.
    pub transfer_coefficient: f64,
    /// Potential of the film-forming reaction against Li/Li⁺, V: below it the reaction speeds up.
    pub reference_potential_v: f64,
    /// Film volume formed per mole of lithium consumed, m³/mol.
    pub molar_volume_m3_mol: f64,
    /// Ionic conductivity of the film, S/m.
    pub conductivity_s_m: f64,
    /// Film thickness of the fresh cell, m.
    pub initial_thickness_m: f64,
    pub reference_temperature_k: f64,
}

/// `[negative.film]` as written (units in the key suffixes).
#[derive(Debug, Default, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FilmSection {
    #[serde(default = "super::params::switched_on")]
    pub enabled: bool,
    reaction_rate_m_s: Option<f64>,
    reaction_activation_kj_mol: Option<f64>,
    solvent_diffusivity_m2_s: Option<f64>,
    solvent_diffusivity_activation_kj_mol: Option<f64>,
    solvent_concentration_mol_m3: Option<f64>,
    transfer_coefficient: Option<f64>,
    reference_potential_v: Option<f64>,
    molar_volume_cm3_mol: Option<f64>,
    conductivity_s_m: Option<f64>,
    initial_thickness_nm: Option<f64>,
    reference_temperature_c: Option<f64>,
}

/// Film-forming reaction potential against Li/Li⁺ when the file gives none, V.
const DEFAULT_REFERENCE_POTENTIAL_V: f64 = 0.4;

impl FilmSection {
    /// The parameters in SI units, each value checked against its rule.
    pub fn read(&self, rules: &mut dyn TableReader) -> FilmParams {
        let reference_potential_v = self.reference_potential_v.unwrap_or(DEFAULT_REFERENCE_POTENTIAL_V);
        FilmParams {
            reaction_rate_m_s: rules.positive("reaction_rate_m_s", self.reaction_rate_m_s),
            reaction_activation_j_mol: rules
                .activation_j_mol("reaction_activation_kj_mol", self.reaction_activation_kj_mol),
            solvent_diffusivity_m2_s: rules.positive("solvent_diffusivity_m2_s", self.solvent_diffusivity_m2_s),
            solvent_diffusivity_activation_j_mol: rules
                .activation_j_mol("solvent_diffusivity_activation_kj_mol", self.solvent_diffusivity_activation_kj_mol),
            solvent_concentration_mol_m3: rules
                .positive("solvent_concentration_mol_m3", self.solvent_concentration_mol_m3),
            transfer_coefficient: rules.transfer_coefficient(self.transfer_coefficient),
            reference_potential_v: rules.finite("reference_potential_v", reference_potential_v),
            molar_volume_m3_mol: rules.positive("molar_volume_cm3_mol", self.molar_volume_cm3_mol) * CUBIC_CENTIMETRE,
            conductivity_s_m: rules.positive("conductivity_s_m", self.conductivity_s_m),
            initial_thickness_m: rules.non_negative("initial_thickness_nm", self.initial_thickness_nm) * NANO,
            reference_temperature_k: rules.reference_temperature_k(self.reference_temperature_c),
        }
    }
}

impl super::params::MechanismTable for FilmSection {
    fn enabled(&self) -> bool {
        self.enabled
    }

    fn store(&self, rules: &mut dyn TableReader, side: Side, aging: &mut super::AgingParams) {
        let _ = side;
        aging.film = Some(self.read(rules));
    }
}

/// `[negative.film]`.
pub const REGISTRATION: Registration = Registration {
    table: Some("film"),
    models: "film growth",
    sides: &[Side::Negative],
    laws: |a| a.film.map(|_| Box::new(FilmOnOriginalSurface) as Box<dyn Mechanism>).into_iter().collect(),
};

/// Film growth on the original surface of the negative electrode.
#[derive(Debug, Clone, Copy)]
pub struct FilmOnOriginalSurface;

impl Mechanism for FilmOnOriginalSurface {
    fn name(&self) -> &'static str {
        "film on original surface"
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let Some(p) = &context.aging.film else { return };
        let growth_m = growth_per_cycle(p, state[Component::FilmOriginalNm] * 1e-9, context);
        let area = super::negative_surfaces(context.cell, context.aging, state).original_m2;
        let lithium = growth_m / p.molar_volume_m3_mol * area * FARADAY / context.lithium_fresh_coulomb;
        rate[Component::FilmOriginalNm] += growth_m * 1e9;
        rate.move_lithium(Component::LithiumFilmOriginal, lithium);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params() -> FilmParams {
        FilmParams {
            reaction_rate_m_s: 1e-15,
            reaction_activation_j_mol: 50e3,
            solvent_diffusivity_m2_s: 1e-21,
            solvent_diffusivity_activation_j_mol: 30e3,
            solvent_concentration_mol_m3: 4500.0,
            transfer_coefficient: 0.5,
            reference_potential_v: 0.4,
            molar_volume_m3_mol: 5e-5,
            conductivity_s_m: 5e-6,
            initial_thickness_m: 0.0,
            reference_temperature_k: 298.15,
        }
    }

    #[test]
    fn each_limit_scales_with_its_own_arrhenius_factor() {
        // Mixed control (docs/VALIDATION.md §5): a thin film grows at the reaction rate (activation of k), a thick one
        // at the solvent-diffusion rate (activation of D_sol).
        let p = params();
        let (cold, hot, phi) = (298.15, 318.15, 0.4);
        // At the reference potential the exponential potential term is 1 at any temperature.
        let thin = flux(&p, 0.0, phi, hot) / flux(&p, 0.0, phi, cold);
        assert!((thin - arrhenius_factor(50e3, hot, cold)).abs() < 1e-12 * thin);
        let thick = flux(&p, 1.0, phi, hot) / flux(&p, 1.0, phi, cold);
        assert!((thick - arrhenius_factor(30e3, hot, cold)).abs() < 1e-6 * thick);
    }

    #[test]
    fn closed_form_growth_matches_small_steps_of_the_flux() {
        // The Deal–Grove increment must equal the integral of dδ/dt = V̄ N(δ) (derived).
        let p = params();
        let (phi, t, total) = (0.1, 308.15, 3.0e7);
        let closed = growth_at_fixed_conditions(&p, 2e-9, phi, t, total);
        let mut delta = 2e-9;
        let steps = 200_000;
        let h = total / steps as f64;
        for _ in 0..steps {
            // Midpoint rule.
            let half = delta + 0.5 * h * p.molar_volume_m3_mol * flux(&p, delta, phi, t);
            delta += h * p.molar_volume_m3_mol * flux(&p, half, phi, t);
        }
        assert!(((delta - 2e-9) - closed).abs() < 1e-6 * closed, "{} vs {closed}", delta - 2e-9);
    }
}
