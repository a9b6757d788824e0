//! The slow state: what aging has done to the cell so far, declared once in [`COMPONENTS`].
//!
//! Lithium quantities are fractions of the fresh cell's cyclable lithium; lengths are in
//! nanometres, so every component is of order one and one absolute tolerance serves the
//! integrator. The integrator's vector, the forecast's reported columns, the summary's losses
//! and the plots are all read from the table; a mechanism with state of its own adds one
//! [`Component`] variant and one row.

use std::ops::{Index, IndexMut};

use super::crack_film::FilmMeasure;
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
    NegCentreCrackNm,
    PosCentreCrackNm,
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
        "surface crack depth (negative)",
        Measure::CrackNanometres(Side::Negative),
        PlotGroup::None,
        "cracking (negative)",
    ),
    row(
        C::PosCrackNm,
        "pos_crack",
        "surface crack depth (positive)",
        Measure::CrackNanometres(Side::Positive),
        PlotGroup::None,
        "cracking (positive)",
    ),
    row(
        C::NegCentreCrackNm,
        "neg_centre_crack",
        "centre crack radius (negative)",
        Measure::CrackNanometres(Side::Negative),
        PlotGroup::None,
        "cracking (negative)",
    ),
    row(
        C::PosCentreCrackNm,
        "pos_centre_crack",
        "centre crack radius (positive)",
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

/// Depth bins of the negative's surface crack whose faces carry film of their own age
/// ([`super::crack_film`]): overlapping hats centred on equally spaced depths from the initial
/// crack length to the particle radius. 64 keep the crack-face film within 1 % of a per-age
/// calculation (tests/fatigue.rs; 48 read 1.1 % low).
pub const CRACK_FILM_BINS: usize = 64;

/// Length of the integrated vector: the components, then the crack-film bins' two moments.
pub const STATE_LEN: usize = COMPONENT_COUNT + 2 * CRACK_FILM_BINS;

/// The film on one depth bin of the crack faces: the first two moments of its measure
/// ([`FilmMeasure`]) over the bin's faces as the cell started with them (film on material since
/// lost went with it, so the moments over those faces describe the faces still there). Newly
/// exposed face adds area at zero measure; the mean and spread over the bin follow.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct BinFilm {
    /// ∫ Φ dA, m³.
    pub measure_m3: f64,
    /// ∫ Φ² dA, m⁴.
    pub measure_squared_m4: f64,
}

/// The slow state: one value per row of [`COMPONENTS`], indexed by [`Component`], and the
/// film on each depth bin of the negative's surface crack ([`BinFilm`]; the lithium it binds is
/// `LithiumFilmCrack`). `LithiumInventory` is integrated
/// as its own component (not derived from the sinks), so conservation can be checked rather
/// than assumed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AgingState {
    values: [f64; COMPONENT_COUNT],
    crack_film: [BinFilm; CRACK_FILM_BINS],
}

impl Default for AgingState {
    fn default() -> AgingState {
        AgingState { values: [0.0; COMPONENT_COUNT], crack_film: [BinFilm::default(); CRACK_FILM_BINS] }
    }
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
        state[C::NegCentreCrackNm] = state[C::NegCrackNm];
        state[C::PosCentreCrackNm] = state[C::PosCrackNm];
        state
    }

    /// The components in table order.
    pub fn values(&self) -> &[f64; COMPONENT_COUNT] {
        &self.values
    }

    /// Film on each depth bin of the negative's surface crack.
    pub fn crack_film(&self) -> &[BinFilm; CRACK_FILM_BINS] {
        &self.crack_film
    }

    pub fn crack_film_mut(&mut self) -> &mut [BinFilm; CRACK_FILM_BINS] {
        &mut self.crack_film
    }

    /// The integrated vector: components, then each crack-film bin's two moments.
    pub fn to_vector(&self) -> [f64; STATE_LEN] {
        std::array::from_fn(|i| match i.checked_sub(COMPONENT_COUNT) {
            None => self.values[i],
            Some(k) if k % 2 == 0 => self.crack_film[k / 2].measure_m3,
            Some(k) => self.crack_film[k / 2].measure_squared_m4,
        })
    }

    /// A state from the integrated vector.
    pub fn from_vector(v: &[f64; STATE_LEN]) -> AgingState {
        AgingState {
            values: std::array::from_fn(|i| v[i]),
            crack_film: std::array::from_fn(|j| BinFilm {
                measure_m3: v[COMPONENT_COUNT + 2 * j],
                measure_squared_m4: v[COMPONENT_COUNT + 2 * j + 1],
            }),
        }
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

    /// Each lithium sink's own share of all the lithium lost, in table order (parts separately
    /// from their parent's own share); empty while nothing is lost.
    pub fn sink_shares(&self) -> Vec<(Component, f64)> {
        let sinks = || COMPONENTS.iter().filter(|s| s.measure == Measure::LithiumLost);
        let total: f64 = sinks().map(|s| self.own_share(s.component)).sum();
        if total <= 0.0 {
            return Vec::new();
        }
        sinks().map(|s| (s.component, self.own_share(s.component) / total)).collect()
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
    /// Crack-face area per metre of surface-crack depth, m² (both faces of every crack).
    pub crack_per_depth_m: f64,
    /// The same on all the material the cell started with: film on material since lost went
    /// with it, so a depth's film thickness is its film volume over this area.
    pub crack_per_depth_fresh_m: f64,
    /// Depth the surface crack has grown since the cell was fresh, m.
    pub crack_grown_m: f64,
    /// Spacing of the crack-face film's depth bins, m: their centres lie that far apart from
    /// the initial crack length on, each hat reaching one spacing either side.
    pub bin_spacing_m: f64,
}

impl Surfaces {
    /// Crack-face area exposed since the cell was fresh, m².
    pub fn crack_m2(&self) -> f64 {
        self.crack_per_depth_m * self.crack_grown_m
    }

    /// Crack-face area of depth bin `j` exposed so far (its hat's weight over the depth grown), m².
    pub fn bin_m2(&self, j: usize) -> f64 {
        self.crack_per_depth_m * self.bin_exposed_m(j)
    }

    /// The same on all the material the cell started with, m² (see `crack_per_depth_fresh_m`).
    pub fn bin_fresh_m2(&self, j: usize) -> f64 {
        self.crack_per_depth_fresh_m * self.bin_exposed_m(j)
    }

    fn bin_exposed_m(&self, j: usize) -> f64 {
        // ∫₀^u of the unit hat on [−1, 1].
        let cumulative = |u: f64| {
            if u <= -1.0 {
                0.0
            } else if u <= 0.0 {
                0.5 * (u + 1.0) * (u + 1.0)
            } else if u < 1.0 {
                1.0 - 0.5 * (1.0 - u) * (1.0 - u)
            } else {
                1.0
            }
        };
        let node = j as f64;
        self.bin_spacing_m * (cumulative(self.crack_grown_m / self.bin_spacing_m - node) - cumulative(-node))
    }
}

/// Surfaces of the negative electrode in a given state: the original surface shrinks with lost
/// active material; crack-face area is crack density × 2 faces × width × depth grown since
/// fresh, on the original surface still connected.
pub fn negative_surfaces(cell: &Cell, aging: &AgingParams, state: &AgingState) -> Surfaces {
    let remaining = 1.0 - state[C::NegActiveLost];
    let original = cell.negative.surface_area_m2() * remaining;
    let radius = cell.negative.particle_radius_m;
    match aging.neg_cracking {
        Some(c) => Surfaces {
            original_m2: original,
            crack_per_depth_m: original * c.density_per_m2 * 2.0 * c.width_m,
            crack_per_depth_fresh_m: cell.negative.surface_area_m2() * c.density_per_m2 * 2.0 * c.width_m,
            crack_grown_m: (crack_length_m(cell, state, Side::Negative) - c.initial_length_m).max(0.0),
            bin_spacing_m: (radius - c.initial_length_m) / (CRACK_FILM_BINS - 1) as f64,
        },
        None => Surfaces {
            original_m2: original,
            crack_per_depth_m: 0.0,
            crack_per_depth_fresh_m: 0.0,
            crack_grown_m: 0.0,
            bin_spacing_m: radius / (CRACK_FILM_BINS - 1) as f64,
        },
    }
}

/// Film volume bound by a lithium fraction, m³.
pub fn film_volume_of_lithium_m3(cell: &Cell, aging: &AgingParams, lithium: f64) -> f64 {
    aging.film.map_or(0.0, |f| lithium * cell.lithium_inventory_coulomb() / FARADAY * f.molar_volume_m3_mol)
}

/// Mean film thickness over all crack faces, m (0 before any crack face exists): for reports.
pub fn crack_film_mean_thickness_m(cell: &Cell, aging: &AgingParams, state: &AgingState) -> f64 {
    let surfaces = negative_surfaces(cell, aging, state);
    let area = surfaces.crack_per_depth_fresh_m * surfaces.crack_grown_m;
    if area > 0.0 {
        film_volume_of_lithium_m3(cell, aging, state[C::LithiumFilmCrack]) / area
    } else {
        0.0
    }
}

/// The film measure on depth bin `j` of the crack faces, m, as two points that stand for its
/// spread: mean ∓ standard deviation over the bin's faces (each carrying half its area; a
/// two-point rule exact for any quadratic in Φ). Both are 0 before the bin is exposed.
pub fn crack_bin_measures_m(state: &AgingState, surfaces: &Surfaces, j: usize) -> [f64; 2] {
    let area = surfaces.bin_fresh_m2(j);
    if area <= 0.0 {
        return [0.0; 2];
    }
    let film = state.crack_film[j];
    // Never negative, even in an integrator's trial stage.
    let mean = (film.measure_m3 / area).max(0.0);
    let spread = (film.measure_squared_m4 / area - mean * mean).max(0.0).sqrt();
    [(mean - spread).max(0.0), mean + spread]
}

/// Area-specific charge-transfer resistance of the negative at its reference temperature and
/// mid stoichiometry, Ω m²: RT/(F i₀), the linearised Butler–Volmer resistance.
fn charge_transfer_ohm_m2(cell: &Cell) -> f64 {
    let n = &cell.negative;
    let theta = 0.5 * (n.stoich_at_soc0 + n.stoich_at_soc100);
    let i0 = crate::cycle::kinetics::exchange_current_density(
        n.rate_constant_m_s,
        n.max_concentration_mol_m3,
        theta,
        cell.electrolyte_concentration_mol_m3,
    );
    crate::material::constants::GAS_CONSTANT * cell.reference_temperature_k / (FARADAY * i0)
}

/// Interface resistance of the negative, Ω: the original surface and every exposed depth bin
/// of the crack faces are parallel paths, each charge transfer in series with its own film:
/// 1 / Σ A_k/(r_ct + δ_k/κ).
pub fn interface_resistance_ohm(cell: &Cell, aging: &AgingParams, state: &AgingState) -> f64 {
    let r_ct = charge_transfer_ohm_m2(cell);
    let conductivity = aging.film.map_or(f64::INFINITY, |f| f.conductivity_s_m);
    let surfaces = negative_surfaces(cell, aging, state);
    let original_film = state[C::FilmOriginalNm] * 1e-9;
    let mut conductance = surfaces.original_m2 / (r_ct + original_film / conductivity);
    // Without film the faces are bare.
    let measure = aging.film.map(|film| FilmMeasure::of(cell, &film));
    for j in 0..CRACK_FILM_BINS {
        let area = surfaces.bin_m2(j);
        if area > 0.0 {
            let points = crack_bin_measures_m(state, &surfaces, j);
            for point in points {
                let film_m = measure.map_or(0.0, |m| m.thickness_m(point));
                conductance += 0.5 * area / (r_ct + film_m / conductivity);
            }
        }
    }
    1.0 / conductance
}

/// Series resistance the cycle model adds for the negative's interface, Ω: the interface
/// resistance less the charge transfer of the original surface that its Butler–Volmer kinetics
/// already carry (negative when fresh crack faces open more reaction area than film closes).
pub fn film_resistance_ohm(cell: &Cell, aging: &AgingParams, state: &AgingState) -> f64 {
    let original = negative_surfaces(cell, aging, state).original_m2;
    interface_resistance_ohm(cell, aging, state) - charge_transfer_ohm_m2(cell) / original
}

/// The rise of the negative's interface resistance since fresh, split by cause, Ω: film on the
/// original surface, crack faces (their film less the reaction area they add), and original
/// surface lost with active material. Taken in that order; the parts sum to the whole.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InterfaceRise {
    pub film_original_ohm: f64,
    pub crack_faces_ohm: f64,
    pub lost_area_ohm: f64,
}

pub fn interface_rise(cell: &Cell, aging: &AgingParams, state: &AgingState) -> InterfaceRise {
    let fresh = interface_resistance_ohm(cell, aging, &AgingState::fresh(aging));
    let mut only_film = AgingState::fresh(aging);
    only_film[C::FilmOriginalNm] = state[C::FilmOriginalNm];
    let mut with_cracks = *state;
    with_cracks[C::NegActiveLost] = 0.0;
    let film = interface_resistance_ohm(cell, aging, &only_film);
    let cracks = interface_resistance_ohm(cell, aging, &with_cracks);
    let all = interface_resistance_ohm(cell, aging, state);
    InterfaceRise { film_original_ohm: film - fresh, crack_faces_ohm: cracks - film, lost_area_ohm: all - cracks }
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
    // Film stays on the surfaces of the fresh cell's geometry (no crack faces), so it adds no
    // resistance here either: the fresh film thickness is kept.
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
