//! Fatigue crack growth in electrode particles by Paris' law.
//!
//! da/dN = C(T)·(ΔK)^m with ΔK = Y·Δσ·√(πa), Δσ the tensile part of the cycle's surface hoop
//! stress range (compressive stress does not open a crack), no growth while ΔK is below the
//! threshold ΔK_th, and C(T) Arrhenius in temperature. Cracks stop at the particle radius.
//!
//! References: P. Paris, F. Erdogan, J. Basic Eng. 85 (1963) 528; ASTM E647 (the tensile part
//! of the range); R. Deshpande, M. Verbrugge, Y.-T. Cheng, J. Wang, P. Liu,
//! J. Electrochem. Soc. 159 (2012) A1730 (Paris' law for electrode particles).

use super::{
    crack_length_m, mean_temperature_k, AgingContext, AgingState, Component, Mechanism, Registration, Side, TableReader,
};
use crate::cycle::CycleRecord;
use crate::material::arrhenius_factor;
use crate::material::units::{KILO, NANO, PER_SQUARE_MICROMETRE};

/// Tensile part of a stress range: from max(σ_min, 0) up to σ_max, Pa.
pub fn tensile_range(stress_max_pa: f64, stress_min_pa: f64) -> f64 {
    (stress_max_pa - stress_min_pa.max(0.0)).max(0.0)
}

/// Stress-intensity range ΔK = Y Δσ √(πa), Pa·m^½.
pub fn intensity_range(p: &CrackingParams, range_pa: f64, crack_m: f64) -> f64 {
    p.geometry_factor * range_pa * (std::f64::consts::PI * crack_m).sqrt()
}

/// Crack growth per cycle, m, at a given tensile stress range and temperature; none once the
/// crack has reached the particle centre.
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
    let radius = match side {
        Side::Negative => context.cell.negative.particle_radius_m,
        Side::Positive => context.cell.positive.particle_radius_m,
    };
    let crack = crack_length_m(context.cell, state, side);
    growth_per_cycle(p, crack, record_range(record, side), mean_temperature_k(record), radius)
}

/// Paris-law fatigue cracking of one electrode's particles.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrackingParams {
    /// Paris coefficient C in da/dN = C (ΔK)^m, m per cycle per (Pa·m^½)^m.
    pub paris_coefficient: f64,
    pub paris_exponent: f64,
    /// Geometry factor Y of ΔK = Y Δσ √(πa) (about 1.12 for a surface crack).
    pub geometry_factor: f64,
    /// Threshold stress-intensity range below which cracks do not grow, Pa·m^½.
    pub threshold_pa_sqrt_m: f64,
    pub initial_length_m: f64,
    /// Cracks per unit particle surface, 1/m².
    pub density_per_m2: f64,
    /// Width of one crack along the surface, m.
    pub width_m: f64,
    pub activation_j_mol: f64,
    pub reference_temperature_k: f64,
}

/// `[negative.cracking]`, `[positive.cracking]` as written.
#[derive(Debug, Default, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CrackingSection {
    #[serde(default = "super::params::switched_on")]
    pub enabled: bool,
    paris_coefficient: Option<f64>,
    paris_exponent: Option<f64>,
    geometry_factor: Option<f64>,
    threshold_kpa_sqrt_m: Option<f64>,
    initial_length_nm: Option<f64>,
    density_per_um2: Option<f64>,
    width_nm: Option<f64>,
    activation_kj_mol: Option<f64>,
    reference_temperature_c: Option<f64>,
}

/// Y of ΔK = Y Δσ √(πa) for a shallow surface crack.
const DEFAULT_GEOMETRY_FACTOR: f64 = 1.12;
const NANOMETRES_PER_MICROMETRE: f64 = 1e3;

impl CrackingSection {
    /// The parameters in SI units, each value checked against its rule; a crack must start
    /// shorter than the particle radius.
    pub fn read(&self, rules: &mut dyn TableReader) -> CrackingParams {
        let paris_coefficient = rules.positive("paris_coefficient", self.paris_coefficient);
        let paris_exponent = rules.positive("paris_exponent", self.paris_exponent);
        let geometry_factor = rules.optional_positive("geometry_factor", self.geometry_factor, DEFAULT_GEOMETRY_FACTOR);
        let threshold_pa_sqrt_m = rules.non_negative("threshold_kpa_sqrt_m", self.threshold_kpa_sqrt_m) * KILO;
        let initial_length_nm = rules.positive("initial_length_nm", self.initial_length_nm);
        let radius_um = rules.particle_radius_um();
        // Compared only when both are valid; a bad radius is reported at the electrode.
        if initial_length_nm > 0.0
            && radius_um > 0.0
            && radius_um.is_finite()
            && initial_length_nm >= radius_um * NANOMETRES_PER_MICROMETRE
        {
            rules.report(
                "initial_length_nm",
                format!("must be below the particle radius ({radius_um} µm), found {initial_length_nm} nm"),
            );
        }
        CrackingParams {
            paris_coefficient,
            paris_exponent,
            geometry_factor,
            threshold_pa_sqrt_m,
            initial_length_m: initial_length_nm * NANO,
            density_per_m2: rules.non_negative("density_per_um2", self.density_per_um2) * PER_SQUARE_MICROMETRE,
            width_m: rules.positive("width_nm", self.width_nm) * NANO,
            activation_j_mol: rules.activation_j_mol("activation_kj_mol", self.activation_kj_mol),
            reference_temperature_k: rules.reference_temperature_k(self.reference_temperature_c),
        }
    }
}

impl super::params::MechanismTable for CrackingSection {
    fn enabled(&self) -> bool {
        self.enabled
    }

    fn store(&self, rules: &mut dyn TableReader, side: Side, aging: &mut super::AgingParams) {
        let params = Some(self.read(rules));
        match side {
            Side::Negative => aging.neg_cracking = params,
            Side::Positive => aging.pos_cracking = params,
        }
    }
}

/// `[negative.cracking]` and `[positive.cracking]`.
pub const REGISTRATION: Registration = Registration {
    table: Some("cracking"),
    models: "Paris-law cracking",
    sides: &[Side::Negative, Side::Positive],
    laws: |a| {
        let negative = a.neg_cracking.map(|_| Box::new(Cracking { side: Side::Negative }) as Box<dyn Mechanism>);
        let positive = a.pos_cracking.map(|_| Box::new(Cracking { side: Side::Positive }) as Box<dyn Mechanism>);
        negative.into_iter().chain(positive).collect()
    },
};

/// Paris-law cracking of one electrode's particles.
#[derive(Debug, Clone, Copy)]
pub struct Cracking {
    pub side: Side,
}

impl Mechanism for Cracking {
    fn name(&self) -> &'static str {
        match self.side {
            Side::Negative => "cracking (negative)",
            Side::Positive => "cracking (positive)",
        }
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let params = match self.side {
            Side::Negative => &context.aging.neg_cracking,
            Side::Positive => &context.aging.pos_cracking,
        };
        let Some(params) = params else { return };
        let growth_nm = growth_in_context(params, self.side, context, state) * 1e9;
        match self.side {
            Side::Negative => rate[Component::NegCrackNm] += growth_nm,
            Side::Positive => rate[Component::PosCrackNm] += growth_nm,
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
