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

use super::{AgingContext, AgingState, FilmParams, Mechanism};
use crate::cycle::TracePoint;
use crate::material::arrhenius_factor;
use crate::material::constants::{FARADAY, GAS_CONSTANT};

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

/// Film growth on the original surface of the negative electrode.
#[derive(Debug, Clone, Copy)]
pub struct FilmOnOriginalSurface {
    pub params: FilmParams,
}

impl Mechanism for FilmOnOriginalSurface {
    fn name(&self) -> &'static str {
        "film on original surface"
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let p = &self.params;
        let growth_m = growth_per_cycle(p, state.film_original_nm * 1e-9, context);
        let area = super::negative_surfaces(context.cell, state).original_m2;
        let lithium = growth_m / p.molar_volume_m3_mol * area * FARADAY / context.lithium_fresh_coulomb;
        rate.film_original_nm += growth_m * 1e9;
        rate.lithium_film_original += lithium;
        rate.lithium_inventory -= lithium;
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
