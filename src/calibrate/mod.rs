//! Calibration: fits chosen model inputs to measured fade data by bounded nonlinear least
//! squares, and says how well the data determine them.
//!
//! The problem ([`FitProblem`]) is datasets of measured points, each measured under its own
//! scenario, and free parameters by `--set` path with bounds. The command layer supplies a
//! [`ScenarioSource`] that turns parameter values into a scenario for each dataset (loading the
//! files with the values as overrides, so every input rule applies to trial values too); this
//! module runs the forecasts and never touches a file.
//!
//! - **Bounds** by a smooth transform: each parameter is fitted as an unbounded z with
//!   u = 1/(1 + e^(−z)) in (0, 1) and value = low + (high − low)·u, or with `log = true`
//!   ln value = ln low + (ln high − ln low)·u. The optimiser never leaves the box, and the
//!   transform is smooth, so Levenberg–Marquardt's steps stay well defined.
//! - **Residuals**: weight × (model − data) for capacity and, where measured, resistance, at
//!   the data points; the model's fade curve is reported on a fine grid and interpolated.
//! - **Jacobian** by finite differences in z (forward while iterating, central at the optimum,
//!   where it sets the standard errors).
//! - **Several starts**, deterministic: the given initial values, then points of a fixed
//!   low-discrepancy sequence inside the bounds; the lowest sum of squares wins.
//! - **Uncertainty**: covariance s²(JᵀJ)⁻¹ with s² = SSR/(m − n), computed for the natural
//!   coordinates φ (ln value for log parameters, the value otherwise) by the chain rule
//!   J_φ = J_z · dz/dφ. A log parameter's standard error is that of ln value (`sigma_ln`);
//!   its standard error in value units is value·sigma_ln (first order).
//!
//! References: K. Levenberg, Q. Appl. Math. 2 (1944) 164; D. W. Marquardt, J. SIAM 11 (1963)
//! 431; J. J. Moré, "The Levenberg–Marquardt algorithm: implementation and theory", Lecture
//! Notes in Mathematics 630 (1978) 105 (the algorithm the `levenberg-marquardt` crate follows);
//! the linearised covariance of least-squares estimates: Bates & Watts, *Nonlinear Regression
//! Analysis and Its Applications* (1988), ch. 2.

mod problem;
mod transform;

use crate::cycle::Scenario;
use crate::forecast::{FadePoint, ForecastOptions, ForecastWarning, Plan};
use serde::Serialize;
use thiserror::Error;

pub use problem::fit;

pub use transform::Bounded;

/// What a dataset's first column counts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Axis {
    Cycle,
    Day,
    /// Equivalent full cycles (throughput over the nominal capacity).
    Efc,
}

impl Axis {
    /// The CSV column name.
    pub fn column(self) -> &'static str {
        match self {
            Axis::Cycle => "cycle",
            Axis::Day => "day",
            Axis::Efc => "efc",
        }
    }

    /// This axis' coordinate of a forecast point.
    pub fn of(self, point: &FadePoint) -> f64 {
        match self {
            Axis::Cycle => point.cycle,
            Axis::Day => point.day,
            Axis::Efc => point.efc,
        }
    }
}

/// One measured point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeasuredPoint {
    /// Cycle, day or equivalent full cycles, as the dataset's axis says.
    pub x: f64,
    pub capacity_ah: f64,
    pub resistance_mohm: Option<f64>,
}

/// Points measured under one scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct Dataset {
    pub name: String,
    pub axis: Axis,
    /// Sorted by strictly increasing x.
    pub points: Vec<MeasuredPoint>,
}

/// A model input left free, by its `--set` path.
#[derive(Debug, Clone, PartialEq)]
pub struct FreeParameter {
    pub path: String,
    pub low: f64,
    pub high: f64,
    /// Fit ln value (for rates and diffusivities spanning decades).
    pub log: bool,
    /// Where the first start begins: the value the files give.
    pub initial: f64,
}

/// Residual weights: each multiplies model − data in its unit. With each set to 1 / the
/// measurement's standard deviation the fit is maximum likelihood under normal noise.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Weights {
    pub capacity_per_ah: f64,
    pub resistance_per_mohm: f64,
}

impl Default for Weights {
    fn default() -> Self {
        Weights { capacity_per_ah: 1.0, resistance_per_mohm: 1.0 }
    }
}

/// What to fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitProblem {
    pub datasets: Vec<Dataset>,
    pub parameters: Vec<FreeParameter>,
    pub weights: Weights,
    /// Fit only points with x ≤ this; the rest measure the forecast error.
    pub holdout_after: Option<f64>,
}

/// Default patience of the optimiser (see [`FitOptions::patience`]).
pub const DEFAULT_PATIENCE: usize = 30;

/// How to fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitOptions {
    /// Starts of the optimiser (the first from the files' values), at least 1.
    pub starts: usize,
    /// The optimiser gives up after patience × (parameters + 1) evaluations per start; one that
    /// does is reported as not converged.
    pub patience: usize,
    /// Forecast settings of every model evaluation: a tighter tolerance than a plain forecast's
    /// (a thirtieth) keeps the finite-difference Jacobian above the integrator's noise. 1e-4
    /// with the Bogacki–Shampine pair fits the storage demo to the same values within a tenth
    /// of their standard errors, as fast as 1e-5 did with Dormand–Prince.
    pub forecast: ForecastOptions,
    /// Points of each fitted curve returned for plotting.
    pub curve_points: usize,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            starts: 3,
            patience: DEFAULT_PATIENCE,
            forecast: ForecastOptions { every_cycle: false, report_points: 200, relative_tolerance: 1e-4 },
            curve_points: 200,
        }
    }
}

/// Turns parameter values (in the order of [`FitProblem::parameters`]) into dataset
/// `dataset`'s scenario and plan. Err carries a message naming what was rejected.
pub trait ScenarioSource: Sync {
    fn scenario(&self, dataset: usize, values: &[f64]) -> Result<(Scenario, Plan), String>;
}

impl<F: Fn(usize, &[f64]) -> Result<(Scenario, Plan), String> + Sync> ScenarioSource for F {
    fn scenario(&self, dataset: usize, values: &[f64]) -> Result<(Scenario, Plan), String> {
        self(dataset, values)
    }
}

/// A fitted parameter.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FittedParameter {
    pub path: String,
    pub value: f64,
    /// First-order standard error in the value's unit.
    pub standard_error: f64,
    /// Standard error of ln value, for log parameters.
    pub sigma_ln: Option<f64>,
    pub low: f64,
    pub high: f64,
    pub log: bool,
    pub initial: f64,
}

/// How well the fit matches one dataset.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResidualStats {
    pub dataset: String,
    pub points_fitted: usize,
    /// Root mean square of model − data over the fitted points, Ah.
    pub capacity_rms_ah: f64,
    pub capacity_max_abs_ah: f64,
    /// Mean of model − data, Ah: a bias the noise does not explain shows here.
    pub capacity_mean_ah: f64,
    /// Over the fitted points with a measured resistance; None when there are none.
    pub resistance_rms_mohm: Option<f64>,
}

/// Forecast error beyond `--holdout-after`, per dataset.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HoldoutError {
    pub dataset: String,
    pub points: usize,
    /// Capacity error as state of health, percentage points of the fresh model capacity.
    pub soh_rms_pp: f64,
    pub soh_max_abs_pp: f64,
    pub capacity_rms_ah: f64,
}

/// The fitted model's curve for one dataset, from 0 to the last measured point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FittedCurve {
    pub dataset: String,
    pub axis: Axis,
    pub x: Vec<f64>,
    pub capacity_ah: Vec<f64>,
    pub resistance_mohm: Vec<f64>,
    /// The measured points (all of them, held out too).
    pub x_data: Vec<f64>,
    pub capacity_data_ah: Vec<f64>,
    /// Measured resistance at each point, where the data give one.
    pub resistance_data_mohm: Vec<Option<f64>>,
    /// Model − data at each measured point, Ah.
    pub capacity_residual_ah: Vec<f64>,
    /// Whether each measured point was fitted (false: held out).
    pub fitted: Vec<bool>,
    /// Where the model stands at the last fitted (not held-out) point, for the fitted cell's
    /// `[calibration]` table: cycles (0 in storage), days and equivalent full cycles.
    pub fitted_end: FittedEnd,
    /// Lowest and highest ambient temperature of the dataset's scenario, K.
    pub ambient_k: (f64, f64),
    /// The warnings of the dataset's forecast at the fitted values (plating, limits).
    pub forecast_warnings: Vec<ForecastWarning>,
}

/// The model's position at a dataset's last fitted point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Default)]
pub struct FittedEnd {
    pub cycles: f64,
    pub days: f64,
    pub efc: f64,
}

/// Something the reader of a fit must know, with the numbers involved (words in `src/report`).
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum FitWarning {
    /// The optimiser stopped without meeting its convergence tests (iteration or patience
    /// limit, or a numerical failure): the values may not be a minimum.
    NotConverged {
        termination: Termination,
    },
    /// JᵀJ is singular: the data do not determine the parameters.
    Singular,
    StandardErrorExceedsValue {
        path: String,
        standard_error: f64,
        value: f64,
    },
    AtBound {
        path: String,
        value: f64,
        low: f64,
        high: f64,
    },
    Correlated {
        first: String,
        second: String,
        correlation: f64,
    },
}

/// Why the optimiser stopped on the winning start (the `levenberg-marquardt` crate's reasons,
/// kept as a type so outputs carry a name, not a debug string).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Termination {
    /// The change of the sum of squares or of the parameters fell below its tolerance.
    Converged,
    /// The residuals are orthogonal to the Jacobian's columns (gradient test).
    Orthogonal,
    ResidualsZero,
    /// The evaluation limit (patience) was reached.
    LostPatience,
    /// A tolerance is below what floating point can resolve.
    NoImprovementPossible,
    /// Not-a-number or infinity met, or the model failed at a trial.
    NumericalTrouble,
    /// No parameters, no residuals or mismatched dimensions.
    BadProblem,
}

impl Termination {
    pub fn of(reason: &levenberg_marquardt::TerminationReason) -> Self {
        use levenberg_marquardt::TerminationReason as R;
        match reason {
            R::Converged { .. } => Termination::Converged,
            R::Orthogonal => Termination::Orthogonal,
            R::ResidualsZero => Termination::ResidualsZero,
            R::LostPatience => Termination::LostPatience,
            R::NoImprovementPossible(_) => Termination::NoImprovementPossible,
            R::Numerical(_) | R::User(_) => Termination::NumericalTrouble,
            R::NoParameters | R::NoResiduals | R::WrongDimensions(_) => Termination::BadProblem,
        }
    }
}

/// Everything a fit found.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FitResult {
    pub parameters: Vec<FittedParameter>,
    /// Correlation of the estimates (natural coordinates), row and column order as parameters.
    pub correlation: Vec<Vec<f64>>,
    /// Covariance in natural coordinates (ln value for log parameters).
    pub covariance: Vec<Vec<f64>>,
    pub residuals: Vec<ResidualStats>,
    pub holdout: Vec<HoldoutError>,
    /// Weighted sum of squared residuals at the optimum.
    pub sum_of_squares: f64,
    /// Residual variance s² = SSR / (m − n) of the weighted residuals.
    pub residual_variance: f64,
    pub residual_count: usize,
    /// Forecasts run (each dataset counts once per parameter vector).
    pub model_evaluations: usize,
    pub starts: usize,
    /// The optimiser's termination on the winning start.
    pub termination: Termination,
    /// Whether that termination met the optimiser's convergence tests.
    pub converged: bool,
    pub warnings: Vec<FitWarning>,
    pub curves: Vec<FittedCurve>,
}

#[derive(Debug, Error, PartialEq)]
pub enum CalibrationError {
    #[error("{fitted} points are fitted but {parameters} parameters are free: need at least as many points")]
    TooFewPoints { fitted: usize, parameters: usize },
    #[error("the model failed at the starting values: {0}")]
    StartFailed(String),
    #[error("every start failed; the last: {0}")]
    AllStartsFailed(String),
}
