//! The slow state: what aging has done to the cell so far, declared once in [`COMPONENTS`].
//!
//! Lithium quantities are fractions of the fresh cell's cyclable lithium; lengths are in
//! nanometres, so every component is of order one and one absolute tolerance serves the
//! integrator. The integrator's vector, the forecast's reported columns, the summary's losses
//! and the plots are all read from the table; a mechanism with state of its own adds one
//! [`Component`] variant and one row.

use std::ops::{Index, IndexMut};

use super::AgingParams;
use crate::cycle::{Cell, Health};
use crate::material::constants::FARADAY;

/// One component of the slow state. The discriminant is the position in [`COMPONENTS`] and in
/// the integrator's vector.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Component {
    LithiumInventory,
    LithiumFilmOriginal,
    LithiumFilmFracture,
    LithiumFilmCrack,
    LithiumPlatedDead,
    LithiumStranded,
    LithiumPositiveFilm,
    PlatedTotal,
    FilmOriginalNm,
    NegCrackNm,
    PosCrackNm,
    NegActiveLost,
    PosActiveLost,
    ThroughputAh,
    EnergyWh,
}

/// What a component measures, which fixes how it is reported.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measure {
    /// Cyclable lithium left, fraction of fresh.
    LithiumInventory,
    /// Lithium taken out of cycling for good, fraction of the fresh cyclable lithium; reported
    /// in Ah and as a percentage of the fresh capacity.
    LithiumLost,
    /// Lithium counted for information (not a loss), fraction of the fresh cyclable lithium;
    /// reported like a loss.
    LithiumCounted,
    /// A length, nm.
    Nanometres,
    /// A crack length of one electrode, nm; reported no longer than the particle radius.
    CrackNanometres(super::Side),
    /// A fraction of one electrode's fresh active material; reported in %.
    ElectrodeFraction,
    /// Charge, Ah.
    AmpereHours,
    /// Energy, Wh.
    WattHours,
}

/// Which panel of the fade plot draws a component.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PlotGroup {
    /// Stacked areas of lithium lost.
    LithiumLoss,
    /// Lines of active material lost.
    ActiveMaterial,
    None,
}

/// One row of the slow-state table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ComponentSpec {
    pub component: Component,
    /// Column name in `fade.csv` (unit suffixes are added by the measure) and key in JSON.
    pub column: &'static str,
    /// Plain-language name for plots and summaries.
    pub label: &'static str,
    pub measure: Measure,
    pub plot: PlotGroup,
    /// The mechanism(s) whose rates fill it.
    pub filled_by: &'static str,
    /// A component that is a part of another: its parent also holds it (so the parent's
    /// integration is unchanged by the split), it is reported out of the parent, and it does
    /// not steer the integrator's step size.
    pub part_of: Option<Component>,
}

use super::Side;
use Component as C;

const fn row(
    component: Component,
    column: &'static str,
    label: &'static str,
    measure: Measure,
    plot: PlotGroup,
    filled_by: &'static str,
) -> ComponentSpec {
    ComponentSpec { component, column, label, measure, plot, filled_by, part_of: None }
}

/// The slow state, declared once. Order = [`Component`] order (checked by a test).
pub const COMPONENTS: &[ComponentSpec] = &[
    row(
        C::LithiumInventory,
        "lithium_inventory",
        "cyclable lithium",
        Measure::LithiumInventory,
        PlotGroup::None,
        "every lithium sink",
    ),
    row(
        C::LithiumFilmOriginal,
        "lithium_lost_film_original",
        "film on original surface",
        Measure::LithiumLost,
        PlotGroup::LithiumLoss,
        "film on original surface",
    ),
    ComponentSpec {
        part_of: Some(C::LithiumFilmOriginal),
        ..row(
            C::LithiumFilmFracture,
            "lithium_lost_film_fracture",
            "film regrown after fracture",
            Measure::LithiumLost,
            PlotGroup::LithiumLoss,
            "film fracture by lattice breathing",
        )
    },
    row(
        C::LithiumFilmCrack,
        "lithium_lost_film_crack",
        "film on crack surface",
        Measure::LithiumLost,
        PlotGroup::LithiumLoss,
        "film on crack surface",
    ),
    row(
        C::LithiumPlatedDead,
        "lithium_lost_plating",
        "plating (irreversible)",
        Measure::LithiumLost,
        PlotGroup::LithiumLoss,
        "lithium plating",
    ),
    row(
        C::LithiumStranded,
        "lithium_lost_stranded",
        "in lost active material",
        Measure::LithiumLost,
        PlotGroup::LithiumLoss,
        "active material loss",
    ),
    row(
        C::LithiumPositiveFilm,
        "lithium_lost_positive_film",
        "film on the positive",
        Measure::LithiumLost,
        PlotGroup::LithiumLoss,
        "electrolyte oxidation (positive)",
    ),
    row(C::PlatedTotal, "plated_total", "plated in total", Measure::LithiumCounted, PlotGroup::None, "lithium plating"),
    row(
        C::FilmOriginalNm,
        "film_original",
        "film on original surface",
        Measure::Nanometres,
        PlotGroup::None,
        "film on original surface",
    ),
    row(
        C::NegCrackNm,
        "neg_crack",
        "crack length (negative)",
        Measure::CrackNanometres(Side::Negative),
        PlotGroup::None,
        "cracking (negative)",
    ),
    row(
        C::PosCrackNm,
        "pos_crack",
        "crack length (positive)",
        Measure::CrackNanometres(Side::Positive),
        PlotGroup::None,
        "cracking (positive)",
    ),
    row(
        C::NegActiveLost,
        "neg_active_lost",
        "active material, negative",
        Measure::ElectrodeFraction,
        PlotGroup::ActiveMaterial,
        "active material loss (negative)",
    ),
    row(
        C::PosActiveLost,
        "pos_active_lost",
        "active material, positive",
        Measure::ElectrodeFraction,
        PlotGroup::ActiveMaterial,
        "active material loss (positive)",
    ),
    row(C::ThroughputAh, "throughput", "discharge throughput", Measure::AmpereHours, PlotGroup::None, "the duty cycle"),
    row(C::EnergyWh, "energy", "discharge energy", Measure::WattHours, PlotGroup::None, "the duty cycle"),
];

/// Number of components of the slow state.
pub const COMPONENT_COUNT: usize = COMPONENTS.len();

/// The slow state: one value per row of [`COMPONENTS`], indexed by [`Component`].
/// `LithiumInventory` is integrated as its own component (not derived from the sinks), so
/// conservation can be checked rather than assumed.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AgingState {
    values: [f64; COMPONENT_COUNT],
}

impl Index<Component> for AgingState {
    type Output = f64;
    fn index(&self, component: Component) -> &f64 {
        &self.values[component as usize]
    }
}

impl IndexMut<Component> for AgingState {
    fn index_mut(&mut self, component: Component) -> &mut f64 {
        &mut self.values[component as usize]
    }
}

impl AgingState {
    /// The fresh cell.
    pub fn fresh(aging: &AgingParams) -> AgingState {
        let mut state = AgingState::default();
        state[C::LithiumInventory] = 1.0;
        state[C::FilmOriginalNm] = aging.film.map_or(0.0, |f| f.initial_thickness_m * 1e9);
        state[C::NegCrackNm] = aging.neg_cracking.map_or(0.0, |c| c.initial_length_m * 1e9);
        state[C::PosCrackNm] = aging.pos_cracking.map_or(0.0, |c| c.initial_length_m * 1e9);
        state
    }

    /// The values in table order (the integrator's vector).
    pub fn values(&self) -> &[f64; COMPONENT_COUNT] {
        &self.values
    }

    /// A state from values in table order.
    pub fn from_values(values: [f64; COMPONENT_COUNT]) -> AgingState {
        AgingState { values }
    }

    /// Moves `amount` (fraction of the fresh cyclable lithium, per cycle in a rate) out of the
    /// cyclable inventory into the sink `to`, and into the sink it is a part of. The one way a
    /// mechanism takes lithium, so no mechanism can forget the inventory side.
    pub fn move_lithium(&mut self, to: Component, amount: f64) {
        let spec = &COMPONENTS[to as usize];
        debug_assert_eq!(spec.measure, Measure::LithiumLost, "{:?} is not a lithium sink", to);
        self[to] += amount;
        if let Some(parent) = spec.part_of {
            self[parent] += amount;
        }
        self[C::LithiumInventory] -= amount;
    }

    /// A lithium sink's own share: its value less the parts reported separately.
    pub fn own_share(&self, component: Component) -> f64 {
        let parts: f64 = COMPONENTS.iter().filter(|s| s.part_of == Some(component)).map(|s| self[s.component]).sum();
        self[component] - parts
    }

    /// Lithium accounted for: inventory plus every sink; 1 for a conserving integration.
    pub fn lithium_total(&self) -> f64 {
        self[C::LithiumInventory]
            + COMPONENTS
                .iter()
                .filter(|s| s.measure == Measure::LithiumLost && s.part_of.is_none())
                .map(|s| self[s.component])
                .sum::<f64>()
    }
}

/// Crack length of one electrode, m. Cracks stop at the particle centre; the integrator may
/// step slightly past it, and this is the one place that says so.
pub fn crack_length_m(cell: &Cell, state: &AgingState, side: Side) -> f64 {
    let (nm, radius) = match side {
        Side::Negative => (state[C::NegCrackNm], cell.negative.particle_radius_m),
        Side::Positive => (state[C::PosCrackNm], cell.positive.particle_radius_m),
    };
    (nm * 1e-9).min(radius)
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
pub fn negative_surfaces(cell: &Cell, aging: &AgingParams, state: &AgingState) -> Surfaces {
    let remaining = 1.0 - state[C::NegActiveLost];
    let original = cell.negative.surface_area_m2() * remaining;
    let crack = aging.neg_cracking.map_or(0.0, |c| {
        let grown = (crack_length_m(cell, state, Side::Negative) - c.initial_length_m).max(0.0);
        original * c.density_per_m2 * 2.0 * c.width_m * grown
    });
    Surfaces { original_m2: original, crack_m2: crack }
}

/// Film volume on crack surface, m³: the lithium it bound times the film's molar volume. The
/// crack film is tracked through its lithium (not its thickness), because fresh crack area
/// starts at zero and a mean thickness over it would be singular there.
pub fn crack_film_volume_m3(cell: &Cell, aging: &AgingParams, state: &AgingState) -> f64 {
    aging.film.map_or(0.0, |f| {
        state[C::LithiumFilmCrack] * cell.lithium_inventory_coulomb() / FARADAY * f.molar_volume_m3_mol
    })
}

/// Mean film thickness on crack surface, m (0 before any crack surface exists).
pub fn crack_film_thickness_m(cell: &Cell, aging: &AgingParams, state: &AgingState) -> f64 {
    let area = negative_surfaces(cell, aging, state).crack_m2;
    if area > 0.0 {
        crack_film_volume_m3(cell, aging, state) / area
    } else {
        0.0
    }
}

/// Series resistance of the negative's film, Ω: all film volume, on the original and on crack
/// surface, over the film's conductivity and the original (still connected) surface squared.
/// Fresh crack faces are not counted as extra reaction area: they sit deep in the particle,
/// poorly reached, so their film adds resistance rather than opening a parallel path.
pub fn film_resistance_ohm(cell: &Cell, aging: &AgingParams, state: &AgingState) -> f64 {
    let Some(film) = aging.film else { return 0.0 };
    let area = negative_surfaces(cell, aging, state).original_m2;
    let volume = state[C::FilmOriginalNm] * 1e-9 * area + crack_film_volume_m3(cell, aging, state);
    volume / (film.conductivity_s_m * area * area)
}

/// The slow state as the cycle model sees it.
pub fn health_of(cell: &Cell, aging: &AgingParams, state: &AgingState) -> Health {
    let fresh = AgingState::fresh(aging);
    Health {
        lithium_inventory_coulomb: cell.lithium_inventory_coulomb() * state[C::LithiumInventory],
        neg_active_scale: 1.0 - state[C::NegActiveLost],
        pos_active_scale: 1.0 - state[C::PosActiveLost],
        added_resistance_ohm: film_resistance_ohm(cell, aging, state) - film_resistance_ohm(cell, aging, &fresh),
    }
}

/// The same state with only the lithium lost to film and plating: fresh electrodes (so none
/// of their material, and none of the lithium stranded in it, lost) and no film resistance
/// added. The capacity of this health against the fresh one is the fade due to lithium loss;
/// the rest is due to active material lost together with the lithium it held.
pub fn lithium_only(state: &AgingState, aging: &AgingParams) -> AgingState {
    let mut only = AgingState::fresh(aging);
    only[C::LithiumInventory] = state[C::LithiumInventory] + state[C::LithiumStranded];
    only
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_table_is_in_component_order_and_parts_name_sinks() {
        for (i, spec) in COMPONENTS.iter().enumerate() {
            assert_eq!(spec.component as usize, i, "{:?} is out of order", spec.component);
            if let Some(parent) = spec.part_of {
                assert_eq!(COMPONENTS[parent as usize].measure, Measure::LithiumLost);
                assert_eq!(spec.measure, Measure::LithiumLost);
            }
        }
        let mut columns: Vec<_> = COMPONENTS.iter().map(|s| s.column).collect();
        columns.sort_unstable();
        columns.dedup();
        assert_eq!(columns.len(), COMPONENT_COUNT, "column names must be distinct");
    }

    #[test]
    fn moving_lithium_conserves_it_and_fills_the_parent_of_a_part() {
        let mut state = AgingState::fresh(&AgingParams::default());
        state.move_lithium(C::LithiumFilmOriginal, 0.01);
        state.move_lithium(C::LithiumFilmFracture, 0.004);
        state.move_lithium(C::LithiumStranded, 0.002);
        assert!((state.lithium_total() - 1.0).abs() < 1e-15);
        assert!((state[C::LithiumFilmOriginal] - 0.014).abs() < 1e-15);
        assert!((state.own_share(C::LithiumFilmOriginal) - 0.01).abs() < 1e-15);
        assert!((state.lithium_total() - state[C::LithiumInventory] - 0.016).abs() < 1e-15);
    }
}
