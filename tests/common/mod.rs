//! Shared by the integration tests (each test file says `mod common;` and uses what it needs):
//! the binary runner, the demo paths and setups (`cases`, which the benchmarks include too),
//! and the one reference-case type with its checker.
//!
//! How a check of the main computation is written: build one [`ReferenceCase`] per compared
//! number — what it is, the source of the reference value (authors, year, where; or "derived",
//! "from memory", "common practice, no source"), the computed and the reference value and the
//! tolerance — and hand them all to [`check_cases`]. The record of every such check is
//! `docs/VALIDATION.md`.

// Each test crate uses a subset of this module.
#![allow(dead_code)]

pub mod cases;

#[allow(unused_imports)]
pub use cases::*;

use std::fmt::Write as _;

/// The binary, run from the repository root so demo paths read as in the README.
pub fn fadecast() -> assert_cmd::Command {
    let mut command = assert_cmd::cargo::cargo_bin_cmd!("fadecast");
    command.current_dir(env!("CARGO_MANIFEST_DIR"));
    command
}

/// The path of the built binary, for tests that spawn it themselves (e.g. to kill it).
pub fn fadecast_binary() -> &'static std::path::Path {
    assert_cmd::cargo::cargo_bin!("fadecast")
}

/// How close a computed value must come to its reference.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Tolerance {
    /// |computed − reference| ≤ this, in the value's own unit.
    Abs(f64),
    /// |computed − reference| / |reference| ≤ this.
    Rel(f64),
}

/// One computed number against its reference value, with the reference's source.
#[derive(Debug, Clone)]
pub struct ReferenceCase {
    /// What is compared, specific enough to find the failing point (scenario, τ, cycle …).
    pub name: String,
    /// Where the reference value comes from, with its label (confirmed, derived, from memory,
    /// common practice, no source).
    pub source: &'static str,
    pub tolerance: Tolerance,
    pub computed: f64,
    pub reference: f64,
}

impl ReferenceCase {
    pub fn new(
        name: impl Into<String>,
        source: &'static str,
        tolerance: Tolerance,
        computed: f64,
        reference: f64,
    ) -> Self {
        ReferenceCase { name: name.into(), source, tolerance, computed, reference }
    }

    /// The error in the tolerance's measure (absolute or relative).
    pub fn error(&self) -> f64 {
        let difference = (self.computed - self.reference).abs();
        match self.tolerance {
            Tolerance::Abs(_) => difference,
            Tolerance::Rel(_) => difference / self.reference.abs(),
        }
    }

    /// Within tolerance. NaN anywhere fails.
    pub fn passes(&self) -> bool {
        let limit = match self.tolerance {
            Tolerance::Abs(t) | Tolerance::Rel(t) => t,
        };
        self.error() <= limit
    }
}

/// Compares every case and panics listing each failing one with its source and error. An empty
/// list panics too: a check with nothing to compare cannot fail.
#[track_caller]
pub fn check_cases(cases: &[ReferenceCase]) {
    assert!(!cases.is_empty(), "no reference cases to check");
    let failing: Vec<&ReferenceCase> = cases.iter().filter(|c| !c.passes()).collect();
    if failing.is_empty() {
        return;
    }
    let mut report = format!("{} of {} reference cases failed:\n", failing.len(), cases.len());
    for c in failing {
        let (kind, limit) = match c.tolerance {
            Tolerance::Abs(t) => ("absolute", t),
            Tolerance::Rel(t) => ("relative", t),
        };
        let _ = writeln!(
            report,
            "  {}: computed {:.9e}, reference {:.9e}, {kind} error {:.3e} > {limit:.3e}\n    source: {}",
            c.name,
            c.computed,
            c.reference,
            c.error(),
            c.source
        );
    }
    panic!("{report}");
}

/// A named clean capacity curve: capacity in Ah at x.
pub type NamedCurve = (String, Box<dyn Fn(f64) -> f64>);

/// Synthetic "measured" capacity data: one dataset per named clean curve (capacity in Ah at x),
/// sampled at `xs` with seeded normal noise of `noise_ah`, drawn in order from one stream (the
/// first dataset's points first).
pub fn noisy_datasets(
    curves: &[NamedCurve],
    axis: fadecast::calibrate::Axis,
    xs: &[f64],
    noise_ah: f64,
    seed: u64,
) -> Vec<fadecast::calibrate::Dataset> {
    use rand::distr::Distribution;
    use rand::SeedableRng;
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let noise = statrs::distribution::Normal::new(0.0, noise_ah).unwrap();
    curves
        .iter()
        .map(|(name, capacity)| fadecast::calibrate::Dataset {
            name: name.clone(),
            axis,
            points: xs
                .iter()
                .map(|&x| fadecast::calibrate::MeasuredPoint {
                    x,
                    capacity_ah: capacity(x) + noise.sample(&mut rng),
                    resistance_mohm: None,
                })
                .collect(),
        })
        .collect()
}
