//! Setups shared by the tests and the benchmarks, so that a case both run is written once:
//! the demo inputs by path, loading a scenario with `--set`-style overrides, the uncertainty
//! demo as an ensemble or comparison case, and the overrides a fit's trial values become.
//!
//! Tests reach this through `mod common;`; a benchmark includes the file directly with
//! `#[path = "../tests/common/cases.rs"] mod cases;`. It uses only the library, never the
//! binary or a test-only crate.

// Each test and benchmark uses a subset.
#![allow(dead_code)]

use fadecast::cycle::pack::PackLayout;
use fadecast::cycle::{Drive, DutyCycle, Scenario, Step, StepEnd, StepProfile};
use fadecast::ensemble::{EnsembleConfig, Sampler, Shard, UncertaintySpec};
use fadecast::forecast::{ForecastOptions, Horizon, Plan};
use fadecast::input::{load_scenario, parse_override, Override};
use std::path::PathBuf;

// Demo scenarios (examples/): invented cells and duties, for trends and consistency checks.
/// The 5 Ah demo cell on the laboratory 1C/1C CC-CV cycle at 25 °C.
/// Overrides switching everything but the negative's cracking off.
pub const CRACKING_ONLY: [&str; 5] = [
    "cell.negative.film.enabled=false",
    "cell.negative.plating.enabled=false",
    "cell.negative.active_loss.enabled=false",
    "cell.positive.active_loss.enabled=false",
    "cell.positive.cracking.enabled=false",
];

pub const LAB: &str = "examples/lab-cccv-1c.toml";
/// The 5 Ah demo cell, 1C drive and C/5 overnight charge.
pub const OVERNIGHT: &str = "examples/van-fleet-overnight.toml";
pub const FAST_CHARGE: &str = "examples/van-fleet-fast-charge.toml";
pub const MULTISTAGE: &str = "examples/van-fleet-multistage.toml";
/// The 2C fast charge at 0 °C: plates.
pub const WINTER_FAST_CHARGE: &str = "examples/van-fleet-winter-fast-charge.toml";
/// A measured time series as the duty.
pub const DAY_MEASURED: &str = "examples/van-day-measured.toml";
/// 2C cycling, three cycles a day; develops a knee within 3000 cycles.
pub const TUG: &str = "examples/airport-tug-2c.toml";
/// The 100 Ah ferry cell.
pub const FERRY: &str = "examples/harbour-ferry.toml";
/// Storage at rest: a forecast in days.
pub const STORAGE: &str = "examples/van-depot-storage.toml";
/// The overnight scenario with an `[uncertainty]` section.
pub const BANDS: &str = "examples/van-fleet-bands.toml";

pub const VAN_CELL: &str = "examples/cells/van-pouch-5ah.toml";
pub const FERRY_CELL: &str = "examples/cells/ferry-prismatic-100ah.toml";

pub const PROFILE_OVERNIGHT: &str = "profiles/overnight-charge-1c-drive.toml";
pub const PROFILE_FAST_2C: &str = "profiles/fast-charge-2c.toml";
pub const PROFILE_MULTISTAGE: &str = "profiles/multistage-fast-charge.toml";
pub const PROFILE_VAN_DAY: &str = "profiles/van-day.csv";

/// The iron-phosphate ferry cell cycled at C/2 (test data, not a demo).
pub const LFP_HALF_C: &str = "tests/data/lfp-half-c-cycling.toml";

/// Every demo scenario that cycles, for checks run over all of them.
pub const CYCLING_DEMOS: [&str; 8] =
    [OVERNIGHT, FAST_CHARGE, MULTISTAGE, WINTER_FAST_CHARGE, DAY_MEASURED, LAB, TUG, FERRY];

/// A path inside the repository, absolute (tests and benchmarks may run from elsewhere).
pub fn repo(path: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(path)
}

/// Parses `key=value` overrides; a bad one is a bug in the caller.
pub fn overrides(list: &[&str]) -> Vec<Override> {
    list.iter().map(|o| parse_override(o).unwrap_or_else(|e| panic!("{o}: {e}"))).collect()
}

/// Loads a scenario (a path relative to the repository) with overrides; an input rule broken
/// by an override is returned as its message.
pub fn try_load(path: &str, overrides: &[Override]) -> Result<(Scenario, Plan), String> {
    let loaded = load_scenario(&repo(path), overrides).map_err(|e| e.to_string())?;
    Ok((loaded.scenario, loaded.plan))
}

/// Loads a scenario with `key=value` overrides that must be valid.
pub fn load(path: &str, list: &[&str]) -> (Scenario, Plan) {
    try_load(path, &overrides(list)).unwrap_or_else(|e| panic!("{e}"))
}

/// The options of the every-cycle reference forecast, otherwise as `options`.
pub fn every_cycle(options: ForecastOptions) -> ForecastOptions {
    ForecastOptions { every_cycle: true, ..options }
}

/// The overrides of one fit trial or one generated dataset: the dataset's ambient, fixed
/// `extra` settings, then each named path at its value.
pub fn trial_overrides(ambient_c: f64, extra: &[&str], paths: &[&str], values: &[f64]) -> Vec<Override> {
    let mut o = overrides(&[&format!("ambient_c={ambient_c}")]);
    o.extend(overrides(extra));
    o.extend(paths.iter().zip(values).map(|(p, &v)| Override::number(p, v).unwrap_or_else(|e| panic!("{p}: {e}"))));
    o
}

/// A scenario with an `[uncertainty]` section, run as `bands` and `compare` run it: each
/// sample's drawn values become `--set` overrides on top of `base`, so every input rule applies
/// to draws too.
pub struct EnsembleCase {
    pub scenario: &'static str,
    pub base: Vec<Override>,
    pub spec: UncertaintySpec,
    /// The drawn parameters' paths, in the order of a sample's values.
    pub paths: Vec<String>,
}

impl EnsembleCase {
    /// The demo uncertainty scenario (`BANDS`) with `base` overrides.
    pub fn bands_demo(base: &[&str]) -> Self {
        let base = overrides(base);
        let spec = load_scenario(&repo(BANDS), &base).unwrap_or_else(|e| panic!("{e}")).uncertainty;
        let paths = spec.parameters.iter().map(|p| p.path.clone()).collect();
        EnsembleCase { scenario: BANDS, base, spec, paths }
    }

    /// The scenario and plan of a sample with drawn `values`, with `extra` overrides (an
    /// alternative's profile, say) after the base ones.
    pub fn build_with(&self, extra: &[Override], values: &[f64]) -> Result<(Scenario, Plan), String> {
        let mut all = self.base.clone();
        all.extend_from_slice(extra);
        for (path, value) in self.paths.iter().zip(values) {
            all.push(parse_override(&format!("{path}={value:e}")).map_err(|e| e.to_string())?);
        }
        try_load(self.scenario, &all)
    }

    /// The scenario and plan of a sample with drawn `values`.
    pub fn build(&self, values: &[f64]) -> Result<(Scenario, Plan), String> {
        self.build_with(&[], values)
    }

    pub fn sampler(&self, seed: u64, samples: u64) -> Sampler {
        Sampler::new(&self.spec, seed, samples).expect("valid uncertainty spec")
    }

    /// A whole (unsharded) run's configuration without a warranty point.
    pub fn config(&self, samples: u64, seed: u64, horizon: Horizon, options: ForecastOptions) -> EnsembleConfig {
        EnsembleConfig { samples, seed, shard: Shard::WHOLE, horizon, warranty: None, options }
    }
}

/// The override that swaps the scenario's duty for a profile (an alternative of `compare`).
pub fn profile_override(profile: &str) -> Override {
    parse_override(&format!("profile={}", repo(profile).display())).expect("valid override")
}

/// A scenario's cell made into a pack, its duty scaled to the pack: the same C-rates (currents
/// × parallel) and voltages (× series).
pub fn pack_scenario(scenario: &Scenario, layout: PackLayout) -> Scenario {
    let (p, s) = (layout.parallel as f64, layout.series as f64);
    let DutyCycle::Steps(profile) = &scenario.duty else { panic!("a step profile") };
    let steps = profile
        .steps
        .iter()
        .map(|step| Step {
            label: step.label.clone(),
            drive: match step.drive {
                Drive::Current(i) => Drive::Current(i * p),
                Drive::Power(w) => Drive::Power(w * p * s),
                Drive::Voltage(v) => Drive::Voltage(v * s),
                Drive::Rest => Drive::Rest,
            },
            ends: step
                .ends
                .iter()
                .map(|end| match *end {
                    StepEnd::Voltage(v) => StepEnd::Voltage(v * s),
                    StepEnd::CurrentBelow(i) => StepEnd::CurrentBelow(i * p),
                    StepEnd::Charge(q) => StepEnd::Charge(q * p),
                    other => other,
                })
                .collect(),
        })
        .collect();
    Scenario {
        duty: DutyCycle::Steps(StepProfile { name: profile.name.clone(), steps }),
        pack: Some(layout),
        ..scenario.clone()
    }
}
