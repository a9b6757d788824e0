//! The validated description of a cell, in SI units, as the physics code sees it.
//!
//! [`crate::input`] builds these from unit-suffixed cell files; everything here may be trusted
//! (positive where it must be, stoichiometries inside 0–1, window ordered).

use crate::material::constants::FARADAY;
use crate::material::OpenCircuit;

/// Relative slack before a peak current counts as over the cell's limit: a step driven at the
/// limit is not flagged for round-off, nor a constant-voltage step that follows a
/// constant-current step at the limit and starts a hair above it.
pub const LIMIT_SLACK: f64 = 0.01;

/// One porous electrode, described by its representative particle.
#[derive(Debug, Clone, PartialEq)]
pub struct Electrode {
    pub thickness_m: f64,
    pub area_m2: f64,
    /// Volume fraction of active material in the coating, 0–1.
    pub active_fraction: f64,
    pub particle_radius_m: f64,
    pub max_concentration_mol_m3: f64,
    /// Stoichiometry of this electrode at 0 % and 100 % state of charge of the fresh cell.
    /// Together they set the cell's lithium inventory (from the 100 % point).
    pub stoich_at_soc0: f64,
    pub stoich_at_soc100: f64,
    pub diffusivity_m2_s: f64,
    pub diffusivity_activation_j_mol: f64,
    /// Rate constant k of i₀ = F·k·c_max·√(θ(1−θ))·√(c_e / 1000 mol m⁻³), m/s.
    pub rate_constant_m_s: f64,
    pub rate_constant_activation_j_mol: f64,
    pub ocp: OpenCircuit,
    /// dU/dT of this electrode's open-circuit potential, V/K.
    pub entropic_coefficient_v_k: f64,
    pub youngs_modulus_pa: f64,
    pub poisson_ratio: f64,
    pub partial_molar_volume_m3_mol: f64,
}

impl Electrode {
    /// Volume of active material, m³.
    pub fn active_volume_m3(&self) -> f64 {
        self.thickness_m * self.area_m2 * self.active_fraction
    }

    /// Electrochemically active surface area, m² (3 × active volume / radius for spheres).
    pub fn surface_area_m2(&self) -> f64 {
        3.0 * self.active_volume_m3() / self.particle_radius_m
    }

    /// Charge to fill the host from stoichiometry 0 to 1, C (Q = ε L A c_max F).
    pub fn capacity_coulomb(&self) -> f64 {
        self.active_volume_m3() * self.max_concentration_mol_m3 * FARADAY
    }

    /// ΩE/(3(1−ν)), Pa per mol/m³: the prefactor of the diffusion-induced surface stress.
    pub fn stress_coefficient_pa_m3_mol(&self) -> f64 {
        self.partial_molar_volume_m3_mol * self.youngs_modulus_pa / (3.0 * (1.0 - self.poisson_ratio))
    }
}

/// A whole cell: two electrodes, a lumped ohmic path, a lumped thermal mass, and its limits.
#[derive(Debug, Clone, PartialEq)]
pub struct Cell {
    pub name: String,
    pub negative: Electrode,
    pub positive: Electrode,
    pub nominal_capacity_coulomb: f64,
    pub voltage_min_v: f64,
    pub voltage_max_v: f64,
    pub ohmic_resistance_ohm: f64,
    pub ohmic_activation_j_mol: f64,
    /// Resistance of the fresh cell's surface film, Ω (aging adds to it).
    pub film_resistance_ohm: f64,
    pub electrolyte_concentration_mol_m3: f64,
    pub mass_kg: f64,
    pub specific_heat_j_kg_k: f64,
    /// Convective conductance h·A to ambient, W/K.
    pub convective_conductance_w_k: f64,
    pub max_charge_current_a: f64,
    pub max_discharge_current_a: f64,
    pub temperature_min_k: f64,
    pub temperature_max_k: f64,
    /// Temperature at which every rate takes its file value and capacity/resistance are reported.
    pub reference_temperature_k: f64,
    /// Radial finite-volume shells per particle.
    pub shells: usize,
    /// Lithium plating on the negative (the kinetics of `[negative.plating]`), None when off:
    /// the cycle model splits the negative's current between intercalation and plating.
    pub plating: Option<super::kinetics::PlatingKinetics>,
}

impl Cell {
    /// Heat capacity m·c_p, J/K.
    pub fn heat_capacity_j_k(&self) -> f64 {
        self.mass_kg * self.specific_heat_j_kg_k
    }

    /// Thermal time constant m·c_p/(h·A), s.
    pub fn thermal_time_constant_s(&self) -> f64 {
        self.heat_capacity_j_k() / self.convective_conductance_w_k
    }

    /// Cyclable lithium of the fresh cell, expressed as charge (C): x₁₀₀·Q_neg + y₁₀₀·Q_pos.
    pub fn lithium_inventory_coulomb(&self) -> f64 {
        self.negative.stoich_at_soc100 * self.negative.capacity_coulomb()
            + self.positive.stoich_at_soc100 * self.positive.capacity_coulomb()
    }
}
