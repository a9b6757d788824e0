//! Stress-driven loss of active material of one electrode.
//!
//! Per cycle a fraction k(T)·(σ_h,max/σ_c)^m of the remaining material is lost while the surface
//! hydrostatic stress is tensile; at the particle surface σ_r = 0, so σ_h = 2σ_t/3. The lost
//! material keeps the lithium it held while under tension (it is counted as stranded).
//! Per cycle, not per second: doubling the current doubles the stress and multiplies the loss
//! per cycle by 2^m in the quasi-steady regime.
//!
//! References: I. Laresgoiti, S. Käbitz, M. Ecker, D. U. Sauer, J. Power Sources 300 (2015) 112
//! (from memory); review: J. M. Reniers, G. Mulder, D. A. Howey, J. Electrochem. Soc. 166 (2019)
//! A3189.

use super::{mean_temperature_k, ActiveLossParams, AgingContext, AgingState, Mechanism, Side};
use crate::material::arrhenius_factor;

/// Fraction of the remaining active material lost per cycle at a peak hoop stress.
pub fn loss_per_cycle(p: &ActiveLossParams, peak_hoop_pa: f64, temperature_k: f64) -> f64 {
    let hydrostatic = 2.0 / 3.0 * peak_hoop_pa;
    if hydrostatic <= 0.0 {
        return 0.0;
    }
    p.rate_per_cycle
        * arrhenius_factor(p.activation_j_mol, temperature_k, p.reference_temperature_k)
        * (hydrostatic / p.critical_stress_pa).powf(p.exponent)
}

#[derive(Debug, Clone, Copy)]
pub struct ActiveLoss {
    pub side: Side,
    pub params: ActiveLossParams,
}

impl Mechanism for ActiveLoss {
    fn name(&self) -> &'static str {
        match self.side {
            Side::Negative => "active material loss (negative)",
            Side::Positive => "active material loss (positive)",
        }
    }

    fn add_rates(&self, context: &AgingContext, state: &AgingState, rate: &mut AgingState) {
        let Some(record) = context.record else { return };
        let cell = context.cell;
        let (stress_of, lost, capacity): (fn(&crate::cycle::TracePoint) -> f64, f64, f64) = match self.side {
            Side::Negative => (|p| p.neg_surface_stress_pa, state.neg_active_lost, cell.negative.capacity_coulomb()),
            Side::Positive => (|p| p.pos_surface_stress_pa, state.pos_active_lost, cell.positive.capacity_coulomb()),
        };
        let Some(peak) = record.trace.iter().map(stress_of).max_by(f64::total_cmp) else { return };
        let loss = loss_per_cycle(&self.params, peak, mean_temperature_k(record)) * (1.0 - lost);
        // The lost material's lithium content: its stoichiometry weighted by the tensile stress
        // that breaks it, which varies smoothly with the state (an arg-max would jump).
        let stoich_of = |p: &crate::cycle::TracePoint| match self.side {
            Side::Negative => p.neg_mean_stoich,
            Side::Positive => p.pos_mean_stoich,
        };
        let weight = |p: &crate::cycle::TracePoint| stress_of(p).max(0.0).powf(self.params.exponent);
        let total = super::trapezoid(&record.trace, weight);
        let stoich =
            if total > 0.0 { super::trapezoid(&record.trace, |p| weight(p) * stoich_of(p)) / total } else { 0.0 };
        let stranded = loss * capacity * stoich / context.lithium_fresh_coulomb;
        match self.side {
            Side::Negative => rate.neg_active_lost += loss,
            Side::Positive => rate.pos_active_lost += loss,
        }
        rate.lithium_stranded += stranded;
        rate.lithium_inventory -= stranded;
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
