//! Plating that takes its current: the negative's current splits into intercalation and
//! lithium-metal deposition/stripping (record: docs/VALIDATION.md §8).
//!
//! Trends (common practice, and Petzl & Danzer, J. Power Sources 254 (2014) 80, confirmed:
//! plating grows with charge rate and falls with temperature; Waldmann et al., J. Power Sources
//! 262 (2014) 129, from memory: plating dominates aging below room temperature) on the van-fleet
//! demo cell's 2C fast-charge profile with its charge rate and ambient changed; the current
//! balance and the lithium bookkeeping of every step are checked to 1e-9 (derived: the split
//! must conserve charge and lithium exactly).

mod common;

use common::{check_cases, ReferenceCase, Tolerance, WINTER_FAST_CHARGE};
use fadecast::cycle::{
    balance_cell, simulate_periodic_cycle, CycleRecord, Drive, DutyCycle, Health, SolverSettings, Step, StepEnd,
    StepProfile,
};

/// A probe cycle on the fresh cell: a constant-current charge at `charge_c` from empty to 80 %
/// state of charge, ten minutes' rest, a 1C discharge to the lower voltage limit. The window is
/// lifted and the thermal mass made huge so the charge ends at 80 % whatever the rate and the
/// cell stays at ambient: the probe measures plating, not the voltage limit or self-heating.
fn cycle(charge_c: f64, ambient_c: f64) -> CycleRecord {
    let (mut scenario, _) = common::load(WINTER_FAST_CHARGE, &[]);
    scenario.ambient_k = ambient_c + 273.15;
    scenario.cell.voltage_max_v = 4.6;
    scenario.cell.mass_kg *= 1e4;
    let c = scenario.cell.nominal_capacity_coulomb / 3600.0;
    let step = |label: &str, drive: Drive, ends: Vec<StepEnd>| Step { label: label.into(), drive, ends };
    scenario.duty = DutyCycle::Steps(StepProfile {
        name: "plating probe".into(),
        steps: vec![
            step("charge", Drive::Current(-charge_c * c), vec![StepEnd::Soc(0.8)]),
            step("rest", Drive::Rest, vec![StepEnd::Time(600.0)]),
            step("discharge", Drive::Current(c), vec![StepEnd::Voltage(scenario.cell.voltage_min_v)]),
        ],
    });
    scenario.start_soc = 0.0;
    simulate_periodic_cycle(&scenario, &Health::fresh(&scenario.cell), &SolverSettings::default()).unwrap()
}

#[test]
fn plating_rises_with_charge_rate_and_falls_with_temperature() {
    let rates = [0.5, 1.0, 1.5, 2.0];
    let cold: Vec<CycleRecord> = rates.iter().map(|&c| cycle(c, 0.0)).collect();
    for (c, r) in rates.iter().zip(&cold) {
        println!(
            "  0 °C, {c}C: plated {:.4} C, stripped {:.4} C, dead {:.4} C, re-intercalated {:.4} C",
            r.plated_coulomb, r.stripped_coulomb, r.dead_coulomb, r.reintercalated_coulomb
        );
    }
    assert!(cold.last().unwrap().plated_coulomb > 0.0, "no plating at 2C and 0 °C");
    for pair in cold.windows(2) {
        assert!(pair[1].plated_coulomb > pair[0].plated_coulomb || pair[1].plated_coulomb == 0.0, "plated");
        assert!(pair[1].dead_coulomb >= pair[0].dead_coulomb, "dead");
        if pair[0].plated_coulomb > 0.0 {
            assert!(pair[1].dead_coulomb > pair[0].dead_coulomb, "dead lithium must rise with the rate");
        }
    }
    let temperatures = [0.0, 10.0, 25.0];
    let at_2c: Vec<CycleRecord> = temperatures.iter().map(|&t| cycle(2.0, t)).collect();
    for (t, r) in temperatures.iter().zip(&at_2c) {
        println!("  2C, {t} °C: plated {:.4} C, dead {:.4} C", r.plated_coulomb, r.dead_coulomb);
    }
    for pair in at_2c.windows(2) {
        assert!(pair[1].plated_coulomb < pair[0].plated_coulomb || pair[0].plated_coulomb == 0.0);
        assert!(pair[1].dead_coulomb <= pair[0].dead_coulomb);
    }
    assert!(at_2c[1].plated_coulomb < at_2c[0].plated_coulomb, "10 °C must plate less than 0 °C");
    let mild = cycle(0.5, 25.0);
    assert_eq!(mild.plated_coulomb, 0.0, "plating at 25 °C and C/2");
    assert_eq!(mild.dead_coulomb, 0.0);
}

#[test]
fn intercalation_and_plating_add_up_to_the_applied_current_at_every_step() {
    let (scenario, _) = common::load(WINTER_FAST_CHARGE, &[]);
    let health = Health::fresh(&scenario.cell);
    let balance = balance_cell(&scenario.cell, &health).unwrap();
    let record = simulate_periodic_cycle(&scenario, &health, &SolverSettings::default()).unwrap();
    println!(
        "  winter fast charge: plated {:.3} C, stripped {:.3} C, lowest potential {:.1} mV",
        record.plated_coulomb,
        record.stripped_coulomb,
        record.neg_potential_min_v * 1000.0
    );
    assert!(record.plated_coulomb > 0.0 && record.stripped_coulomb > 0.0, "the check needs plating and stripping");
    let (mut worst_current, mut worst_lithium) = (0.0f64, 0.0f64);
    for pair in record.trace.windows(2) {
        let (a, b) = (&pair[0], &pair[1]);
        // Charges over the step (each current held or moving linearly within it, positive on
        // discharge, which empties the negative): intercalation from the particle's own lithium
        // change, plating from what was deposited and stripped.
        let intercalation = -(b.neg_mean_stoich - a.neg_mean_stoich) * balance.neg_capacity_coulomb;
        let (deposited, stripped) = b.plating_exchange_coulomb();
        let plating = stripped - deposited;
        let scale = b.current_a.abs().max(1.0) * b.dt_s;
        worst_current = worst_current.max((intercalation + plating - b.charge_coulomb()).abs() / scale);
        // The lithium on the surface changes by what the plating current carried.
        let lithium = b.plated_coulomb - a.plated_coulomb + plating;
        worst_lithium = worst_lithium.max(lithium.abs() / scale);
    }
    println!("  largest current imbalance {worst_current:.2e}, lithium imbalance {worst_lithium:.2e} (relative)");
    let source = "derived: charge and lithium conservation of the split (intercalation + plating = applied)";
    check_cases(&[
        ReferenceCase::new(
            "largest |I_int + I_plating − I| / max(|I|, 1 A) over the cycle",
            source,
            Tolerance::Abs(1e-9),
            worst_current,
            0.0,
        ),
        ReferenceCase::new(
            "largest |Δ plated + I_plating dt| / (max(|I|, 1 A) dt) over the cycle",
            source,
            Tolerance::Abs(1e-9),
            worst_lithium,
            0.0,
        ),
    ]);
}
