//! Drawing the uncertain inputs of every ensemble sample: seeded streams, Latin hypercube
//! strata, a Gaussian copula for correlated groups and the marginal inverse CDFs.
//!
//! # Reproducibility
//!
//! Every random number comes from [`sample_stream`]: a ChaCha8 generator keyed by the run's
//! seed and switched to the stream numbered by the sample index. Sample `i` reads only its
//! own stream, so its values depend on `(seed, i)` alone — not on the thread count, on the
//! order samples are drawn in, or on how the index range is split into shards. (For Latin
//! hypercube sampling they also depend on the total sample count, which fixes the strata;
//! every shard must therefore build its [`Sampler`] with the run's total, not its share.)
//! Draws are bit-identical for a given `Cargo.lock`; a rand release that changed how
//! `Open01` or `random_range` turn generator output into numbers would change them.
//!
//! # Method
//!
//! For sample `i`, one uniform `u_d` is drawn per parameter, in spec order:
//!
//! * Monte Carlo: `u_d ~ U(0, 1)`.
//! * Latin hypercube: `u_d = (π_d(i) + U(0, 1)) / N`, where `π_d` is a random permutation of
//!   the strata `0..N` fixed per parameter when the sampler is built. Each of the `N` equal
//!   probability strata of every independent marginal then holds exactly one sample.
//!
//! Parameters in a correlation group are then coupled by a Gaussian copula: normal scores
//! `z = Φ⁻¹(u)`, correlated scores `z' = L z` with `L Lᵀ` the group's correlation matrix
//! (Cholesky), and back to uniforms `u' = Φ(z')`. Finally each value is the marginal
//! quantile `x = F⁻¹(u')`.
//!
//! The copula keeps every marginal exact but mixes the strata of grouped parameters, so
//! under Latin hypercube sampling the one-per-stratum property holds exactly only for
//! parameters outside correlation groups; grouped ones are still correctly distributed.
//! Rank-based schemes keep both (Iman & Conover 1982) but make a sample depend on all
//! others, which would break the per-index reproducibility above.
//!
//! Uniforms are kept inside `[1e-15, 1 − 1e-15]` before any inverse CDF, so an unbounded
//! marginal never returns ±∞ (the clamp sits about 7.9 standard deviations out).
//!
//! # References
//!
//! * M. D. McKay, R. J. Beckman, W. J. Conover, "A comparison of three methods for selecting
//!   values of input variables in the analysis of output from a computer code",
//!   Technometrics 21 (1979) 239–245 — Latin hypercube sampling.
//! * R. L. Iman, W. J. Conover, "A distribution-free approach to inducing rank correlation
//!   among input variables", Communications in Statistics – Simulation and Computation 11
//!   (1982) 311–334.
//! * R. B. Nelsen, *An Introduction to Copulas*, 2nd ed., Springer (2006) — Gaussian copula.
//! * L. Devroye, *Non-Uniform Random Variate Generation*, Springer (1986), ch. II — inversion
//!   method, also for a distribution restricted to an interval.
//! * D. J. Bernstein, "ChaCha, a variant of Salsa20" (2008) — the generator; streams are its
//!   64-bit nonce, via `rand_chacha`'s `set_stream`.

use nalgebra::DMatrix;
use rand::distr::Open01;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use statrs::distribution::{ContinuousCDF, LogNormal, Normal, Uniform};
use thiserror::Error;

use super::spec::{CorrelationGroup, Distribution, Sampling, UncertainParameter, UncertaintySpec};

/// The most samples one run may ask for. It bounds the Latin hypercube tables (4 bytes per
/// sample and parameter: 40 MB per parameter at the cap) and keeps every per-sample stream
/// number far below the reserved permutation streams (see [`sample_stream`]).
pub const MAX_SAMPLES: u64 = 10_000_000;

/// Uniforms are clamped to `[PROBABILITY_FLOOR, 1 − PROBABILITY_FLOOR]` so that inverse CDFs
/// of unbounded marginals stay finite.
const PROBABILITY_FLOOR: f64 = 1e-15;

/// Largest difference tolerated between `m[i][j]` and `m[j][i]`, and between a diagonal entry
/// and 1: room for values that went through a decimal text file, nothing more.
const MATRIX_TOLERANCE: f64 = 1e-12;

/// Mixed into the seed for the Latin hypercube permutation streams (the ASCII bytes of
/// "LHS_PERM"). Separation from per-sample streams does not rely on it — their stream
/// numbers never overlap, see [`sample_stream`] — but it gives the permutations a different
/// ChaCha key from the samples of the same run as well.
const PERMUTATION_SEED_MIX: u64 = 0x4C48_535F_5045_524D;

/// The random stream of sample `index` of the run seeded with `seed`: the only way the
/// ensemble makes random numbers.
///
/// `ChaCha8Rng::seed_from_u64(seed)` followed by `set_stream(index)`. ChaCha's 64-bit nonce
/// selects one of 2⁶⁴ independent streams under the same key, so sample streams never
/// overlap however many numbers each sample takes.
///
/// Stream numbers below [`MAX_SAMPLES`] belong to samples. The Latin hypercube permutation
/// of parameter `d` uses stream `u64::MAX − d` under the key of `seed ^ 0x4C48_535F_5045_524D`;
/// those stream numbers lie above `u64::MAX − (number of parameters)`, far above any sample
/// index, so no (key, stream) pair is ever shared between a permutation and a sample, of this
/// run or of a run with any other seed.
pub fn sample_stream(seed: u64, index: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(index);
    rng
}

/// Stream numbers of per-cell draws start here: above every sample's stream, far below the
/// permutation streams at the top.
const CELL_STREAM_BASE: u64 = 1 << 62;
/// Stream numbers per sample kept for its cells (more than any pack may hold).
const CELL_STREAMS_PER_SAMPLE: u64 = 1 << 10;
const _: () = assert!(CELL_STREAMS_PER_SAMPLE as usize > crate::cycle::pack::MAX_PACK_CELLS);

/// The stream of cell `cell` of sample `index`: under the run's own key, at a stream number
/// reserved for cells, so it overlaps no sample's or permutation's stream.
fn cell_stream(seed: u64, index: u64, cell: usize) -> ChaCha8Rng {
    sample_stream(seed, CELL_STREAM_BASE + index * CELL_STREAMS_PER_SAMPLE + cell as u64)
}

/// The stream reserved for the Latin hypercube permutation of parameter `parameter`.
fn permutation_stream(seed: u64, parameter: usize) -> ChaCha8Rng {
    sample_stream(seed ^ PERMUTATION_SEED_MIX, u64::MAX - parameter as u64)
}

/// What is wrong with an uncertainty spec or a sampler request, with the numbers involved
/// and what to change.
///
/// `group` fields are indices into [`UncertaintySpec::groups`]; `row`/`col` index the group's
/// members; `members` are the group members' paths, for messages.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum SamplingError {
    #[error("{samples} samples requested: ask for at least 1 and at most {max} samples", max = MAX_SAMPLES)]
    SampleCount { samples: u64 },
    #[error("{path}: {name} = {value} is not a finite number; give a finite {name}")]
    NotFinite { path: String, name: &'static str, value: f64 },
    #[error("{path}: {name} = {value} must be greater than 0")]
    NotPositive { path: String, name: &'static str, value: f64 },
    #[error("{path}: low = {low} must be below high = {high}")]
    EmptyRange { path: String, low: f64, high: f64 },
    #[error(
        "{path}: the interval [{low}, {high}] holds no probability under a normal with mean {mean} and sd {sd} \
         (it lies too many sd from the mean for double precision); move the interval toward the mean or widen sd"
    )]
    TruncationWithoutProbability { path: String, mean: f64, sd: f64, low: f64, high: f64 },
    #[error("correlation group {group} has no members: list at least one parameter or remove the group")]
    EmptyGroup { group: usize },
    #[error(
        "correlation group {group}: member index {member} does not exist; there are {parameters} uncertain \
         parameters (indices 0 to {parameters} − 1)"
    )]
    UnknownMember { group: usize, member: usize, parameters: usize },
    #[error("correlation group [{}]: {path} is listed twice; list each parameter once", .members.join(", "))]
    DuplicateMember { group: usize, members: Vec<String>, path: String },
    #[error(
        "{path} is in correlation groups {first_group} and {second_group}; a parameter may belong to one group \
         only: merge the two groups or drop it from one"
    )]
    ParameterInTwoGroups { path: String, first_group: usize, second_group: usize },
    #[error(
        "correlation group [{}]: the matrix has {entries} entries, but {} members need {} × {} = {}",
        .members.join(", "), .members.len(), .members.len(), .members.len(), .members.len() * .members.len()
    )]
    MatrixShape { group: usize, members: Vec<String>, entries: usize },
    #[error(
        "correlation group [{}]: the correlation of {} with {} is {value}; correlations lie in [-1, 1]",
        .members.join(", "), .members[*row], .members[*col]
    )]
    CorrelationOutOfRange { group: usize, members: Vec<String>, row: usize, col: usize, value: f64 },
    #[error(
        "correlation group [{}]: the diagonal entry of {} is {value}; a variable's correlation with itself is 1",
        .members.join(", "), .members[*row]
    )]
    DiagonalNotOne { group: usize, members: Vec<String>, row: usize, value: f64 },
    #[error(
        "correlation group [{}]: the matrix is not symmetric: {} with {} is {upper} but {} with {} is {lower}; \
         give both the same value",
        .members.join(", "), .members[*row], .members[*col], .members[*col], .members[*row]
    )]
    NotSymmetric { group: usize, members: Vec<String>, row: usize, col: usize, upper: f64, lower: f64 },
    #[error(
        "correlation group [{}]: the correlation matrix is not positive definite: no set of variables can have \
         all these correlations at once (or two are perfectly correlated); weaken the strongest correlations or \
         fix their signs so they agree",
        .members.join(", ")
    )]
    NotPositiveDefinite { group: usize, members: Vec<String> },
}

/// Every problem in `spec`, parameters first (in spec order), then groups. Empty when the
/// spec can be sampled. [`Sampler::new`] reports the first of these.
pub fn check_spec(spec: &UncertaintySpec) -> Vec<SamplingError> {
    build_model(spec).err().unwrap_or_default()
}

/// Draws the parameter values of every sample of one ensemble run.
///
/// Cheap to share across threads (`Send + Sync`); drawing needs only `&self`.
#[derive(Debug, Clone)]
pub struct Sampler {
    seed: u64,
    samples: u64,
    /// Cells of a pack drawn apart for the parameters marked per cell (0: none).
    cells: usize,
    per_cell: Vec<usize>,
    marginals: Vec<Marginal>,
    groups: Vec<CopulaGroup>,
    design: Design,
    standard_normal: Normal,
}

impl Sampler {
    /// Validates `spec` and prepares to draw `samples` samples from the run seeded with `seed`:
    /// marginals, Cholesky factors of the correlation groups and, for Latin hypercube
    /// sampling, one stratum permutation per parameter.
    ///
    /// Checks: sd, sigma_ln and median > 0; every number finite (truncation bounds may be
    /// ±∞); low < high; a truncated normal's interval has positive probability; each group
    /// has members that exist, listed once, in no other group, and a square, symmetric
    /// (within 1e-12), unit-diagonal matrix with entries in [−1, 1] that is positive definite;
    /// `1 ≤ samples ≤` [`MAX_SAMPLES`]. Returns the first problem; [`check_spec`] lists all.
    pub fn new(spec: &UncertaintySpec, seed: u64, samples: u64) -> Result<Sampler, SamplingError> {
        if samples == 0 || samples > MAX_SAMPLES {
            return Err(SamplingError::SampleCount { samples });
        }
        let (marginals, groups) = build_model(spec).map_err(|mut problems| problems.swap_remove(0))?;
        let design = match spec.sampling {
            Sampling::MonteCarlo => Design::MonteCarlo,
            Sampling::LatinHypercube => Design::LatinHypercube {
                strata: (0..marginals.len()).map(|d| stratum_permutation(seed, d, samples)).collect(),
            },
        };
        let per_cell = spec.parameters.iter().enumerate().filter(|(_, p)| p.per_cell).map(|(i, _)| i).collect();
        Ok(Sampler {
            seed,
            samples,
            cells: 0,
            per_cell,
            marginals,
            groups,
            design,
            standard_normal: Normal::standard(),
        })
    }

    /// The same sampler drawing the parameters marked per cell for each of `cells` cells as well
    /// ([`Sampler::draw_for_build`]).
    pub fn with_cells(mut self, cells: usize) -> Sampler {
        self.cells = if self.per_cell.is_empty() { 0 } else { cells };
        self
    }

    /// Sample `index`'s values as a scenario is built from them: [`Sampler::draw`], then for
    /// each cell of [`Sampler::with_cells`] in turn its own value of every parameter marked per
    /// cell (in spec order). Cell c of sample i draws from its own stream, seeded by (seed, i,
    /// c), independently (Monte Carlo from the parameter's marginal; per-cell parameters take
    /// no correlation and no Latin hypercube strata), so the values do not depend on jobs,
    /// shards or the other cells.
    pub fn draw_for_build(&self, index: u64) -> Vec<f64> {
        let mut values = self.draw(index);
        for cell in 0..self.cells {
            let mut rng = cell_stream(self.seed, index, cell);
            for &parameter in &self.per_cell {
                let u = clamp_probability(rng.sample(Open01));
                values.push(self.marginals[parameter].quantile(u));
            }
        }
        values
    }

    /// Whether [`Sampler::draw_for_build`] appends cells' draws.
    pub fn draws_cells(&self) -> bool {
        self.cells > 0
    }

    /// The number of samples this sampler was built for; valid indices are `0..samples()`.
    pub fn samples(&self) -> u64 {
        self.samples
    }

    /// The number of uncertain parameters, i.e. the length of every draw.
    pub fn parameter_count(&self) -> usize {
        self.marginals.len()
    }

    /// The values of every parameter for sample `index`, in spec order.
    ///
    /// # Panics
    ///
    /// If `index >= self.samples()`.
    pub fn draw(&self, index: u64) -> Vec<f64> {
        let mut values = vec![0.0; self.marginals.len()];
        self.draw_into(index, &mut values);
        values
    }

    /// [`Sampler::draw`] into a caller's buffer, without allocating.
    ///
    /// # Panics
    ///
    /// If `index >= self.samples()` or `values.len() != self.parameter_count()`.
    pub fn draw_into(&self, index: u64, values: &mut [f64]) {
        assert!(index < self.samples, "sample index {index} is out of range: the sampler has {} samples", self.samples);
        assert_eq!(values.len(), self.marginals.len(), "the buffer must hold one value per uncertain parameter");

        // One uniform per parameter, always in spec order: the independent uniforms do not
        // depend on how parameters are grouped, only on (seed, index).
        let mut rng = sample_stream(self.seed, index);
        for (parameter, value) in values.iter_mut().enumerate() {
            let uniform: f64 = rng.sample(Open01);
            let u = match &self.design {
                Design::MonteCarlo => uniform,
                // The uniform places the sample at random within its stratum.
                Design::LatinHypercube { strata } => {
                    (f64::from(strata[parameter][index as usize]) + uniform) / self.samples as f64
                }
            };
            *value = clamp_probability(u);
        }
        for group in &self.groups {
            group.correlate(values, &self.standard_normal);
        }
        for (value, marginal) in values.iter_mut().zip(&self.marginals) {
            *value = marginal.quantile(*value);
        }
    }
}

/// Keeps a probability inside `[PROBABILITY_FLOOR, 1 − PROBABILITY_FLOOR]`.
fn clamp_probability(u: f64) -> f64 {
    u.clamp(PROBABILITY_FLOOR, 1.0 - PROBABILITY_FLOOR)
}

#[derive(Debug, Clone)]
enum Design {
    MonteCarlo,
    /// `strata[d][i]`: the stratum of parameter `d` that sample `i` falls in (u32 holds any
    /// index below [`MAX_SAMPLES`] at half the memory of u64).
    LatinHypercube {
        strata: Vec<Vec<u32>>,
    },
}

/// A uniformly random permutation of `0..samples` (Fisher–Yates, Durstenfeld's in-place
/// form), drawn from the stream reserved for `parameter`.
fn stratum_permutation(seed: u64, parameter: usize, samples: u64) -> Vec<u32> {
    let count = u32::try_from(samples).expect("sample count is capped below u32::MAX");
    let mut permutation: Vec<u32> = (0..count).collect();
    let mut rng = permutation_stream(seed, parameter);
    for last in (1..permutation.len()).rev() {
        // Sampled as u64 so the draw does not depend on the platform's usize width.
        let pick = rng.random_range(0..=last as u64) as usize;
        permutation.swap(last, pick);
    }
    permutation
}

/// A validated marginal, ready to invert.
#[derive(Debug, Clone)]
enum Marginal {
    Normal(Normal),
    LogNormal(LogNormal),
    Uniform(Uniform),
    TruncatedNormal(TruncatedNormal),
}

impl Marginal {
    /// `F⁻¹(u)` for `u` strictly inside (0, 1).
    fn quantile(&self, u: f64) -> f64 {
        match self {
            Marginal::Normal(normal) => normal.inverse_cdf(u),
            Marginal::LogNormal(log_normal) => log_normal.inverse_cdf(u),
            Marginal::Uniform(uniform) => uniform.inverse_cdf(u),
            Marginal::TruncatedNormal(truncated) => truncated.quantile(u),
        }
    }
}

/// Normal(mean, sd²) restricted to [low, high], inverted through the standard normal.
///
/// With standardised bounds α, β the quantile is `t = Φ⁻¹(Φ(α) + u (Φ(β) − Φ(α)))`. When the
/// whole interval lies above the mean, Φ(α) and Φ(β) are both close to 1 and their
/// difference loses every digit, so there the same inversion runs on the upper tail
/// `Q(t) = Φ(−t)`, which stays accurate: `t = −Φ⁻¹(Q(α) − u (Q(α) − Q(β)))`.
#[derive(Debug, Clone)]
struct TruncatedNormal {
    mean: f64,
    sd: f64,
    low: f64,
    high: f64,
    /// Invert through the upper tail Q instead of Φ.
    upper_tail: bool,
    /// Φ(α), or Q(α) when `upper_tail`.
    start: f64,
    /// The probability of the interval: Φ(β) − Φ(α) = Q(α) − Q(β).
    mass: f64,
    standard_normal: Normal,
}

impl TruncatedNormal {
    fn new(mean: f64, sd: f64, low: f64, high: f64) -> TruncatedNormal {
        let standard_normal = Normal::standard();
        let alpha = (low - mean) / sd;
        let beta = (high - mean) / sd;
        let upper_tail = alpha > 0.0;
        let (start, mass) = if upper_tail {
            let (q_alpha, q_beta) = (standard_normal.cdf(-alpha), standard_normal.cdf(-beta));
            (q_alpha, q_alpha - q_beta)
        } else {
            let (p_alpha, p_beta) = (standard_normal.cdf(alpha), standard_normal.cdf(beta));
            (p_alpha, p_beta - p_alpha)
        };
        TruncatedNormal { mean, sd, low, high, upper_tail, start, mass, standard_normal }
    }

    fn quantile(&self, u: f64) -> f64 {
        // The floor keeps Φ⁻¹ finite if u · mass underflows for an interval far out in a tail.
        let t = if self.upper_tail {
            -self.standard_normal.inverse_cdf((self.start - u * self.mass).clamp(f64::MIN_POSITIVE, 1.0))
        } else {
            self.standard_normal.inverse_cdf((self.start + u * self.mass).clamp(f64::MIN_POSITIVE, 1.0))
        };
        // Rounding in the last digit must not put a value outside the interval it was asked for.
        (self.mean + self.sd * t).clamp(self.low, self.high)
    }
}

/// One correlation group: its members (indices into the draw) and the lower Cholesky factor
/// of its correlation matrix.
#[derive(Debug, Clone)]
struct CopulaGroup {
    members: Vec<usize>,
    cholesky_lower: DMatrix<f64>,
}

impl CopulaGroup {
    /// Replaces the independent uniforms of the members by correlated ones (Gaussian copula).
    fn correlate(&self, values: &mut [f64], standard_normal: &Normal) {
        for &member in &self.members {
            values[member] = standard_normal.inverse_cdf(values[member]);
        }
        // z' = L z in place. Row i of a lower-triangular L reads z_0..z_i only; going from the
        // last row up, those are still the original scores when row i is computed.
        for row in (0..self.members.len()).rev() {
            let correlated: f64 =
                (0..=row).map(|col| self.cholesky_lower[(row, col)] * values[self.members[col]]).sum();
            values[self.members[row]] = correlated;
        }
        for &member in &self.members {
            values[member] = clamp_probability(standard_normal.cdf(values[member]));
        }
    }
}

/// Validates the whole spec, collecting every problem, and builds what drawing needs.
fn build_model(spec: &UncertaintySpec) -> Result<(Vec<Marginal>, Vec<CopulaGroup>), Vec<SamplingError>> {
    let mut problems = Vec::new();
    let mut marginals = Vec::with_capacity(spec.parameters.len());
    for parameter in &spec.parameters {
        match build_marginal(parameter) {
            Ok(marginal) => marginals.push(marginal),
            Err(problem) => problems.push(problem),
        }
    }

    // Which group claimed each parameter first, to catch a parameter in two groups.
    let mut owner: Vec<Option<usize>> = vec![None; spec.parameters.len()];
    let mut groups = Vec::with_capacity(spec.groups.len());
    for (group_index, group) in spec.groups.iter().enumerate() {
        let members_ok = check_members(spec, group_index, group, &mut owner, &mut problems);
        if !members_ok {
            continue;
        }
        match factor_group(spec, group_index, group) {
            Ok(factor) => groups.push(factor),
            Err(problem) => problems.push(problem),
        }
    }

    if problems.is_empty() {
        Ok((marginals, groups))
    } else {
        Err(problems)
    }
}

fn build_marginal(parameter: &UncertainParameter) -> Result<Marginal, SamplingError> {
    let path = &parameter.path;
    let finite = |name: &'static str, value: f64| {
        if value.is_finite() {
            Ok(())
        } else {
            Err(SamplingError::NotFinite { path: path.clone(), name, value })
        }
    };
    let positive = |name: &'static str, value: f64| {
        finite(name, value)?;
        if value > 0.0 {
            Ok(())
        } else {
            Err(SamplingError::NotPositive { path: path.clone(), name, value })
        }
    };
    let ordered = |low: f64, high: f64| {
        // Tested as `low < high` so that NaN bounds fail too.
        if low < high {
            Ok(())
        } else {
            Err(SamplingError::EmptyRange { path: path.clone(), low, high })
        }
    };
    // statrs re-checks what was validated just above; its error cannot occur here.
    const CHECKED: &str = "parameters validated above";
    match parameter.distribution {
        Distribution::Normal { mean, sd } => {
            finite("mean", mean)?;
            positive("sd", sd)?;
            Ok(Marginal::Normal(Normal::new(mean, sd).expect(CHECKED)))
        }
        Distribution::LogNormal { median, sigma_ln } => {
            positive("median", median)?;
            positive("sigma_ln", sigma_ln)?;
            Ok(Marginal::LogNormal(LogNormal::new(median.ln(), sigma_ln).expect(CHECKED)))
        }
        Distribution::Uniform { low, high } => {
            finite("low", low)?;
            finite("high", high)?;
            ordered(low, high)?;
            Ok(Marginal::Uniform(Uniform::new(low, high).expect(CHECKED)))
        }
        Distribution::TruncatedNormal { mean, sd, low, high } => {
            finite("mean", mean)?;
            positive("sd", sd)?;
            // Infinite bounds are allowed: a normal cut on one side only.
            ordered(low, high)?;
            let truncated = TruncatedNormal::new(mean, sd, low, high);
            if truncated.mass > 0.0 {
                Ok(Marginal::TruncatedNormal(truncated))
            } else {
                Err(SamplingError::TruncationWithoutProbability { path: path.clone(), mean, sd, low, high })
            }
        }
    }
}

/// Checks a group's member list, recording problems; true if the matrix can be checked next.
fn check_members(
    spec: &UncertaintySpec,
    group_index: usize,
    group: &CorrelationGroup,
    owner: &mut [Option<usize>],
    problems: &mut Vec<SamplingError>,
) -> bool {
    if group.members.is_empty() {
        problems.push(SamplingError::EmptyGroup { group: group_index });
        return false;
    }
    let parameters = spec.parameters.len();
    if let Some(&member) = group.members.iter().find(|&&member| member >= parameters) {
        problems.push(SamplingError::UnknownMember { group: group_index, member, parameters });
        return false;
    }
    let mut ok = true;
    for (position, &member) in group.members.iter().enumerate() {
        let path = &spec.parameters[member].path;
        if group.members[..position].contains(&member) {
            let members = member_paths(spec, group);
            problems.push(SamplingError::DuplicateMember { group: group_index, members, path: path.clone() });
            ok = false;
            continue;
        }
        match owner[member] {
            Some(first_group) => {
                problems.push(SamplingError::ParameterInTwoGroups {
                    path: path.clone(),
                    first_group,
                    second_group: group_index,
                });
                ok = false;
            }
            None => owner[member] = Some(group_index),
        }
    }
    ok
}

/// Checks a group's matrix and factors it. Members are known to be valid.
fn factor_group(
    spec: &UncertaintySpec,
    group_index: usize,
    group: &CorrelationGroup,
) -> Result<CopulaGroup, SamplingError> {
    let size = group.members.len();
    let members = || member_paths(spec, group);
    if group.matrix.len() != size * size {
        return Err(SamplingError::MatrixShape { group: group_index, members: members(), entries: group.matrix.len() });
    }
    let entry = |row: usize, col: usize| group.matrix[row * size + col];
    for row in 0..size {
        for col in 0..size {
            let value = entry(row, col);
            // Written so that NaN fails the range test.
            if !(-1.0..=1.0).contains(&value) {
                return Err(SamplingError::CorrelationOutOfRange {
                    group: group_index,
                    members: members(),
                    row,
                    col,
                    value,
                });
            }
        }
        let diagonal = entry(row, row);
        if (diagonal - 1.0).abs() > MATRIX_TOLERANCE {
            return Err(SamplingError::DiagonalNotOne { group: group_index, members: members(), row, value: diagonal });
        }
        for col in 0..row {
            let (upper, lower) = (entry(col, row), entry(row, col));
            if (upper - lower).abs() > MATRIX_TOLERANCE {
                return Err(SamplingError::NotSymmetric {
                    group: group_index,
                    members: members(),
                    row: col,
                    col: row,
                    upper,
                    lower,
                });
            }
        }
    }
    // Averaging the two triangles (and taking the diagonal as exactly 1) makes the factor
    // independent of which triangle a nearly symmetric matrix was read from.
    let correlation =
        DMatrix::from_fn(
            size,
            size,
            |row, col| if row == col { 1.0 } else { 0.5 * (entry(row, col) + entry(col, row)) },
        );
    match correlation.cholesky() {
        Some(cholesky) => Ok(CopulaGroup { members: group.members.clone(), cholesky_lower: cholesky.l() }),
        None => Err(SamplingError::NotPositiveDefinite { group: group_index, members: members() }),
    }
}

fn member_paths(spec: &UncertaintySpec, group: &CorrelationGroup) -> Vec<String> {
    group.members.iter().map(|&member| spec.parameters[member].path.clone()).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use statrs::distribution::Continuous;

    #[test]
    fn cells_draw_from_their_own_streams() {
        let mut spec = UncertaintySpec {
            parameters: vec![
                parameter("a", Distribution::Normal { mean: 0.0, sd: 1.0 }),
                parameter("b", Distribution::Uniform { low: 1.0, high: 2.0 }),
            ],
            ..UncertaintySpec::default()
        };
        spec.parameters[1].per_cell = true;
        let four = Sampler::new(&spec, 9, 10).unwrap().with_cells(4);
        let eight = Sampler::new(&spec, 9, 10).unwrap().with_cells(8);
        let plain = Sampler::new(&spec, 9, 10).unwrap();
        for i in 0..10 {
            let a = four.draw_for_build(i);
            let b = eight.draw_for_build(i);
            // The sample's own values, then one value per cell: a cell's draw does not depend on
            // how many cells follow it.
            assert_eq!(a.len(), 2 + 4);
            assert_eq!(a[..], b[..6]);
            assert_eq!(a[..2], plain.draw(i)[..]);
            assert!(a[2..].iter().all(|v| (1.0..=2.0).contains(v)));
            assert!(a[2] != a[3] && a[3] != a[4]);
            assert_ne!(four.draw_for_build((i + 1) % 10)[2..], a[2..]);
        }
    }

    fn parameter(path: &str, distribution: Distribution) -> UncertainParameter {
        UncertainParameter { path: path.to_string(), distribution, per_cell: false }
    }

    fn spec_of(
        parameters: Vec<UncertainParameter>,
        groups: Vec<CorrelationGroup>,
        sampling: Sampling,
    ) -> UncertaintySpec {
        UncertaintySpec { parameters, groups, sampling }
    }

    /// Three marginals of different kinds, used by several tests.
    fn three_marginals() -> Vec<UncertainParameter> {
        vec![
            parameter("a", Distribution::Normal { mean: 10.0, sd: 2.0 }),
            parameter("b", Distribution::LogNormal { median: 3.0, sigma_ln: 0.25 }),
            parameter("c", Distribution::Uniform { low: -1.0, high: 4.0 }),
        ]
    }

    /// The marginal CDF, from statrs, with the truncated normal from its definition
    /// (Φ(t) − Φ(α)) / (Φ(β) − Φ(α)).
    fn marginal_cdf(distribution: Distribution, x: f64) -> f64 {
        match distribution {
            Distribution::Normal { mean, sd } => Normal::new(mean, sd).unwrap().cdf(x),
            Distribution::LogNormal { median, sigma_ln } => LogNormal::new(median.ln(), sigma_ln).unwrap().cdf(x),
            Distribution::Uniform { low, high } => Uniform::new(low, high).unwrap().cdf(x),
            Distribution::TruncatedNormal { mean, sd, low, high } => {
                let phi = |v: f64| Normal::new(mean, sd).unwrap().cdf(v);
                (phi(x) - phi(low)) / (phi(high) - phi(low))
            }
        }
    }

    /// Mean and variance of each marginal from closed forms: normal and uniform by
    /// definition; log-normal E = m e^{σ²/2}, Var = m² e^{σ²} (e^{σ²} − 1); truncated normal
    /// E = μ + σ (φ(α) − φ(β)) / Z, Var = σ² [1 + (α φ(α) − β φ(β)) / Z − ((φ(α) − φ(β)) / Z)²],
    /// Z = Φ(β) − Φ(α) (Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions,
    /// Vol. 1, 2nd ed. (1994), chs. 13 and 14).
    fn marginal_mean_variance(distribution: Distribution) -> (f64, f64) {
        match distribution {
            Distribution::Normal { mean, sd } => (mean, sd * sd),
            Distribution::LogNormal { median, sigma_ln } => {
                let s2 = sigma_ln * sigma_ln;
                (median * (s2 / 2.0).exp(), median * median * s2.exp() * (s2.exp() - 1.0))
            }
            Distribution::Uniform { low, high } => (0.5 * (low + high), (high - low).powi(2) / 12.0),
            Distribution::TruncatedNormal { mean, sd, low, high } => {
                let standard = Normal::standard();
                let (alpha, beta) = ((low - mean) / sd, (high - mean) / sd);
                let z = standard.cdf(beta) - standard.cdf(alpha);
                let (pdf_alpha, pdf_beta) = (standard.pdf(alpha), standard.pdf(beta));
                let shift = (pdf_alpha - pdf_beta) / z;
                (mean + sd * shift, sd * sd * (1.0 + (alpha * pdf_alpha - beta * pdf_beta) / z - shift * shift))
            }
        }
    }

    fn draws(sampler: &Sampler) -> Vec<Vec<f64>> {
        (0..sampler.samples()).map(|index| sampler.draw(index)).collect()
    }

    fn pearson(x: &[f64], y: &[f64]) -> f64 {
        let n = x.len() as f64;
        let (mx, my) = (x.iter().sum::<f64>() / n, y.iter().sum::<f64>() / n);
        let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
        let sxx: f64 = x.iter().map(|a| (a - mx).powi(2)).sum();
        let syy: f64 = y.iter().map(|b| (b - my).powi(2)).sum();
        sxy / (sxx * syy).sqrt()
    }

    #[test]
    fn latin_hypercube_puts_one_sample_in_every_stratum() {
        // Reference: the defining property of Latin hypercube sampling (McKay, Beckman &
        // Conover 1979): with N samples, each of the N equal-probability strata of every
        // marginal holds exactly one. Strata are read back through the marginal CDF.
        let mut parameters = three_marginals();
        parameters[2] =
            parameter("c", Distribution::TruncatedNormal { mean: 1.0, sd: 1.0, low: 0.5, high: f64::INFINITY });
        let spec = spec_of(parameters.clone(), vec![], Sampling::LatinHypercube);
        let samples = 50;
        let sampler = Sampler::new(&spec, 7, samples).unwrap();
        let values = draws(&sampler);
        for (d, p) in parameters.iter().enumerate() {
            let mut hits = vec![0; samples as usize];
            for draw in &values {
                let u = marginal_cdf(p.distribution, draw[d]);
                hits[(u * samples as f64).floor() as usize] += 1;
            }
            assert!(hits.iter().all(|&h| h == 1), "parameter {}: stratum counts {hits:?}", p.path);
        }
    }

    #[test]
    fn monte_carlo_marginals_match_their_moments() {
        // Reference: closed-form means and variances (see `marginal_mean_variance`). The
        // tolerance is 4 standard errors: SE(mean) = σ/√n, SE(sd) ≈ √((m₄ − s⁴)/n) / (2s)
        // from the sample fourth central moment m₄ (delta method), valid for any marginal.
        let mut parameters = three_marginals();
        parameters.push(parameter("d", Distribution::TruncatedNormal { mean: 0.0, sd: 1.0, low: -0.5, high: 2.0 }));
        let spec = spec_of(parameters.clone(), vec![], Sampling::MonteCarlo);
        let sampler = Sampler::new(&spec, 2024, 20_000).unwrap();
        let values = draws(&sampler);
        let n = values.len() as f64;
        for (d, p) in parameters.iter().enumerate() {
            let column: Vec<f64> = values.iter().map(|draw| draw[d]).collect();
            let mean = column.iter().sum::<f64>() / n;
            let m2 = column.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n;
            let m4 = column.iter().map(|x| (x - mean).powi(4)).sum::<f64>() / n;
            let sd = m2.sqrt();
            let (expected_mean, expected_variance) = marginal_mean_variance(p.distribution);
            let expected_sd = expected_variance.sqrt();
            let se_mean = expected_sd / n.sqrt();
            let se_sd = ((m4 - m2 * m2) / n).sqrt() / (2.0 * sd);
            assert!((mean - expected_mean).abs() < 4.0 * se_mean, "{}: mean {mean} vs {expected_mean}", p.path);
            assert!((sd - expected_sd).abs() < 4.0 * se_sd, "{}: sd {sd} vs {expected_sd}", p.path);
        }
    }

    #[test]
    fn statrs_moments_agree_with_the_closed_forms_used_above() {
        // Cross-check of the test's own reference against statrs for the marginals statrs has.
        use statrs::statistics::Distribution as _;
        let log_normal = LogNormal::new(3.0_f64.ln(), 0.25).unwrap();
        let (mean, variance) = marginal_mean_variance(Distribution::LogNormal { median: 3.0, sigma_ln: 0.25 });
        assert!((log_normal.mean().unwrap() - mean).abs() < 1e-12);
        assert!((log_normal.variance().unwrap() - variance).abs() < 1e-12);
        let uniform = Uniform::new(-1.0, 4.0).unwrap();
        let (mean, variance) = marginal_mean_variance(Distribution::Uniform { low: -1.0, high: 4.0 });
        assert!((uniform.mean().unwrap() - mean).abs() < 1e-12);
        assert!((uniform.variance().unwrap() - variance).abs() < 1e-12);
    }

    /// Normal scores Φ⁻¹(F(x)) of one column of draws.
    fn normal_scores(values: &[Vec<f64>], d: usize, distribution: Distribution) -> Vec<f64> {
        let standard = Normal::standard();
        values.iter().map(|draw| standard.inverse_cdf(marginal_cdf(distribution, draw[d]))).collect()
    }

    fn check_copula_correlations(sampling: Sampling) {
        // Reference: the target matrix itself. In a Gaussian copula the normal scores are
        // jointly normal with exactly that correlation (Nelsen 2006); at n = 20000 the
        // sampling SE of a Pearson correlation is (1 − ρ²)/√n < 0.008, so ±0.03 is > 3.7 SE.
        let parameters = three_marginals();
        let target = [1.0, 0.7, -0.3, 0.7, 1.0, 0.2, -0.3, 0.2, 1.0];
        let group = CorrelationGroup { members: vec![0, 1, 2], matrix: target.to_vec() };
        let spec = spec_of(parameters.clone(), vec![group], sampling);
        let sampler = Sampler::new(&spec, 99, 20_000).unwrap();
        let values = draws(&sampler);
        let scores: Vec<Vec<f64>> =
            parameters.iter().enumerate().map(|(d, p)| normal_scores(&values, d, p.distribution)).collect();
        for row in 0..3 {
            for col in 0..row {
                let r = pearson(&scores[row], &scores[col]);
                let expected = target[row * 3 + col];
                assert!((r - expected).abs() < 0.03, "{sampling:?} ({row},{col}): {r} vs {expected}");
            }
        }
    }

    #[test]
    fn copula_group_reaches_its_target_correlations_monte_carlo() {
        check_copula_correlations(Sampling::MonteCarlo);
    }

    #[test]
    fn copula_group_reaches_its_target_correlations_latin_hypercube() {
        check_copula_correlations(Sampling::LatinHypercube);
    }

    #[test]
    fn copula_keeps_the_marginals() {
        // Reference: Sklar's theorem (Nelsen 2006): the copula changes the dependence, not the
        // marginals. The correlated log-normal's sample median must match its median m within
        // 4 SE, SE = √(p(1−p)/n) / f(m) for the sample median (asymptotic normality of
        // sample quantiles), with f the statrs log-normal density.
        let parameters = three_marginals();
        let group = CorrelationGroup { members: vec![0, 1], matrix: vec![1.0, 0.9, 0.9, 1.0] };
        let spec = spec_of(parameters, vec![group], Sampling::MonteCarlo);
        let sampler = Sampler::new(&spec, 5, 20_000).unwrap();
        let mut column: Vec<f64> = draws(&sampler).iter().map(|draw| draw[1]).collect();
        column.sort_by(f64::total_cmp);
        let median = 0.5 * (column[9_999] + column[10_000]);
        let density = LogNormal::new(3.0_f64.ln(), 0.25).unwrap().pdf(3.0);
        let se = (0.25_f64 / 20_000.0).sqrt() / density;
        assert!((median - 3.0).abs() < 4.0 * se, "median {median}, SE {se}");
    }

    #[test]
    fn non_positive_definite_matrix_is_rejected() {
        // Reference: Sylvester's criterion. det = 0.19 − 2 · 0.9 · 1.71 = −2.888 < 0, so the
        // matrix has a negative eigenvalue and is no correlation matrix.
        let group =
            CorrelationGroup { members: vec![0, 1, 2], matrix: vec![1.0, 0.9, 0.9, 0.9, 1.0, -0.9, 0.9, -0.9, 1.0] };
        let spec = spec_of(three_marginals(), vec![group], Sampling::MonteCarlo);
        let error = Sampler::new(&spec, 1, 10).unwrap_err();
        assert!(matches!(error, SamplingError::NotPositiveDefinite { group: 0, .. }), "{error:?}");
        let message = error.to_string();
        assert!(message.contains("not positive definite") && message.contains("[a, b, c]"), "{message}");
    }

    #[test]
    fn bad_specs_are_rejected_with_what_to_fix() {
        // Reference: the validation rules in the `Sampler::new` docs, one case each.
        let with = |distribution| spec_of(vec![parameter("x", distribution)], vec![], Sampling::MonteCarlo);
        let cases: Vec<(UncertaintySpec, &str)> = vec![
            (with(Distribution::Normal { mean: 0.0, sd: 0.0 }), "sd = 0 must be greater than 0"),
            (with(Distribution::Normal { mean: f64::NAN, sd: 1.0 }), "mean = NaN is not a finite number"),
            (with(Distribution::LogNormal { median: -1.0, sigma_ln: 0.1 }), "median = -1 must be greater than 0"),
            (with(Distribution::LogNormal { median: 1.0, sigma_ln: 0.0 }), "sigma_ln = 0 must be greater than 0"),
            (with(Distribution::Uniform { low: 2.0, high: 2.0 }), "low = 2 must be below high = 2"),
            (with(Distribution::Uniform { low: 0.0, high: f64::INFINITY }), "high = inf is not a finite number"),
            (
                with(Distribution::TruncatedNormal { mean: 0.0, sd: 1.0, low: 3.0, high: 1.0 }),
                "low = 3 must be below high = 1",
            ),
            (with(Distribution::TruncatedNormal { mean: 0.0, sd: 1.0, low: 50.0, high: 60.0 }), "holds no probability"),
        ];
        for (spec, expected) in cases {
            let message = Sampler::new(&spec, 0, 10).unwrap_err().to_string();
            assert!(message.starts_with("x: ") && message.contains(expected), "{message}");
        }

        let grouped = |groups| spec_of(three_marginals(), groups, Sampling::MonteCarlo);
        let identity2 = vec![1.0, 0.0, 0.0, 1.0];
        let group_cases: Vec<(Vec<CorrelationGroup>, &str)> = vec![
            (vec![CorrelationGroup { members: vec![], matrix: vec![] }], "has no members"),
            (
                vec![CorrelationGroup { members: vec![0, 3], matrix: identity2.clone() }],
                "member index 3 does not exist",
            ),
            (vec![CorrelationGroup { members: vec![1, 1], matrix: identity2.clone() }], "b is listed twice"),
            (
                vec![
                    CorrelationGroup { members: vec![0, 1], matrix: identity2.clone() },
                    CorrelationGroup { members: vec![1, 2], matrix: identity2.clone() },
                ],
                "b is in correlation groups 0 and 1",
            ),
            (
                vec![CorrelationGroup { members: vec![0, 1], matrix: vec![1.0, 0.0, 1.0] }],
                "has 3 entries, but 2 members need 2 × 2 = 4",
            ),
            (
                vec![CorrelationGroup { members: vec![0, 1], matrix: vec![1.0, 1.5, 1.5, 1.0] }],
                "correlation of a with b is 1.5",
            ),
            (vec![CorrelationGroup { members: vec![0, 1], matrix: vec![0.9, 0.0, 0.0, 1.0] }], "diagonal entry of a"),
            (
                vec![CorrelationGroup { members: vec![0, 1], matrix: vec![1.0, 0.5, 0.4, 1.0] }],
                "not symmetric: a with b is 0.5 but b with a is 0.4",
            ),
            (vec![CorrelationGroup { members: vec![0, 1], matrix: vec![1.0, 1.0, 1.0, 1.0] }], "not positive definite"),
        ];
        for (groups, expected) in group_cases {
            let message = Sampler::new(&grouped(groups), 0, 10).unwrap_err().to_string();
            assert!(message.contains(expected), "expected {expected:?} in {message}");
        }
    }

    #[test]
    fn check_spec_lists_every_problem() {
        let mut parameters = three_marginals();
        parameters[0].distribution = Distribution::Normal { mean: 0.0, sd: -1.0 };
        let group = CorrelationGroup { members: vec![1, 2], matrix: vec![1.0, 2.0, 2.0, 1.0] };
        let problems = check_spec(&spec_of(parameters, vec![group], Sampling::MonteCarlo));
        assert_eq!(problems.len(), 2, "{problems:?}");
        assert!(matches!(problems[0], SamplingError::NotPositive { name: "sd", .. }));
        assert!(matches!(problems[1], SamplingError::CorrelationOutOfRange { row: 0, col: 1, .. }));
        assert!(check_spec(&spec_of(three_marginals(), vec![], Sampling::MonteCarlo)).is_empty());
    }

    #[test]
    fn sample_count_is_capped_and_nonzero() {
        let spec = spec_of(three_marginals(), vec![], Sampling::MonteCarlo);
        for samples in [0, MAX_SAMPLES + 1] {
            let message = Sampler::new(&spec, 0, samples).unwrap_err().to_string();
            assert!(message.contains("at most 10000000 samples"), "{message}");
        }
        assert!(Sampler::new(&spec, 0, 1).is_ok());
    }

    #[test]
    fn same_seed_and_index_give_identical_draws() {
        // Reference: the reproducibility contract in the module docs.
        for sampling in [Sampling::MonteCarlo, Sampling::LatinHypercube] {
            let spec = spec_of(three_marginals(), vec![], sampling);
            let first = Sampler::new(&spec, 42, 100).unwrap();
            let second = Sampler::new(&spec, 42, 100).unwrap();
            let other_seed = Sampler::new(&spec, 43, 100).unwrap();
            let bits = |values: Vec<f64>| values.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
            assert_eq!(bits(first.draw(17)), bits(second.draw(17)));
            assert_ne!(bits(first.draw(17)), bits(first.draw(18)));
            assert_ne!(bits(first.draw(17)), bits(other_seed.draw(17)));
        }
    }

    #[test]
    fn draws_do_not_depend_on_order_or_threads() {
        // Reference: the reproducibility contract. Forward, reverse and two-thread interleaved
        // orders, each on its own sampler, must give bit-identical draws.
        let group = CorrelationGroup { members: vec![2, 0], matrix: vec![1.0, -0.5, -0.5, 1.0] };
        let spec = spec_of(three_marginals(), vec![group], Sampling::LatinHypercube);
        let samples = 300;
        let to_bits = |values: &[f64]| values.iter().map(|v| v.to_bits()).collect::<Vec<_>>();

        let forward_sampler = Sampler::new(&spec, 11, samples).unwrap();
        let forward: Vec<_> = (0..samples).map(|i| to_bits(&forward_sampler.draw(i))).collect();

        let reverse_sampler = Sampler::new(&spec, 11, samples).unwrap();
        let mut reverse: Vec<_> = (0..samples).rev().map(|i| to_bits(&reverse_sampler.draw(i))).collect();
        reverse.reverse();
        assert_eq!(forward, reverse);

        let threaded_sampler = Sampler::new(&spec, 11, samples).unwrap();
        let mut threaded = vec![Vec::new(); samples as usize];
        let (even, odd): (Vec<_>, Vec<_>) = std::thread::scope(|scope| {
            let shard = |parity: u64| {
                let sampler = &threaded_sampler;
                scope.spawn(move || {
                    (parity..samples).step_by(2).map(|i| (i, to_bits(&sampler.draw(i)))).collect::<Vec<_>>()
                })
            };
            let (even, odd) = (shard(0), shard(1));
            (even.join().unwrap(), odd.join().unwrap())
        });
        for (i, bits) in even.into_iter().chain(odd) {
            threaded[i as usize] = bits;
        }
        assert_eq!(forward, threaded);
    }

    #[test]
    fn draw_into_matches_draw() {
        let spec = spec_of(three_marginals(), vec![], Sampling::MonteCarlo);
        let sampler = Sampler::new(&spec, 3, 10).unwrap();
        let mut buffer = vec![0.0; sampler.parameter_count()];
        sampler.draw_into(4, &mut buffer);
        assert_eq!(buffer, sampler.draw(4));
    }

    #[test]
    #[should_panic(expected = "sample index 10 is out of range")]
    fn index_past_the_sample_count_panics() {
        let spec = spec_of(three_marginals(), vec![], Sampling::MonteCarlo);
        Sampler::new(&spec, 3, 10).unwrap().draw(10);
    }

    #[test]
    fn permutation_streams_lie_outside_the_sample_streams() {
        // Reference: the stream-number reservation documented on `sample_stream`.
        for parameter in [0, 1, 1000] {
            let stream = permutation_stream(5, parameter).get_stream();
            assert_eq!(stream, u64::MAX - parameter as u64);
            assert!(stream >= MAX_SAMPLES);
        }
        assert_eq!(sample_stream(5, 123).get_stream(), 123);
    }

    #[test]
    fn truncated_normal_far_in_the_upper_tail_stays_accurate() {
        // Reference: a derived closed form. For a normal cut to [μ + 8σ, ∞) the median t
        // satisfies Q(t) = Q(8)/2, so t = −Φ⁻¹(Q(8)/2) with Q(x) = Φ(−x) (statrs Φ). Inverting
        // through Φ directly would lose every digit: Φ(8) = 1 − 6e-16.
        let (mean, sd) = (2.0, 0.5);
        let spec = spec_of(
            vec![parameter("t", Distribution::TruncatedNormal { mean, sd, low: mean + 8.0 * sd, high: f64::INFINITY })],
            vec![],
            Sampling::LatinHypercube,
        );
        let sampler = Sampler::new(&spec, 8, 1001).unwrap();
        let mut values: Vec<f64> = draws(&sampler).into_iter().map(|draw| draw[0]).collect();
        values.sort_by(f64::total_cmp);
        assert!(values[0] >= mean + 8.0 * sd && values.iter().all(|v| v.is_finite()));
        let standard = Normal::standard();
        let expected_median = mean - sd * standard.inverse_cdf(standard.cdf(-8.0) / 2.0);
        // With 1001 Latin hypercube strata the middle order statistic lies in the middle
        // stratum, within 0.0005 in probability of the median, so within about 0.0005 / f in
        // value, f = φ(t) / (σ Q(8)) being the truncated density there; 1e-3 / f leaves room
        // for the density's slope across the stratum.
        let t = (expected_median - mean) / sd;
        let density = standard.pdf(t) / standard.cdf(-8.0) / sd;
        assert!((values[500] - expected_median).abs() < 1e-3 / density, "{} vs {expected_median}", values[500]);
    }

    #[test]
    fn sampler_is_shareable_across_threads() {
        fn assert_send_sync<T: Send + Sync>() {}
        assert_send_sync::<Sampler>();
    }
}
