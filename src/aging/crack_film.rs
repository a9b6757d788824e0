//! Film growth on the faces of the negative's surface cracks, each face by its own age.
//!
//! Crack growth exposes fresh surface (crack density × two faces × crack width × depth grown).
//! It enters bare and grows film by the same law as the original surface ([`super::film`]) at
//! the same local potential, so while thin it consumes lithium faster. Faces opened early carry
//! thicker film than faces opened last, so the film is tracked by depth: in
//! [`super::state::CRACK_FILM_BINS`] overlapping hat-shaped bins centred on equally spaced
//! depths from the initial crack length to the particle radius (the hats sum to one at every
//! depth, and a bin's area grows smoothly as the crack tip crosses it: square-edged bins put a
//! kink in the lithium rate at every edge, which the integrator pays for in rejected steps).
//!
//! Each bin carries the first two moments of the film's measure Φ over its faces
//! ([`FilmMeasure`]), not the film's volume: thickness relaxes within a few of its own ages once
//! transport limits (dδ̇/dδ ≈ −1/(2 age)), so every bin younger than an integrator step was
//! stiff; Φ grows about evenly with age, and nothing in its rate is stiff. Newly exposed face
//! enters at Φ = 0, which lowers the bin's mean and widens its spread. The growth over a bin is
//! taken at two points, mean ∓ standard deviation, each for half its faces: the growth rate is
//! convex in Φ, so the mean alone reads low, most at the crack tip, where the bin's faces range
//! from bare to the bin's oldest (a single mean over all crack area reads 8–17 % low). Checked
//! against a per-age (cohort) calculation in tests/fatigue.rs.
//!
//! A face is taken to carry at least about the film a bare face grows in one cycle, the model's
//! time resolution (Φ combined in quadrature with that floor, so the rate stays smooth): this
//! keeps a bin the crack has only just reached from growing bare-surface film in an integrator
//! stage that runs ahead of the film.
//!
//! Reference: R. Deshpande, M. Verbrugge, Y.-T. Cheng, J. Wang, P. Liu, J. Electrochem. Soc.
//! 159 (2012) A1730 (film on cracks exposed by fatigue).

use super::film::{
    effective_thickness, reaction_rate, transport_coefficient, CycleFilmGrowth, FilmParams,
    TRANSPORT_REFERENCE_THICKNESS_M,
};
use super::state::{crack_bin_measures_m, CRACK_FILM_BINS};
use super::{negative_surfaces, AgingContext, AgingState, Component, Mechanism, Registration, Side};
use crate::cycle::Cell;
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
        let measure = FilmMeasure::of(context.cell, film);
        // A face carries at least about the film a bare face grows in one cycle (module docs).
        // Without the floor an integrator stage that moves the crack past bins whose film has
        // not caught up grows bare-surface film over whole bins, up to 20 times the rate on the
        // trajectory, and the step is thrown away.
        let floor_measure_m = measure.measure_m(growth.growth_m(0.0));
        let mut total = 0.0;
        for j in 0..CRACK_FILM_BINS {
            let area = surfaces.bin_m2(j);
            if area <= 0.0 {
                break;
            }
            // Each point carries half the bin's faces; the moments are taken on the faces the
            // cell started with (as the measure is), the lithium on the faces still connected.
            let half_fresh = 0.5 * surfaces.bin_fresh_m2(j);
            for point in crack_bin_measures_m(state, &surfaces, j) {
                let point = point.hypot(floor_measure_m);
                let thickness = measure.thickness_m(point);
                let grown_m = growth.growth_m(thickness);
                let measure_rate = grown_m * measure.slope(thickness);
                let bin = &mut rate.crack_film_mut()[j];
                bin.measure_m3 += half_fresh * measure_rate;
                bin.measure_squared_m4 += half_fresh * 2.0 * point * measure_rate;
                total += 0.5 * area * grown_m * per_metre;
            }
        }
        rate.move_lithium(Component::LithiumFilmCrack, total);
    }
}

/// The measure Φ(δ) a bin's film is carried in, m: Φ = δ + ∫₀^δ δ_eff/δ× dδ, with δ× the
/// effective thickness at which transport through the film resists as much as the reaction
/// does (film module docs) at the fresh negative's mid stoichiometry and the film's reference
/// temperature. Film under the mixed law grows as dδ/dN ≈ a/(1 + δ_eff/δ×), so dΦ/dN ≈ a:
/// the measure grows about evenly with age, where the thickness itself relaxes within a few
/// of its ages (dδ̇/dδ ≈ −1/(2 age) once transport limits). Carried in thickness, every bin
/// younger than an integrator step is stiff; carried in Φ, none is. Under real cycle
/// conditions δ× differs from the nominal one, which leaves dΦ/dN a ratio of order one that
/// drifts slowly with thickness.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FilmMeasure {
    film: FilmParams,
    /// δ×, m (effective thickness).
    crossover_m: f64,
}

/// Newton iterations allowed when inverting Φ for n ≠ 1 (convex and increasing: from above
/// the iteration converges monotonically, quadratically near the root).
const MEASURE_NEWTON_ITERATIONS: usize = 60;
const MEASURE_NEWTON_TOLERANCE: f64 = 1e-13;

impl FilmMeasure {
    pub fn of(cell: &Cell, film: &FilmParams) -> FilmMeasure {
        let n = &cell.negative;
        let potential_v = n.ocp.potential(0.5 * (n.stoich_at_soc0 + n.stoich_at_soc100));
        let temperature_k = film.reference_temperature_k;
        let crossover_m = transport_coefficient(film, potential_v, temperature_k)
            / (film.solvent_concentration_mol_m3 * reaction_rate(film, potential_v, temperature_k));
        // Any positive δ× is a valid change of variable (it only sets how even Φ's growth is):
        // held between a picometre and a metre, extreme inputs keep it finite.
        let crossover_m = if crossover_m.is_nan() { 1e-9 } else { crossover_m.clamp(1e-12, 1.0) };
        FilmMeasure { film: *film, crossover_m }
    }

    /// dΦ/dδ at thickness δ.
    pub fn slope(&self, thickness_m: f64) -> f64 {
        1.0 + effective_thickness(&self.film, thickness_m) / self.crossover_m
    }

    /// Φ(δ), m.
    pub fn measure_m(&self, thickness_m: f64) -> f64 {
        let thickness_m = thickness_m.max(0.0);
        let n = self.film.transport.thickness_exponent();
        thickness_m * (1.0 + effective_thickness(&self.film, thickness_m) / ((1.0 + n) * self.crossover_m))
    }

    /// δ(Φ), m: the inverse of [`FilmMeasure::measure_m`].
    pub fn thickness_m(&self, measure_m: f64) -> f64 {
        if measure_m <= 0.0 {
            return 0.0;
        }
        let n = self.film.transport.thickness_exponent();
        if n == 1.0 {
            // Φ = δ + δ²/(2δ×), the root without cancellation.
            return 2.0 * measure_m / (1.0 + (1.0 + 2.0 * measure_m / self.crossover_m).sqrt());
        }
        // Either term of Φ alone bounds δ from above; start from the tighter.
        let reference = TRANSPORT_REFERENCE_THICKNESS_M;
        let transport_only = ((1.0 + n) * self.crossover_m * measure_m * reference.powf(n - 1.0)).powf(1.0 / (1.0 + n));
        let mut thickness = measure_m.min(transport_only);
        for _ in 0..MEASURE_NEWTON_ITERATIONS {
            let step = (self.measure_m(thickness) - measure_m) / self.slope(thickness);
            thickness -= step;
            if step.abs() <= MEASURE_NEWTON_TOLERANCE * thickness {
                break;
            }
        }
        thickness
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::aging::film::FilmTransport;

    fn film(thickness_exponent: f64) -> FilmParams {
        FilmParams {
            reaction_rate_m_s: 1e-15,
            reaction_activation_j_mol: 50e3,
            transport: FilmTransport::InterstitialDiffusion {
                diffusivity_m2_s: 1e-17,
                activation_j_mol: 60e3,
                concentration_mol_m3: 1.0,
                thickness_exponent,
            },
            solvent_concentration_mol_m3: 4000.0,
            transfer_coefficient: 0.5,
            reference_potential_v: 0.4,
            molar_volume_m3_mol: 6e-5,
            conductivity_s_m: 1e-6,
            initial_thickness_m: 5e-9,
            reference_temperature_k: 298.15,
        }
    }

    #[test]
    fn the_measure_inverts_to_its_thickness_and_grows_by_its_slope() {
        // Φ(δ(Φ)) = Φ and dΦ/dδ = 1 + δ_eff/δ× (derived from the definition).
        for n in [1.0, 0.6, 0.25] {
            let measure = FilmMeasure { film: film(n), crossover_m: 0.4e-9 };
            for thickness in [1e-11, 1e-9, 3e-8, 5e-7] {
                let phi = measure.measure_m(thickness);
                assert!((measure.thickness_m(phi) / thickness - 1.0).abs() < 1e-12, "n {n}, δ {thickness}");
                let h = 1e-6 * thickness;
                let slope = (measure.measure_m(thickness + h) - measure.measure_m(thickness - h)) / (2.0 * h);
                assert!((slope / measure.slope(thickness) - 1.0).abs() < 1e-6, "n {n}, δ {thickness}");
            }
        }
    }
}
