//! The Arrhenius factor that scales every rate in fadecast with temperature.
//!
//! References: S. Arrhenius, Z. Phys. Chem. 4 (1889) 226 (the law); its use for
//! battery transport and kinetics: e.g. Safari et al., J. Electrochem. Soc. 156 (2009) A145.

use super::constants::GAS_CONSTANT;

/// Factor exp(−Ea/R · (1/T − 1/T_ref)): 1 at the reference temperature, above 1 when hotter.
pub fn arrhenius_factor(activation_j_mol: f64, temperature_k: f64, reference_k: f64) -> f64 {
    (-activation_j_mol / GAS_CONSTANT * (1.0 / temperature_k - 1.0 / reference_k)).exp()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unity_at_reference() {
        assert_eq!(arrhenius_factor(50e3, 298.15, 298.15), 1.0);
    }

    #[test]
    fn doubling_from_25_to_35_c() {
        // Derived from k ∝ exp(−E/(RT)) (docs/VALIDATION.md §6): 52.9 kJ/mol doubles a rate from 25 °C to 35 °C.
        let f = arrhenius_factor(52.9e3, 308.15, 298.15);
        assert!((f - 2.0).abs() < 2e-3, "factor {f}");
    }

    #[test]
    fn factors_for_31_7_kj_mol() {
        // Derived (docs/VALIDATION.md §6): 31.7 kJ/mol gives 1.514 (25→35 °C) and 2.234 (25→45 °C).
        assert!((arrhenius_factor(31.7e3, 308.15, 298.15) - 1.514).abs() < 1e-3);
        assert!((arrhenius_factor(31.7e3, 318.15, 298.15) - 2.234).abs() < 1e-3);
    }
}
