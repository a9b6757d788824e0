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
    2.0 * GAS_CONSTANT * temperature_k / FARADAY * (current_density_a_m2 / (2.0 * exchange_a_m2)).asinh()
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
}
