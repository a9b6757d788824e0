//! The slow state: what aging has done to the cell so far. Lithium quantities are fractions of
//! the fresh cell's cyclable lithium; lengths are in nanometres, so every component is of
//! order one and one absolute tolerance serves the integrator.

use crate::cycle::{Cell, Health};
use crate::material::constants::FARADAY;

/// The slow state. `lithium_inventory` is integrated as its own component (not derived from
/// the sinks), so conservation can be checked rather than assumed.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AgingState {
    /// Cyclable lithium left, fraction of fresh.
    pub lithium_inventory: f64,
    /// Lithium bound in film on the original surface, fraction of fresh.
    pub lithium_film_original: f64,
    /// Lithium bound in film on crack surface, fraction of fresh.
    pub lithium_film_crack: f64,
    /// Plated lithium lost for good, fraction of fresh.
    pub lithium_plated_dead: f64,
    /// Lithium held in active material that broke off, fraction of fresh.
    pub lithium_stranded: f64,
    /// All lithium ever plated (reversible and not), fraction of fresh (a safety indicator).
    pub plated_total: f64,
    pub film_original_nm: f64,
    pub neg_crack_nm: f64,
    pub pos_crack_nm: f64,
    /// Active material lost, fraction of each fresh electrode.
    pub neg_active_lost: f64,
    pub pos_active_lost: f64,
    /// Charge delivered on discharge so far, Ah (gives equivalent full cycles).
    pub throughput_ah: f64,
    /// Energy delivered on discharge so far, Wh.
    pub energy_wh: f64,
}

/// Number of components of [`AgingState`] as a vector.
pub const STATE_LEN: usize = 13;

impl AgingState {
    /// The fresh cell.
    pub fn fresh(cell: &Cell) -> AgingState {
        let film = cell.aging.film.map_or(0.0, |f| f.initial_thickness_m * 1e9);
        AgingState {
            lithium_inventory: 1.0,
            film_original_nm: film,
            neg_crack_nm: cell.aging.neg_cracking.map_or(0.0, |c| c.initial_length_m * 1e9),
            pos_crack_nm: cell.aging.pos_cracking.map_or(0.0, |c| c.initial_length_m * 1e9),
            ..AgingState::default()
        }
    }

    pub fn to_array(&self) -> [f64; STATE_LEN] {
        [
            self.lithium_inventory,
            self.lithium_film_original,
            self.lithium_film_crack,
            self.lithium_plated_dead,
            self.lithium_stranded,
            self.plated_total,
            self.film_original_nm,
            self.neg_crack_nm,
            self.pos_crack_nm,
            self.neg_active_lost,
            self.pos_active_lost,
            self.throughput_ah,
            self.energy_wh,
        ]
    }

    pub fn from_slice(v: &[f64]) -> AgingState {
        AgingState {
            lithium_inventory: v[0],
            lithium_film_original: v[1],
            lithium_film_crack: v[2],
            lithium_plated_dead: v[3],
            lithium_stranded: v[4],
            plated_total: v[5],
            film_original_nm: v[6],
            neg_crack_nm: v[7],
            pos_crack_nm: v[8],
            neg_active_lost: v[9],
            pos_active_lost: v[10],
            throughput_ah: v[11],
            energy_wh: v[12],
        }
    }

    /// Lithium accounted for: inventory plus every sink; 1 for a conserving integration.
    pub fn lithium_total(&self) -> f64 {
        self.lithium_inventory
            + self.lithium_film_original
            + self.lithium_film_crack
            + self.lithium_plated_dead
            + self.lithium_stranded
    }
}

/// Geometry the mechanisms share: surfaces of the negative electrode now.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Surfaces {
    /// Original (uncracked) active surface still connected, m².
    pub original_m2: f64,
    /// Crack surface exposed since the cell was fresh, m².
    pub crack_m2: f64,
}

/// Surfaces of the negative electrode in a given state: the original surface shrinks with lost
/// active material; crack surface is crack density × 2 faces × width × (growth since fresh).
pub fn negative_surfaces(cell: &Cell, state: &AgingState) -> Surfaces {
    let remaining = 1.0 - state.neg_active_lost;
    let original = cell.negative.surface_area_m2() * remaining;
    let crack = cell.aging.neg_cracking.map_or(0.0, |c| {
        // A crack stops at the particle centre; the integrator may step slightly past it.
        let length = (state.neg_crack_nm * 1e-9).min(cell.negative.particle_radius_m);
        let grown = (length - c.initial_length_m).max(0.0);
        original * c.density_per_m2 * 2.0 * c.width_m * grown
    });
    Surfaces { original_m2: original, crack_m2: crack }
}

/// Film volume on crack surface, m³: the lithium it bound times the film's molar volume. The
/// crack film is tracked through its lithium (not its thickness), because fresh crack area
/// starts at zero and a mean thickness over it would be singular there.
pub fn crack_film_volume_m3(cell: &Cell, state: &AgingState) -> f64 {
    cell.aging
        .film
        .map_or(0.0, |f| state.lithium_film_crack * cell.lithium_inventory_coulomb() / FARADAY * f.molar_volume_m3_mol)
}

/// Mean film thickness on crack surface, m (0 before any crack surface exists).
pub fn crack_film_thickness_m(cell: &Cell, state: &AgingState) -> f64 {
    let area = negative_surfaces(cell, state).crack_m2;
    if area > 0.0 {
        crack_film_volume_m3(cell, state) / area
    } else {
        0.0
    }
}

/// Series resistance of the negative's film, Ω: all film volume, on the original and on crack
/// surface, over the film's conductivity and the original (still connected) surface squared.
/// Fresh crack faces are not counted as extra reaction area: they sit deep in the particle,
/// poorly reached, so their film adds resistance rather than opening a parallel path.
pub fn film_resistance_ohm(cell: &Cell, state: &AgingState) -> f64 {
    let Some(film) = cell.aging.film else { return 0.0 };
    let area = negative_surfaces(cell, state).original_m2;
    let volume = state.film_original_nm * 1e-9 * area + crack_film_volume_m3(cell, state);
    volume / (film.conductivity_s_m * area * area)
}

/// The slow state as the cycle model sees it.
pub fn health_of(cell: &Cell, state: &AgingState) -> Health {
    let fresh = AgingState::fresh(cell);
    Health {
        lithium_inventory_coulomb: cell.lithium_inventory_coulomb() * state.lithium_inventory,
        neg_active_scale: 1.0 - state.neg_active_lost,
        pos_active_scale: 1.0 - state.pos_active_lost,
        added_resistance_ohm: film_resistance_ohm(cell, state) - film_resistance_ohm(cell, &fresh),
    }
}
