//! Aging laws and the forecast against outside references and physical consistency. Each
//! reference value is a reference case with its source beside it, compared by
//! `common::check_cases`; the record is docs/VALIDATION.md §4–9.

mod common;

use common::{check_cases, load, ReferenceCase, Tolerance, CRACKING_ONLY, LAB, STORAGE};
use fadecast::aging::active_loss::loss_per_cycle;
use fadecast::aging::cracking::{growth_in_record, tensile_range, CrackLengths};
use fadecast::aging::fracture::CrackOrigin;
use fadecast::aging::{mean_temperature_k, AgingState, Component, Side};
use fadecast::cycle::*;
use fadecast::forecast::{run_forecast, Forecast, ForecastOptions, Horizon};
use fadecast::material::OpenCircuit;

fn forecast(path: &str, overrides: &[&str], options: ForecastOptions) -> Forecast {
    let (scenario, plan) = load(path, overrides);
    let horizon = plan.horizon.expect("demo scenarios carry a horizon");
    let f = run_forecast(&scenario, &plan, horizon, &options);
    assert_eq!(f.stop, fadecast::forecast::StopReason::Horizon, "{path} {overrides:?}");
    f
}

const PARIS_INTEGRAL: &str = "Paris & Erdogan, J. Basic Eng. 85 (1963) 528: da/dN = C ΔK(a)^m summed over counted \
     cycles, integrated by Runge–Kutta steps of one cycle (derived)";
const CONSERVATION: &str = "lithium in the electrodes + film + plated + stranded = the fresh inventory (the \
     model's bookkeeping; conservation of lithium, derived)";
const DIFFUSION_LIMITED_FILM: &str = "Ploehn, Ramadass, White, J. Electrochem. Soc. 151 (2004) A456: \
     solvent-diffusion-limited film growth from a bare surface, loss ∝ √t (derived)";
const REACTION_LIMITED_FILM: &str = "reaction-limited film growth is linear in time (Safari et al., J. Electrochem. \
     Soc. 156 (2009) A145; von Kolzenberg, Latz, Horstmann, ChemSusChem (2020): β = 1; derived)";
const DEGRADATION_MODES: &str = "Birkl et al., J. Power Sources 341 (2017) 373; Dubarry, Truchot, Liaw, J. Power \
     Sources 219 (2012) 204 (derived from the balancing equations)";
const ACTIVE_LOSS_SCALING: &str = "quasi-steady stress ∝ current (derived from Zhang et al. 2007) in the loss law \
     k(σ_h/σ_c)^m (Laresgoiti et al., J. Power Sources 300 (2015) 112, from memory) gives 2^m";

#[test]
fn crack_length_follows_the_paris_integral() {
    // da/dN = g(a), g from Paris' law (Paris & Erdogan 1963) over the fresh cycle's counted
    // stress-intensity cycles; with nothing else aging the cycle never changes, so the forecast
    // must follow the integral of that one ODE, taken here by small Runge–Kutta steps (derived).
    let (scenario, plan) = load(LAB, &CRACKING_ONLY);
    let p = plan.aging.neg_cracking.unwrap();
    let record =
        simulate_periodic_cycle(&scenario, &Health::fresh(&scenario.cell), &SolverSettings::default()).unwrap();
    let radius = scenario.cell.negative.particle_radius_m;
    let rate = |a: f64| {
        let lengths = CrackLengths { surface_m: a, centre_m: p.initial_length_m };
        growth_in_record(&p, &record, Side::Negative, CrackOrigin::Surface, lengths, radius)
    };
    let options = ForecastOptions { relative_tolerance: 1e-9, ..ForecastOptions::default() };
    let f = run_forecast(&scenario, &plan, Horizon::Cycles(3000.0), &options);
    let (mut a, mut n) = (p.initial_length_m, 0.0);
    let mut cases = Vec::new();
    for point in f.points.iter().filter(|p| p.cycle > 0.0) {
        while n < point.cycle - 1e-9 {
            let h = (point.cycle - n).min(1.0);
            let k1 = rate(a);
            let k2 = rate(a + 0.5 * h * k1);
            let k3 = rate(a + 0.5 * h * k2);
            let k4 = rate(a + h * k3);
            a += h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4);
            n += h;
        }
        cases.push(ReferenceCase::new(
            format!("crack depth at cycle {}, nm", point.cycle),
            PARIS_INTEGRAL,
            // Each forecast cycle is warm-started, so its time grid (and the smallest counted
            // reversals) differ slightly from the fresh periodic cycle's: a few 1e-4 in rate.
            Tolerance::Rel(1e-3),
            point.state[Component::NegCrackNm],
            a * 1e9,
        ));
    }
    assert!(cases.len() >= 100);
    check_cases(&cases);
    let last = f.points.last().unwrap();
    assert!(
        last.state[Component::NegCrackNm] > 1.5 * p.initial_length_m * 1e9,
        "the check needs visible growth: {}",
        last.state[Component::NegCrackNm]
    );
}

#[test]
fn no_crack_growth_below_the_threshold() {
    // A threshold above the cycle's ΔK (Paris & Erdogan 1963; ASTM E647): length unchanged.
    let mut overrides = CRACKING_ONLY.to_vec();
    overrides.push("cell.negative.cracking.threshold_kpa_sqrt_m=50");
    let f = forecast(LAB, &overrides, ForecastOptions::default());
    let initial_nm = load(LAB, &overrides).1.aging.neg_cracking.unwrap().initial_length_m * 1e9;
    for p in &f.points {
        assert_eq!(p.state[Component::NegCrackNm], initial_nm, "cycle {}", p.cycle);
    }
}

/// Storage-only forecast with only the film law, returning (day, lithium lost to film).
fn storage_film_loss(overrides: &[&str]) -> Vec<(f64, f64)> {
    // These checks are of the mixed (solvent-diffusion) law.
    let mut overrides = overrides.to_vec();
    overrides.push("cell.negative.film.law=solvent-diffusion");
    let f = forecast(STORAGE, &overrides, ForecastOptions { relative_tolerance: 1e-7, ..ForecastOptions::default() });
    f.points.iter().map(|p| (p.day, 100.0 * p.state[Component::LithiumFilmOriginal])).collect()
}

fn loss_at(curve: &[(f64, f64)], day: f64) -> f64 {
    curve.iter().find(|(d, _)| (d - day).abs() < 1e-6).unwrap_or_else(|| panic!("no point at day {day}")).1
}

#[test]
fn diffusion_limited_rest_aging_grows_as_the_square_root_of_time() {
    // From a bare surface with a fast reaction, film growth is solvent-diffusion limited and
    // loss(4t) = 2·loss(t), within 2 %.
    let curve =
        storage_film_loss(&["cell.negative.film.initial_thickness_nm=0", "cell.negative.film.reaction_rate_m_s=1e-9"]);
    let horizon = curve.last().unwrap().0;
    let t = horizon / 4.0;
    let ratio = loss_at(&curve, horizon) / loss_at(&curve, t);
    check_cases(&[ReferenceCase::new(
        "film loss(4t)/loss(t)",
        DIFFUSION_LIMITED_FILM,
        Tolerance::Abs(0.04),
        ratio,
        2.0,
    )]);
}

#[test]
fn reaction_limited_rest_aging_is_linear_in_time() {
    // With fast solvent diffusion the reaction limits and the loss is linear in time: loss(4t) = 4·loss(t), within 2 %.
    // A slow reaction keeps the total loss small (0.5 %), so the rest potential hardly drifts.
    let curve = storage_film_loss(&[
        "cell.negative.film.solvent_diffusivity_m2_s=1e-12",
        "cell.negative.film.reaction_rate_m_s=1.5e-18",
    ]);
    let horizon = curve.last().unwrap().0;
    let ratio = loss_at(&curve, horizon) / loss_at(&curve, horizon / 4.0);
    check_cases(&[ReferenceCase::new(
        "film loss(4t)/loss(t)",
        REACTION_LIMITED_FILM,
        Tolerance::Abs(0.08),
        ratio,
        4.0,
    )]);
}

#[test]
fn lithium_is_conserved_over_3000_cycles() {
    // Lithium in the electrodes + film + plated + stranded = initial; the inventory is
    // integrated as its own component, so this checks the bookkeeping, to 1e-9.
    let mut cases = Vec::new();
    for path in [LAB, common::WINTER_FAST_CHARGE, common::TUG] {
        let f = forecast(path, &[], ForecastOptions::default());
        let state: AgingState = f.final_state.unwrap();
        assert!(state[Component::LithiumInventory] < 0.99, "{path}: the check needs real losses");
        if path == common::WINTER_FAST_CHARGE {
            assert!(state[Component::LithiumPlatedDead] > 0.0, "{path}: the check needs plating");
        }
        cases.push(ReferenceCase::new(
            format!("{path}: lithium total after 3000 cycles, of fresh"),
            CONSERVATION,
            Tolerance::Abs(1e-9),
            state.lithium_total(),
            1.0,
        ));
    }
    check_cases(&cases);
}

#[test]
fn capacity_never_rises() {
    for path in [LAB, common::OVERNIGHT, common::TUG, common::FERRY, STORAGE] {
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
    // 10 % loss of lithium inventory costs 10 % of capacity when lithium limits.
    let (cell, health) = lithium_limited_cell();
    let fresh = balance_cell(&cell, &health).unwrap().capacity_coulomb;
    let aged = Health { lithium_inventory_coulomb: 0.9 * health.lithium_inventory_coulomb, ..health };
    let after = balance_cell(&cell, &aged).unwrap().capacity_coulomb;
    check_cases(&[ReferenceCase::new(
        "capacity after 10 % loss of lithium, of fresh",
        DEGRADATION_MODES,
        Tolerance::Abs(0.005),
        after / fresh,
        0.9,
    )]);
}

#[test]
fn losing_surplus_active_material_costs_nothing_until_it_limits() {
    // Active-material loss in the electrode with surplus capacity costs nothing until that electrode becomes limiting, then capacity falls (a knee).
    let (cell, health) = lithium_limited_cell();
    let fresh = balance_cell(&cell, &health).unwrap().capacity_coulomb;
    let lithium_share = health.lithium_inventory_coulomb / cell.negative.capacity_coulomb();
    let mut knee = None;
    let mut cases = Vec::new();
    for k in 0..=60 {
        let loss = k as f64 * 0.01;
        let h = Health { neg_active_scale: 1.0 - loss, ..health };
        let capacity = balance_cell(&cell, &h).map_or(0.0, |b| b.capacity_coulomb);
        // While the negative can still hold all the lithium (with the table's 1 % margins), nothing is lost.
        if 1.0 - loss > lithium_share / 0.95 {
            cases.push(ReferenceCase::new(
                format!("capacity at {:.0} % loss of negative active material, of fresh", 100.0 * loss),
                DEGRADATION_MODES,
                Tolerance::Abs(1e-3),
                capacity / fresh,
                1.0,
            ));
        } else if knee.is_none() && capacity < 0.99 * fresh {
            knee = Some(loss);
        }
    }
    check_cases(&cases);
    let knee = knee.expect("capacity falls once the negative limits");
    assert!(knee > 1.0 - lithium_share / 0.95 - 0.05, "knee at {knee}");
}

#[test]
fn no_plating_at_zero_current_and_onset_falls_with_temperature() {
    // Derived from the plating criterion of Arora, Doyle, White, J. Electrochem. Soc. 146 (1999)
    // 3543 (from memory: the negative's potential against Li/Li⁺ below 0 V): no plating at zero
    // current; the charge current at which the negative first goes below lithium falls as
    // the cell gets colder.
    let (scenario, plan) = load(LAB, &[]);
    assert!(plan.aging.plating.is_some(), "the probe needs plating on");
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
    let idle = charge_record(0.0, 0.0);
    assert_eq!(idle.plated_coulomb, 0.0);
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
    // Quasi-steady surface stress is proportional to current (derived from the stress integrals
    // of Zhang, Shyy, Sastry 2007), so the per-cycle loss law k(σ_h/σ_c)^m gives 2^m.
    let (scenario, plan) = load(LAB, &[]);
    // The scaling holds for any exponent; m = 2 keeps the check on the stress ratio (which the
    // loss ratio raises to the m-th power) at the 1 % the quasi-steady statement is good for.
    let params = fadecast::aging::ActiveLossParams { exponent: 2.0, ..plan.aging.neg_active_loss.unwrap() };
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
    check_cases(&[ReferenceCase::new(
        "loss per cycle at C/5 over that at C/10",
        ACTIVE_LOSS_SCALING,
        Tolerance::Rel(0.01),
        ratio,
        expected,
    )]);
    assert_eq!(loss_per_cycle(&params, 0.0, t), 0.0, "no loss without tension (at rest)");
}

#[test]
fn tensile_range_ignores_compression() {
    assert_eq!(tensile_range(5e6, -3e6), 5e6);
}
