//! The least-squares problem behind [`fit`]: residuals from forecasts, finite-difference
//! Jacobians, the starts, and the statistics at the optimum.

use super::{
    Axis, Bounded, CalibrationError, FitOptions, FitProblem, FitResult, FitWarning, FittedCurve, FittedEnd,
    FittedParameter, HoldoutError, ResidualStats, ScenarioSource,
};
use crate::forecast::{run_forecast, FadePoint, Forecast, ForecastOptions, Horizon, StopReason, WarningKind};
use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::{DMatrix, DVector, Dyn, Owned};
use rayon::prelude::*;
use std::cell::RefCell;
use std::sync::atomic::{AtomicUsize, Ordering};

const DAYS_PER_YEAR: f64 = 365.25;
/// The optimiser works on z + Z_SHIFT: the crate sizes its first trust region and tests its
/// step tolerance relative to the norm of the parameter vector, and z of a start in the middle of
/// its bounds is 0, which would make both vanish.
const Z_SHIFT: f64 = 4.0;
/// Step in z of the forward differences while iterating.
const Z_STEP: f64 = 1e-3;
/// Step of the central differences at the optimum, as a fraction of the natural range.
const NATURAL_STEP: f64 = 1e-3;
/// Weighted residual given to every point when a trial value makes the model fail: large, so
/// the optimiser rejects the step and shortens it, rather than stopping.
const FAILED_RESIDUAL: f64 = 1e6;
/// Correlation beyond which two estimates are reported as not separately identifiable.
const CORRELATION_WARNING: f64 = 0.95;
/// Relative distance to a bound (of the natural range) reported as "at its bound".
const AT_BOUND: f64 = 1e-3;

/// Fits `problem` with scenarios from `source`. Deterministic: the same problem and options
/// give the same result.
pub fn fit(
    problem: &FitProblem,
    source: &dyn ScenarioSource,
    options: &FitOptions,
) -> Result<FitResult, CalibrationError> {
    let model = Model::new(problem, source, options)?;
    let n = problem.parameters.len();
    let fitted = model.residual_count();
    if fitted < n.max(1) {
        return Err(CalibrationError::TooFewPoints { fitted, parameters: n });
    }
    let initial: Vec<f64> = problem.parameters.iter().map(|p| p.initial).collect();
    model.residuals(&initial).map_err(CalibrationError::StartFailed)?;

    let mut best: Option<(Vec<f64>, f64, super::Termination, bool)> = None;
    let mut last_failure = String::new();
    for start in 0..options.starts.max(1) {
        let z0: Vec<f64> =
            (0..n).map(|i| if start == 0 { model.bounds[i].z(initial[i]) } else { quasi_random_z(start, i) }).collect();
        let shifted = z0.iter().map(|z| z + Z_SHIFT).collect();
        let target = LeastSquares { model: &model, shifted_z: DVector::from_vec(shifted), cache: RefCell::new(None) };
        let solver = LevenbergMarquardt::new()
            .with_ftol(1e-10)
            .with_xtol(1e-8)
            .with_gtol(1e-10)
            .with_patience(options.patience.max(1));
        let (solved, report) = solver.minimize(target);
        let values = model.values_of_shifted(&solved.shifted_z);
        match model.residuals(&values) {
            Ok(r) => {
                let ssr: f64 = r.iter().map(|x| x * x).sum();
                if best.as_ref().is_none_or(|(_, b, _, _)| ssr < *b) {
                    let converged = report.termination.was_successful();
                    best = Some((values, ssr, super::Termination::of(&report.termination), converged));
                }
            }
            Err(e) => last_failure = e,
        }
    }
    let Some((values, ssr, termination, converged)) = best else {
        return Err(CalibrationError::AllStartsFailed(last_failure));
    };
    let mut result = model.statistics(&values, ssr, termination, converged)?;
    result.starts = options.starts.max(1);
    Ok(result)
}

/// Point `start` of a Halton sequence (one prime base per parameter), as z, kept to the middle
/// 80 % of each range so no start begins pinned at a bound.
fn quasi_random_z(start: usize, parameter: usize) -> f64 {
    const PRIMES: [usize; 12] = [2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37];
    let base = PRIMES[parameter % PRIMES.len()];
    let (mut k, mut f, mut u) = (start, 1.0, 0.0);
    while k > 0 {
        f /= base as f64;
        u += f * (k % base) as f64;
        k /= base;
    }
    let u = 0.1 + 0.8 * u;
    (u / (1.0 - u)).ln()
}

/// The forecasts behind the residuals.
struct Model<'a> {
    problem: &'a FitProblem,
    source: &'a dyn ScenarioSource,
    forecast: ForecastOptions,
    curve_points: usize,
    bounds: Vec<Bounded>,
    /// Equivalent full cycles per cycle at the starting values, for datasets on the efc axis:
    /// a forecast runs in cycles, so the horizon that covers the data is estimated from it.
    efc_per_cycle: Vec<f64>,
    evaluations: AtomicUsize,
}

impl<'a> Model<'a> {
    fn new(
        problem: &'a FitProblem,
        source: &'a dyn ScenarioSource,
        options: &FitOptions,
    ) -> Result<Self, CalibrationError> {
        let bounds = problem.parameters.iter().map(|p| Bounded { low: p.low, high: p.high, log: p.log }).collect();
        let mut model = Model {
            problem,
            source,
            forecast: options.forecast,
            curve_points: options.curve_points.max(2),
            bounds,
            efc_per_cycle: vec![1.0; problem.datasets.len()],
            evaluations: AtomicUsize::new(0),
        };
        let initial: Vec<f64> = problem.parameters.iter().map(|p| p.initial).collect();
        for (d, dataset) in problem.datasets.iter().enumerate() {
            if dataset.axis == Axis::Efc {
                let points =
                    model.run(d, &initial, Horizon::Cycles(10.0), 10).map_err(CalibrationError::StartFailed)?;
                let last = points.last().filter(|p| p.efc > 0.0 && p.cycle > 0.0).ok_or_else(|| {
                    CalibrationError::StartFailed(format!("{}: the duty cycle passes no charge", dataset.name))
                })?;
                model.efc_per_cycle[d] = last.efc / last.cycle;
            }
        }
        Ok(model)
    }

    /// Parameter values of the optimiser's variables z + [`Z_SHIFT`].
    fn values_of_shifted(&self, shifted_z: &DVector<f64>) -> Vec<f64> {
        shifted_z.iter().zip(&self.bounds).map(|(&w, b)| b.value(w - Z_SHIFT)).collect()
    }

    fn is_fitted(&self, x: f64) -> bool {
        self.problem.holdout_after.is_none_or(|limit| x <= limit)
    }

    /// Weighted residuals at the fitted points, in dataset order, capacity then resistance.
    fn residual_count(&self) -> usize {
        let w = &self.problem.weights;
        self.problem
            .datasets
            .iter()
            .flat_map(|d| &d.points)
            .filter(|p| self.is_fitted(p.x))
            .map(|p| 1 + usize::from(p.resistance_mohm.is_some() && w.resistance_per_mohm > 0.0))
            .sum()
    }

    /// One forecast of dataset `d` with `report_points` points over `horizon`.
    fn run(&self, d: usize, values: &[f64], horizon: Horizon, report_points: usize) -> Result<Vec<FadePoint>, String> {
        self.run_forecast(d, values, horizon, report_points).map(|f| f.points)
    }

    /// One forecast of dataset `d`, whole (its warnings included).
    fn run_forecast(
        &self,
        d: usize,
        values: &[f64],
        horizon: Horizon,
        report_points: usize,
    ) -> Result<Forecast, String> {
        let (scenario, plan) = self.source.scenario(d, values)?;
        self.evaluations.fetch_add(1, Ordering::Relaxed);
        let options = ForecastOptions { report_points, ..self.forecast };
        let forecast = run_forecast(&scenario, &plan, horizon, &options);
        match &forecast.stop {
            StopReason::Failed { at, failure, .. } => Err(format!("forecast failed at {at:.0}: {failure}")),
            _ => Ok(forecast),
        }
    }

    /// The model's curve of dataset `d` from 0 to at least `x_end` on the dataset's axis.
    fn curve(&self, d: usize, values: &[f64], x_end: f64, report_points: usize) -> Result<Vec<FadePoint>, String> {
        self.curve_forecast(d, values, x_end, report_points).map(|f| f.points)
    }

    /// The forecast behind [`Self::curve`].
    fn curve_forecast(&self, d: usize, values: &[f64], x_end: f64, report_points: usize) -> Result<Forecast, String> {
        let dataset = &self.problem.datasets[d];
        match dataset.axis {
            Axis::Cycle => self.run_forecast(d, values, Horizon::Cycles(x_end), report_points),
            Axis::Day => self.run_forecast(d, values, Horizon::Years(x_end / DAYS_PER_YEAR), report_points),
            Axis::Efc => {
                // Capacity fade lowers the throughput per cycle; a third more cycles than the
                // fresh cell needs covers a fifth of capacity lost, and a shortfall retries.
                let mut cycles = 1.3 * x_end / self.efc_per_cycle[d];
                for _ in 0..4 {
                    let forecast = self.run_forecast(d, values, Horizon::Cycles(cycles), report_points)?;
                    if forecast.points.last().is_some_and(|p| p.efc >= x_end) {
                        return Ok(forecast);
                    }
                    cycles *= 1.6;
                }
                Err(format!("{}: the forecast did not reach {x_end} equivalent full cycles", dataset.name))
            }
        }
    }

    /// Model capacity and resistance of dataset `d` at each of `xs`, and the fresh capacity.
    fn predict(&self, d: usize, values: &[f64], xs: &[f64]) -> Result<(Vec<(f64, f64)>, f64), String> {
        let axis = self.problem.datasets[d].axis;
        let x_end = xs.iter().copied().fold(0.0, f64::max);
        // A forecast's grid is uniform in cycles or days, never in equivalent full cycles.
        let report_points = match axis {
            Axis::Efc => self.forecast.report_points,
            Axis::Cycle | Axis::Day => report_points_for(xs, self.forecast.report_points),
        };
        let points = self.curve(d, values, x_end, report_points)?;
        let fresh = points.first().map_or(f64::NAN, |p| p.capacity_ah);
        let predicted = xs.iter().map(|&x| interpolate(&points, axis, x)).collect::<Result<_, _>>()?;
        Ok((predicted, fresh))
    }

    /// Weighted residuals at the fitted points for parameter values.
    fn residuals(&self, values: &[f64]) -> Result<Vec<f64>, String> {
        let w = &self.problem.weights;
        // The datasets' forecasts are independent: run them on the thread pool the caller
        // installed (`--jobs`), then join them in dataset order, so the result is the same for
        // any number of threads.
        let per_dataset: Vec<Result<Vec<f64>, String>> = self
            .problem
            .datasets
            .par_iter()
            .enumerate()
            .map(|(d, dataset)| {
                let fitted: Vec<_> = dataset.points.iter().filter(|p| self.is_fitted(p.x)).collect();
                let mut out = Vec::with_capacity(2 * fitted.len());
                if fitted.is_empty() {
                    return Ok(out);
                }
                let xs: Vec<f64> = fitted.iter().map(|p| p.x).collect();
                let (predicted, _) = self.predict(d, values, &xs)?;
                for (point, (capacity, resistance)) in fitted.iter().zip(predicted) {
                    out.push(w.capacity_per_ah * (capacity - point.capacity_ah));
                    if let Some(measured) = point.resistance_mohm.filter(|_| w.resistance_per_mohm > 0.0) {
                        out.push(w.resistance_per_mohm * (resistance - measured));
                    }
                }
                Ok(out)
            })
            .collect();
        let mut out = Vec::with_capacity(self.residual_count());
        for residuals in per_dataset {
            out.extend(residuals?);
        }
        Ok(out)
    }

    fn residuals_or_penalty(&self, values: &[f64]) -> DVector<f64> {
        match self.residuals(values) {
            Ok(r) if r.iter().all(|x| x.is_finite()) => DVector::from_vec(r),
            _ => DVector::from_element(self.residual_count(), FAILED_RESIDUAL),
        }
    }

    /// Standard errors, correlations, residual statistics, hold-out errors and curves at the
    /// optimum.
    fn statistics(
        &self,
        values: &[f64],
        ssr: f64,
        termination: super::Termination,
        converged: bool,
    ) -> Result<FitResult, CalibrationError> {
        let n = values.len();
        let m = self.residual_count();
        let base = self.residuals(values).map_err(CalibrationError::StartFailed)?;
        // Central differences in the natural coordinates, each step kept inside the bounds.
        let mut jacobian = DMatrix::<f64>::zeros(m, n);
        for j in 0..n {
            let b = &self.bounds[j];
            let (lo, hi) = (b.natural(b.low), b.natural(b.high));
            let phi = b.natural(values[j]);
            let step = NATURAL_STEP * (hi - lo);
            let (phi_minus, phi_plus) = ((phi - step).max(lo), (phi + step).min(hi));
            let at = |phi: f64| {
                let mut v = values.to_vec();
                v[j] = if b.log { phi.exp() } else { phi };
                self.residuals(&v).map_err(CalibrationError::StartFailed)
            };
            let (r_minus, r_plus) = (at(phi_minus)?, at(phi_plus)?);
            for i in 0..m {
                jacobian[(i, j)] = (r_plus[i] - r_minus[i]) / (phi_plus - phi_minus);
            }
        }
        let dof = m.saturating_sub(n).max(1);
        let residual_variance = ssr / dof as f64;
        let mut warnings = Vec::new();
        if !converged {
            warnings.push(FitWarning::NotConverged { termination });
        }
        let covariance = match (jacobian.transpose() * &jacobian).try_inverse() {
            Some(inverse) => inverse * residual_variance,
            None => {
                warnings.push(FitWarning::Singular);
                DMatrix::from_element(n, n, f64::NAN)
            }
        };
        let mut parameters = Vec::with_capacity(n);
        for (j, p) in self.problem.parameters.iter().enumerate() {
            let sd_natural = covariance[(j, j)].max(0.0).sqrt();
            let value = values[j];
            let (standard_error, sigma_ln) =
                if p.log { (value * sd_natural, Some(sd_natural)) } else { (sd_natural, None) };
            if standard_error > value.abs() {
                warnings.push(FitWarning::StandardErrorExceedsValue { path: p.path.clone(), standard_error, value });
            }
            let b = &self.bounds[j];
            let (lo, hi) = (b.natural(b.low), b.natural(b.high));
            let u = (b.natural(value) - lo) / (hi - lo);
            if !(AT_BOUND..=1.0 - AT_BOUND).contains(&u) {
                warnings.push(FitWarning::AtBound { path: p.path.clone(), value, low: p.low, high: p.high });
            }
            parameters.push(FittedParameter {
                path: p.path.clone(),
                value,
                standard_error,
                sigma_ln,
                low: p.low,
                high: p.high,
                log: p.log,
                initial: p.initial,
            });
        }
        let correlation: Vec<Vec<f64>> = (0..n)
            .map(|i| {
                (0..n)
                    .map(|j| {
                        if i == j {
                            1.0
                        } else {
                            covariance[(i, j)] / (covariance[(i, i)] * covariance[(j, j)]).sqrt()
                        }
                    })
                    .collect()
            })
            .collect();
        for i in 0..n {
            for j in i + 1..n {
                if correlation[i][j].abs() > CORRELATION_WARNING {
                    warnings.push(FitWarning::Correlated {
                        first: parameters[i].path.clone(),
                        second: parameters[j].path.clone(),
                        correlation: correlation[i][j],
                    });
                }
            }
        }

        let (residuals, holdout, curves) = self.curves(values)?;
        Ok(FitResult {
            parameters,
            correlation,
            covariance: (0..n).map(|i| (0..n).map(|j| covariance[(i, j)]).collect()).collect(),
            residuals,
            holdout,
            sum_of_squares: base.iter().map(|x| x * x).sum(),
            residual_variance,
            residual_count: m,
            model_evaluations: self.evaluations.load(Ordering::Relaxed),
            starts: 0,
            termination,
            converged,
            warnings,
            curves,
        })
    }

    /// Per dataset: residual statistics of the fitted points, the hold-out error and the curve.
    #[allow(clippy::type_complexity)]
    fn curves(
        &self,
        values: &[f64],
    ) -> Result<(Vec<ResidualStats>, Vec<HoldoutError>, Vec<FittedCurve>), CalibrationError> {
        let (mut residuals, mut holdout, mut curves) = (Vec::new(), Vec::new(), Vec::new());
        for (d, dataset) in self.problem.datasets.iter().enumerate() {
            let xs: Vec<f64> = dataset.points.iter().map(|p| p.x).collect();
            let (predicted, fresh) = self.predict(d, values, &xs).map_err(CalibrationError::StartFailed)?;
            let fitted: Vec<bool> = xs.iter().map(|&x| self.is_fitted(x)).collect();
            let capacity_residual_ah: Vec<f64> =
                dataset.points.iter().zip(&predicted).map(|(p, (c, _))| c - p.capacity_ah).collect();
            let pick = |want: bool| -> Vec<f64> {
                capacity_residual_ah.iter().zip(&fitted).filter(|(_, &f)| f == want).map(|(&r, _)| r).collect()
            };
            let inside = pick(true);
            let resistance: Vec<f64> = dataset
                .points
                .iter()
                .zip(&predicted)
                .zip(&fitted)
                .filter(|(_, &f)| f)
                .filter_map(|((p, (_, r)), _)| p.resistance_mohm.map(|m| r - m))
                .collect();
            residuals.push(ResidualStats {
                dataset: dataset.name.clone(),
                points_fitted: inside.len(),
                capacity_rms_ah: rms(&inside),
                capacity_max_abs_ah: inside.iter().fold(0.0, |a: f64, r| a.max(r.abs())),
                capacity_mean_ah: inside.iter().sum::<f64>() / inside.len().max(1) as f64,
                resistance_rms_mohm: (!resistance.is_empty()).then(|| rms(&resistance)),
            });
            let outside = pick(false);
            if self.problem.holdout_after.is_some() && !outside.is_empty() {
                let soh: Vec<f64> = outside.iter().map(|r| 100.0 * r / fresh).collect();
                holdout.push(HoldoutError {
                    dataset: dataset.name.clone(),
                    points: outside.len(),
                    soh_rms_pp: rms(&soh),
                    soh_max_abs_pp: soh.iter().fold(0.0, |a: f64, r| a.max(r.abs())),
                    capacity_rms_ah: rms(&outside),
                });
            }
            let x_end = xs.last().copied().unwrap_or(0.0);
            let forecast =
                self.curve_forecast(d, values, x_end, self.curve_points).map_err(CalibrationError::StartFailed)?;
            let fitted_x = xs.iter().zip(&fitted).filter(|(_, &f)| f).map(|(&x, _)| x).fold(0.0, f64::max);
            let fitted_end = position_at(&forecast.points, dataset.axis, fitted_x);
            let (_, plan) = self.source.scenario(d, values).map_err(CalibrationError::StartFailed)?;
            let ambients: Vec<f64> = match &plan.usage.ambient_k {
                crate::forecast::Ambient::Constant(t) => vec![*t],
                crate::forecast::Ambient::Monthly(months) => months.to_vec(),
            };
            let ambient_k =
                ambients.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &t| (lo.min(t), hi.max(t)));
            // What a fit makes is the calibration, so the trial cell's own calibration warnings say nothing.
            let forecast_warnings = forecast
                .warnings
                .iter()
                .filter(|w| !matches!(w.kind(), WarningKind::Uncalibrated | WarningKind::BeyondCalibration))
                .cloned()
                .collect();
            let points: Vec<&FadePoint> =
                forecast.points.iter().filter(|p| dataset.axis.of(p) <= x_end * (1.0 + 1e-9)).collect();
            curves.push(FittedCurve {
                dataset: dataset.name.clone(),
                axis: dataset.axis,
                x: points.iter().map(|p| dataset.axis.of(p)).collect(),
                capacity_ah: points.iter().map(|p| p.capacity_ah).collect(),
                resistance_mohm: points.iter().map(|p| p.resistance_mohm).collect(),
                x_data: xs.clone(),
                capacity_data_ah: dataset.points.iter().map(|p| p.capacity_ah).collect(),
                resistance_data_mohm: dataset.points.iter().map(|p| p.resistance_mohm).collect(),
                capacity_residual_ah,
                fitted,
                fitted_end,
                ambient_k,
                forecast_warnings,
            });
        }
        Ok((residuals, holdout, curves))
    }
}

/// Cycles, days and equivalent full cycles of a curve where its axis reads `x` (linear between
/// reported points; the last point beyond them).
fn position_at(points: &[FadePoint], axis: Axis, x: f64) -> FittedEnd {
    let at = |p: &FadePoint| FittedEnd { cycles: p.cycle, days: p.day, efc: p.efc };
    for w in points.windows(2) {
        let (a, b) = (axis.of(&w[0]), axis.of(&w[1]));
        if a <= x && x <= b {
            let t = if b > a { (x - a) / (b - a) } else { 0.0 };
            let mix = |u: f64, v: f64| u + t * (v - u);
            return FittedEnd {
                cycles: mix(w[0].cycle, w[1].cycle),
                days: mix(w[0].day, w[1].day),
                efc: mix(w[0].efc, w[1].efc),
            };
        }
    }
    points.last().map(at).unwrap_or_default()
}

/// Reported points for a forecast that must give the model at `xs`. Every reported point costs
/// a resistance pulse, so when the data lie on a uniform grid from 0 (the usual test plan) the
/// forecast reports exactly at them, with no interpolation error; otherwise `fallback` points
/// are interpolated.
fn report_points_for(xs: &[f64], fallback: usize) -> usize {
    const MOST_GRID_POINTS: f64 = 2000.0;
    let x_end = xs.iter().copied().fold(0.0, f64::max);
    let smallest_gap = xs
        .iter()
        .scan(0.0, |previous, &x| {
            let gap = x - *previous;
            *previous = x;
            Some(gap)
        })
        .filter(|&gap| gap > 0.0)
        .fold(f64::INFINITY, f64::min);
    let grid = (x_end / smallest_gap).round();
    let on_grid = grid.is_finite()
        && (1.0..=MOST_GRID_POINTS).contains(&grid)
        && xs.iter().all(|&x| {
            let k = x * grid / x_end;
            (k - k.round()).abs() < 1e-6
        });
    if on_grid {
        grid as usize
    } else {
        fallback
    }
}

fn rms(values: &[f64]) -> f64 {
    if values.is_empty() {
        return 0.0;
    }
    (values.iter().map(|v| v * v).sum::<f64>() / values.len() as f64).sqrt()
}

/// Capacity and resistance at `x` on `axis`, linear between the forecast's reported points.
fn interpolate(points: &[FadePoint], axis: Axis, x: f64) -> Result<(f64, f64), String> {
    // A reported point within rounding of x is x itself (the forecast reports on a grid).
    let k = points.partition_point(|p| axis.of(p) < x * (1.0 - 1e-12));
    let at = |p: &FadePoint| (p.capacity_ah, p.resistance_mohm);
    match (k.checked_sub(1).and_then(|i| points.get(i)), points.get(k)) {
        (_, Some(b)) if (axis.of(b) - x).abs() <= 1e-9 * x.abs() => Ok(at(b)),
        (Some(a), Some(b)) => {
            let t = (x - axis.of(a)) / (axis.of(b) - axis.of(a));
            Ok((
                a.capacity_ah + t * (b.capacity_ah - a.capacity_ah),
                a.resistance_mohm + t * (b.resistance_mohm - a.resistance_mohm),
            ))
        }
        // Rounding of the last reported point.
        (Some(a), None) if x <= axis.of(a) * (1.0 + 1e-9) + 1e-12 => Ok(at(a)),
        _ => Err(format!("the forecast does not reach {} {x}", axis.column())),
    }
}

/// The problem as the `levenberg-marquardt` crate sees it: z + [`Z_SHIFT`] in, weighted
/// residuals out.
struct LeastSquares<'m, 'a> {
    model: &'m Model<'a>,
    shifted_z: DVector<f64>,
    /// The residuals at `shifted_z`, computed by `residuals()` and reused by `jacobian()`.
    cache: RefCell<Option<DVector<f64>>>,
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for LeastSquares<'_, '_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, shifted_z: &DVector<f64>) {
        self.shifted_z.copy_from(shifted_z);
        self.cache.replace(None);
    }

    fn params(&self) -> DVector<f64> {
        self.shifted_z.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        let r = self.model.residuals_or_penalty(&self.model.values_of_shifted(&self.shifted_z));
        self.cache.replace(Some(r.clone()));
        Some(r)
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        let base = match self.cache.borrow().clone() {
            Some(r) => r,
            None => self.residuals()?,
        };
        let mut jacobian = DMatrix::zeros(base.len(), self.shifted_z.len());
        for j in 0..self.shifted_z.len() {
            let mut shifted_z = self.shifted_z.clone();
            shifted_z[j] += Z_STEP;
            let r = self.model.residuals_or_penalty(&self.model.values_of_shifted(&shifted_z));
            jacobian.set_column(j, &((r - &base) / Z_STEP));
        }
        Some(jacobian)
    }
}
