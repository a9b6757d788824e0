//! Fatigue as the particles feel it: cracks from both sides driven by the stress profile,
//! rainflow-counted duty cycles, crack arrest in the compressive core, and film on crack faces
//! by age. Each reference value names its source; the record is docs/VALIDATION.md §10.

mod common;

use common::{check_cases, fadecast, load, ReferenceCase, Tolerance, CRACKING_ONLY, FERRY, LAB, TUG};
use fadecast::aging::crack_film::FilmOnCrackSurface;
use fadecast::aging::cracking::{
    growth_in_record, growth_over_history, intensity_history, tensile_range, CrackLengths,
};
use fadecast::aging::film::growth_at_fixed_conditions;
use fadecast::aging::fracture::CrackOrigin;
use fadecast::aging::rainflow::count_periodic;
use fadecast::aging::{AgingContext, AgingState, Component, Mechanism, Side, STATE_LEN};
use fadecast::cycle::*;
use fadecast::forecast::{run_forecast, ForecastOptions, Horizon};
use fadecast::material::constants::FARADAY;

/// One pass of a step list from a rest state at `start_soc` (not periodic: what one charge or
/// discharge does).
fn run_steps(scenario: &Scenario, start_soc: f64, steps: Vec<Step>) -> CycleRecord {
    let mut s = scenario.clone();
    s.duty = DutyCycle::Steps(StepProfile { name: "probe".into(), steps });
    let model = CellModel::new(&s.cell);
    let health = Health::fresh(&s.cell);
    let balance = balance_cell(&s.cell, &health).unwrap();
    let mut state = model.rest_state(&balance, &health, start_soc, s.ambient_k);
    let mut record = CycleRecord::default();
    let run = CycleRun { duty: &s.duty, ambient_k: s.ambient_k, health: &health, balance: &balance };
    simulate_cycle(&model, &run, &mut state, &SolverSettings::default(), &mut record).unwrap();
    record
}

fn step(label: &str, drive: Drive, end: StepEnd) -> Step {
    Step { label: label.into(), drive, ends: vec![end] }
}

#[test]
fn graphite_cracks_from_the_centre_on_charge_and_from_the_surface_on_discharge() {
    // Lithiation puts the particle centre in tension, delithiation the surface (Christensen &
    // Newman, J. Solid State Electrochem. 10 (2006) 293; Zhang, Shyy & Sastry, J. Electrochem.
    // Soc. 154 (2007) A910). With a threshold a thousandth of the demo's, any tensile stress
    // intensity above numerical noise grows its crack.
    let (scenario, plan) = load(LAB, &[]);
    let mut p = plan.aging.neg_cracking.unwrap();
    p.threshold_pa_sqrt_m *= 1e-3;
    let two_c = 2.0 * scenario.cell.nominal_capacity_coulomb / 3600.0;
    let rest = step("rest", Drive::Rest, StepEnd::Time(3600.0));
    let charge =
        run_steps(&scenario, 0.1, vec![step("charge", Drive::Current(-two_c), StepEnd::Soc(0.8)), rest.clone()]);
    let discharge =
        run_steps(&scenario, 0.9, vec![step("discharge", Drive::Current(two_c), StepEnd::Soc(0.2)), rest.clone()]);
    let resting = run_steps(&scenario, 0.5, vec![rest]);
    let radius = scenario.cell.negative.particle_radius_m;
    let lengths = CrackLengths { surface_m: 200e-9, centre_m: 200e-9 };
    let grow = |record: &CycleRecord, origin| growth_in_record(&p, record, Side::Negative, origin, lengths, radius);
    assert!(grow(&charge, CrackOrigin::Centre) > 0.0, "a 2C charge must grow the centre crack");
    assert_eq!(grow(&charge, CrackOrigin::Surface), 0.0, "a charge keeps the graphite surface in compression");
    assert!(grow(&discharge, CrackOrigin::Surface) > 0.0, "a 2C discharge must grow the surface crack");
    assert_eq!(grow(&discharge, CrackOrigin::Centre), 0.0, "a discharge keeps the graphite centre in compression");
    for origin in [CrackOrigin::Surface, CrackOrigin::Centre] {
        assert_eq!(grow(&resting, origin), 0.0, "rest grows nothing");
    }
}

#[test]
fn a_crack_growing_into_the_compressive_core_arrests() {
    // The delithiation profile is compressive inside ρ ≈ 0.71 (quasi-steady σ_t ∝ 2ρ² − 1,
    // derived from Zhang, Shyy & Sastry 2007), so K of a deep surface crack falls below the
    // threshold (weight function of Tada, Paris & Irwin 2000). With a Paris coefficient 300×
    // the demo's — enough to run to the centre in a few thousand cycles if ΔK grew as √a — the
    // depth stays bounded over 10⁵ constant cycles.
    let mut overrides = CRACKING_ONLY.to_vec();
    overrides.push("cell.negative.cracking.paris_coefficient=1e-16");
    let (scenario, plan) = load(LAB, &overrides);
    let radius_nm = scenario.cell.negative.particle_radius_m * 1e9;
    let f = run_forecast(&scenario, &plan, Horizon::Cycles(1e5), &ForecastOptions::default());
    assert_eq!(f.stop, fadecast::forecast::StopReason::Horizon);
    let depth = |p: &fadecast::forecast::FadePoint| p.state[Component::NegCrackNm];
    let last = f.points.last().unwrap();
    let at_half = f.points.iter().find(|p| p.cycle >= 5e4).unwrap();
    assert!(depth(last) < 0.75 * radius_nm, "depth {} nm of a {radius_nm} nm radius", depth(last));
    assert!(depth(last) > 10.0 * plan.aging.neg_cracking.unwrap().initial_length_m * 1e9, "the crack must have grown");
    assert!(
        depth(last) - depth(at_half) < 0.01 * depth(last),
        "arrested: {} nm at 5e4 cycles, {} nm at 1e5",
        depth(at_half),
        depth(last)
    );
}

#[test]
fn the_ferrys_crossings_each_count() {
    // Miner-type summation over rainflow-counted cycles (ASTM E1049-85; Paris & Erdogan 1963):
    // with no threshold and one temperature, a day grows the crack by Σ C ΔKᵢ^m, i.e. the
    // largest crossing alone times Σ (ΔKᵢ/ΔK_max)^m (derived).
    let (scenario, plan) = load(FERRY, &[]);
    let mut p = plan.aging.neg_cracking.unwrap();
    p.threshold_pa_sqrt_m = 0.0;
    p.activation_j_mol = 0.0;
    let record =
        simulate_periodic_cycle(&scenario, &Health::fresh(&scenario.cell), &SolverSettings::default()).unwrap();
    let radius = scenario.cell.negative.particle_radius_m;
    let k = intensity_history(&record, Side::Negative, CrackOrigin::Surface, p.initial_length_m, radius);
    let mut ranges = Vec::new();
    count_periodic(&k, &mut Vec::new(), |c| ranges.push(tensile_range(c.high, c.low)));
    let largest = ranges.iter().copied().fold(0.0, f64::max);
    let predicted: f64 = ranges.iter().map(|r| (r / largest).powf(p.paris_exponent)).sum();
    let day = growth_over_history(&p, &k, |i| record.trace[i].temperature_k);
    let largest_alone = p.paris_coefficient * largest.powf(p.paris_exponent);
    let crossings = ranges.iter().filter(|&&r| r > 0.5 * largest).count();
    assert!(crossings >= 6, "the ferry's day has six crossings; counted {crossings} large cycles: {ranges:?}");
    assert!(predicted > 3.0, "six crossings must count several times one: {predicted}");
    check_cases(&[ReferenceCase::new(
        "ferry day's crack growth over its largest crossing's",
        "Σ(ΔKᵢ/ΔK_max)^m over rainflow-counted cycles (ASTM E1049-85; Paris & Erdogan 1963; derived)",
        Tolerance::Rel(0.01),
        day / largest_alone,
        predicted,
    )]);
}

#[test]
fn crack_face_film_by_depth_bin_matches_a_per_age_calculation() {
    // Reference: every cycle's new crack face is its own cohort, its film the exact Deal–Grove
    // growth from bare over its age (Deal & Grove, J. Appl. Phys. 36 (1965) 3770; the mixed
    // law of Ploehn, Ramadass & White, J. Electrochem. Soc. 151 (2004) A456); the film volume
    // is the sum over cohorts (derived). Storage-only days at a fixed potential make each day's
    // growth exactly that closed form; the crack depth is prescribed.
    let (scenario, plan) = load(LAB, &[]);
    let cell = &scenario.cell;
    let film = plan.aging.film.unwrap();
    let crack = plan.aging.neg_cracking.unwrap();
    let (potential, temperature, day_s) = (0.12, 308.15, 86400.0);
    let lithium_fresh = cell.lithium_inventory_coulomb();
    let context = AgingContext {
        cell,
        aging: &plan.aging,
        record: None,
        idle_s: day_s,
        idle_temperature_k: temperature,
        idle_neg_potential_v: potential,
        idle_pos_potential_v: 3.9,
        idle_pos_stoich: 0.7,
        lithium_fresh_coulomb: lithium_fresh,
    };
    let radius = cell.negative.particle_radius_m;
    let a0 = crack.initial_length_m;
    let per_depth = cell.negative.surface_area_m2() * crack.density_per_m2 * 2.0 * crack.width_m;
    let lithium_of_volume = FARADAY / film.molar_volume_m3_mol / lithium_fresh;
    let days = 3000usize;
    type DepthHistory = Box<dyn Fn(f64) -> f64>;
    let histories: [(&str, DepthHistory); 2] = [
        ("steady growth", Box::new(move |n: f64| a0 + 0.6 * (radius - a0) * n / days as f64)),
        ("growth that arrests", Box::new(move |n: f64| a0 + 0.4 * (radius - a0) * (1.0 - (-n / 400.0).exp()))),
    ];
    let mut cases = Vec::new();
    for (name, depth) in &histories {
        // The model: its bins and the lithium they bind integrated by classical Runge–Kutta
        // steps of a tenth of a day.
        let mut state = AgingState::fresh(&plan.aging).to_vector();
        let rate_at = |n: f64, s: &[f64; STATE_LEN]| {
            let mut s = AgingState::from_vector(s);
            s[Component::NegCrackNm] = depth(n) * 1e9;
            let mut rate = AgingState::default();
            FilmOnCrackSurface.add_rates(&context, &s, &mut rate);
            rate.to_vector()
        };
        let shifted = |y: &[f64; STATE_LEN], k: &[f64; STATE_LEN], f: f64| std::array::from_fn(|i| y[i] + f * k[i]);
        let h = 0.1;
        let steps = (days as f64 / h) as usize;
        for i in 0..steps {
            let n = i as f64 * h;
            let k1 = rate_at(n, &state);
            let k2 = rate_at(n + 0.5 * h, &shifted(&state, &k1, 0.5 * h));
            let k3 = rate_at(n + 0.5 * h, &shifted(&state, &k2, 0.5 * h));
            let k4 = rate_at(n + h, &shifted(&state, &k3, h));
            state = std::array::from_fn(|j| state[j] + h / 6.0 * (k1[j] + 2.0 * k2[j] + 2.0 * k3[j] + k4[j]));
        }
        let model = AgingState::from_vector(&state)[Component::LithiumFilmCrack];
        // The reference: cohorts of a hundredth of a day, each aged from its midpoint.
        let cohorts = days * 100;
        let reference: f64 = (0..cohorts)
            .map(|i| {
                let (n0, n1) = (i as f64 / 100.0, (i + 1) as f64 / 100.0);
                let area = per_depth * (depth(n1) - depth(n0));
                let age = days as f64 - 0.5 * (n0 + n1);
                area * growth_at_fixed_conditions(&film, 0.0, potential, temperature, age * day_s)
            })
            .sum::<f64>()
            * lithium_of_volume;
        println!("{name}: bins {model:.6e}, cohorts {reference:.6e}, error {:.3} %", 100.0 * (model / reference - 1.0));
        cases.push(ReferenceCase::new(
            format!("crack-face film after {days} days, {name}"),
            "sum over cohorts of the Deal–Grove growth (Deal & Grove 1965; Ploehn et al. 2004; derived)",
            Tolerance::Rel(0.01),
            model,
            reference,
        ));
    }
    check_cases(&cases);
}

#[test]
fn the_tug_summary_splits_its_resistance_rise_and_its_lithium_sinks() {
    let out = tempfile::tempdir().unwrap();
    fadecast().args(["forecast", TUG, "--out"]).arg(out.path()).assert().success();
    let summary: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.path().join("summary.json")).unwrap()).unwrap();
    let rise = &summary["resistance_rise_at_horizon"];
    let part = |key: &str| rise[key].as_f64().unwrap_or_else(|| panic!("{key} missing: {rise}"));
    let keys =
        ["negative_film_original_mohm", "negative_crack_faces_mohm", "negative_lost_active_area_mohm", "other_mohm"];
    let parts: f64 = keys.iter().map(|k| part(k)).sum();
    // Every number is written to 6 significant digits (the output schema's rule): each value
    // may be off by half a unit in its sixth digit.
    let rounding = |v: f64| 5e-6 * v.abs();
    let allowed = keys.iter().map(|k| rounding(part(k))).sum::<f64>() + rounding(part("total_mohm"));
    assert!((parts - part("total_mohm")).abs() <= allowed, "{rise}");
    assert!(part("total_mohm") > 0.0);
    let shares = summary["lithium_sink_share_pct"].as_object().unwrap();
    let total: f64 = shares.values().map(|v| v.as_f64().unwrap()).sum();
    let allowed: f64 = shares.values().map(|v| 5e-6 * v.as_f64().unwrap().abs()).sum();
    assert!((total - 100.0).abs() <= allowed, "{shares:?}");
    assert!(shares.contains_key("lithium_lost_film_crack"));
}

#[test]
fn film_growth_with_the_cycle_precomputed_equals_the_direct_sum() {
    // The same trapezoid sum regrouped per trace point (derived): equal to rounding.
    let (scenario, plan) = load(LAB, &[]);
    let film = plan.aging.film.unwrap();
    let record =
        simulate_periodic_cycle(&scenario, &Health::fresh(&scenario.cell), &SolverSettings::default()).unwrap();
    let context = AgingContext {
        cell: &scenario.cell,
        aging: &plan.aging,
        record: Some(&record),
        idle_s: 3600.0,
        idle_temperature_k: 300.0,
        idle_neg_potential_v: 0.1,
        idle_pos_potential_v: 3.9,
        idle_pos_stoich: 0.7,
        lithium_fresh_coulomb: scenario.cell.lithium_inventory_coulomb(),
    };
    let growth = fadecast::aging::film::CycleFilmGrowth::new(&film, &context);
    for thickness in [0.0, 5e-9, 50e-9, 400e-9] {
        let direct = fadecast::aging::film::growth_per_cycle(&film, thickness, &context);
        assert!((growth.growth_m(thickness) / direct - 1.0).abs() < 1e-12, "{thickness}");
    }
}

#[test]
fn the_ferrys_largest_lithium_sink_is_film_on_crack_faces() {
    // The demo that shows the coupling (README): six crossings a day crack the graphite to its
    // arrest depth, and the fresh faces' film takes more lithium than any other sink.
    let (scenario, plan) = load(FERRY, &[]);
    let f = run_forecast(&scenario, &plan, plan.horizon.unwrap(), &ForecastOptions::default());
    let last = f.points.last().unwrap();
    let shares = last.state.sink_shares();
    let (largest, share) = shares.iter().copied().max_by(|a, b| a.1.total_cmp(&b.1)).unwrap();
    assert_eq!(largest, Component::LithiumFilmCrack, "{shares:?}");
    assert!(share > 0.3, "{share}");
}
