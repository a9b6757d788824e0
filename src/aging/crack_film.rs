//! Film growth on crack surface of the negative electrode.
//!
//! Crack growth exposes fresh surface (crack density × two faces × crack width × growth); it
//! enters bare and grows its own film by the same mixed-control law as the original surface
//! ([`super::film`]), so while thin it consumes lithium faster. The film volume V_c on crack
//! surface obeys dV_c/dN = A_c ġ(δ_c) with the mean thickness δ_c = V_c / A_c: the new bare
//! area thins the mean, and nothing is singular when the crack area is still zero.
//!
//! Reference: R. Deshpande, M. Verbrugge, Y.-T. Cheng, J. Wang, P. Liu, J. Electrochem. Soc.
//! 159 (2012) A1730 (film on cracks exposed by fatigue).

use super::film::growth_per_cycle;
use super::state::crack_film_thickness_m;
use super::{negative_surfaces, AgingContext, AgingState, Component, Mechanism, Registration, Side};
use crate::material::constants::FARADAY;

/// No table of its own: on whenever film growth and cracking of the negative are both on.
pub const REGISTRATION: Registration = Registration {
    table: None,
    models: "film growth on crack surface",
    sides: &[Side::Negative],
    laws: |a| {
        (a.film.is_some() && a.neg_cracking.is_some())
            .then(|| Box::new(FilmOnCrackSurface) as Box<dyn Mechanism>)
            .into_iter()
            .collect()
    },
};

#[derive(Debug, Clone, Copy)]
pub struct FilmOnCrackSurface;

impl Mechanism for FilmOnCrackSurface {
    fn name(&self) -> &'static str {
        "film on crack surface"
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let Some(film) = &context.aging.film else { return };
        let crack_area = negative_surfaces(context.cell, context.aging, state).crack_m2;
        if crack_area <= 0.0 {
            return;
        }
        // New area enters bare, which the mean thickness (volume over area) already reflects.
        let thickness = crack_film_thickness_m(context.cell, context.aging, state);
        let growth_m = growth_per_cycle(film, thickness, context);
        let lithium = growth_m / film.molar_volume_m3_mol * crack_area * FARADAY / context.lithium_fresh_coulomb;
        rate.move_lithium(Component::LithiumFilmCrack, lithium);
    }
}
