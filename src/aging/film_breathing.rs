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
use super::{mean_temperature_k, negative_surfaces, AgingContext, AgingState, Component, Mechanism};
use super::{Registration, Side, TableReader};
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

/// Film fracture by the breathing of the negative's host lattice: each cycle the particles
/// swell and shrink with the swing of their lithium content, and a fraction
/// k(T)·(Δε/ε_ref)^m of the original surface is laid bare and regrows film.
/// Δε = Ω·c_max·Δθ is the volumetric strain swing of the cycle.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FilmBreathingParams {
    /// Fraction of the surface laid bare per cycle at a strain swing of `reference_strain`.
    pub rate_per_cycle: f64,
    pub reference_strain: f64,
    pub exponent: f64,
    pub activation_j_mol: f64,
    pub reference_temperature_k: f64,
}

/// `[negative.film_breathing]` as written.
#[derive(Debug, Default, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FilmBreathingSection {
    #[serde(default = "super::params::switched_on")]
    pub enabled: bool,
    rate_per_cycle: Option<f64>,
    reference_strain: Option<f64>,
    exponent: Option<f64>,
    activation_kj_mol: Option<f64>,
    reference_temperature_c: Option<f64>,
}

impl FilmBreathingSection {
    /// The parameters in SI units, each value checked against its rule.
    pub fn read(&self, rules: &mut dyn TableReader) -> FilmBreathingParams {
        FilmBreathingParams {
            rate_per_cycle: rules.non_negative("rate_per_cycle", self.rate_per_cycle),
            reference_strain: rules.positive("reference_strain", self.reference_strain),
            exponent: rules.positive("exponent", self.exponent),
            activation_j_mol: rules.activation_j_mol("activation_kj_mol", self.activation_kj_mol),
            reference_temperature_k: rules.reference_temperature_k(self.reference_temperature_c),
        }
    }
}

impl super::params::MechanismTable for FilmBreathingSection {
    fn enabled(&self) -> bool {
        self.enabled
    }

    fn store(&self, rules: &mut dyn TableReader, side: Side, aging: &mut super::AgingParams) {
        let _ = side;
        aging.film_breathing = Some(self.read(rules));
    }
}

/// `[negative.film_breathing]`; regrowth follows the film law, so it needs `[negative.film]`.
pub const REGISTRATION: Registration = Registration {
    table: Some("film_breathing"),
    models: "film fracture by lattice breathing",
    sides: &[Side::Negative],
    laws: |a| {
        (a.film.is_some() && a.film_breathing.is_some())
            .then(|| Box::new(FilmBreathing) as Box<dyn Mechanism>)
            .into_iter()
            .collect()
    },
};

#[derive(Debug, Clone, Copy)]
pub struct FilmBreathing;

impl Mechanism for FilmBreathing {
    fn name(&self) -> &'static str {
        "film fracture by lattice breathing"
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let (Some(record), Some(params), Some(film)) =
            (context.record, &context.aging.film_breathing, &context.aging.film)
        else {
            return;
        };
        let (lo, hi) = record.trace.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
            (lo.min(p.neg_mean_stoich), hi.max(p.neg_mean_stoich))
        });
        if hi <= lo {
            return;
        }
        let negative = &context.cell.negative;
        let strain = negative.partial_molar_volume_m3_mol * negative.max_concentration_mol_m3 * (hi - lo);
        let fraction = broken_fraction(params, strain, mean_temperature_k(record));
        if fraction <= 0.0 {
            return;
        }
        let bared_m2 = fraction * negative_surfaces(context.cell, context.aging, state).original_m2;
        let regrowth_m = growth_per_cycle(film, 0.0, context);
        let lithium = regrowth_m / film.molar_volume_m3_mol * bared_m2 * FARADAY / context.lithium_fresh_coulomb;
        // Film on the original surface, counted apart as regrown after fracture.
        rate.move_lithium(Component::LithiumFilmFracture, lithium);
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
