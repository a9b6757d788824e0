//! Fatigue crack growth in electrode particles by Paris' law.
//!
//! da/dN = C(T)·(ΔK)^m with ΔK = Y·Δσ·√(πa), Δσ the tensile part of the cycle's surface hoop
//! stress range (compressive stress does not open a crack), no growth while ΔK is below the
//! threshold ΔK_th, and C(T) Arrhenius in temperature. Cracks stop at the particle radius.
//!
//! References: P. Paris, F. Erdogan, J. Basic Eng. 85 (1963) 528; ASTM E647 (the tensile part
//! of the range); R. Deshpande, M. Verbrugge, Y.-T. Cheng, J. Wang, P. Liu,
//! J. Electrochem. Soc. 159 (2012) A1730 (Paris' law for electrode particles).

use super::{mean_temperature_k, AgingContext, AgingState, CrackingParams, Mechanism, Side};
use crate::cycle::CycleRecord;
use crate::material::arrhenius_factor;

/// Tensile part of a stress range: from max(σ_min, 0) up to σ_max, Pa.
pub fn tensile_range(stress_max_pa: f64, stress_min_pa: f64) -> f64 {
    (stress_max_pa - stress_min_pa.max(0.0)).max(0.0)
}

/// Stress-intensity range ΔK = Y Δσ √(πa), Pa·m^½.
pub fn intensity_range(p: &CrackingParams, range_pa: f64, crack_m: f64) -> f64 {
    p.geometry_factor * range_pa * (std::f64::consts::PI * crack_m).sqrt()
}

/// Crack growth per cycle, m, at a given tensile stress range and temperature.
pub fn growth_per_cycle(p: &CrackingParams, crack_m: f64, range_pa: f64, temperature_k: f64, radius_m: f64) -> f64 {
    if crack_m >= radius_m {
        return 0.0;
    }
    let dk = intensity_range(p, range_pa, crack_m);
    if dk <= p.threshold_pa_sqrt_m {
        return 0.0;
    }
    p.paris_coefficient
        * arrhenius_factor(p.activation_j_mol, temperature_k, p.reference_temperature_k)
        * dk.powf(p.paris_exponent)
}

/// The electrode's tensile surface-stress range in a cycle record, Pa.
pub fn record_range(record: &CycleRecord, side: Side) -> f64 {
    match side {
        Side::Negative => tensile_range(record.neg_stress_max_pa, record.neg_stress_min_pa),
        Side::Positive => tensile_range(record.pos_stress_max_pa, record.pos_stress_min_pa),
    }
}

/// Crack growth per cycle of one electrode in the context's cycle, m (0 on storage days).
pub fn growth_in_context(p: &CrackingParams, side: Side, context: &AgingContext, state: &AgingState) -> f64 {
    let Some(record) = context.record else { return 0.0 };
    let (crack_nm, radius) = match side {
        Side::Negative => (state.neg_crack_nm, context.cell.negative.particle_radius_m),
        Side::Positive => (state.pos_crack_nm, context.cell.positive.particle_radius_m),
    };
    growth_per_cycle(p, crack_nm * 1e-9, record_range(record, side), mean_temperature_k(record), radius)
}

/// Paris-law cracking of one electrode's particles.
#[derive(Debug, Clone, Copy)]
pub struct Cracking {
    pub side: Side,
    pub params: CrackingParams,
}

impl Mechanism for Cracking {
    fn name(&self) -> &'static str {
        match self.side {
            Side::Negative => "cracking (negative)",
            Side::Positive => "cracking (positive)",
        }
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let growth_nm = growth_in_context(&self.params, self.side, context, state) * 1e9;
        match self.side {
            Side::Negative => rate.neg_crack_nm += growth_nm,
            Side::Positive => rate.pos_crack_nm += growth_nm,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params() -> CrackingParams {
        CrackingParams {
            paris_coefficient: 1e-19,
            paris_exponent: 2.2,
            geometry_factor: 1.12,
            threshold_pa_sqrt_m: 1e3,
            initial_length_m: 20e-9,
            density_per_m2: 1e12,
            width_m: 1e-7,
            activation_j_mol: 30e3,
            reference_temperature_k: 298.15,
        }
    }

    #[test]
    fn only_the_tensile_part_of_the_range_counts() {
        // ASTM E647: compressive load does not open a crack.
        assert_eq!(tensile_range(10e6, -5e6), 10e6);
        assert_eq!(tensile_range(10e6, 4e6), 6e6);
        assert_eq!(tensile_range(-1e6, -5e6), 0.0);
    }

    #[test]
    fn no_growth_below_threshold_and_beyond_the_radius() {
        let p = params();
        let below = p.threshold_pa_sqrt_m / (p.geometry_factor * (std::f64::consts::PI * 20e-9).sqrt()) * 0.999;
        assert_eq!(growth_per_cycle(&p, 20e-9, below, 298.15, 5e-6), 0.0);
        assert!(growth_per_cycle(&p, 20e-9, below * 1.01, 298.15, 5e-6) > 0.0);
        assert_eq!(growth_per_cycle(&p, 5e-6, 1e9, 298.15, 5e-6), 0.0);
    }

    #[test]
    fn arrhenius_scaling_of_the_paris_coefficient() {
        // Rate ratio between two temperatures equals the Arrhenius factor (docs/VALIDATION.md §6).
        let p = params();
        let ratio = growth_per_cycle(&p, 50e-9, 8e6, 318.15, 5e-6) / growth_per_cycle(&p, 50e-9, 8e6, 298.15, 5e-6);
        assert!((ratio - arrhenius_factor(30e3, 318.15, 298.15)).abs() < 1e-12);
    }
}
