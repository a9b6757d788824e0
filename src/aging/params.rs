//! Aging-law parameters in SI units, as read from the cell file's mechanism tables. A
//! mechanism that is switched off (or absent) is `None`.

/// Film (SEI) growth on the negative electrode by a mixed reaction / solvent-diffusion law.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FilmParams {
    /// Reaction rate constant k at the reference potential and temperature, m/s.
    pub reaction_rate_m_s: f64,
    pub reaction_activation_j_mol: f64,
    /// Diffusivity of solvent through the film, m²/s.
    pub solvent_diffusivity_m2_s: f64,
    pub solvent_diffusivity_activation_j_mol: f64,
    /// Solvent concentration in the electrolyte at the film's outer surface, mol/m³.
    pub solvent_concentration_mol_m3: f64,
    /// Cathodic transfer coefficient of the film-forming reaction.
    pub transfer_coefficient: f64,
    /// Potential of the film-forming reaction against Li/Li⁺, V: below it the reaction speeds up.
    pub reference_potential_v: f64,
    /// Film volume formed per mole of lithium consumed, m³/mol.
    pub molar_volume_m3_mol: f64,
    /// Ionic conductivity of the film, S/m.
    pub conductivity_s_m: f64,
    /// Film thickness of the fresh cell, m.
    pub initial_thickness_m: f64,
    pub reference_temperature_k: f64,
}

/// Paris-law fatigue cracking of one electrode's particles.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrackingParams {
    /// Paris coefficient C in da/dN = C (ΔK)^m, m per cycle per (Pa·m^½)^m.
    pub paris_coefficient: f64,
    pub paris_exponent: f64,
    /// Geometry factor Y of ΔK = Y Δσ √(πa) (about 1.12 for a surface crack).
    pub geometry_factor: f64,
    /// Threshold stress-intensity range below which cracks do not grow, Pa·m^½.
    pub threshold_pa_sqrt_m: f64,
    pub initial_length_m: f64,
    /// Cracks per unit particle surface, 1/m².
    pub density_per_m2: f64,
    /// Width of one crack along the surface, m.
    pub width_m: f64,
    pub activation_j_mol: f64,
    pub reference_temperature_k: f64,
}

/// Lithium plating on the negative electrode (Butler–Volmer against Li/Li⁺).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlatingParams {
    /// Exchange current density of lithium deposition, A/m².
    pub exchange_current_a_m2: f64,
    pub activation_j_mol: f64,
    pub transfer_coefficient: f64,
    /// Fraction of plated lithium lost for good (the rest strips back).
    pub irreversible_fraction: f64,
    pub reference_temperature_k: f64,
}

/// Stress-driven loss of active material of one electrode: per cycle
/// k (σ_h,max / σ_c)^m while the surface hydrostatic stress is tensile.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ActiveLossParams {
    /// Fraction of active material lost per cycle at σ_h,max = σ_c.
    pub rate_per_cycle: f64,
    pub critical_stress_pa: f64,
    pub exponent: f64,
    pub activation_j_mol: f64,
    pub reference_temperature_k: f64,
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

/// Every aging law of a cell; `None` means switched off.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AgingParams {
    pub film: Option<FilmParams>,
    pub film_breathing: Option<FilmBreathingParams>,
    pub neg_cracking: Option<CrackingParams>,
    pub pos_cracking: Option<CrackingParams>,
    pub plating: Option<PlatingParams>,
    pub neg_active_loss: Option<ActiveLossParams>,
    pub pos_active_loss: Option<ActiveLossParams>,
}

/// The range of aging data the parameters were fitted to, per axis the data used; forecasts
/// beyond it are warned about. `None` in the cell means the parameters are uncalibrated (demo
/// values).
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct CalibrationRange {
    pub cycles: Option<f64>,
    pub days: Option<f64>,
    /// Equivalent full cycles.
    pub efc: Option<f64>,
    /// Lowest and highest ambient temperature of the fitted data, K.
    pub temperature_k: Option<(f64, f64)>,
}
