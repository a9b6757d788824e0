//! Summary statistics of an ensemble: sample quantiles with their Monte Carlo standard
//! errors, exact binomial intervals for probabilities such as warranty odds, and Spearman
//! rank correlation for input sensitivities.
//!
//! Samples that never reached end of life within the horizon are represented as `+∞`.
//! Every function here accepts them: they sort above every finite value, a quantile that
//! reaches them is `+∞`, and Spearman ranks them as the largest, tied.
//!
//! # References
//!
//! * R. J. Hyndman, Y. Fan, "Sample quantiles in statistical packages", The American
//!   Statistician 50 (1996) 361–365 — definition 7 is the quantile used here.
//! * G. J. Hahn, W. Q. Meeker, *Statistical Intervals: A Guide for Practitioners*, Wiley
//!   (1991) — distribution-free confidence intervals for quantiles from order statistics,
//!   with the large-sample (normal approximation) choice of ranks used for the standard error.
//! * C. J. Clopper, E. S. Pearson, "The use of confidence or fiducial limits illustrated in
//!   the case of the binomial", Biometrika 26 (1934) 404–413.
//! * C. Spearman, "The proof and measurement of association between two things", The
//!   American Journal of Psychology 15 (1904) 72–101.

use std::cmp::Ordering;

use statrs::distribution::{Beta, Continuous, ContinuousCDF};

/// The sample quantile of probability `p` of `sorted` (ascending, `+∞` allowed), by linear
/// interpolation between order statistics — Hyndman & Fan's definition 7:
///
/// `h = (n − 1) p`, `Q(p) = x[⌊h⌋] + (h − ⌊h⌋) (x[⌊h⌋ + 1] − x[⌊h⌋])` (0-based `x`),
///
/// so `Q(0)` is the minimum and `Q(1)` the maximum. Returns NaN for an empty slice: there is
/// no quantile of nothing. Unsorted input gives meaningless results (checked in debug builds).
///
/// # Panics
///
/// If `p` is not in `[0, 1]`.
pub fn quantile(sorted: &[f64], p: f64) -> f64 {
    assert!((0.0..=1.0).contains(&p), "quantile probability {p} must lie in [0, 1]");
    debug_assert_sorted(sorted);
    if sorted.is_empty() {
        return f64::NAN;
    }
    interpolate_order_statistics(sorted, (sorted.len() - 1) as f64 * p)
}

/// The Monte Carlo standard error of [`quantile`]`(sorted, p)`, from order statistics alone
/// (no assumption about the distribution).
///
/// The number of samples below the true quantile is Binomial(n, p), with standard deviation
/// `s = √(n p (1 − p))`; order statistics `s` ranks either side of the estimate therefore
/// bracket the true quantile with about 68.3 % confidence — the distribution-free interval
/// of Hahn & Meeker (1991) at one normal standard deviation. Half its width is the standard
/// error:
///
/// `SE = (X(h + s) − X(h − s)) / 2`, with `h = (n − 1) p` and `X(·)` interpolated as in
/// [`quantile`], fractional ranks clamped to `[0, n − 1]`.
///
/// Centring on the estimate's own rank `h` rather than on `n p` moves the interval by less
/// than one rank, negligible against `s` once the standard error means anything. It does
/// not mean much when `n p (1 − p)` is small (a few samples beyond the quantile): the
/// clamped interval then underestimates the error, and at `p = 0` or `1` it is 0.
///
/// Returns `+∞` when the upper end reaches `+∞` samples but the estimate is finite (the
/// quantile is not resolved within the horizon), 0 when both ends are equal (including both
/// `+∞`), and NaN for an empty slice.
///
/// # Panics
///
/// If `p` is not in `[0, 1]`.
pub fn quantile_standard_error(sorted: &[f64], p: f64) -> f64 {
    assert!((0.0..=1.0).contains(&p), "quantile probability {p} must lie in [0, 1]");
    debug_assert_sorted(sorted);
    if sorted.is_empty() {
        return f64::NAN;
    }
    let n = sorted.len() as f64;
    let last = n - 1.0;
    let rank = last * p;
    let spread = (n * p * (1.0 - p)).sqrt();
    let lower = interpolate_order_statistics(sorted, (rank - spread).clamp(0.0, last));
    let upper = interpolate_order_statistics(sorted, (rank + spread).clamp(0.0, last));
    if upper == lower {
        0.0
    } else {
        0.5 * (upper - lower)
    }
}

/// Sortedness is the caller's promise; checking it costs O(n), so only debug builds do. NaN
/// pairs are not judged (`f64::total_cmp` puts negative NaN first, positive NaN last).
fn debug_assert_sorted(sorted: &[f64]) {
    debug_assert!(
        sorted.windows(2).all(|pair| pair[0].partial_cmp(&pair[1]) != Some(Ordering::Greater)),
        "the samples must be sorted ascending"
    );
}

/// The value at fractional 0-based rank `rank` in `sorted`, linear between neighbours.
/// Written so that `+∞` entries never produce NaN (∞ − ∞, or 0 · ∞).
fn interpolate_order_statistics(sorted: &[f64], rank: f64) -> f64 {
    let below = rank.floor() as usize;
    let fraction = rank - below as f64;
    let low = sorted[below];
    if fraction == 0.0 || below + 1 >= sorted.len() {
        return low;
    }
    let high = sorted[below + 1];
    if low == high {
        low
    } else {
        low + fraction * (high - low)
    }
}

/// The exact (Clopper–Pearson) two-sided interval for a binomial probability, given
/// `successes` out of `trials`, at `confidence` (e.g. 0.95).
///
/// With α = 1 − confidence, the bounds are the Beta quantiles
/// `lower = B⁻¹(α/2; k, n − k + 1)` and `upper = B⁻¹(1 − α/2; k + 1, n − k)` — equivalently
/// the p at which `P(X ≥ k) = α/2` and `P(X ≤ k) = α/2` for X ~ Binomial(n, p). At `k = 0`
/// the lower bound is 0 and at `k = n` the upper bound is 1, where the Beta is undefined.
/// The interval covers the true probability at least `confidence` of the time for every p.
/// With no trials nothing is known and `(0, 1)` is returned.
///
/// # Panics
///
/// If `successes > trials` or `confidence` is not strictly between 0 and 1.
pub fn clopper_pearson(successes: u64, trials: u64, confidence: f64) -> (f64, f64) {
    assert!(successes <= trials, "{successes} successes out of {trials} trials: successes cannot exceed trials");
    assert!(confidence > 0.0 && confidence < 1.0, "confidence {confidence} must lie strictly between 0 and 1");
    if trials == 0 {
        return (0.0, 1.0);
    }
    let tail = 0.5 * (1.0 - confidence);
    let (k, n) = (successes as f64, trials as f64);
    // Shapes are ≥ 1 on the branches taken, so statrs' Beta constructor cannot fail.
    let beta = |a: f64, b: f64| Beta::new(a, b).expect("Beta shapes are positive");
    let lower = if successes == 0 { 0.0 } else { beta_tail_quantile(&beta(k, n - k + 1.0), Tail::Lower, tail) };
    let upper = if successes == trials { 1.0 } else { beta_tail_quantile(&beta(k + 1.0, n - k), Tail::Upper, tail) };
    (lower, upper)
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Tail {
    Lower,
    Upper,
}

/// The x where the lower tail `F(x)` (or the upper tail `1 − F(x)`) of `beta` equals
/// `probability`: Newton's method on statrs' Beta CDF, kept inside a bisection bracket.
///
/// statrs' own `inverse_cdf` is not used. With statrs 0.19.1 it never returns for
/// Beta(30, 9 999 971) at 0.005 (30 events in 10⁷ samples, 99 %), and for very unequal
/// shapes it can miss: for 3 events in 10⁶ it puts the lower bound 0.16 % high (tail
/// probability 0.0251 instead of 0.025). Its CDF and survival function stay accurate there.
/// The upper tail is solved on the survival function, so a tail probability near 0 is never
/// taken as a difference from 1.
fn beta_tail_quantile(beta: &Beta, tail: Tail, probability: f64) -> f64 {
    // miss(x) increases with x and is zero at the answer.
    let miss = |x: f64| match tail {
        Tail::Lower => beta.cdf(x) - probability,
        Tail::Upper => probability - beta.sf(x),
    };
    let (mut below, mut above) = (0.0_f64, 1.0_f64);
    // Start at the mean, inside the bulk of the distribution where the density is not tiny.
    let mut x = beta.shape_a() / (beta.shape_a() + beta.shape_b());
    let mut last_step = f64::INFINITY;
    for _ in 0..MAX_ROOT_STEPS {
        let error = miss(x);
        if error == 0.0 {
            return x;
        }
        if error < 0.0 {
            below = x;
        } else {
            above = x;
        }
        // Newton where it stays in the bracket and converges (each step under half the last);
        // otherwise bisect, which halves the bracket whatever the function does.
        let newton = x - error / beta.pdf(x);
        let next = if newton > below && newton < above && (newton - x).abs() < 0.5 * last_step {
            newton
        } else {
            0.5 * (below + above)
        };
        last_step = (next - x).abs();
        x = next;
        if last_step <= 2.0 * f64::EPSILON * x || above - below <= 2.0 * f64::EPSILON * x {
            break;
        }
    }
    x
}

/// Bisection alone resolves any double in (0, 1) to full precision within about 1100 halvings
/// (down to the smallest subnormal); with Newton steps the tested cases take 10 to 75. The
/// cap only bounds a pathological case.
const MAX_ROOT_STEPS: usize = 1200;

/// Spearman's rank correlation of paired samples: the Pearson correlation of their ranks,
/// tied values sharing the average of their ranks.
///
/// Ranking orders values numerically, so `+∞` (a sample that never reached end of life)
/// ranks as the largest and all `+∞` tie with each other; `−∞` ranks as the smallest. NaN
/// ranks above `+∞`, all NaN tied; callers should drop failed samples rather than rely on it.
///
/// Returns 0 when either side is constant (all ranks tied) or there are fewer than two
/// pairs: no association can be measured, and the result is never NaN.
///
/// # Panics
///
/// If `x` and `y` differ in length.
pub fn spearman(x: &[f64], y: &[f64]) -> f64 {
    assert_eq!(x.len(), y.len(), "Spearman correlation needs paired samples of equal length");
    if x.len() < 2 {
        return 0.0;
    }
    let (rank_x, rank_y) = (average_ranks(x), average_ranks(y));
    // Both rank vectors have the same mean, (n + 1) / 2, whatever the ties.
    let mean = 0.5 * (x.len() as f64 + 1.0);
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (rx, ry) in rank_x.iter().zip(&rank_y) {
        let (dx, dy) = (rx - mean, ry - mean);
        sxy += dx * dy;
        sxx += dx * dx;
        syy += dy * dy;
    }
    if sxx == 0.0 || syy == 0.0 {
        return 0.0;
    }
    (sxy / (sxx * syy).sqrt()).clamp(-1.0, 1.0)
}

/// Numeric order with every NaN above everything else and equal to each other NaN.
fn rank_order(a: f64, b: f64) -> Ordering {
    a.partial_cmp(&b).unwrap_or_else(|| a.is_nan().cmp(&b.is_nan()))
}

/// 1-based ranks, ties given the average of the ranks they span.
fn average_ranks(values: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..values.len()).collect();
    order.sort_by(|&a, &b| rank_order(values[a], values[b]));
    let mut ranks = vec![0.0; values.len()];
    let mut start = 0;
    while start < order.len() {
        let mut end = start + 1;
        while end < order.len() && rank_order(values[order[start]], values[order[end]]) == Ordering::Equal {
            end += 1;
        }
        // Positions start..end hold ranks start + 1 ..= end; their mean is (start + 1 + end) / 2.
        let shared = 0.5 * (start + 1 + end) as f64;
        for &index in &order[start..end] {
            ranks[index] = shared;
        }
        start = end;
    }
    ranks
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ensemble::sampling::sample_stream;
    use rand::distr::Open01;
    use rand::RngExt;
    use statrs::distribution::Normal;

    fn uniform_draws(seed: u64, count: usize) -> Vec<f64> {
        let mut rng = sample_stream(seed, 0);
        let mut values: Vec<f64> = (0..count).map(|_| rng.sample(Open01)).collect();
        values.sort_by(f64::total_cmp);
        values
    }

    #[test]
    fn quantile_of_a_known_list() {
        // Reference: Hyndman & Fan (1996) definition 7, h = (n − 1) p, worked by hand for
        // [1, 2, 3, 4]: h = 0.75 → 1.75, h = 0.3 → 1.3, h = 1.5 → 2.5.
        let sorted = [1.0, 2.0, 3.0, 4.0];
        for (p, expected) in [(0.0, 1.0), (0.1, 1.3), (0.25, 1.75), (0.5, 2.5), (0.75, 3.25), (1.0, 4.0)] {
            assert!((quantile(&sorted, p) - expected).abs() < 1e-12, "p = {p}");
        }
        assert_eq!(quantile(&[7.0], 0.3), 7.0);
        assert!(quantile(&[], 0.5).is_nan());
    }

    #[test]
    fn quantile_handles_samples_beyond_the_horizon() {
        // Reference: definition 7 with +∞ order statistics: interpolating toward +∞ gives +∞,
        // landing exactly on a finite order statistic gives it, and nothing gives NaN.
        // Five samples, so h = 4 p is exact for these p.
        let sorted = [1.0, 2.0, f64::INFINITY, f64::INFINITY, f64::INFINITY];
        assert_eq!(quantile(&sorted, 0.0), 1.0);
        assert_eq!(quantile(&sorted, 0.125), 1.5);
        assert_eq!(quantile(&sorted, 0.25), 2.0);
        assert_eq!(quantile(&sorted, 0.375), f64::INFINITY);
        assert_eq!(quantile(&sorted, 1.0), f64::INFINITY);
        assert_eq!(quantile_standard_error(&sorted, 0.125), f64::INFINITY);
        assert_eq!(quantile_standard_error(&sorted, 0.9), 0.0);
    }

    #[test]
    #[should_panic(expected = "must lie in [0, 1]")]
    fn quantile_rejects_probabilities_outside_the_unit_interval() {
        quantile(&[1.0, 2.0], 1.5);
    }

    #[test]
    fn standard_error_of_evenly_spread_data_is_the_asymptotic_formula() {
        // Reference: the asymptotic standard error of a sample p-quantile is
        // √(p (1 − p) / n) / f(ξ_p) (asymptotic normality of sample quantiles); for U(0, 1),
        // f = 1. On the evenly spread points (i + ½)/n the interpolated order statistic is
        // linear in rank with slope 1/n, so SE = s / n = √(p (1 − p) / n) exactly, and
        // quadrupling n halves it.
        for p in [0.1, 0.5, 0.9] {
            let mut previous: Option<f64> = None;
            for n in [400_usize, 1600, 6400, 25600] {
                let sorted: Vec<f64> = (0..n).map(|i| (i as f64 + 0.5) / n as f64).collect();
                let se = quantile_standard_error(&sorted, p);
                let expected = (p * (1.0 - p) / n as f64).sqrt();
                assert!((se - expected).abs() < 1e-12, "p = {p}, n = {n}: {se} vs {expected}");
                if let Some(previous) = previous {
                    assert!((previous / se - 2.0).abs() < 1e-9);
                }
                previous = Some(se);
            }
        }
    }

    #[test]
    fn standard_error_of_random_uniform_data_shrinks_like_one_over_root_n() {
        // Reference: as above, √(p (1 − p) / n) for U(0, 1). On random data the estimate is a
        // sum of 2s uniform spacings, relative sd ≈ 1/√(2s) (7 % at n = 40000, 5 % at 160000);
        // 25 % is more than 3.5 of those.
        let p = 0.5;
        let mut estimates = Vec::new();
        for (seed, n) in [(1, 40_000), (2, 160_000)] {
            let sorted = uniform_draws(seed, n);
            let se = quantile_standard_error(&sorted, p);
            let expected = (p * (1.0 - p) / n as f64).sqrt();
            assert!((se / expected - 1.0).abs() < 0.25, "n = {n}: {se} vs {expected}");
            estimates.push(se);
        }
        let ratio = estimates[0] / estimates[1];
        assert!((ratio - 2.0).abs() < 0.6, "SE ratio for 4× the samples: {ratio}");
    }

    #[test]
    fn standard_error_of_the_normal_median() {
        // Reference: the sample median of N(0, 1) has asymptotic SE √(π / (2n)), from
        // 1 / (2 f(0) √n) with f(0) = 1/√(2π). Normal draws by statrs' inverse CDF.
        let n = 40_000;
        let normal = Normal::standard();
        let mut sorted: Vec<f64> = uniform_draws(3, n).into_iter().map(|u| normal.inverse_cdf(u)).collect();
        sorted.sort_by(f64::total_cmp);
        let expected = (std::f64::consts::PI / (2.0 * n as f64)).sqrt();
        let se = quantile_standard_error(&sorted, 0.5);
        assert!((se / expected - 1.0).abs() < 0.25, "{se} vs {expected}");
    }

    /// ln C(n, i) by summing logarithms, independent of any special-function library.
    fn ln_binomial_coefficient(n: u64, i: u64) -> f64 {
        let i = i.min(n - i);
        (0..i).map(|j| ((n - j) as f64).ln() - ((j + 1) as f64).ln()).sum()
    }

    /// Σ P(X = i) over `terms` for X ~ Binomial(n, p), term by term in log space.
    fn binomial_sum(terms: std::ops::RangeInclusive<u64>, n: u64, p: f64) -> f64 {
        terms.map(|i| (ln_binomial_coefficient(n, i) + i as f64 * p.ln() + (n - i) as f64 * (-p).ln_1p()).exp()).sum()
    }

    /// P(X ≤ k), summing whichever side of k has fewer terms.
    fn binomial_at_most(k: u64, n: u64, p: f64) -> f64 {
        if k <= n / 2 {
            binomial_sum(0..=k, n, p)
        } else {
            1.0 - binomial_sum(k + 1..=n, n, p)
        }
    }

    /// P(X ≥ k), k ≥ 1, summing whichever side of k has fewer terms.
    fn binomial_at_least(k: u64, n: u64, p: f64) -> f64 {
        if k >= n / 2 {
            binomial_sum(k..=n, n, p)
        } else {
            1.0 - binomial_sum(0..=k - 1, n, p)
        }
    }

    #[test]
    fn clopper_pearson_bounds_satisfy_their_defining_tail_equations() {
        // Reference: the definition (Clopper & Pearson 1934): P(X ≥ k | p_lower) = α/2 and
        // P(X ≤ k | p_upper) = α/2, checked with binomial sums that do not use the Beta
        // inverse at all. The last three have very unequal Beta shapes, where statrs' inverse
        // misses or hangs (see `beta_tail_quantile`). The tolerance, 1e-6 relative, is set by
        // statrs' Beta CDF that the bounds are solved on: about 2e-8 relative at 30 in 10⁷.
        let cases = [
            (1, 10, 0.95),
            (5, 10, 0.95),
            (3, 20, 0.9),
            (17, 57, 0.99),
            (150, 400, 0.95),
            (3, 1_000_000, 0.95),
            (999_990, 1_000_000, 0.9),
            (30, 10_000_000, 0.99),
        ];
        for (k, n, confidence) in cases {
            let tail = 0.5 * (1.0 - confidence);
            let (lower, upper) = clopper_pearson(k, n, confidence);
            let fraction = k as f64 / n as f64;
            assert!(0.0 < lower && lower < fraction && fraction < upper && upper < 1.0, "k={k} n={n}");
            let at_least_k_at_lower = binomial_at_least(k, n, lower);
            let at_most_k_at_upper = binomial_at_most(k, n, upper);
            assert!((at_least_k_at_lower / tail - 1.0).abs() < 1e-6, "k={k} n={n}: {at_least_k_at_lower}");
            assert!((at_most_k_at_upper / tail - 1.0).abs() < 1e-6, "k={k} n={n}: {at_most_k_at_upper}");
        }
    }

    #[test]
    fn clopper_pearson_agrees_with_statrs_beta_inverse_for_moderate_shapes() {
        // Reference: statrs' Beta inverse CDF as a general-purpose library, where it is
        // reliable (comparable shapes): lower = B⁻¹(α/2; k, n − k + 1), upper = B⁻¹(1 − α/2; k + 1, n − k).
        for (k, n, confidence) in [(1_u64, 10_u64, 0.95_f64), (5, 10, 0.95), (17, 57, 0.99), (150, 400, 0.95)] {
            let tail = 0.5 * (1.0 - confidence);
            let (k_f, n_f) = (k as f64, n as f64);
            let expected_lower = Beta::new(k_f, n_f - k_f + 1.0).unwrap().inverse_cdf(tail);
            let expected_upper = Beta::new(k_f + 1.0, n_f - k_f).unwrap().inverse_cdf(1.0 - tail);
            let (lower, upper) = clopper_pearson(k, n, confidence);
            assert!((lower - expected_lower).abs() < 1e-9 && (upper - expected_upper).abs() < 1e-9, "{k}/{n}");
        }
    }

    #[test]
    fn clopper_pearson_ends_have_closed_forms() {
        // Reference: derived from the definition (Clopper & Pearson 1934). At k = 0,
        // P(X ≤ 0 | p) = (1 − p)^n = α/2 gives upper = 1 − (α/2)^{1/n}; at k = n,
        // P(X ≥ n | p) = p^n = α/2 gives lower = (α/2)^{1/n}.
        for (n, confidence) in [(1_u64, 0.95_f64), (10, 0.95), (30, 0.9), (1000, 0.99)] {
            let tail = 0.5 * (1.0 - confidence);
            let root = tail.powf(1.0 / n as f64);
            let (lower, upper) = clopper_pearson(0, n, confidence);
            assert_eq!(lower, 0.0);
            assert!((upper - (1.0 - root)).abs() < 1e-10, "k = 0, n = {n}: {upper}");
            let (lower, upper) = clopper_pearson(n, n, confidence);
            assert!((lower - root).abs() < 1e-10, "k = n = {n}: {lower}");
            assert_eq!(upper, 1.0);
        }
        assert_eq!(clopper_pearson(0, 0, 0.95), (0.0, 1.0));
    }

    #[test]
    fn clopper_pearson_matches_handbook_values_loosely() {
        // From memory, not from a table in hand: the exact 95 % intervals commonly quoted for
        // 1 of 10 (0.0025, 0.4450) and 5 of 10 (0.1871, 0.8129). Loose (±0.002) checks only;
        // the tail-equation test above is the real reference.
        for (k, n, expected) in [(1, 10, (0.0025, 0.4450)), (5, 10, (0.1871, 0.8129))] {
            let (lower, upper) = clopper_pearson(k, n, 0.95);
            assert!((lower - expected.0).abs() < 0.002 && (upper - expected.1).abs() < 0.002, "{k}/{n}");
        }
    }

    #[test]
    fn spearman_of_monotone_and_reversed_data() {
        // Reference: the definition — identical rankings correlate +1, reversed −1 — for a
        // nonlinear monotone map, with ties and with +∞ entries tied at the top.
        let x = [0.3, 1.0, 2.5, 4.0, 9.0, 11.0];
        let y: Vec<f64> = x.iter().map(|v: &f64| v.powi(3) - 2.0).collect();
        let reversed: Vec<f64> = x.iter().map(|v| -v.exp()).collect();
        assert!((spearman(&x, &y) - 1.0).abs() < 1e-12);
        assert!((spearman(&x, &reversed) + 1.0).abs() < 1e-12);

        let lives = [3.0, 5.0, 5.0, f64::INFINITY, f64::INFINITY, 1.0];
        let stress = [2.0, 4.0, 4.0, 9.0, 9.0, 0.5];
        assert!((spearman(&lives, &stress) - 1.0).abs() < 1e-12);
    }

    #[test]
    fn spearman_without_ties_matches_the_rank_difference_formula() {
        // Reference: for untied data ρ = 1 − 6 Σ d² / (n (n² − 1)) (Spearman 1904), d the rank
        // differences, computed here on the permutation ranks directly.
        let rank_x = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0];
        let rank_y = [3.0, 1.0, 4.0, 2.0, 8.0, 5.0, 7.0, 6.0];
        let n = rank_x.len() as f64;
        let sum_d2: f64 = rank_x.iter().zip(&rank_y).map(|(a, b)| (a - b) * (a - b)).sum();
        let expected = 1.0 - 6.0 * sum_d2 / (n * (n * n - 1.0));
        // Monotone transforms of the ranks must not change the result.
        let x: Vec<f64> = rank_x.iter().map(|r: &f64| r.ln()).collect();
        let y: Vec<f64> = rank_y.iter().map(|r| 10.0 * r + 0.5 * r * r).collect();
        assert!((spearman(&x, &y) - expected).abs() < 1e-12);
    }

    #[test]
    fn spearman_ties_share_average_ranks() {
        // Reference: average ranks by hand. [5, 1, 5, 3] ranks as [3.5, 1, 3.5, 2], so its
        // correlation with itself is 1 and with the explicit ranks is 1 too.
        assert_eq!(average_ranks(&[5.0, 1.0, 5.0, 3.0]), vec![3.5, 1.0, 3.5, 2.0]);
        assert_eq!(average_ranks(&[f64::INFINITY, 2.0, f64::INFINITY]), vec![2.5, 1.0, 2.5]);
        assert_eq!(average_ranks(&[f64::NAN, f64::INFINITY, f64::NEG_INFINITY]), vec![3.0, 2.0, 1.0]);
    }

    #[test]
    fn spearman_is_zero_without_variation() {
        assert_eq!(spearman(&[1.0, 2.0, 3.0], &[4.0, 4.0, 4.0]), 0.0);
        assert_eq!(spearman(&[f64::INFINITY; 3], &[1.0, 2.0, 3.0]), 0.0);
        assert_eq!(spearman(&[1.0], &[2.0]), 0.0);
        assert_eq!(spearman(&[], &[]), 0.0);
    }
}
