//! Aging laws and the forecast against outside references (shared VALIDATION.md) and
//! physical consistency. Each reference names its source beside it.

use fadecast::aging::active_loss::loss_per_cycle;
use fadecast::aging::cracking::{record_range, tensile_range};
use fadecast::aging::plating::plated_charge;
use fadecast::aging::{mean_temperature_k, AgingState, Side};
use fadecast::cycle::*;
use fadecast::forecast::{run_forecast, Forecast, ForecastOptions, Horizon, Plan};
use fadecast::input::{load_scenario, parse_override, Override};
use fadecast::material::{arrhenius_factor, OpenCircuit};
use std::path::Path;

fn load(path: &str, overrides: &[&str]) -> (Scenario, Plan) {
    let overrides: Vec<Override> = overrides.iter().map(|o| parse_override(o).expect("override")).collect();
    let loaded = load_scenario(Path::new(path), &overrides).unwrap_or_else(|e| panic!("{e}"));
    (loaded.scenario, loaded.plan)
}

fn forecast(path: &str, overrides: &[&str], options: ForecastOptions) -> Forecast {
    let (scenario, plan) = load(path, overrides);
    let horizon = plan.horizon.expect("demo scenarios carry a horizon");
    let f = run_forecast(&scenario, &plan, horizon, &options);
    assert_eq!(f.stop, fadecast::forecast::StopReason::Horizon, "{path} {overrides:?}");
    f
}

const LAB: &str = "examples/lab-cccv-1c.toml";
const STORAGE: &str = "examples/van-depot-storage.toml";
/// Everything but negative cracking switched off.
const CRACKING_ONLY: [&str; 5] = [
    "cell.negative.film.enabled=false",
    "cell.negative.plating.enabled=false",
    "cell.negative.active_loss.enabled=false",
    "cell.positive.active_loss.enabled=false",
    "cell.positive.cracking.enabled=false",
];

#[test]
fn crack_length_follows_the_closed_form_paris_integral() {
    // Paris & Erdogan (1963); closed form at constant Δσ (VALIDATION.md §3, derived):
    // a(N) = [a₀^(1−m/2) + (1 − m/2) C (Y Δσ √π)^m N]^(1/(1−m/2)).
    let (scenario, plan) = load(LAB, &CRACKING_ONLY);
    let p = scenario.cell.aging.neg_cracking.unwrap();
    // With nothing else aging, every cycle is the periodic fresh cycle: Δσ and T are constant.
    let record =
        simulate_periodic_cycle(&scenario, &Health::fresh(&scenario.cell), &SolverSettings::default()).unwrap();
    let range = record_range(&record, Side::Negative);
    let c = p.paris_coefficient
        * arrhenius_factor(p.activation_j_mol, mean_temperature_k(&record), p.reference_temperature_k);
    let m = p.paris_exponent;
    let closed = |n: f64| {
        let e = 1.0 - m / 2.0;
        (p.initial_length_m.powf(e) + e * c * (p.geometry_factor * range * std::f64::consts::PI.sqrt()).powf(m) * n)
            .powf(1.0 / e)
    };
    let options = ForecastOptions { relative_tolerance: 1e-9, ..ForecastOptions::default() };
    let f = run_forecast(&scenario, &plan, Horizon::Cycles(3000.0), &options);
    let mut checked = 0;
    for point in f.points.iter().filter(|p| p.cycle > 0.0) {
        let expected = closed(point.cycle) * 1e9;
        let error = (point.neg_crack_nm - expected).abs() / expected;
        assert!(
            error <= 1e-4,
            "cycle {}: {} nm, closed form {} nm ({error:.1e})",
            point.cycle,
            point.neg_crack_nm,
            expected
        );
        checked += 1;
    }
    assert!(checked >= 100);
    let last = f.points.last().unwrap();
    assert!(
        last.neg_crack_nm > 1.5 * p.initial_length_m * 1e9,
        "the check needs visible growth: {}",
        last.neg_crack_nm
    );
}

#[test]
fn no_crack_growth_below_the_threshold() {
    // A threshold above the cycle's ΔK (Paris & Erdogan 1963; ASTM E647): length unchanged.
    let mut overrides = CRACKING_ONLY.to_vec();
    overrides.push("cell.negative.cracking.threshold_kpa_sqrt_m=50");
    let f = forecast(LAB, &overrides, ForecastOptions::default());
    for p in &f.points {
        assert_eq!(p.neg_crack_nm, 20.0, "cycle {}", p.cycle);
    }
}

/// Storage-only forecast with only the film law, returning (day, lithium lost to film).
fn storage_film_loss(overrides: &[&str]) -> Vec<(f64, f64)> {
    let f = forecast(STORAGE, overrides, ForecastOptions { relative_tolerance: 1e-7, ..ForecastOptions::default() });
    f.points.iter().map(|p| (p.day, p.lithium_film_original_pct)).collect()
}

fn loss_at(curve: &[(f64, f64)], day: f64) -> f64 {
    curve.iter().find(|(d, _)| (d - day).abs() < 1e-6).unwrap_or_else(|| panic!("no point at day {day}")).1
}

#[test]
fn diffusion_limited_rest_aging_grows_as_the_square_root_of_time() {
    // Ploehn, Ramadass, White (2004); VALIDATION.md §4 (derived): from a bare surface with a fast
    // reaction, film growth is solvent-diffusion limited and loss(4t) = 2·loss(t), within 2 %.
    let curve =
        storage_film_loss(&["cell.negative.film.initial_thickness_nm=0", "cell.negative.film.reaction_rate_m_s=1e-9"]);
    let horizon = curve.last().unwrap().0;
    let t = horizon / 4.0;
    let ratio = loss_at(&curve, horizon) / loss_at(&curve, t);
    assert!((ratio - 2.0).abs() < 0.04, "loss(4t)/loss(t) = {ratio}");
}

#[test]
fn reaction_limited_rest_aging_is_linear_in_time() {
    // VALIDATION.md §4 (derived): with fast solvent diffusion the reaction limits and the loss is
    // linear in time: loss(4t) = 4·loss(t), within 2 %.
    // A slow reaction keeps the total loss small (0.5 %), so the rest potential hardly drifts.
    let curve = storage_film_loss(&[
        "cell.negative.film.solvent_diffusivity_m2_s=1e-12",
        "cell.negative.film.reaction_rate_m_s=1.5e-18",
    ]);
    let horizon = curve.last().unwrap().0;
    let ratio = loss_at(&curve, horizon) / loss_at(&curve, horizon / 4.0);
    assert!((ratio - 4.0).abs() < 0.08, "loss(4t)/loss(t) = {ratio}");
}

#[test]
fn lithium_is_conserved_over_3000_cycles() {
    // Lithium in the electrodes + film + plated + stranded = initial (DESIGN.md); the inventory
    // is integrated as its own component, so this checks the bookkeeping, to 1e-9.
    for path in [LAB, "examples/van-fleet-winter-fast-charge.toml", "examples/airport-tug-2c.toml"] {
        let f = forecast(path, &[], ForecastOptions::default());
        let state: AgingState = f.final_state.unwrap();
        assert!((state.lithium_total() - 1.0).abs() <= 1e-9, "{path}: total {}", state.lithium_total());
        assert!(state.lithium_inventory < 0.99, "{path}: the check needs real losses");
    }
}

#[test]
fn capacity_never_rises() {
    for path in [
        LAB,
        "examples/van-fleet-overnight.toml",
        "examples/airport-tug-2c.toml",
        "examples/harbour-ferry.toml",
        STORAGE,
    ] {
        let f = forecast(path, &[], ForecastOptions::default());
        for w in f.points.windows(2) {
            assert!(
                w[1].capacity_ah <= w[0].capacity_ah + 1e-12,
                "{path}: {} → {} Ah at cycle {}",
                w[0].capacity_ah,
                w[1].capacity_ah,
                w[1].cycle
            );
        }
    }
}

/// A test cell whose capacity is limited by its lithium: table potentials with flat plateaus
/// and steep ends, so the window ends sit where an electrode runs empty, and surplus host
/// capacity on both sides.
fn lithium_limited_cell() -> (Cell, Health) {
    let (scenario, _) = load(LAB, &[]);
    let mut cell = scenario.cell;
    cell.negative.ocp =
        OpenCircuit::Table { stoich: vec![0.0, 0.01, 0.99, 1.0], potential_v: vec![1.5, 0.1, 0.09, 0.0] };
    cell.positive.ocp =
        OpenCircuit::Table { stoich: vec![0.0, 0.01, 0.99, 1.0], potential_v: vec![5.0, 3.8, 3.7, 2.0] };
    cell.voltage_min_v = 2.5;
    cell.voltage_max_v = 4.3;
    // Lithium fills 60 % of the negative and 35 % of the positive.
    let q_neg = cell.negative.capacity_coulomb();
    let q_pos = cell.positive.capacity_coulomb();
    let lithium = 0.6 * q_neg.min(q_pos);
    let health = Health { lithium_inventory_coulomb: lithium, ..Health::fresh(&cell) };
    (cell, health)
}

#[test]
fn loss_of_lithium_costs_capacity_one_for_one_in_a_lithium_limited_cell() {
    // Birkl et al. (2017), Dubarry et al. (2012); VALIDATION.md §6 (derived): 10 % loss of lithium
    // inventory costs 10 % of capacity when lithium limits.
    let (cell, health) = lithium_limited_cell();
    let fresh = balance_cell(&cell, &health).unwrap().capacity_coulomb;
    let aged = Health { lithium_inventory_coulomb: 0.9 * health.lithium_inventory_coulomb, ..health };
    let after = balance_cell(&cell, &aged).unwrap().capacity_coulomb;
    assert!((after / fresh - 0.9).abs() < 0.005, "capacity ratio {}", after / fresh);
}

#[test]
fn losing_surplus_active_material_costs_nothing_until_it_limits() {
    // VALIDATION.md §6 (derived): active-material loss in the electrode with surplus capacity
    // costs nothing until that electrode becomes limiting, then capacity falls (a knee).
    let (cell, health) = lithium_limited_cell();
    let fresh = balance_cell(&cell, &health).unwrap().capacity_coulomb;
    let lithium_share = health.lithium_inventory_coulomb / cell.negative.capacity_coulomb();
    let mut knee = None;
    for k in 0..=60 {
        let loss = k as f64 * 0.01;
        let h = Health { neg_active_scale: 1.0 - loss, ..health };
        let capacity = balance_cell(&cell, &h).map_or(0.0, |b| b.capacity_coulomb);
        // While the negative can still hold all the lithium (with the table's 1 % margins), nothing is lost.
        if 1.0 - loss > lithium_share / 0.95 {
            assert!((capacity / fresh - 1.0).abs() < 1e-3, "lost {:.4} at LAM {loss}", 1.0 - capacity / fresh);
        } else if knee.is_none() && capacity < 0.99 * fresh {
            knee = Some(loss);
        }
    }
    let knee = knee.expect("capacity falls once the negative limits");
    assert!(knee > 1.0 - lithium_share / 0.95 - 0.05, "knee at {knee}");
}

#[test]
fn no_plating_at_zero_current_and_onset_falls_with_temperature() {
    // VALIDATION.md §7 (derived from the criterion of Arora, Doyle, White 1999): no plating at
    // zero current; the charge current at which the negative first goes below lithium falls as
    // the cell gets colder.
    let (scenario, _) = load(LAB, &[]);
    let params = scenario.cell.aging.plating.unwrap();
    let charge_record = |rate_c: f64, ambient_c: f64| {
        let mut s = scenario.clone();
        s.ambient_k = ambient_c + 273.15;
        // Lift the window so the probe measures the plating onset, not the voltage limit, and
        // hold the cell at ambient (a huge thermal mass) so self-heating does not mix in.
        s.cell.voltage_max_v = 4.8;
        s.cell.mass_kg *= 1e4;
        let c = s.cell.nominal_capacity_coulomb / 3600.0;
        let drive = if rate_c == 0.0 { Drive::Rest } else { Drive::Current(-rate_c * c) };
        let ends = if rate_c == 0.0 { vec![StepEnd::Time(3600.0)] } else { vec![StepEnd::Soc(0.9)] };
        s.duty = DutyCycle::Steps(StepProfile {
            name: "probe".into(),
            steps: vec![Step { label: "probe".into(), drive, ends }],
        });
        s.start_soc = 0.1;
        let model = CellModel::new(&s.cell);
        let health = Health::fresh(&s.cell);
        let balance = balance_cell(&s.cell, &health).unwrap();
        let mut state = model.rest_state(&balance, &health, 0.1, s.ambient_k);
        let mut record = CycleRecord::default();
        let run = CycleRun { duty: &s.duty, ambient_k: s.ambient_k, health: &health, balance: &balance };
        simulate_cycle(&model, &run, &mut state, &SolverSettings::default(), &mut record).unwrap();
        record
    };
    let area = scenario.cell.negative.surface_area_m2();
    let idle = charge_record(0.0, 0.0);
    assert_eq!(plated_charge(&params, &idle.trace, area), 0.0);
    assert!(idle.neg_potential_min_v > 0.0);
    let onset = |ambient_c: f64| {
        let (mut lo, mut hi) = (0.05, 6.0);
        assert!(charge_record(hi, ambient_c).neg_potential_min_v < 0.0, "no plating even at {hi}C, {ambient_c} °C");
        for _ in 0..25 {
            let mid = 0.5 * (lo + hi);
            if charge_record(mid, ambient_c).neg_potential_min_v < 0.0 {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        hi
    };
    let (warm, mild, cold) = (onset(25.0), onset(10.0), onset(0.0));
    assert!(warm > mild && mild > cold, "onset C-rates: 25 °C {warm:.3}, 10 °C {mild:.3}, 0 °C {cold:.3}");
}

#[test]
fn active_material_loss_per_cycle_scales_as_two_to_the_m_with_doubled_current() {
    // Quasi-steady surface stress is proportional to current (VALIDATION.md §2, derived), so the
    // per-cycle loss law k(σ_h/σ_c)^m (Laresgoiti et al. 2015, from memory; §8) gives 2^m.
    let (scenario, _) = load(LAB, &[]);
    let params = scenario.cell.aging.neg_active_loss.unwrap();
    let peak_stress = |rate_c: f64| {
        let mut s = scenario.clone();
        let c = s.cell.nominal_capacity_coulomb / 3600.0;
        s.duty = DutyCycle::Steps(StepProfile {
            name: "slow".into(),
            steps: vec![Step { label: "d".into(), drive: Drive::Current(rate_c * c), ends: vec![StepEnd::Soc(0.2)] }],
        });
        let model = CellModel::new(&s.cell);
        let health = Health::fresh(&s.cell);
        let balance = balance_cell(&s.cell, &health).unwrap();
        let mut state = model.rest_state(&balance, &health, 0.9, s.ambient_k);
        let mut record = CycleRecord::default();
        let run = CycleRun { duty: &s.duty, ambient_k: s.ambient_k, health: &health, balance: &balance };
        simulate_cycle(&model, &run, &mut state, &SolverSettings::default(), &mut record).unwrap();
        (record.neg_stress_max_pa, mean_temperature_k(&record))
    };
    let (low, _) = peak_stress(0.1);
    let (high, _) = peak_stress(0.2);
    // Same temperature for both, so only the stress term differs.
    let t = scenario.cell.reference_temperature_k;
    let ratio = loss_per_cycle(&params, high, t) / loss_per_cycle(&params, low, t);
    let expected = 2f64.powf(params.exponent);
    assert!((ratio / expected - 1.0).abs() < 0.01, "ratio {ratio}, 2^m = {expected}");
    assert_eq!(loss_per_cycle(&params, 0.0, t), 0.0, "no loss without tension (at rest)");
}

#[test]
fn tensile_range_ignores_compression() {
    assert_eq!(tensile_range(5e6, -3e6), 5e6);
}
