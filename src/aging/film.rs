//! Film (SEI) growth on the original surface of the negative electrode.
//!
//! Two laws share one form: film-forming reduction at the film's surface at a rate
//! k(φ, T) = k_ref·A_k(T)·exp(−α F (φ − U_ref)/(R T)), in series with the transport that feeds
//! it through the film already there. Per unit area the lithium consumed is
//! N = 1 / (1/(c_sol k) + δ_eff/Γ), and the film thickens as dδ/dt = V̄ N. The laws differ in
//! what crosses the film (the transport coefficient Γ and the effective thickness δ_eff):
//!
//! - **Solvent diffusion** (the mixed law): solvent diffuses in to the electrode,
//!   Γ = D_sol(T)·c_sol, δ_eff = δ. Γ does not depend on the electrode potential, so once
//!   transport limits (thick films, long storage) the state of charge no longer matters and
//!   only D_sol's activation energy sets the temperature dependence. At a fixed potential this
//!   integrates in closed form (the Deal–Grove relation): linear growth while reaction-limited,
//!   √t once transport-limited, crossing over at δ ≈ 2 D_sol / k.
//! - **Interstitial diffusion**: neutral lithium interstitials leave the electrode and diffuse
//!   out through the film to react at its outer surface. Their concentration at the inner
//!   interface is in equilibrium with the electrode, c_i = c_i0·exp(−F φ/(R T)) (c_i0 against
//!   lithium metal), so Γ = D_i(T)·c_i0·exp(−F φ/(R T)): the potential dependence survives in
//!   the transport-limited regime — a lower graphite potential (higher state of charge) grows
//!   film faster, plateau by plateau with the graphite's staging — and the apparent activation
//!   energy gains F φ. With δ_eff = δ_ref (δ/δ_ref)^n the transport-limited loss grows as
//!   t^(1/(1+n)): n = 1 is the plain diffusion law (√t); n < 1 reads as a film whose
//!   transport-limiting dense inner layer thickens more slowly than the whole film (the
//!   two-layer picture: a compact inner layer under a porous outer one), giving the time
//!   exponents 0.5–0.8 that calendar data show (n = 1/z − 1: z = 0.75 ↔ n = ⅓).
//!
//! At a fixed potential and temperature both integrate to an explicit time of thickness,
//! t(δ) = (δ − δ₀)/(V̄ c_sol k) + δ_ref^(1−n)(δ^(1+n) − δ₀^(1+n))/((1 + n) V̄ Γ'), which is solved
//! for δ (Newton's method from above on a convex increasing function; closed form for n = 1).
//!
//! References: H. J. Ploehn, P. Ramadass, R. E. White, J. Electrochem. Soc. 151 (2004) A456;
//! M. Safari, M. Morcrette, A. Teyssot, C. Delacourt, J. Electrochem. Soc. 156 (2009) A145;
//! H. J. Pinson, M. Z. Bazant, J. Electrochem. Soc. 160 (2013) A243; B. E. Deal, A. S. Grove,
//! J. Appl. Phys. 36 (1965) 3770 (the integrated form); F. Single, A. Latz, B. Horstmann,
//! ChemSusChem 11 (2018) 1950 (continued growth by neutral lithium interstitial diffusion,
//! its potential dependence; from memory); L. von Kolzenberg, A. Latz, B. Horstmann,
//! ChemSusChem 13 (2020) 3901 (loss ∝ t^β between reaction- and transport-limited growth).

use super::{AgingContext, AgingState, Component, Mechanism, Registration, Side, TableReader};
use crate::cycle::TracePoint;
use crate::material::arrhenius_factor;
use crate::material::constants::{FARADAY, GAS_CONSTANT};
use crate::material::units::{CUBIC_CENTIMETRE, NANO};

/// Reaction rate constant of film formation at potential φ (V vs Li/Li⁺) and temperature, m/s.
pub fn reaction_rate(p: &FilmParams, potential_v: f64, temperature_k: f64) -> f64 {
    p.reaction_rate_m_s
        * arrhenius_factor(p.reaction_activation_j_mol, temperature_k, p.reference_temperature_k)
        * (-p.transfer_coefficient * FARADAY * (potential_v - p.reference_potential_v) / (GAS_CONSTANT * temperature_k))
            .exp()
}

/// Transport coefficient Γ of the film at potential φ and temperature, mol/(m s): the
/// transport-limited flux is Γ/δ_eff.
pub fn transport_coefficient(p: &FilmParams, potential_v: f64, temperature_k: f64) -> f64 {
    match p.transport {
        FilmTransport::SolventDiffusion { diffusivity_m2_s, activation_j_mol } => {
            diffusivity_m2_s
                * arrhenius_factor(activation_j_mol, temperature_k, p.reference_temperature_k)
                * p.solvent_concentration_mol_m3
        }
        FilmTransport::InterstitialDiffusion { diffusivity_m2_s, activation_j_mol, concentration_mol_m3, .. } => {
            diffusivity_m2_s
                * arrhenius_factor(activation_j_mol, temperature_k, p.reference_temperature_k)
                * concentration_mol_m3
                * (-FARADAY * potential_v / (GAS_CONSTANT * temperature_k)).exp()
        }
    }
}

/// Thickness of film the transport has to cross, m: δ_ref (δ/δ_ref)^n (δ itself for n = 1).
pub fn effective_thickness(p: &FilmParams, thickness_m: f64) -> f64 {
    let n = p.transport.thickness_exponent();
    if n == 1.0 {
        thickness_m
    } else {
        TRANSPORT_REFERENCE_THICKNESS_M * (thickness_m.max(0.0) / TRANSPORT_REFERENCE_THICKNESS_M).powf(n)
    }
}

/// Lithium consumed per unit area and time under a film of thickness δ, mol/(m² s).
pub fn flux(p: &FilmParams, thickness_m: f64, potential_v: f64, temperature_k: f64) -> f64 {
    let reaction = p.solvent_concentration_mol_m3 * reaction_rate(p, potential_v, temperature_k);
    reaction
        / (1.0 + reaction * effective_thickness(p, thickness_m) / transport_coefficient(p, potential_v, temperature_k))
}

/// Newton iterations allowed when solving t(δ) for a thickness exponent n ≠ 1; each one
/// from above on a convex increasing function converges monotonically, quadratically near the
/// root, so a few dozen are ample.
const GROWTH_NEWTON_ITERATIONS: usize = 60;
/// Relative change of the increment at which that solve stops.
const GROWTH_NEWTON_TOLERANCE: f64 = 1e-13;

/// Film growth over `time_s` at a fixed potential and temperature from thickness δ₀, m: the
/// thickness at which t(δ) (module docs) equals `time_s`. For n = 1 the exact Deal–Grove
/// increment Δ = 2t / (B + √(B² + 4at)), a = 1/(2 V̄ Γ), B = 2aδ₀ + 1/(V̄ c_sol k).
pub fn growth_at_fixed_conditions(
    p: &FilmParams,
    thickness_m: f64,
    potential_v: f64,
    temperature_k: f64,
    time_s: f64,
) -> f64 {
    if time_s <= 0.0 {
        return 0.0;
    }
    let volume = p.molar_volume_m3_mol;
    // Growth speeds (m/s) of the reaction limit and of the transport coefficient.
    let reaction_speed = reaction_rate(p, potential_v, temperature_k) * p.solvent_concentration_mol_m3 * volume;
    let transport_speed = transport_coefficient(p, potential_v, temperature_k) * volume;
    let n = p.transport.thickness_exponent();
    if n == 1.0 {
        let a = 1.0 / (2.0 * transport_speed);
        let b = 2.0 * a * thickness_m + 1.0 / reaction_speed;
        return 2.0 * time_s / (b + (b * b + 4.0 * a * time_s).sqrt());
    }
    // t(δ₀ + Δ) − t = 0 in the increment Δ, scaled by δ_ref so the powers stay of order one.
    let scale = TRANSPORT_REFERENCE_THICKNESS_M;
    // A trial state of the integrator may step a near-bare surface's film just below zero:
    // it grows as bare.
    let start = thickness_m.max(0.0) / scale;
    // (start + d)^(1+n) − start^(1+n), through ln_1p/exp_m1 where d ≪ start would cancel;
    // directly where d dominates (a near-bare surface, whose tiny start would overflow the ratio).
    let power_gain = |d: f64| {
        if d >= start {
            (start + d).powf(1.0 + n) - start.powf(1.0 + n)
        } else {
            start.powf(1.0 + n) * ((1.0 + n) * (d / start).ln_1p()).exp_m1()
        }
    };
    let residual =
        |d: f64| d * scale / reaction_speed + power_gain(d) * scale * scale / ((1.0 + n) * transport_speed) - time_s;
    let slope = |d: f64| scale / reaction_speed + (start + d).powf(n) * scale * scale / transport_speed;
    // Either limit alone bounds the increment from above; start from the tighter.
    let reaction_only = time_s * reaction_speed / scale;
    let transport_only =
        ((1.0 + n) * transport_speed * time_s / (scale * scale) + start.powf(1.0 + n)).powf(1.0 / (1.0 + n)) - start;
    let mut d = reaction_only.min(transport_only.max(0.0));
    for _ in 0..GROWTH_NEWTON_ITERATIONS {
        let step = residual(d) / slope(d);
        d -= step;
        if step.abs() <= GROWTH_NEWTON_TOLERANCE * d {
            break;
        }
    }
    d * scale
}

/// Film growth over one cycle on a surface that carried `thickness_m` at its start: the trace
/// (thickness held over the cycle, its change being tiny) plus the idle time after it, m.
pub fn growth_per_cycle(p: &FilmParams, thickness_m: f64, context: &AgingContext) -> f64 {
    let cycling: f64 = context.record.map_or(0.0, |r| trace_integral(p, thickness_m, &r.trace));
    cycling * p.molar_volume_m3_mol
        + growth_at_fixed_conditions(
            p,
            thickness_m,
            context.idle_neg_potential_v,
            context.idle_temperature_k,
            context.idle_s,
        )
}

/// Film growth per cycle as a function of thickness for one cycle, m: the cycle's per-point
/// rates are computed once, so the many crack-face depths of different film thickness that
/// share the cycle cost a division per trace point each. Equal to [`growth_per_cycle`].
pub struct CycleFilmGrowth<'a> {
    p: &'a FilmParams,
    context: &'a AgingContext<'a>,
    /// Per trace point: trapezoid weight × reaction flux c_sol·k (mol/m²), and c_sol·k/Γ (1/m).
    points: Vec<(f64, f64)>,
}

impl<'a> CycleFilmGrowth<'a> {
    pub fn new(p: &'a FilmParams, context: &'a AgingContext<'a>) -> CycleFilmGrowth<'a> {
        let trace = context.record.map_or(&[][..], |r| &r.trace[..]);
        let points = trace
            .iter()
            .enumerate()
            .map(|(i, t)| {
                let before = t.dt_s;
                let after = trace.get(i + 1).map_or(0.0, |next| next.dt_s);
                let weight = if i == 0 { 0.5 * after } else { 0.5 * (before + after) };
                let reaction = p.solvent_concentration_mol_m3 * reaction_rate(p, t.neg_potential_v, t.temperature_k);
                let per_thickness = reaction / transport_coefficient(p, t.neg_potential_v, t.temperature_k);
                (weight * reaction, per_thickness)
            })
            .collect();
        CycleFilmGrowth { p, context, points }
    }

    /// Growth over the cycle and the idle time after it of a film `thickness_m` thick, m.
    pub fn growth_m(&self, thickness_m: f64) -> f64 {
        let effective = effective_thickness(self.p, thickness_m);
        let cycling: f64 = self.points.iter().map(|(w, r)| w / (1.0 + r * effective)).sum();
        cycling * self.p.molar_volume_m3_mol
            + growth_at_fixed_conditions(
                self.p,
                thickness_m,
                self.context.idle_neg_potential_v,
                self.context.idle_temperature_k,
                self.context.idle_s,
            )
    }
}

/// ∫ N dt over a cycle trace by the trapezoidal rule, mol/m² (second order, so the small
/// changes of the time grid from one simulated cycle to the next barely move the result).
fn trace_integral(p: &FilmParams, thickness_m: f64, trace: &[TracePoint]) -> f64 {
    super::trapezoid(trace, |t| flux(p, thickness_m, t.neg_potential_v, t.temperature_k))
}

/// Film (SEI) growth on the negative electrode: reaction in series with transport through the
/// film (module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FilmParams {
    /// Reaction rate constant k at the reference potential and temperature, m/s.
    pub reaction_rate_m_s: f64,
    pub reaction_activation_j_mol: f64,
    /// What crosses the film, and its parameters.
    pub transport: FilmTransport,
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

/// The transport that feeds the film-forming reaction (module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FilmTransport {
    /// Solvent diffusing in through the film: Γ = D_sol·c_sol, independent of potential.
    SolventDiffusion {
        /// Diffusivity of solvent through the film, m²/s.
        diffusivity_m2_s: f64,
        activation_j_mol: f64,
    },
    /// Neutral lithium interstitials diffusing out: Γ = D_i·c_i0·exp(−Fφ/RT).
    InterstitialDiffusion {
        /// Diffusivity of interstitials through the film, m²/s.
        diffusivity_m2_s: f64,
        activation_j_mol: f64,
        /// Interstitial concentration at the inner interface against lithium metal (φ = 0), mol/m³.
        concentration_mol_m3: f64,
        /// n of δ_eff = δ_ref (δ/δ_ref)^n; the transport-limited time exponent is 1/(1 + n).
        thickness_exponent: f64,
    },
}

impl FilmTransport {
    /// n of the effective thickness (1 for solvent diffusion).
    pub fn thickness_exponent(&self) -> f64 {
        match self {
            FilmTransport::SolventDiffusion { .. } => 1.0,
            FilmTransport::InterstitialDiffusion { thickness_exponent, .. } => *thickness_exponent,
        }
    }
}

/// δ_ref of the effective thickness, m: the order of a formed film, so that D_i keeps its
/// plain meaning for films of that thickness whatever n is.
pub const TRANSPORT_REFERENCE_THICKNESS_M: f64 = 10e-9;

/// The film law a cell file selects with `law`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FilmLaw {
    #[default]
    SolventDiffusion,
    InterstitialDiffusion,
}

/// `[negative.film]` as written (units in the key suffixes).
#[derive(Debug, Default, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FilmSection {
    #[serde(default = "super::params::switched_on")]
    pub enabled: bool,
    #[serde(default)]
    law: FilmLaw,
    reaction_rate_m_s: Option<f64>,
    reaction_activation_kj_mol: Option<f64>,
    solvent_diffusivity_m2_s: Option<f64>,
    solvent_diffusivity_activation_kj_mol: Option<f64>,
    interstitial_diffusivity_m2_s: Option<f64>,
    interstitial_diffusivity_activation_kj_mol: Option<f64>,
    interstitial_concentration_mol_m3: Option<f64>,
    thickness_exponent: Option<f64>,
    solvent_concentration_mol_m3: Option<f64>,
    transfer_coefficient: Option<f64>,
    reference_potential_v: Option<f64>,
    molar_volume_cm3_mol: Option<f64>,
    conductivity_s_m: Option<f64>,
    initial_thickness_nm: Option<f64>,
    reference_temperature_c: Option<f64>,
}

/// Film-forming reaction potential against Li/Li⁺ when the file gives none, V.
const DEFAULT_REFERENCE_POTENTIAL_V: f64 = 0.4;
/// Thickness exponents accepted: 1 is plain diffusion (√t); ¼ gives a transport-limited time
/// exponent of 0.8, the top of what calendar data show (module docs).
const THICKNESS_EXPONENT_RANGE: (f64, f64) = (0.25, 1.0);

impl FilmSection {
    /// The parameters in SI units, each value checked against its rule.
    pub fn read(&self, rules: &mut dyn TableReader) -> FilmParams {
        let reference_potential_v = self.reference_potential_v.unwrap_or(DEFAULT_REFERENCE_POTENTIAL_V);
        let transport = self.read_transport(rules);
        let initial_thickness_m = rules.non_negative("initial_thickness_nm", self.initial_thickness_nm) * NANO;
        FilmParams {
            reaction_rate_m_s: rules.positive("reaction_rate_m_s", self.reaction_rate_m_s),
            reaction_activation_j_mol: rules
                .activation_j_mol("reaction_activation_kj_mol", self.reaction_activation_kj_mol),
            transport,
            solvent_concentration_mol_m3: rules
                .positive("solvent_concentration_mol_m3", self.solvent_concentration_mol_m3),
            transfer_coefficient: rules.transfer_coefficient(self.transfer_coefficient),
            reference_potential_v: rules.finite("reference_potential_v", reference_potential_v),
            molar_volume_m3_mol: rules.positive("molar_volume_cm3_mol", self.molar_volume_cm3_mol) * CUBIC_CENTIMETRE,
            conductivity_s_m: rules.positive("conductivity_s_m", self.conductivity_s_m),
            initial_thickness_m,
            reference_temperature_k: rules.reference_temperature_k(self.reference_temperature_c),
        }
    }

    /// The chosen law's transport keys. The other law's keys may stay in the table, unused, so
    /// that `--set cell.negative.film.law=…` switches a cell between laws.
    fn read_transport(&self, rules: &mut dyn TableReader) -> FilmTransport {
        match self.law {
            FilmLaw::SolventDiffusion => FilmTransport::SolventDiffusion {
                diffusivity_m2_s: rules.positive("solvent_diffusivity_m2_s", self.solvent_diffusivity_m2_s),
                activation_j_mol: rules.activation_j_mol(
                    "solvent_diffusivity_activation_kj_mol",
                    self.solvent_diffusivity_activation_kj_mol,
                ),
            },
            FilmLaw::InterstitialDiffusion => {
                let exponent = self.thickness_exponent.unwrap_or(1.0);
                let (low, high) = THICKNESS_EXPONENT_RANGE;
                if !(low..=high).contains(&exponent) {
                    rules.report("thickness_exponent", format!("must lie in {low}–{high} (got {exponent})"));
                }
                FilmTransport::InterstitialDiffusion {
                    diffusivity_m2_s: rules
                        .positive("interstitial_diffusivity_m2_s", self.interstitial_diffusivity_m2_s),
                    activation_j_mol: rules.activation_j_mol(
                        "interstitial_diffusivity_activation_kj_mol",
                        self.interstitial_diffusivity_activation_kj_mol,
                    ),
                    concentration_mol_m3: rules
                        .positive("interstitial_concentration_mol_m3", self.interstitial_concentration_mol_m3),
                    thickness_exponent: exponent,
                }
            }
        }
    }
}

impl super::params::MechanismTable for FilmSection {
    fn enabled(&self) -> bool {
        self.enabled
    }

    fn store(&self, rules: &mut dyn TableReader, side: Side, aging: &mut super::AgingParams) {
        let _ = side;
        aging.film = Some(self.read(rules));
    }
}

/// `[negative.film]`.
pub const REGISTRATION: Registration = Registration {
    table: Some("film"),
    models: "film growth",
    sides: &[Side::Negative],
    laws: |a| a.film.map(|_| Box::new(FilmOnOriginalSurface) as Box<dyn Mechanism>).into_iter().collect(),
};

/// Film growth on the original surface of the negative electrode.
#[derive(Debug, Clone, Copy)]
pub struct FilmOnOriginalSurface;

impl Mechanism for FilmOnOriginalSurface {
    fn name(&self) -> &'static str {
        "film on original surface"
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let Some(p) = &context.aging.film else { return };
        let growth_m = growth_per_cycle(p, state[Component::FilmOriginalNm] * 1e-9, context);
        let area = super::negative_surfaces(context.cell, context.aging, state).original_m2;
        let lithium = growth_m / p.molar_volume_m3_mol * area * FARADAY / context.lithium_fresh_coulomb;
        rate[Component::FilmOriginalNm] += growth_m * 1e9;
        rate.move_lithium(Component::LithiumFilmOriginal, lithium);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params() -> FilmParams {
        FilmParams {
            reaction_rate_m_s: 1e-15,
            reaction_activation_j_mol: 50e3,
            transport: FilmTransport::SolventDiffusion { diffusivity_m2_s: 1e-21, activation_j_mol: 30e3 },
            solvent_concentration_mol_m3: 4500.0,
            transfer_coefficient: 0.5,
            reference_potential_v: 0.4,
            molar_volume_m3_mol: 5e-5,
            conductivity_s_m: 5e-6,
            initial_thickness_m: 0.0,
            reference_temperature_k: 298.15,
        }
    }

    #[test]
    fn each_limit_scales_with_its_own_arrhenius_factor() {
        // Mixed control (docs/VALIDATION.md §5): a thin film grows at the reaction rate (activation of k), a thick one
        // at the solvent-diffusion rate (activation of D_sol).
        let p = params();
        let (cold, hot, phi) = (298.15, 318.15, 0.4);
        // At the reference potential the exponential potential term is 1 at any temperature.
        let thin = flux(&p, 0.0, phi, hot) / flux(&p, 0.0, phi, cold);
        assert!((thin - arrhenius_factor(50e3, hot, cold)).abs() < 1e-12 * thin);
        let thick = flux(&p, 1.0, phi, hot) / flux(&p, 1.0, phi, cold);
        assert!((thick - arrhenius_factor(30e3, hot, cold)).abs() < 1e-6 * thick);
    }

    #[test]
    fn closed_form_growth_matches_small_steps_of_the_flux() {
        // The Deal–Grove increment must equal the integral of dδ/dt = V̄ N(δ) (derived).
        let p = params();
        let (phi, t, total) = (0.1, 308.15, 3.0e7);
        let closed = growth_at_fixed_conditions(&p, 2e-9, phi, t, total);
        let mut delta = 2e-9;
        let steps = 200_000;
        let h = total / steps as f64;
        for _ in 0..steps {
            // Midpoint rule.
            let half = delta + 0.5 * h * p.molar_volume_m3_mol * flux(&p, delta, phi, t);
            delta += h * p.molar_volume_m3_mol * flux(&p, half, phi, t);
        }
        assert!(((delta - 2e-9) - closed).abs() < 1e-6 * closed, "{} vs {closed}", delta - 2e-9);
    }
    fn interstitial(thickness_exponent: f64) -> FilmParams {
        FilmParams {
            transport: FilmTransport::InterstitialDiffusion {
                diffusivity_m2_s: 1e-17,
                activation_j_mol: 60e3,
                concentration_mol_m3: 1e-3,
                thickness_exponent,
            },
            ..params()
        }
    }

    /// Growth by midpoint steps of dδ/dt = V̄ N(δ) at fixed conditions, m.
    fn stepped_growth(p: &FilmParams, start_m: f64, phi: f64, t: f64, total: f64, steps: usize) -> f64 {
        let mut delta = start_m;
        let h = total / steps as f64;
        for _ in 0..steps {
            let half = delta + 0.5 * h * p.molar_volume_m3_mol * flux(p, delta, phi, t);
            delta += h * p.molar_volume_m3_mol * flux(p, half, phi, t);
        }
        delta - start_m
    }

    #[test]
    fn interstitial_growth_solves_its_time_law_for_any_thickness_exponent() {
        // t(δ) of the module docs is the exact integral of dδ/dt = V̄ N(δ) (derived): the solved
        // increment must equal fine steps of the flux, from a formed film and from none.
        for n in [1.0, 0.6, 1.0 / 3.0, 0.25] {
            let p = interstitial(n);
            for start in [0.0, 1e-300, 3e-9] {
                let solved = growth_at_fixed_conditions(&p, start, 0.1, 308.15, 3.0e7);
                let stepped = stepped_growth(&p, start, 0.1, 308.15, 3.0e7, 400_000);
                // 1e-5: the midpoint steps lag in the fast start from a bare surface.
                assert!((solved - stepped).abs() < 1e-5 * solved, "n = {n}, δ₀ = {start}: {solved} vs {stepped}");
            }
        }
    }

    #[test]
    fn interstitial_transport_keeps_the_potential_dependence_once_transport_limits() {
        // Derived from Γ = D_i c_i0 exp(−Fφ/RT) (Single, Latz & Horstmann 2018, from memory): deep
        // in the transport-limited regime the flux at a fixed thickness scales as exp(−FΔφ/RT),
        // while the solvent-diffusion law's flux no longer depends on potential at all.
        let (t, thick) = (298.15, 1e-5);
        let p = interstitial(1.0);
        let ratio = flux(&p, thick, 0.08, t) / flux(&p, thick, 0.13, t);
        let expected = (FARADAY * 0.05 / (GAS_CONSTANT * t)).exp();
        assert!((ratio / expected - 1.0).abs() < 1e-3, "{ratio} vs {expected}");
        let mixed = params();
        let solvent_ratio = flux(&mixed, thick, 0.08, t) / flux(&mixed, thick, 0.13, t);
        assert!((solvent_ratio - 1.0).abs() < 2e-3, "{solvent_ratio}");
    }

    #[test]
    fn the_transport_limited_time_exponent_is_one_over_one_plus_n() {
        // From δ^(1+n) ∝ t once transport limits and δ ≫ δ₀ (derived): growth over 4t against
        // growth over t is 4^(1/(1+n)).
        for n in [1.0, 0.6, 1.0 / 3.0] {
            let mut p = interstitial(n);
            p.reaction_rate_m_s = 1e-9; // reaction far faster than transport
            let one = growth_at_fixed_conditions(&p, 0.0, 0.1, 298.15, 1e7);
            let four = growth_at_fixed_conditions(&p, 0.0, 0.1, 298.15, 4e7);
            let expected = 4f64.powf(1.0 / (1.0 + n));
            assert!((four / one / expected - 1.0).abs() < 1e-3, "n = {n}: {} vs {expected}", four / one);
        }
    }
}
