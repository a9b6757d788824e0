//! The Bogacki–Shampine 3(2) pair with a PI step-size controller and cubic Hermite dense output.
//!
//! Every rate evaluation of cycle jumping simulates a whole duty cycle, so what a forecast
//! costs is the number of evaluations, not the work per step. This pair needs three per
//! accepted step (the last stage is the next step's first), where Dormand–Prince 5(4) needs
//! six. At the loose tolerances cycle jumping runs at, the steps are set more by how fast
//! they may grow than by the error, so the cheaper step wins.
//!
//! Reference: P. Bogacki, L. F. Shampine, Appl. Math. Lett. 2 (1989) 321 (the pair);
//! E. Hairer, S. P. Nørsett, G. Wanner, Solving Ordinary Differential Equations I, 2nd ed.,
//! Springer (1993), §II.4 (error norm, PI control, Hermite dense output).

use nalgebra::DVector;

/// What the integrator integrates: the slow state over the stretched cycle count.
pub trait SlowSystem {
    /// dy/ds at (s, y).
    fn derivative(&self, s: f64, y: &DVector<f64>, dy: &mut DVector<f64>);
    /// Whether to stop after the step just accepted (a rate evaluation failed in it).
    fn stop(&self) -> bool;
}

/// Settings of one integration.
#[derive(Debug, Clone, Copy)]
pub struct IntegratorSettings {
    pub relative_tolerance: f64,
    pub absolute_tolerance: f64,
    pub first_step: f64,
    /// Largest factor by which a step may grow on the next.
    pub growth_max: f64,
    /// Smallest factor by which a rejected step shrinks.
    pub shrink_min: f64,
    pub safety: f64,
    /// β of the PI controller.
    pub beta: f64,
    pub max_steps: usize,
}

/// The start or the end of an accepted step: where, the state, and its derivative.
#[derive(Debug, Clone)]
struct Node {
    s: f64,
    y: DVector<f64>,
    f: DVector<f64>,
}

/// The solution between the start and the last accepted step: the start and every accepted
/// step's end, each step interpolated between its two ends.
#[derive(Debug, Clone, Default)]
pub struct DenseSolution {
    nodes: Vec<Node>,
}

impl DenseSolution {
    /// End of the last accepted step (None before the first).
    pub fn reached(&self) -> Option<f64> {
        (self.nodes.len() >= 2).then(|| self.nodes[self.nodes.len() - 1].s)
    }

    /// The state at `s` by the cubic Hermite interpolant of the step holding it.
    pub fn evaluate(&self, s: f64) -> Option<DVector<f64>> {
        if s < self.nodes.first()?.s || s > self.reached()? + 1e-12 {
            return None;
        }
        // The first node at or past `s`, never the start: the step ends there.
        let end = self.nodes.partition_point(|n| n.s < s).clamp(1, self.nodes.len() - 1);
        let (a, b) = (&self.nodes[end - 1], &self.nodes[end]);
        let h = b.s - a.s;
        let t = ((s - a.s) / h).clamp(0.0, 1.0);
        let (t2, t3) = (t * t, t * t * t);
        // y0 + (y1 − y0)·h01 + h (f0·h10 + f1·h11): the Hermite basis written so that a
        // component that does not change is returned to the bit.
        let h01 = -2.0 * t3 + 3.0 * t2;
        let h10 = t3 - 2.0 * t2 + t;
        let h11 = t3 - t2;
        Some(&a.y + (&b.y - &a.y) * h01 + (&a.f * h10 + &b.f * h11) * h)
    }
}

/// What an integration did.
#[derive(Debug, Clone, Copy, Default)]
pub struct StepStats {
    pub accepted_steps: usize,
    pub rejected_steps: usize,
}

/// Why an integration stopped short.
#[derive(Debug, Clone, PartialEq)]
pub enum IntegratorError {
    TooManySteps,
    StepTooSmall { s: f64 },
}

impl std::fmt::Display for IntegratorError {
    fn fmt(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        match self {
            IntegratorError::TooManySteps => write!(f, "the step limit was reached"),
            IntegratorError::StepTooSmall { s } => write!(f, "the step became too small at {s}"),
        }
    }
}

/// Integrates `system` from `s_start` to `s_end`, filling `dense`; stops early when the
/// system says so.
pub fn integrate<S: SlowSystem>(
    system: &S,
    s_start: f64,
    s_end: f64,
    y0: DVector<f64>,
    settings: &IntegratorSettings,
    dense: &mut DenseSolution,
) -> Result<StepStats, IntegratorError> {
    let n = y0.len();
    let mut stats = StepStats::default();
    let mut s = s_start;
    let mut y = y0;
    let mut f = DVector::zeros(n);
    system.derivative(s, &y, &mut f);
    dense.nodes = vec![Node { s, y: y.clone(), f: f.clone() }];
    let mut h = settings.first_step.min(s_end - s);
    let mut previous_error: f64 = 1e-4;
    let mut rejected_last = false;
    let (mut k2, mut k3, mut k4) = (DVector::zeros(n), DVector::zeros(n), DVector::zeros(n));
    let alpha = 1.0 / 3.0 - 0.75 * settings.beta;
    while s < s_end {
        if stats.accepted_steps + stats.rejected_steps >= settings.max_steps {
            return Err(IntegratorError::TooManySteps);
        }
        if h <= 1e-12 * s_end.abs().max(1.0) {
            return Err(IntegratorError::StepTooSmall { s });
        }
        // The last step reaches the end exactly unless that would stretch it by over 1 %.
        let last = s + 1.01 * h >= s_end;
        if last {
            h = s_end - s;
        }
        system.derivative(s + 0.5 * h, &(&y + &f * (0.5 * h)), &mut k2);
        system.derivative(s + 0.75 * h, &(&y + &k2 * (0.75 * h)), &mut k3);
        let y1 = &y + (&f * (2.0 / 9.0) + &k2 * (1.0 / 3.0) + &k3 * (4.0 / 9.0)) * h;
        system.derivative(s + h, &y1, &mut k4);
        let error_vector = (&f * (-5.0 / 72.0) + &k2 * (1.0 / 12.0) + &k3 * (1.0 / 9.0) + &k4 * (-1.0 / 8.0)) * h;
        let mut sum = 0.0;
        for i in 0..n {
            let scale = settings.absolute_tolerance + settings.relative_tolerance * y[i].abs().max(y1[i].abs());
            let e = error_vector[i] / scale;
            sum += e * e;
        }
        let error = (sum / n as f64).sqrt();
        let factor = (error.max(1e-12).powf(alpha) * previous_error.powf(-settings.beta) / settings.safety)
            .clamp(1.0 / settings.growth_max, 1.0 / settings.shrink_min);
        if error <= 1.0 {
            stats.accepted_steps += 1;
            previous_error = error.max(1e-4);
            s = if last { s_end } else { s + h };
            dense.nodes.push(Node { s, y: y1.clone(), f: k4.clone() });
            y = y1;
            std::mem::swap(&mut f, &mut k4);
            let mut next = h / factor;
            if rejected_last {
                next = next.min(h);
            }
            rejected_last = false;
            h = next;
            if system.stop() {
                break;
            }
        } else {
            stats.rejected_steps += 1;
            rejected_last = true;
            // An error that is not a number shrinks the step all it may (`min` passes over NaN),
            // so a rate that is not a number ends in a step-too-small error within a few dozen
            // steps (tested).
            h /= (error.powf(alpha) / settings.safety).min(1.0 / settings.shrink_min);
        }
    }
    Ok(stats)
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::cell::Cell;

    /// dy/ds = `rate(s, y)` for one component, counting evaluations.
    struct Scalar<F: Fn(f64, f64) -> f64> {
        rate: F,
        evaluations: Cell<usize>,
    }

    impl<F: Fn(f64, f64) -> f64> SlowSystem for Scalar<F> {
        fn derivative(&self, s: f64, y: &DVector<f64>, dy: &mut DVector<f64>) {
            self.evaluations.set(self.evaluations.get() + 1);
            dy[0] = (self.rate)(s, y[0]);
        }
        fn stop(&self) -> bool {
            false
        }
    }

    fn settings(relative_tolerance: f64) -> IntegratorSettings {
        IntegratorSettings {
            relative_tolerance,
            absolute_tolerance: 1e-12,
            first_step: 0.1,
            growth_max: 3.0,
            shrink_min: 0.2,
            safety: 0.9,
            beta: 0.04,
            max_steps: 10_000,
        }
    }

    fn run<F: Fn(f64, f64) -> f64>(rate: F, end: f64, tolerance: f64) -> (DenseSolution, StepStats, usize) {
        let system = Scalar { rate, evaluations: Cell::new(0) };
        let mut dense = DenseSolution::default();
        let stats =
            integrate(&system, 0.0, end, DVector::from_element(1, 1.0), &settings(tolerance), &mut dense).unwrap();
        (dense, stats, system.evaluations.get())
    }

    #[test]
    fn a_quadratic_rate_is_integrated_exactly_in_one_step() {
        // The third-order weights (2/9, 1/3, 4/9) at nodes (0, 1/2, 3/4) integrate quadratics
        // exactly (Bogacki & Shampine 1989; derived): y' = 3s² from y(0) = 1 gives 1 + s³.
        let system = Scalar { rate: |s: f64, _| 3.0 * s * s, evaluations: Cell::new(0) };
        let mut dense = DenseSolution::default();
        let mut one_step = settings(1.0);
        one_step.first_step = 2.0;
        let stats = integrate(&system, 0.0, 2.0, DVector::from_element(1, 1.0), &one_step, &mut dense).unwrap();
        assert_eq!((stats.accepted_steps, stats.rejected_steps), (1, 0));
        assert!((dense.evaluate(2.0).unwrap()[0] - 9.0).abs() < 1e-13);
    }

    #[test]
    fn decay_follows_the_exponential_to_its_tolerance_with_three_evaluations_a_step() {
        // y' = −y, y(0) = 1: y = e^(−s) (exact, derived). The first rate is evaluated once;
        // every step, accepted or not, evaluates three more (the last stage is reused).
        for tolerance in [1e-4, 1e-7] {
            let (dense, stats, evaluations) = run(|_, y| -y, 5.0, tolerance);
            assert_eq!(evaluations, 1 + 3 * (stats.accepted_steps + stats.rejected_steps));
            let mut worst: f64 = 0.0;
            for i in 0..=100 {
                let s = 5.0 * i as f64 / 100.0;
                worst = worst.max((dense.evaluate(s).unwrap()[0] - (-s).exp()).abs());
            }
            // The carried third-order solution is well inside the tolerance on the
            // second-order estimate; the dense output is cubic Hermite, third order.
            assert!(worst < 10.0 * tolerance, "tolerance {tolerance}: worst error {worst:e}");
        }
    }

    #[test]
    fn tighter_tolerances_take_more_steps_as_the_third_power_predicts() {
        // Step size ∝ tolerance^(1/3) for a method whose error estimate is second order
        // (Hairer, Nørsett & Wanner §II.4): 1000× tighter, about 10× the steps.
        let steps = |tolerance| run(|s, y| -y + s.sin(), 20.0, tolerance).1.accepted_steps as f64;
        let ratio = steps(1e-8) / steps(1e-5);
        assert!((7.0..14.0).contains(&ratio), "steps ratio {ratio}");
    }

    #[test]
    fn a_rate_that_is_not_a_number_ends_in_an_error_within_a_few_dozen_steps() {
        let system = Scalar { rate: |s: f64, _| if s > 1.0 { f64::NAN } else { 1.0 }, evaluations: Cell::new(0) };
        let mut dense = DenseSolution::default();
        let outcome = integrate(&system, 0.0, 5.0, DVector::from_element(1, 0.0), &settings(1e-6), &mut dense);
        assert!(matches!(outcome, Err(IntegratorError::StepTooSmall { .. })), "{outcome:?}");
        assert!(system.evaluations.get() < 300, "{} evaluations", system.evaluations.get());
    }

    #[test]
    fn an_unchanging_component_is_returned_to_the_bit() {
        let (dense, _, _) = run(|_, _| 0.0, 3.0, 1e-6);
        for i in 0..=30 {
            assert_eq!(dense.evaluate(0.1 * i as f64).unwrap()[0], 1.0);
        }
    }
}
