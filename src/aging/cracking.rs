//! Fatigue crack growth in electrode particles by Paris' law, counted cycle by cycle.
//!
//! Each particle carries two cracks, each opened by its own part of the stress profile:
//! - a **surface crack** of depth a, opened by the tensile hoop stress near the surface while
//!   lithium leaves (graphite on discharge, the positive on charge);
//! - a **centre crack** of radius c, opened by the tensile stress at the centre while lithium
//!   enters (graphite on charge, the positive on discharge).
//!
//! The stress intensity of each at every trace point comes from the whole hoop-stress profile
//! through a weight function ([`super::fracture`]), so a crack that reaches the compressive
//! part of the profile slows and arrests. The history K(t) is rainflow counted
//! ([`super::rainflow`], periodic) and the growth summed over the counted cycles:
//! da/dN = Σᵢ C·A(Tᵢ)·(ΔKᵢ^m − ΔK_th^m)⁺, with ΔKᵢ the tensile part of cycle i (compression
//! closes the crack), A(Tᵢ) the Arrhenius factor at the temperature of the cycle's peak, and
//! the threshold subtracted in the Klesnil–Lukáš form so growth fades continuously to zero.
//!
//! What the cracks do: the faces of surface cracks are wetted by electrolyte and grow film
//! ([`super::crack_film`]); a centre crack is sealed inside the particle and adds no wetted
//! surface. When the two meet (a + c reaches the radius) the crack has run through the
//! particle: both stop, and the particle's fragments are treated as still in contact (loss of
//! contact is the stress-driven active-material law's part, [`super::active_loss`]).
//!
//! References: P. Paris, F. Erdogan, J. Basic Eng. 85 (1963) 528; M. Klesnil, P. Lukáš,
//! Eng. Fract. Mech. 4 (1972) 77 (threshold form, from memory); ASTM E647 (the tensile part of
//! the range); ASTM E1049-85 (cycle counting); R. Deshpande, M. Verbrugge, Y.-T. Cheng, J. Wang,
//! P. Liu, J. Electrochem. Soc. 159 (2012) A1730 (Paris' law for electrode particles).

use super::fracture::{intensity_weights, CrackOrigin};
use super::rainflow::count_periodic;
use super::{crack_length_m, AgingContext, AgingState, Component, Mechanism, Registration, Side, TableReader};
use crate::cycle::record::sharpen_turning_points;
use crate::cycle::{CycleRecord, TracePoint};
use crate::material::arrhenius_factor;
use crate::material::units::{KILO, NANO, PER_SQUARE_MICROMETRE};

/// Tensile part of a stress (or stress-intensity) range: from max(low, 0) up to high.
pub fn tensile_range(high: f64, low: f64) -> f64 {
    (high - low.max(0.0)).max(0.0)
}

/// Growth of one cycle of tensile range ΔK at temperature T, m: C·A(T)·(ΔK^m − ΔK_th^m)⁺.
pub fn growth_of_cycle(p: &CrackingParams, range_pa_sqrt_m: f64, temperature_k: f64) -> f64 {
    if range_pa_sqrt_m <= p.threshold_pa_sqrt_m {
        return 0.0;
    }
    p.paris_coefficient
        * arrhenius_factor(p.activation_j_mol, temperature_k, p.reference_temperature_k)
        * (range_pa_sqrt_m.powf(p.paris_exponent) - p.threshold_pa_sqrt_m.powf(p.paris_exponent))
}

/// Growth per period of a periodic stress-intensity history, m: every rainflow-counted cycle
/// at the temperature of its peak (`temperature_k(i)` belongs to `intensity[i]`).
pub fn growth_over_history(p: &CrackingParams, intensity: &[f64], temperature_k: impl Fn(usize) -> f64) -> f64 {
    let mut growth = 0.0;
    count_periodic(intensity, &mut Vec::new(), |cycle| {
        let range = tensile_range(cycle.high, cycle.low);
        growth += cycle.count * growth_of_cycle(p, range, temperature_k(cycle.high_index));
    });
    growth
}

/// Stress intensity at every trace point of a cycle for a crack of the given origin and size
/// in one electrode, Pa·m^½.
pub fn intensity_history(
    record: &CycleRecord,
    side: Side,
    origin: CrackOrigin,
    crack_m: f64,
    radius_m: f64,
) -> Vec<f64> {
    let (history, surface): (_, fn(&TracePoint) -> f64) = match side {
        Side::Negative => (&record.neg_stress, |p| p.neg_surface_stress_pa),
        Side::Positive => (&record.pos_stress, |p| p.pos_surface_stress_pa),
    };
    let mut weights = Vec::new();
    intensity_weights(origin, crack_m, radius_m, history.shells(), &mut weights);
    let mut out = Vec::new();
    history.weighted(&weights, record.trace.iter().map(surface), &mut out);
    let mut rates = Vec::new();
    history.weighted_rates(&weights, &mut rates);
    sharpen_turning_points(&mut out, &rates, &record.trace);
    out
}

/// Growth per cycle of one crack of one electrode in a cycle record, m; none once the surface
/// and centre cracks have met.
pub fn growth_in_record(
    p: &CrackingParams,
    record: &CycleRecord,
    side: Side,
    origin: CrackOrigin,
    lengths: CrackLengths,
    radius_m: f64,
) -> f64 {
    if lengths.run_through(radius_m) {
        return 0.0;
    }
    let crack = match origin {
        CrackOrigin::Surface => lengths.surface_m,
        CrackOrigin::Centre => lengths.centre_m,
    };
    let intensity = intensity_history(record, side, origin, crack, radius_m);
    growth_over_history(p, &intensity, |i| record.trace[i].temperature_k)
}

/// The two cracks of one electrode's particles, m.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrackLengths {
    pub surface_m: f64,
    pub centre_m: f64,
}

impl CrackLengths {
    /// The cracks have met: the particle is split through.
    pub fn run_through(&self, radius_m: f64) -> bool {
        self.surface_m + self.centre_m >= radius_m
    }
}

/// The state component holding a crack's length, nm.
pub fn crack_component(side: Side, origin: CrackOrigin) -> Component {
    match (side, origin) {
        (Side::Negative, CrackOrigin::Surface) => Component::NegCrackNm,
        (Side::Negative, CrackOrigin::Centre) => Component::NegCentreCrackNm,
        (Side::Positive, CrackOrigin::Surface) => Component::PosCrackNm,
        (Side::Positive, CrackOrigin::Centre) => Component::PosCentreCrackNm,
    }
}

/// Paris-law fatigue cracking of one electrode's particles.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrackingParams {
    /// Paris coefficient C in da/dN = C (ΔK)^m, m per cycle per (Pa·m^½)^m.
    pub paris_coefficient: f64,
    pub paris_exponent: f64,
    /// Threshold stress-intensity range below which cracks do not grow, Pa·m^½.
    pub threshold_pa_sqrt_m: f64,
    /// Length of both cracks in the fresh cell (surface depth, centre radius), m.
    pub initial_length_m: f64,
    /// Surface cracks per unit particle surface, 1/m².
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
    threshold_kpa_sqrt_m: Option<f64>,
    initial_length_nm: Option<f64>,
    density_per_um2: Option<f64>,
    width_nm: Option<f64>,
    activation_kj_mol: Option<f64>,
    reference_temperature_c: Option<f64>,
}

const NANOMETRES_PER_MICROMETRE: f64 = 1e3;

impl CrackingSection {
    /// The parameters in SI units, each value checked against its rule; a crack must start
    /// shorter than the particle radius.
    pub fn read(&self, rules: &mut dyn TableReader) -> CrackingParams {
        let paris_coefficient = rules.positive("paris_coefficient", self.paris_coefficient);
        let paris_exponent = rules.positive("paris_exponent", self.paris_exponent);
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
        let (Some(params), Some(record)) = (params, context.record) else { return };
        let radius = match self.side {
            Side::Negative => context.cell.negative.particle_radius_m,
            Side::Positive => context.cell.positive.particle_radius_m,
        };
        let lengths = CrackLengths {
            surface_m: crack_length_m(context.cell, state, self.side),
            centre_m: centre_crack_length_m(context.cell, state, self.side),
        };
        for origin in [CrackOrigin::Surface, CrackOrigin::Centre] {
            let growth = growth_in_record(params, record, self.side, origin, lengths, radius);
            rate[crack_component(self.side, origin)] += growth / NANO;
        }
    }
}

/// Radius of the centre crack of one electrode, m (no larger than the particle radius).
pub fn centre_crack_length_m(cell: &crate::cycle::Cell, state: &AgingState, side: Side) -> f64 {
    let (nm, radius) = match side {
        Side::Negative => (state[Component::NegCentreCrackNm], cell.negative.particle_radius_m),
        Side::Positive => (state[Component::PosCentreCrackNm], cell.positive.particle_radius_m),
    };
    (nm * NANO).min(radius)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params() -> CrackingParams {
        CrackingParams {
            paris_coefficient: 1e-19,
            paris_exponent: 2.2,
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
    fn growth_fades_to_zero_at_the_threshold() {
        let p = params();
        assert_eq!(growth_of_cycle(&p, p.threshold_pa_sqrt_m, 298.15), 0.0);
        let just_above = growth_of_cycle(&p, p.threshold_pa_sqrt_m * 1.0001, 298.15);
        assert!(just_above > 0.0 && just_above < 1e-3 * growth_of_cycle(&p, 2.0 * p.threshold_pa_sqrt_m, 298.15));
    }

    #[test]
    fn arrhenius_scaling_of_the_paris_coefficient() {
        // Rate ratio between two temperatures equals the Arrhenius factor (docs/VALIDATION.md §6).
        let p = params();
        let ratio = growth_of_cycle(&p, 8e4, 318.15) / growth_of_cycle(&p, 8e4, 298.15);
        assert!((ratio - arrhenius_factor(30e3, 318.15, 298.15)).abs() < 1e-12);
    }

    #[test]
    fn n_identical_pulses_grow_n_times_one_pulse() {
        // Closed form: n counted cycles of the same range and temperature grow n·C(ΔK^m − ΔK_th^m).
        let p = params();
        let pulse = [0.0, 3e4, 6e4, 2e4, 0.0];
        let one: Vec<f64> = pulse.to_vec();
        let mut six = vec![0.0];
        for _ in 0..6 {
            six.extend_from_slice(&pulse[1..]);
        }
        let single = growth_over_history(&p, &one, |_| 298.15);
        let closed = growth_of_cycle(&p, 6e4, 298.15);
        assert!((single / closed - 1.0).abs() < 1e-12);
        assert!((growth_over_history(&p, &six, |_| 298.15) / (6.0 * closed) - 1.0).abs() < 1e-12);
    }
}
