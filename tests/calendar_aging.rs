//! Calendar aging of the van-fleet demo cell in storage: state-of-charge and temperature
//! dependence against the published calendar-aging record (record: docs/VALIDATION.md §5).
//!
//! - Keil, Schuster, Wilhelm, Travi, Hauser, Karl & Jossen, J. Electrochem. Soc. 163 (2016)
//!   A1872 (confirmed abstract): storage fade rises with state of charge, with plateaus of
//!   similar fade over SOC ranges where the graphite's potential (its staging) barely changes;
//!   the negative electrode's potential is decisive. Used for the trend only.
//! - Schmalstieg, Käbitz, Ecker & Sauer, J. Power Sources 257 (2014) 325: calendar fade
//!   ∝ exp(−6976 K / T) (from memory), an apparent activation energy of 58 kJ/mol, so about 3×
//!   from 25 to 40 °C; calendar activation energies of about 40–60 kJ/mol give 1.9–3.2×
//!   (derived from the Arrhenius factor).

mod common;

use common::{check_cases, ReferenceCase, Tolerance, STORAGE};
use fadecast::aging::Component;
use fadecast::cycle::{balance_cell, Health};
use fadecast::ensemble::stats::spearman;
use fadecast::forecast::{run_forecast, ForecastOptions, Horizon};

const SOC_PCT: [f64; 10] = [10.0, 20.0, 30.0, 40.0, 50.0, 60.0, 70.0, 80.0, 90.0, 95.0];

/// Capacity lost after `years` of storage, % of fresh, and the graphite's rest potential, V.
fn storage(soc_pct: f64, ambient_c: f64, years: f64) -> (f64, f64) {
    let soc = format!("usage.rest_soc_pct={soc_pct}");
    let ambient = format!("ambient_c={ambient_c}");
    let (scenario, plan) = common::load(STORAGE, &[&soc, &ambient]);
    let f = run_forecast(&scenario, &plan, Horizon::Years(years), &ForecastOptions::default());
    let (first, last) = (f.points.first().unwrap(), f.points.last().unwrap());
    let cell = &scenario.cell;
    let health = Health::fresh(cell);
    let (x, _) = balance_cell(cell, &health).unwrap().stoich_at_soc(soc_pct / 100.0, &health);
    (100.0 * (first.capacity_ah - last.capacity_ah) / first.capacity_ah, cell.negative.ocp.potential(x))
}

#[test]
fn storage_fade_rises_with_state_of_charge_in_steps_that_follow_the_graphite_potential() {
    let runs: Vec<(f64, f64)> = SOC_PCT.iter().map(|&s| storage(s, 25.0, 2.0)).collect();
    for (s, (loss, phi)) in SOC_PCT.iter().zip(&runs) {
        println!("  {s:>4} % SOC: graphite {:.1} mV, loss after 2 years {loss:.3} %", phi * 1000.0);
    }
    // High SOC ages clearly faster (Keil et al. 2016: the trend; the 1.5× bound is the issue's).
    let at = |soc: f64| runs[SOC_PCT.iter().position(|&s| s == soc).unwrap()].0;
    assert!(at(95.0) >= 1.5 * at(30.0), "95 % SOC {:.3} % vs 30 % SOC {:.3} %", at(95.0), at(30.0));
    // Fade never falls as the state of charge rises.
    for pair in runs.windows(2) {
        assert!(pair[1].0 > pair[0].0, "{runs:?}");
    }
    // Plateaus where the graphite's do: over each SOC step the rise of ln(fade) ranks with the
    // fall of the graphite potential (Keil et al. 2016: the anode potential is decisive), so
    // steps on a staging plateau add little fade and steps across a stage boundary add most.
    let potential_fall: Vec<f64> = runs.windows(2).map(|p| p[0].1 - p[1].1).collect();
    let log_rise: Vec<f64> = runs.windows(2).map(|p| (p[1].0 / p[0].0).ln()).collect();
    let rho = spearman(&potential_fall, &log_rise);
    println!("  Spearman rank correlation of potential fall and ln-fade rise per step: {rho:.3}");
    assert!(rho >= 0.9, "rank correlation {rho}: {potential_fall:?} vs {log_rise:?}");
    let flattest = (0..potential_fall.len()).min_by(|&a, &b| potential_fall[a].total_cmp(&potential_fall[b])).unwrap();
    let steepest = (0..potential_fall.len()).max_by(|&a, &b| potential_fall[a].total_cmp(&potential_fall[b])).unwrap();
    assert!(log_rise[flattest] < 0.5 * log_rise[steepest], "{log_rise:?}");
}

#[test]
fn storage_at_40_c_fades_two_to_four_times_faster_than_at_25_c() {
    let mut cases = Vec::new();
    for soc in [50.0, 90.0] {
        let ratio = storage(soc, 40.0, 2.0).0 / storage(soc, 25.0, 2.0).0;
        println!("  {soc} % SOC: 40 °C / 25 °C fade ratio {ratio:.3}");
        cases.push(ReferenceCase::new(
            format!("storage 2 years at {soc} % SOC, fade at 40 °C over fade at 25 °C"),
            "calendar activation energies of about 40–60 kJ/mol give 1.9–3.2× (derived, Arrhenius); \
             Schmalstieg et al., J. Power Sources 257 (2014) 325: 6976 K, 3.07× (from memory); the band 2–4 is the \
             issue's",
            Tolerance::Abs(1.0),
            ratio,
            3.0,
        ));
    }
    check_cases(&cases);
}

/// Storage of the van cell for two years at 95 % SOC: (positive host lost, lithium in the
/// positive's film, capacity lost %) with extra overrides.
fn positive_aging(ambient_c: f64, extra: &[&str]) -> (f64, f64, f64) {
    let ambient = format!("ambient_c={ambient_c}");
    let mut list = vec!["usage.rest_soc_pct=95", ambient.as_str()];
    list.extend_from_slice(extra);
    let (scenario, plan) = common::load(STORAGE, &list);
    let f = run_forecast(&scenario, &plan, Horizon::Years(2.0), &ForecastOptions::default());
    let (first, last) = (f.points.first().unwrap(), f.points.last().unwrap());
    (
        last.state[Component::PosActiveLost],
        last.state[Component::LithiumPositiveFilm],
        100.0 * (first.capacity_ah - last.capacity_ah) / first.capacity_ah,
    )
}

#[test]
fn high_soc_storage_at_45_c_ages_the_positive_more_and_switching_it_off_leaves_the_negative_alone() {
    // Electrolyte oxidation rises with the positive's potential and temperature (Vetter et al.,
    // J. Power Sources 147 (2005) 269, from memory: the trend only).
    let (warm_host, warm_lithium, warm_loss) = positive_aging(25.0, &[]);
    let (hot_host, hot_lithium, hot_loss) = positive_aging(45.0, &[]);
    println!("  25 °C: host lost {warm_host:.3e}, lithium {warm_lithium:.3e}, capacity {warm_loss:.3} %");
    println!("  45 °C: host lost {hot_host:.3e}, lithium {hot_lithium:.3e}, capacity {hot_loss:.3} %");
    assert!(warm_host > 0.0 && warm_lithium > 0.0);
    assert!(
        hot_host > 2.0 * warm_host && hot_lithium > 2.0 * warm_lithium,
        "the positive must age measurably more at 45 °C"
    );
    // Off: nothing acts on the positive in storage, and the rest of the forecast is the
    // negative's alone.
    let off = "cell.positive.electrolyte_oxidation.enabled=false";
    let (off_host, off_lithium, off_loss) = positive_aging(45.0, &[off]);
    assert_eq!((off_host, off_lithium), (0.0, 0.0));
    assert!(off_loss < hot_loss);
    let (scenario, plan) = common::load(STORAGE, &["usage.rest_soc_pct=95", "ambient_c=45", off]);
    let f = run_forecast(&scenario, &plan, Horizon::Years(2.0), &ForecastOptions::default());
    let last = f.points.last().unwrap();
    let negative_only = last.state[Component::LithiumFilmOriginal] + last.state[Component::LithiumPlatedDead];
    assert!((1.0 - last.state[Component::LithiumInventory] - negative_only).abs() < 1e-12);
}
