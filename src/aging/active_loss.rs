//! Stress-driven loss of active material of one electrode.
//!
//! The surface hydrostatic stress (σ_r = 0 at the surface, so σ_h = 2σ_t/3) is rainflow counted
//! over the duty cycle ([`super::rainflow`]); every counted cycle loses a fraction
//! k·A(T)·(Δσ_h/σ_c)^m of the remaining material, Δσ_h the tensile part of its range and A(T)
//! the Arrhenius factor at the temperature of its peak. For a duty cycle with one tensile
//! excursion from rest this is the per-cycle law on the peak stress; each further reversal adds
//! its own share. Fragments so detached lose contact with the lithium they held while under
//! tension (counted as stranded). Doubling the current doubles the stress and multiplies the
//! loss by 2^m in the quasi-steady regime.
//!
//! References: I. Laresgoiti, S. Käbitz, M. Ecker, D. U. Sauer, J. Power Sources 300 (2015) 112
//! (from memory); review: J. M. Reniers, G. Mulder, D. A. Howey, J. Electrochem. Soc. 166 (2019)
//! A3189.

use super::cracking::tensile_range;
use super::rainflow::count_periodic;
use super::{AgingContext, AgingState, Component, Mechanism, Registration, Side, TableReader};
use crate::cycle::record::sharpen_turning_points;
use crate::material::arrhenius_factor;
use crate::material::units::MEGA;

/// Fraction of the remaining active material lost by one counted cycle whose tensile hoop-stress
/// range is `range_hoop_pa`, at the temperature of its peak.
pub fn loss_per_cycle(p: &ActiveLossParams, range_hoop_pa: f64, temperature_k: f64) -> f64 {
    let hydrostatic = 2.0 / 3.0 * range_hoop_pa;
    if hydrostatic <= 0.0 {
        return 0.0;
    }
    p.rate_per_cycle
        * arrhenius_factor(p.activation_j_mol, temperature_k, p.reference_temperature_k)
        * (hydrostatic / p.critical_stress_pa).powf(p.exponent)
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

/// `[negative.active_loss]`, `[positive.active_loss]` as written.
#[derive(Debug, Default, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ActiveLossSection {
    #[serde(default = "super::params::switched_on")]
    pub enabled: bool,
    rate_per_cycle: Option<f64>,
    critical_stress_mpa: Option<f64>,
    exponent: Option<f64>,
    activation_kj_mol: Option<f64>,
    reference_temperature_c: Option<f64>,
}

impl ActiveLossSection {
    /// The parameters in SI units, each value checked against its rule.
    pub fn read(&self, rules: &mut dyn TableReader) -> ActiveLossParams {
        ActiveLossParams {
            rate_per_cycle: rules.non_negative("rate_per_cycle", self.rate_per_cycle),
            critical_stress_pa: rules.positive("critical_stress_mpa", self.critical_stress_mpa) * MEGA,
            exponent: rules.positive("exponent", self.exponent),
            activation_j_mol: rules.activation_j_mol("activation_kj_mol", self.activation_kj_mol),
            reference_temperature_k: rules.reference_temperature_k(self.reference_temperature_c),
        }
    }
}

impl super::params::MechanismTable for ActiveLossSection {
    fn enabled(&self) -> bool {
        self.enabled
    }

    fn store(&self, rules: &mut dyn TableReader, side: Side, aging: &mut super::AgingParams) {
        let params = Some(self.read(rules));
        match side {
            Side::Negative => aging.neg_active_loss = params,
            Side::Positive => aging.pos_active_loss = params,
        }
    }
}

/// `[negative.active_loss]` and `[positive.active_loss]`.
pub const REGISTRATION: Registration = Registration {
    table: Some("active_loss"),
    models: "loss of active material",
    sides: &[Side::Negative, Side::Positive],
    laws: |a| {
        let negative = a.neg_active_loss.map(|_| Box::new(ActiveLoss { side: Side::Negative }) as Box<dyn Mechanism>);
        let positive = a.pos_active_loss.map(|_| Box::new(ActiveLoss { side: Side::Positive }) as Box<dyn Mechanism>);
        negative.into_iter().chain(positive).collect()
    },
};

#[derive(Debug, Clone, Copy)]
pub struct ActiveLoss {
    pub side: Side,
}

impl Mechanism for ActiveLoss {
    fn name(&self) -> &'static str {
        match self.side {
            Side::Negative => "active material loss (negative)",
            Side::Positive => "active material loss (positive)",
        }
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let params = match self.side {
            Side::Negative => &context.aging.neg_active_loss,
            Side::Positive => &context.aging.pos_active_loss,
        };
        let (Some(record), Some(params)) = (context.record, params) else { return };
        let cell = context.cell;
        let (stress_of, lost, capacity): (fn(&crate::cycle::TracePoint) -> f64, f64, f64) = match self.side {
            Side::Negative => {
                (|p| p.neg_surface_stress_pa, state[Component::NegActiveLost], cell.negative.capacity_coulomb())
            }
            Side::Positive => {
                (|p| p.pos_surface_stress_pa, state[Component::PosActiveLost], cell.positive.capacity_coulomb())
            }
        };
        let mut history: Vec<f64> = record.trace.iter().map(stress_of).collect();
        let stored = match self.side {
            Side::Negative => &record.neg_stress,
            Side::Positive => &record.pos_stress,
        };
        sharpen_turning_points(&mut history, stored.surface_rates_pa_s(), &record.trace);
        let mut counted = 0.0;
        count_periodic(&history, &mut Vec::new(), |cycle| {
            let range = tensile_range(cycle.high, cycle.low);
            counted += cycle.count * loss_per_cycle(params, range, record.trace[cycle.high_index].temperature_k);
        });
        let loss = counted * (1.0 - lost);
        // The lost material's lithium content: its stoichiometry weighted by the tensile stress
        // that breaks it, which varies smoothly with the state (an arg-max would jump).
        let stoich_of = |p: &crate::cycle::TracePoint| match self.side {
            Side::Negative => p.neg_mean_stoich,
            Side::Positive => p.pos_mean_stoich,
        };
        // Both sums in one pass, each point's weight computed once (a power per point).
        let (mut total, mut weighted) = (0.0, 0.0);
        let mut previous: Option<(f64, f64)> = None;
        for p in &record.trace {
            let w = history_weight(stress_of(p), params.exponent);
            let ws = w * stoich_of(p);
            if let Some((w0, ws0)) = previous {
                total += 0.5 * (w0 + w) * p.dt_s;
                weighted += 0.5 * (ws0 + ws) * p.dt_s;
            }
            previous = Some((w, ws));
        }
        let stoich = if total > 0.0 { weighted / total } else { 0.0 };
        let stranded = loss * capacity * stoich / context.lithium_fresh_coulomb;
        match self.side {
            Side::Negative => rate[Component::NegActiveLost] += loss,
            Side::Positive => rate[Component::PosActiveLost] += loss,
        }
        rate.move_lithium(Component::LithiumStranded, stranded);
    }
}

/// Weight of a trace point in the stranded lithium's mean: tensile stress to the law's power.
fn history_weight(stress_pa: f64, exponent: f64) -> f64 {
    let tension = stress_pa.max(0.0);
    if tension == 0.0 {
        0.0
    } else {
        tension.powf(exponent)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn doubling_the_stress_multiplies_the_loss_by_two_to_the_m() {
        // Quasi-steady stress is proportional to current (docs/VALIDATION.md §2, §9, derived).
        let p = ActiveLossParams {
            rate_per_cycle: 1e-5,
            critical_stress_pa: 10e6,
            exponent: 2.5,
            activation_j_mol: 20e3,
            reference_temperature_k: 298.15,
        };
        let ratio = loss_per_cycle(&p, 12e6, 298.15) / loss_per_cycle(&p, 6e6, 298.15);
        assert!((ratio - 2f64.powf(2.5)).abs() < 1e-12);
        assert_eq!(loss_per_cycle(&p, -5e6, 298.15), 0.0);
        let warm = loss_per_cycle(&p, 6e6, 318.15) / loss_per_cycle(&p, 6e6, 298.15);
        assert!((warm - arrhenius_factor(20e3, 318.15, 298.15)).abs() < 1e-12);
    }
}
