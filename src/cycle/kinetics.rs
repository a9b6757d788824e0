//! Butler–Volmer kinetics at the particle surface (symmetric, α = ½).
//!
//! i = 2 i₀ sinh(F η / (2RT)), inverted as η = (2RT/F)·asinh(i / (2 i₀));
//! i₀ = F k c_max √(θ(1−θ)) √(c_e / c_ref).
//! References: J. Newman, K. E. Thomas-Alyea, *Electrochemical Systems*, 3rd ed., Wiley (2004),
//! ch. 8; the single-particle use: S. Santhanagopalan, Q. Guo, P. Ramadass, R. E. White,
//! J. Power Sources 156 (2006) 620.

use crate::material::constants::{FARADAY, GAS_CONSTANT};

/// Electrolyte concentration at which the rate constant is stated, mol/m³.
pub const REFERENCE_ELECTROLYTE_MOL_M3: f64 = 1000.0;

/// Exchange current density, A/m², at surface stoichiometry θ.
pub fn exchange_current_density(
    rate_constant_m_s: f64,
    max_concentration_mol_m3: f64,
    theta: f64,
    electrolyte_mol_m3: f64,
) -> f64 {
    let theta = theta.clamp(1e-9, 1.0 - 1e-9);
    FARADAY
        * rate_constant_m_s
        * max_concentration_mol_m3
        * (theta * (1.0 - theta)).sqrt()
        * (electrolyte_mol_m3 / REFERENCE_ELECTROLYTE_MOL_M3).sqrt()
}

/// Overpotential, V, that drives an anodic (lithium-extracting) current density `i_a_m2`;
/// negative for cathodic current.
pub fn overpotential(current_density_a_m2: f64, exchange_a_m2: f64, temperature_k: f64) -> f64 {
    2.0 * GAS_CONSTANT * temperature_k / FARADAY * asinh(current_density_a_m2 / (2.0 * exchange_a_m2))
}

/// asinh z = ln(z + √(z² + 1)), written as log1p(|z| + z²/(1 + √(z² + 1))) so it keeps full
/// precision near 0 with one square root and one log1p (std's form also calls hypot; this is
/// called several times per time step).
fn asinh(z: f64) -> f64 {
    let a = z.abs();
    let magnitude = if a < 1e150 {
        let a2 = a * a;
        (a + a2 / (1.0 + (a2 + 1.0).sqrt())).ln_1p()
    } else {
        (2.0 * a).ln()
    };
    magnitude.copysign(z)
}

/// Lithium plating and stripping on the negative electrode: lithium metal deposits on (and
/// dissolves from) the particle surface by Butler–Volmer kinetics against the local electrode
/// potential φ (V vs Li/Li⁺, the overpotential of the lithium-metal reaction), in parallel with
/// intercalation. A fixed share of what deposits is isolated at once ("dead" lithium) and never
/// strips; the rest strips back while φ > 0.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlatingKinetics {
    /// Exchange current density of lithium deposition at the reference temperature, A/m².
    pub exchange_current_a_m2: f64,
    pub activation_j_mol: f64,
    /// Cathodic transfer coefficient α (the anodic one is 1 − α).
    pub transfer_coefficient: f64,
    /// Share of deposited lithium isolated at once (dead); the rest can strip.
    pub irreversible_fraction: f64,
    pub reference_temperature_k: f64,
}

impl PlatingKinetics {
    /// Exchange current density at a temperature, A/m².
    pub fn exchange_current_at(&self, temperature_k: f64) -> f64 {
        self.exchange_current_a_m2
            * crate::material::arrhenius_factor(self.activation_j_mol, temperature_k, self.reference_temperature_k)
    }
}

/// Lithium-metal current density at electrode potential φ against Li/Li⁺, A/m², positive when
/// lithium strips (anodic) and negative when it deposits:
/// i = i₀ [exp((1 − α) F φ / RT) − exp(−α F φ / RT)].
pub fn lithium_metal_current_density(exchange_a_m2: f64, alpha: f64, potential_v: f64, temperature_k: f64) -> f64 {
    let f = FARADAY / (GAS_CONSTANT * temperature_k);
    exchange_a_m2 * (((1.0 - alpha) * f * potential_v).exp() - (-alpha * f * potential_v).exp())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inverts_butler_volmer() {
        // i = 2 i₀ sinh(Fη/2RT) must give back the current density (Newman & Thomas-Alyea 2004).
        let (i0, t) = (2.0, 298.15);
        for i in [-30.0, -1.0, 0.0, 0.5, 12.0] {
            let eta = overpotential(i, i0, t);
            let back = 2.0 * i0 * (FARADAY * eta / (2.0 * GAS_CONSTANT * t)).sinh();
            assert!((back - i).abs() < 1e-9 * (1.0 + i.abs()));
        }
    }

    #[test]
    fn asinh_matches_the_library() {
        for i in -4000..=4000 {
            let z = (i as f64 * 0.01).sinh() * 1.37;
            let (ours, library) = (asinh(z), z.asinh());
            assert!((ours - library).abs() <= 4.0 * f64::EPSILON * library.abs(), "z = {z}: {ours} vs {library}");
        }
        assert_eq!(asinh(0.0), 0.0);
        assert!((asinh(1e200) - 1e200f64.asinh()).abs() < 1e-12 * 1e200f64.asinh());
    }

    #[test]
    fn lithium_metal_deposits_below_zero_strips_above_and_scales_with_arrhenius() {
        // Butler–Volmer for the Li/Li⁺ couple (Newman & Thomas-Alyea 2004): no net current at
        // 0 V, deposition (negative) below, stripping above.
        let p = PlatingKinetics {
            exchange_current_a_m2: 5.0,
            activation_j_mol: 35e3,
            transfer_coefficient: 0.5,
            irreversible_fraction: 0.3,
            reference_temperature_k: 298.15,
        };
        let i0 = p.exchange_current_at(298.15);
        assert_eq!(lithium_metal_current_density(i0, 0.5, 0.0, 298.15), 0.0);
        assert!(lithium_metal_current_density(i0, 0.5, -0.01, 298.15) < 0.0);
        assert!(lithium_metal_current_density(i0, 0.5, 0.01, 298.15) > 0.0);
        // At a fixed overpotential in units of RT/F the rate scales with i₀(T) alone.
        let (t1, t2) = (298.15, 273.15);
        let at = |t: f64| lithium_metal_current_density(p.exchange_current_at(t), 0.5, -0.02 * t / 298.15, t);
        let ratio = at(t2) / at(t1);
        assert!((ratio - crate::material::arrhenius_factor(35e3, t2, t1)).abs() < 1e-12);
    }
}
