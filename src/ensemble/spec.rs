//! What a scenario's `[uncertainty]` section asks for, as the ensemble uses it.

/// A marginal distribution of one uncertain input, in the input's own (file) units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Distribution {
    Normal {
        mean: f64,
        sd: f64,
    },
    /// ln X ~ Normal(ln median, sigma_ln²).
    LogNormal {
        median: f64,
        sigma_ln: f64,
    },
    Uniform {
        low: f64,
        high: f64,
    },
    /// Normal(mean, sd²) restricted to [low, high].
    TruncatedNormal {
        mean: f64,
        sd: f64,
        low: f64,
        high: f64,
    },
}

/// One uncertain input, addressed by the same path `--set` uses
/// (`cell.negative.particle_radius_um`, `ambient_c`, `profile.block.0.step.0.charge_c`).
#[derive(Debug, Clone, PartialEq)]
pub struct UncertainParameter {
    pub path: String,
    pub distribution: Distribution,
    /// Drawn for every cell of a pack apart (stream seeded by (seed, sample, cell)) instead of
    /// once for the sample.
    pub per_cell: bool,
}

/// Parameters drawn together through a Gaussian copula with this correlation matrix
/// (symmetric, unit diagonal, positive definite — checked when the file is read).
#[derive(Debug, Clone, PartialEq)]
pub struct CorrelationGroup {
    /// Indices into [`UncertaintySpec::parameters`].
    pub members: Vec<usize>,
    /// Row-major, `members.len()` × `members.len()`.
    pub matrix: Vec<f64>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Sampling {
    /// Independent draws.
    #[default]
    MonteCarlo,
    /// One draw in each of N equal-probability strata of every marginal.
    LatinHypercube,
}

/// The whole uncertainty section. A parameter belongs to at most one correlation group.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct UncertaintySpec {
    pub parameters: Vec<UncertainParameter>,
    pub groups: Vec<CorrelationGroup>,
    pub sampling: Sampling,
}

impl UncertaintySpec {
    /// Whether any parameter is drawn per cell.
    pub fn has_per_cell(&self) -> bool {
        self.parameters.iter().any(|p| p.per_cell)
    }
}
