//! Calibration against something outside the project: synthetic "measured" capacity loss from
//! the published empirical correlation for graphite/iron-phosphate cells,
//!
//!   loss (%) = B · exp((−31 700 + 370.3 · C-rate) / (R T)) · (Ah throughput)^0.55
//!
//! (Wang et al., J. Power Sources 196 (2011) 3942; citation confirmed, constants from memory —
//! docs/VALIDATION.md §11). Because the constants are from memory, the correlation is used only
//! as synthetic data with its throughput exponent and Arrhenius dependence, never as an exact
//! check value. B is a free scale (it depends on the cell and its
//! throughput unit, here equivalent full cycles of the demo cell); it is chosen so the loss at
//! 25 °C reaches 8 % after 3000 equivalent full cycles, a magnitude typical of such tests.
//!
//! The fit sees only the first 40 % of the throughput, at 25 and 45 °C, and must forecast the
//! remaining 60 % within 1 percentage point of state of health, and its fitted model must show
//! an apparent activation energy near the correlation's. Both are reference cases compared by
//! `common::check_cases`.

mod common;

use common::{check_cases, trial_overrides, ReferenceCase, Tolerance};
use fadecast::calibrate::{fit, Axis, FitOptions, FitProblem, FreeParameter, Weights};
use fadecast::forecast::{run_forecast, ForecastOptions, Horizon};
use fadecast::input::{load_scenario, Override};
use std::path::PathBuf;

const GAS_CONSTANT: f64 = 8.314_462_618;
const C_RATE: f64 = 0.5;
/// J/mol at C/2: the correlation's exponent −(31 700 − 370.3 · 0.5)/(RT) = −31 514.85/(RT).
const APPARENT_ACTIVATION_J_MOL: f64 = 31_700.0 - 370.3 * C_RATE;
const EXPONENT: f64 = 0.55;
const TEMPERATURES_C: [f64; 2] = [25.0, 45.0];
const LAST_EFC: f64 = 3000.0;
const POINTS: usize = 30;
const CAPACITY_NOISE_AH: f64 = 0.1;
/// Fit only the first 40 % of the throughput.
const FITTED_FRACTION: f64 = 0.4;

fn kelvin(celsius: f64) -> f64 {
    celsius + 273.15
}

/// The correlation's loss in % at a temperature and throughput (equivalent full cycles).
fn correlation_loss_pct(celsius: f64, efc: f64, scale: f64) -> f64 {
    scale * (-APPARENT_ACTIVATION_J_MOL / (GAS_CONSTANT * kelvin(celsius))).exp() * efc.powf(EXPONENT)
}

fn scenario() -> PathBuf {
    common::repo(common::LFP_HALF_C)
}

const PATHS: [&str; 3] = [
    "cell.negative.film.solvent_diffusivity_m2_s",
    "cell.negative.film.solvent_diffusivity_activation_kj_mol",
    "cell.negative.film.reaction_rate_m_s",
];

fn overrides(dataset: usize, values: &[f64]) -> Vec<Override> {
    trial_overrides(TEMPERATURES_C[dataset], &[], &PATHS, values)
}

const WANG_TRAJECTORY: &str = "synthetic data from the correlation of Wang et al., J. Power Sources 196 (2011) \
     3942 (constants from memory); 1 pp of state of health: the project's forecasting target (common practice, no \
     source)";
const WANG_ACTIVATION: &str = "(31 700 − 370.3 · C-rate) J/mol at C/2, Wang et al. (2011) (constants from memory); \
     2 kJ/mol tolerance reasoned in the test";

#[test]
fn fit_to_the_first_40_percent_forecasts_the_rest_within_one_point_of_health() {
    // The fresh capacity the data are relative to: the model's own, so state of health means the
    // same on both sides.
    let fresh = {
        let loaded = load_scenario(&scenario(), &[]).unwrap();
        let options = ForecastOptions { report_points: 1, ..ForecastOptions::default() };
        run_forecast(&loaded.scenario, &loaded.plan, Horizon::Cycles(1.0), &options).points[0].capacity_ah
    };
    let scale = 8.0 / correlation_loss_pct(25.0, LAST_EFC, 1.0);
    let efcs: Vec<f64> = (1..=POINTS).map(|k| LAST_EFC * k as f64 / POINTS as f64).collect();
    let curves: Vec<common::NamedCurve> = TEMPERATURES_C
        .iter()
        .map(|&t| {
            let curve = move |efc: f64| fresh * (1.0 - correlation_loss_pct(t, efc, scale) / 100.0);
            (format!("{t} °C"), Box::new(curve) as Box<dyn Fn(f64) -> f64>)
        })
        .collect();
    let datasets = common::noisy_datasets(&curves, Axis::Efc, &efcs, CAPACITY_NOISE_AH, 2011);
    // Start from the demo cell's values (examples/cells/ferry-prismatic-100ah.toml).
    let parameters = vec![
        FreeParameter { path: PATHS[0].into(), low: 1e-25, high: 1e-18, log: true, initial: 4.0e-22 },
        FreeParameter { path: PATHS[1].into(), low: 5.0, high: 150.0, log: false, initial: 40.0 },
        FreeParameter { path: PATHS[2].into(), low: 1e-19, high: 1e-12, log: true, initial: 4.7e-16 },
    ];
    let problem = FitProblem {
        datasets,
        parameters,
        weights: Weights { capacity_per_ah: 1.0 / CAPACITY_NOISE_AH, resistance_per_mohm: 0.0 },
        holdout_after: Some(FITTED_FRACTION * LAST_EFC),
    };
    let source = |d: usize, values: &[f64]| -> Result<_, String> {
        let loaded = load_scenario(&scenario(), &overrides(d, values)).map_err(|e| e.to_string())?;
        Ok((loaded.scenario, loaded.plan))
    };
    let options = FitOptions {
        starts: 1,
        forecast: ForecastOptions { every_cycle: false, report_points: 60, relative_tolerance: 1e-5 },
        curve_points: 60,
        ..FitOptions::default()
    };
    let started = std::time::Instant::now();
    let result = fit(&problem, &source, &options).unwrap();
    println!("fit in {:.1?}, {} model evaluations", started.elapsed(), result.model_evaluations);
    for p in &result.parameters {
        println!("  {} = {:.4e} ± {:.2e}", p.path, p.value, p.standard_error);
    }
    for h in &result.holdout {
        println!(
            "  {}: beyond the fitted 40 %, SOH error rms {:.3} pp, max {:.3} pp",
            h.dataset, h.soh_rms_pp, h.soh_max_abs_pp
        );
    }
    assert_eq!(result.holdout.len(), 2);
    let mut cases = Vec::new();
    for h in &result.holdout {
        assert_eq!(h.points, POINTS - (FITTED_FRACTION * POINTS as f64) as usize);
        cases.push(ReferenceCase::new(
            format!("{}: largest SOH error beyond the fitted 40 %, pp", h.dataset),
            WANG_TRAJECTORY,
            Tolerance::Abs(1.0),
            h.soh_max_abs_pp,
            0.0,
        ));
    }

    // Apparent activation energy of the fitted model, from its losses at the two temperatures at
    // the same throughput (the end of the data): E = R ln(L45/L25) / (1/T25 − 1/T45).
    let loss_at_end = |d: usize| {
        let curve = &result.curves[d];
        100.0 - 100.0 * curve.capacity_ah.last().unwrap() / curve.capacity_ah[0]
    };
    let inverse_gap = 1.0 / kelvin(TEMPERATURES_C[0]) - 1.0 / kelvin(TEMPERATURES_C[1]);
    let apparent = GAS_CONSTANT * (loss_at_end(1) / loss_at_end(0)).ln() / inverse_gap;
    println!(
        "  apparent activation energy of the fitted model {:.2} kJ/mol (correlation at C/2 {:.2} kJ/mol)",
        apparent / 1000.0,
        APPARENT_ACTIVATION_J_MOL / 1000.0
    );
    // Tolerance 2 kJ/mol: a 1 pp error in the 8 % loss at 25 °C alone moves the estimate by
    // R·ln(8/7)/(1/T25 − 1/T45) ≈ 5.3 kJ/mol, so the 1 pp forecast bound above would allow far
    // more; 2 kJ/mol (6 %) asks that the fitted model carry the correlation's temperature
    // dependence, not just its curves, while allowing the model's cell temperature (a few
    // tenths of a kelvin above ambient at C/2) and film form to differ from the correlation's.
    cases.push(ReferenceCase::new(
        "apparent activation energy of the fitted model, J/mol",
        WANG_ACTIVATION,
        Tolerance::Abs(2000.0),
        apparent,
        APPARENT_ACTIVATION_J_MOL,
    ));
    check_cases(&cases);
}
