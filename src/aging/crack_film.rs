//! Film growth on the faces of the negative's surface cracks, each face by its own age.
//!
//! Crack growth exposes fresh surface (crack density × two faces × crack width × depth grown).
//! It enters bare and grows film by the same law as the original surface ([`super::film`]) at
//! the same local potential, so while thin it consumes lithium faster. Faces opened early carry
//! thicker film than faces opened last: the film is tracked per depth bin of the crack
//! ([`super::state::CRACK_FILM_BINS`] equal bins from the initial depth to the particle
//! radius), each bin's film volume V_j obeying dV_j/dN = A_j ġ(V_j/A_j) with A_j the bin's
//! exposed area. Within a bin the mean thickness stands for its ages; across bins the age
//! spread is kept, which a single mean thickness over all crack area would lose (it reads
//! 8–17 % low: the growth rate is convex in thickness). Checked against a per-age (cohort)
//! calculation in tests/fatigue.rs. A face is taken to carry at least the film a bare face
//! grows in one cycle (the model's time resolution): this keeps a bin the crack has only just
//! crossed from growing bare-surface film in an integrator stage, and moves the every-cycle
//! demos by less than 0.02 % of their crack-face film.
//!
//! Reference: R. Deshpande, M. Verbrugge, Y.-T. Cheng, J. Wang, P. Liu, J. Electrochem. Soc.
//! 159 (2012) A1730 (film on cracks exposed by fatigue).

use super::film::CycleFilmGrowth;
use super::state::{crack_bin_thickness_m, CRACK_FILM_BINS};
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
        let surfaces = negative_surfaces(context.cell, context.aging, state);
        if surfaces.bin_m2(0) <= 0.0 {
            return;
        }
        let per_metre = FARADAY / film.molar_volume_m3_mol / context.lithium_fresh_coulomb;
        let growth = CycleFilmGrowth::new(film, context);
        // A face carries at least the film a bare face grows in one cycle: the cycle is the
        // model's time resolution. Without the floor an integrator stage that moves the crack
        // past bins whose film has not caught up grows bare-surface film over whole bins, up to
        // 20 times the rate on the trajectory, and the step is thrown away.
        let floor_m = growth.growth_m(0.0);
        let mut total = 0.0;
        for j in 0..CRACK_FILM_BINS {
            let area = surfaces.bin_m2(j);
            if area <= 0.0 {
                break;
            }
            let thickness = crack_bin_thickness_m(context.cell, context.aging, state, &surfaces, j).max(floor_m);
            let lithium = growth.growth_m(thickness) * area * per_metre;
            rate.crack_film_mut()[j] += lithium;
            total += lithium;
        }
        rate.move_lithium(Component::LithiumFilmCrack, total);
    }
}
