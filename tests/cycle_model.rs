//! Behaviour of the cycle model on the demo cells, with outside references where a number is
//! checked: lumped-capacitance cooling (F. P. Incropera, D. P. DeWitt, *Fundamentals of Heat
//! and Mass Transfer*, ch. 5), electrode balancing (Birkl, Roberts, McTurk, Bruce, Howey,
//! J. Power Sources 341 (2017) 373) and the stress sign convention (Christensen & Newman,
//! J. Solid State Electrochem. 10 (2006) 293). Numbers are compared as reference cases by
//! `common::check_cases`; the record is docs/VALIDATION.md §3.

mod common;

use common::{check_cases, ReferenceCase, Tolerance, FAST_CHARGE, FERRY, OVERNIGHT as VAN};
use fadecast::cycle::*;
use fadecast::material::constants::ZERO_CELSIUS_K;

const BALANCED_CAPACITY: &str = "at vanishing current the delivered charge is the equilibrium capacity between the \
     window ends (Birkl et al. 2017, Dubarry, Truchot, Liaw 2012; derived)";
const STEP_END: &str = "the profile's end voltage or the cell's window (input); 1 mV: the solver locates ends to \
     0.2 mV (common practice, no source)";
const LITHIUM_IN_A_CYCLE: &str = "lithium only moves between the electrodes within a cycle (Birkl et al. 2017, \
     Dubarry et al. 2012; derived)";
const LUMPED_COOLING: &str =
    "lumped capacitance T − T∞ = (T₀ − T∞) e^(−t/τ), τ = m c_p/(hA) (Incropera & DeWitt, ch. 5; derived)";
const LUMPED_STEADY: &str = "steady lumped balance: mean rise = mean heat / (hA) (Incropera & DeWitt, ch. 5; derived)";

fn scenario(path: &str, overrides: &[&str]) -> Scenario {
    common::load(path, overrides).0
}

fn with_steps(mut s: Scenario, steps: Vec<Step>) -> Scenario {
    s.duty = DutyCycle::Steps(StepProfile { name: "test".into(), steps });
    s
}

fn step(label: &str, drive: Drive, ends: Vec<StepEnd>) -> Step {
    Step { label: label.into(), drive, ends }
}

fn capacity_a(s: &Scenario) -> f64 {
    s.cell.nominal_capacity_coulomb / 3600.0
}

/// Runs the scenario once from rest at `soc` (no warm-up) and returns the record and model.
fn run_once(
    s: &Scenario,
    soc: f64,
    settings: &SolverSettings,
) -> (CycleRecord, CellModel, CellState, CellState, Balance) {
    let model = CellModel::new(&s.cell);
    let health = Health::fresh(&s.cell);
    let balance = balance_cell(&s.cell, &health).expect("balanced");
    let start = model.rest_state(&balance, &health, soc, s.ambient_k);
    let mut state = start.clone();
    let mut record = CycleRecord::default();
    simulate_cycle(
        &model,
        &CycleRun { duty: &s.duty, ambient_k: s.ambient_k, health: &health, balance: &balance },
        &mut state,
        settings,
        &mut record,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    (record, model, start, state, balance)
}

#[test]
fn slow_discharge_delivers_the_balanced_capacity() {
    // At C/20 the overpotentials are small, so the delivered charge approaches the equilibrium
    // capacity between the window ends: within 1 %.
    let mut cases = Vec::new();
    for path in [VAN, FERRY] {
        let base = scenario(path, &[]);
        let c20 = capacity_a(&base) / 20.0;
        let s = with_steps(
            base.clone(),
            vec![step("C/20", Drive::Current(c20), vec![StepEnd::Voltage(base.cell.voltage_min_v)])],
        );
        let (record, ..) = run_once(&s, 1.0, &SolverSettings::default());
        let balance = balance_cell(&s.cell, &Health::fresh(&s.cell)).unwrap();
        let delivered = record.charge_out_coulomb / balance.capacity_coulomb;
        cases.push(ReferenceCase::new(
            format!("{path}: C/20 charge delivered / balanced capacity"),
            BALANCED_CAPACITY,
            Tolerance::Abs(0.01),
            delivered,
            1.0,
        ));
    }
    check_cases(&cases);
}

#[test]
fn voltage_stays_in_the_window_and_ends_are_met_within_a_millivolt() {
    let mut cases = Vec::new();
    for path in [VAN, FAST_CHARGE, common::MULTISTAGE, common::WINTER_FAST_CHARGE, common::DAY_MEASURED, FERRY] {
        let s = scenario(path, &[]);
        let record = simulate_periodic_cycle(&s, &Health::fresh(&s.cell), &SolverSettings::default())
            .unwrap_or_else(|e| panic!("{path}: {e}"));
        let measured = matches!(s.duty, DutyCycle::Series(_));
        for p in &record.trace {
            // A parked cell's open-circuit voltage follows temperature through dU/dT (a few mV
            // over a night's cooling); only voltages under load are the model's to keep.
            if measured && p.current_a == 0.0 {
                continue;
            }
            assert!(
                p.voltage_v >= s.cell.voltage_min_v - 1e-3 && p.voltage_v <= s.cell.voltage_max_v + 1e-3,
                "{path}: {:.4} V at {:.0} s",
                p.voltage_v,
                p.time_s
            );
        }
        if let DutyCycle::Steps(profile) = &s.duty {
            for summary in &record.steps {
                let last = record.trace.iter().rev().find(|p| p.step == summary.index).unwrap();
                let target = profile.steps[summary.index].ends.iter().find_map(|e| {
                    if let StepEnd::Voltage(v) = e {
                        Some(*v)
                    } else {
                        None
                    }
                });
                let name = format!("{path} step {}: end voltage", summary.index + 1);
                match (summary.end, target) {
                    (EndReason::Voltage, Some(v)) => {
                        cases.push(ReferenceCase::new(name, STEP_END, Tolerance::Abs(1e-3), last.voltage_v, v))
                    }
                    (EndReason::VoltageLimit, _) => {
                        // The nearer end of the window.
                        let (low, high) = (s.cell.voltage_min_v, s.cell.voltage_max_v);
                        let limit =
                            if (last.voltage_v - low).abs() < (last.voltage_v - high).abs() { low } else { high };
                        cases.push(ReferenceCase::new(name, STEP_END, Tolerance::Abs(1e-3), last.voltage_v, limit));
                    }
                    _ => {}
                }
            }
        }
    }
    check_cases(&cases);
}

#[test]
fn constant_voltage_current_decays_monotonically() {
    let base = scenario(VAN, &[]);
    let c = capacity_a(&base);
    let v_max = base.cell.voltage_max_v;
    let s = with_steps(
        base,
        vec![
            step("charge", Drive::Current(-c), vec![StepEnd::Voltage(v_max)]),
            step("hold", Drive::Voltage(v_max), vec![StepEnd::CurrentBelow(c / 50.0), StepEnd::Time(4.0 * 3600.0)]),
        ],
    );
    let (record, ..) = run_once(&s, 0.1, &SolverSettings::default());
    let hold: Vec<&TracePoint> = record.trace.iter().filter(|p| p.step == 1).collect();
    assert!(hold.len() > 10, "hold has {} points", hold.len());
    let mut cases = Vec::new();
    for pair in hold.windows(2) {
        assert!(
            pair[1].current_a.abs() <= pair[0].current_a.abs() + 1e-9,
            "current rose from {:.5} to {:.5} A",
            pair[0].current_a,
            pair[1].current_a
        );
        cases.push(ReferenceCase::new(
            format!("hold voltage at {:.0} s", pair[1].time_s),
            "the constant-voltage step's set voltage (input); 1 µV: the scalar solve's tolerance (common \
             practice, no source)",
            Tolerance::Abs(1e-6),
            pair[1].voltage_v,
            v_max,
        ));
    }
    check_cases(&cases);
    assert_eq!(record.steps[1].end, EndReason::Current);
}

/// Peak surface stress magnitude of each electrode while discharging (lithium leaves the
/// negative) and while charging, for a scenario.
fn stress_extremes(s: &Scenario, rate_c: f64) -> [f64; 4] {
    let c = capacity_a(s) * rate_c;
    let s = with_steps(
        s.clone(),
        vec![
            step("discharge", Drive::Current(c), vec![StepEnd::Voltage(s.cell.voltage_min_v)]),
            step("charge", Drive::Current(-c), vec![StepEnd::Voltage(s.cell.voltage_max_v)]),
        ],
    );
    let (record, ..) = run_once(&s, 1.0, &SolverSettings::default());
    // Mid-step, once the profile left by the previous step has relaxed.
    let middle = |i: usize| {
        let summary = &record.steps[i];
        let start = record.trace.iter().find(|p| p.step == i).unwrap().time_s;
        *record.trace.iter().find(|p| p.step == i && p.time_s >= start + 0.5 * summary.duration_s).unwrap()
    };
    let (discharge, charge) = (middle(0), middle(1));
    // Discharge: negative loses lithium (tensile surface), positive gains (compressive).
    assert!(discharge.neg_surface_stress_pa > 0.0, "negative surface not tensile on extraction");
    assert!(discharge.pos_surface_stress_pa < 0.0, "positive surface not compressive on insertion");
    // Charge: the reverse.
    assert!(charge.neg_surface_stress_pa < 0.0, "negative surface not compressive on insertion");
    assert!(charge.pos_surface_stress_pa > 0.0, "positive surface not tensile on extraction");
    [
        discharge.neg_surface_stress_pa,
        -discharge.pos_surface_stress_pa,
        -charge.neg_surface_stress_pa,
        charge.pos_surface_stress_pa,
    ]
}

#[test]
fn surface_stress_sign_follows_lithium_and_grows_with_rate_and_radius() {
    let base = scenario(VAN, &[]);
    let gentle = stress_extremes(&base, 0.5);
    let hard = stress_extremes(&base, 1.0);
    for k in 0..4 {
        assert!(hard[k] > gentle[k], "stress {k} did not grow with C-rate: {} vs {}", hard[k], gentle[k]);
    }
    let big = scenario(VAN, &["cell.negative.particle_radius_um=9", "cell.positive.particle_radius_um=7.5"]);
    let coarse = stress_extremes(&big, 0.5);
    for k in 0..4 {
        assert!(coarse[k] > gentle[k], "stress {k} did not grow with radius: {} vs {}", coarse[k], gentle[k]);
    }
}

#[test]
fn lithium_is_conserved_within_a_cycle() {
    // Lithium only moves between the electrodes: their content is unchanged to 1e-9 relative.
    let mut cases = Vec::new();
    for path in [VAN, common::MULTISTAGE, common::DAY_MEASURED, FERRY] {
        let s = scenario(path, &[]);
        let (_, model, start, end, balance) = run_once(&s, 1.0, &SolverSettings::default());
        let before = model.lithium_coulomb(&start, &balance);
        let after = model.lithium_coulomb(&end, &balance);
        cases.push(ReferenceCase::new(
            format!("{path}: lithium in the electrodes after one cycle, C"),
            LITHIUM_IN_A_CYCLE,
            Tolerance::Rel(1e-9),
            after,
            before,
        ));
    }
    check_cases(&cases);
}

#[test]
fn rest_cools_with_the_lumped_time_constant() {
    // Lumped capacitance: T − T∞ = (T₀ − T∞) e^(−t/τ), τ = m c_p/(hA).
    let s = scenario(VAN, &[]);
    let tau = s.cell.thermal_time_constant_s();
    let s = with_steps(s, vec![step("rest", Drive::Rest, vec![StepEnd::Time(tau)])]);
    let model = CellModel::new(&s.cell);
    let health = Health::fresh(&s.cell);
    let balance = balance_cell(&s.cell, &health).unwrap();
    let mut state = model.rest_state(&balance, &health, 0.5, s.ambient_k + 10.0);
    let mut record = CycleRecord::default();
    simulate_cycle(
        &model,
        &CycleRun { duty: &s.duty, ambient_k: s.ambient_k, health: &health, balance: &balance },
        &mut state,
        &SolverSettings::default(),
        &mut record,
    )
    .unwrap();
    let excess = state.temperature_k - s.ambient_k;
    check_cases(&[ReferenceCase::new(
        "excess over ambient after one time constant from 10 K, K",
        LUMPED_COOLING,
        Tolerance::Abs(1e-6),
        excess,
        10.0 * (-1.0f64).exp(),
    )]);
}

#[test]
fn steady_heating_rises_by_heat_over_conductance() {
    // A long symmetric ±1C pulse train holds the state of charge; the reversible heat cancels
    // and the mean rise settles at q̄/(hA) (steady lumped balance), with q̄ the mean irreversible heat, here I(U−V) computed from the trace.
    let base =
        scenario(VAN, &["cell.negative.entropic_coefficient_mv_k=0", "cell.positive.entropic_coefficient_mv_k=0"]);
    let c = capacity_a(&base);
    let tau = base.cell.thermal_time_constant_s();
    let mut steps = Vec::new();
    for _ in 0..(12.0 * tau / 60.0) as usize {
        steps.push(step("out", Drive::Current(c), vec![StepEnd::Time(30.0)]));
        steps.push(step("in", Drive::Current(-c), vec![StepEnd::Time(30.0)]));
    }
    let s = with_steps(base, steps);
    let (record, ..) = run_once(&s, 0.5, &SolverSettings::default());
    // Over whole pulse pairs in the last two time constants: mean heat from the terminal
    // energy balance (net electrical energy in = heat, the state returning each pair).
    let pairs = (2.0 * tau / 60.0) as usize;
    let first_step = record.steps.len() - 2 * pairs;
    let tail: Vec<&TracePoint> = record.trace.iter().filter(|p| p.step >= first_step && p.dt_s > 0.0).collect();
    let span: f64 = tail.iter().map(|p| p.dt_s).sum();
    let heat: f64 = -tail.iter().map(|p| p.current_a * p.voltage_v * p.dt_s).sum::<f64>() / span;
    let mean_rise: f64 = tail.iter().map(|p| (p.temperature_k - s.ambient_k) * p.dt_s).sum::<f64>() / span;
    let expected = heat / s.cell.convective_conductance_w_k;
    assert!(expected > 0.5, "test needs a measurable rise, got {expected} K");
    check_cases(&[ReferenceCase::new(
        "mean temperature rise under a ±1C pulse train, K",
        LUMPED_STEADY,
        Tolerance::Rel(0.03),
        mean_rise,
        expected,
    )]);
}

#[test]
fn a_cycle_stops_at_the_cap_on_time_steps_with_an_error_naming_the_step() {
    // The cap is what bounds memory for inputs that pass every rule yet make steps tiny;
    // a small cap shows it is applied (the default, 500 000, takes seconds to reach).
    let s = scenario(FAST_CHARGE, &[]);
    let settings = SolverSettings { max_time_steps: 50, ..SolverSettings::default() };
    let error =
        simulate_periodic_cycle(&s, &Health::fresh(&s.cell), &settings).expect_err("50 steps cannot hold a cycle");
    let text = error.to_string();
    assert!(text.contains("more than 50 time steps (the cap on one cycle)"), "{text}");
    assert!(text.contains("step "), "names the step: {text}");
}

#[test]
fn a_cycle_stops_at_the_cap_on_simulated_time() {
    // The overnight van cycle spans about 7 h; a cap of one hour stops it in its first steps.
    let s = scenario(VAN, &[]);
    let settings = SolverSettings { max_cycle_duration_s: 3600.0, ..SolverSettings::default() };
    let error = simulate_periodic_cycle(&s, &Health::fresh(&s.cell), &settings).expect_err("7 h cannot fit in 1 h");
    assert!(error.to_string().contains("past 0.0416"), "{error}");
}

#[test]
fn periodic_start_repeats_itself() {
    let s = scenario(FAST_CHARGE, &[]);
    let settings = SolverSettings::default();
    let record = simulate_periodic_cycle(&s, &Health::fresh(&s.cell), &settings).unwrap();
    assert!(record.periodic_residual <= settings.periodic_tolerance, "residual {}", record.periodic_residual);
    let first = record.trace.first().unwrap();
    let last = record.trace.last().unwrap();
    assert!((first.soc - last.soc).abs() < 1e-3 && (first.temperature_k - last.temperature_k).abs() < 0.05);
}

#[test]
fn a_cold_fast_charge_drives_the_negative_below_lithium() {
    let cold = scenario(common::WINTER_FAST_CHARGE, &[]);
    assert!((cold.ambient_k - ZERO_CELSIUS_K).abs() < 1e-9);
    let record = simulate_periodic_cycle(&cold, &Health::fresh(&cold.cell), &SolverSettings::default()).unwrap();
    assert!(record.neg_potential_min_v < 0.0, "min negative potential {:.4} V", record.neg_potential_min_v);
    let warm = scenario(VAN, &[]);
    let record = simulate_periodic_cycle(&warm, &Health::fresh(&warm.cell), &SolverSettings::default()).unwrap();
    assert!(record.neg_potential_min_v > 0.0);
}
