//! Film fracture by the breathing of the negative electrode's host lattice.
//!
//! Graphite swells by about a tenth between empty and full; the film on its surface cannot
//! follow and cracks. Per cycle a fraction f = k(T)·(Δε/ε_ref)^m (at most 1) of the original
//! surface is laid bare, with Δε = Ω·c_max·Δθ the volumetric strain swing over the cycle's
//! range of mean stoichiometry Δθ. The bared patches regrow film over the cycle and the idle
//! time after it, by the same mixed-control law as fresh surface (`super::film`), consuming
//! lithium: per cycle f·A·g₀/V̄, with g₀ the growth of a bare surface over one cycle period.
//! The mean film thickness is left as it is (the patches close again to about the thickness
//! around them), so the mechanism adds no fast dynamics to the slow state. With m > 1 a deep
//! cycle costs more lithium per unit of charge passed than a shallow one, which is why narrow
//! state-of-charge windows last longer in equivalent full cycles.
//!
//! References: I. Laresgoiti, S. Käbitz, M. Ecker, D. U. Sauer, J. Power Sources 300 (2015) 112
//! (film fracture driven by the graphite's volume change over a cycle; from memory);
//! review: J. M. Reniers, G. Mulder, D. A. Howey, J. Electrochem. Soc. 166 (2019) A3189.

use super::film::growth_per_cycle;
use super::{mean_temperature_k, negative_surfaces, AgingContext, AgingState, Mechanism};
use crate::aging::{FilmBreathingParams, FilmParams};
use crate::material::arrhenius_factor;
use crate::material::constants::FARADAY;

/// Fraction of the film broken in one cycle at a strain swing and temperature (at most 1).
pub fn broken_fraction(p: &FilmBreathingParams, strain_swing: f64, temperature_k: f64) -> f64 {
    if strain_swing <= 0.0 {
        return 0.0;
    }
    (p.rate_per_cycle
        * arrhenius_factor(p.activation_j_mol, temperature_k, p.reference_temperature_k)
        * (strain_swing / p.reference_strain).powf(p.exponent))
    .min(1.0)
}

#[derive(Debug, Clone, Copy)]
pub struct FilmBreathing {
    pub params: FilmBreathingParams,
    pub film: FilmParams,
}

impl Mechanism for FilmBreathing {
    fn name(&self) -> &'static str {
        "film fracture by lattice breathing"
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let Some(record) = context.record else { return };
        let (lo, hi) = record.trace.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
            (lo.min(p.neg_mean_stoich), hi.max(p.neg_mean_stoich))
        });
        if hi <= lo {
            return;
        }
        let negative = &context.cell.negative;
        let strain = negative.partial_molar_volume_m3_mol * negative.max_concentration_mol_m3 * (hi - lo);
        let fraction = broken_fraction(&self.params, strain, mean_temperature_k(record));
        if fraction <= 0.0 {
            return;
        }
        let bared_m2 = fraction * negative_surfaces(context.cell, state).original_m2;
        let regrowth_m = growth_per_cycle(&self.film, 0.0, context);
        let lithium = regrowth_m / self.film.molar_volume_m3_mol * bared_m2 * FARADAY / context.lithium_fresh_coulomb;
        rate.lithium_film_original += lithium;
        rate.lithium_inventory -= lithium;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params() -> FilmBreathingParams {
        FilmBreathingParams {
            rate_per_cycle: 1e-3,
            reference_strain: 0.1,
            exponent: 3.0,
            activation_j_mol: 20e3,
            reference_temperature_k: 298.15,
        }
    }

    #[test]
    fn scales_as_the_strain_swing_to_the_m_and_with_arrhenius() {
        // The law's own scaling (derived) and the Arrhenius factor for temperature (docs/VALIDATION.md §6).
        let p = params();
        let ratio = broken_fraction(&p, 0.08, 298.15) / broken_fraction(&p, 0.04, 298.15);
        assert!((ratio - 8.0).abs() < 1e-12);
        let warm = broken_fraction(&p, 0.05, 318.15) / broken_fraction(&p, 0.05, 298.15);
        assert!((warm - arrhenius_factor(20e3, 318.15, 298.15)).abs() < 1e-12);
        assert_eq!(broken_fraction(&p, 0.0, 298.15), 0.0, "no swing, no fracture (rest)");
        assert_eq!(broken_fraction(&FilmBreathingParams { rate_per_cycle: 10.0, ..p }, 0.1, 298.15), 1.0);
    }
}
