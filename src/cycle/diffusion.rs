//! Fick diffusion in a spherical particle: finite volumes in radius, exact exponential
//! integration in time.
//!
//! The particle is cut into equal-thickness shells. Finite volumes give a linear system
//! dc/dt = (D/R²)·L·c + b·u, where u is the boundary input (the molar flux into the particle,
//! or for validation a fixed surface concentration). L is symmetric in the shell-volume inner
//! product, so it is diagonalised once per particle; in its eigenmodes each coordinate obeys a
//! scalar linear ODE that is integrated exactly over a step of constant input. The diffusion
//! step therefore carries no time-step error at all, steps can be as long as the protocol
//! allows, and D may change from step to step (temperature) without refactoring: only the
//! eigenvalues scale with D.
//!
//! References: J. Crank, *The Mathematics of Diffusion*, 2nd ed., Oxford (1975), ch. 6 (the
//! sphere solutions used in the tests); S. V. Patankar, *Numerical Heat Transfer and Fluid
//! Flow* (1980) (finite volumes).

use nalgebra::{DMatrix, SymmetricEigen};

/// How the particle surface is driven.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Boundary {
    /// u is the molar flux into the particle through its surface, mol/(m² s).
    Flux,
    /// u is the concentration held at the surface, mol/m³ (Crank's first problem).
    FixedConcentration,
}

/// The eigenmodes of one particle's diffusion operator (depends on shell count and boundary,
/// not on D or R, which enter as scalars).
#[derive(Debug, Clone, PartialEq)]
pub struct SphereModes {
    pub boundary: Boundary,
    pub shells: usize,
    /// Dimensionless decay rates λ_k ≤ 0 (rate = D λ_k / R²), slowest first, so the modes
    /// that a step relaxes completely are the tail of the list.
    decay: Vec<f64>,
    /// Modal input weights per unit input, with the boundary's own scaling removed
    /// (see [`SphereModes::input_scale`]).
    input: Vec<f64>,
    /// input_k / λ_k (0 for the conserved mode, λ = 0): the gain of a step is this times
    /// (e^x − 1) and scales that temperature does not change, so no division per step.
    input_over_decay: Vec<f64>,
    /// input_k / λ_k² (0 for the conserved mode): likewise for the gain of an input that ramps
    /// within the step, which carries (e^x − 1 − x).
    input_over_decay_squared: Vec<f64>,
    /// Rows that map modal coordinates to the last two shells, the first two shells and the
    /// volume mean.
    outer: Vec<f64>,
    second_outer: Vec<f64>,
    inner: Vec<f64>,
    second_inner: Vec<f64>,
    mean: Vec<f64>,
    /// r²-weighted averages of s and s² (s = ρ − 1) over the outer and second-outer shells.
    outer_moments: [f64; 2],
    second_outer_moments: [f64; 2],
    /// Shell concentrations from modal coordinates: c_i = Σ_k to_shell[(i,k)] q_k.
    to_shell: DMatrix<f64>,
    /// Dimensionless shell volumes (ρ₊³ − ρ₋³)/3.
    volume: Vec<f64>,
    /// Hoop stress per unit stress coefficient at the centre and at each interior shell face
    /// (ρ = 0, 1/n, …, (n−1)/n), as rows in modal coordinates (row-major, n × n): linear in
    /// the concentration, so a stored cycle of modal states gives the whole stress history.
    hoop: Vec<f64>,
}

impl SphereModes {
    pub fn new(shells: usize, boundary: Boundary) -> SphereModes {
        let n = shells;
        let h = 1.0 / n as f64;
        let volume: Vec<f64> = (0..n).map(|i| (((i + 1) as f64 * h).powi(3) - (i as f64 * h).powi(3)) / 3.0).collect();
        // Conductance across the face between shell i and i+1: ρ_f² / Δρ.
        let mut laplacian = DMatrix::<f64>::zeros(n, n);
        for i in 0..n - 1 {
            let g = ((i + 1) as f64 * h).powi(2) / h;
            laplacian[(i, i)] -= g;
            laplacian[(i + 1, i + 1)] -= g;
            laplacian[(i, i + 1)] += g;
            laplacian[(i + 1, i)] += g;
        }
        // Input vector b (per unit u) in shell space, before the D/R² or 1/R scaling.
        let mut input_shell = vec![0.0; n];
        match boundary {
            // Flux J through the unit sphere surface (area 1 in ρ units) into the last shell.
            Boundary::Flux => input_shell[n - 1] = 1.0 / volume[n - 1],
            // Surface value coupled to the last shell's centre over half a shell.
            Boundary::FixedConcentration => {
                let g = 1.0 / (0.5 * h);
                laplacian[(n - 1, n - 1)] -= g;
                input_shell[n - 1] = g / volume[n - 1];
            }
        }
        // Symmetrise: S = M^{-1/2} K M^{-1/2}, with M the diagonal of shell volumes.
        let root: Vec<f64> = volume.iter().map(|v| v.sqrt()).collect();
        let symmetric = DMatrix::from_fn(n, n, |i, j| laplacian[(i, j)] / (root[i] * root[j]));
        let eigen = SymmetricEigen::new(symmetric);
        // Slowest modes first (λ ≤ 0 descending): a step that relaxes one mode fully relaxes
        // every later one, so `step_factors` stops computing exponentials there.
        let mut order: Vec<usize> = (0..n).collect();
        order.sort_by(|&a, &b| eigen.eigenvalues[b].total_cmp(&eigen.eigenvalues[a]));
        let q = DMatrix::from_fn(n, n, |i, k| eigen.eigenvectors[(i, order[k])]);
        let eigenvalues: Vec<f64> = order.iter().map(|&k| eigen.eigenvalues[k]).collect();
        // c = M^{-1/2} Q q; input in modal space g = Qᵀ M^{1/2} b.
        let to_shell = DMatrix::from_fn(n, n, |i, k| q[(i, k)] / root[i]);
        let input: Vec<f64> = (0..n).map(|k| (0..n).map(|i| q[(i, k)] * root[i] * input_shell[i]).sum()).collect();
        let total_volume: f64 = volume.iter().sum();
        let mean = (0..n).map(|k| (0..n).map(|i| volume[i] * to_shell[(i, k)]).sum::<f64>() / total_volume).collect();
        let row = |i: usize| (0..n).map(|k| to_shell[(i, k)]).collect::<Vec<f64>>();
        let decay: Vec<f64> = eigenvalues.iter().map(|&l| l.min(0.0)).collect();
        let input_over_decay = decay.iter().zip(&input).map(|(&l, &g)| if l < 0.0 { g / l } else { 0.0 }).collect();
        let input_over_decay_squared =
            decay.iter().zip(&input).map(|(&l, &g)| if l < 0.0 { g / (l * l) } else { 0.0 }).collect();
        let moments = |i: usize| shell_moments(i as f64 * h, (i + 1) as f64 * h);
        let hoop = hoop_rows(&to_shell, &volume);
        SphereModes {
            hoop,
            outer_moments: moments(n - 1),
            second_outer_moments: moments(n.saturating_sub(2)),
            boundary,
            shells: n,
            decay,
            input,
            input_over_decay,
            input_over_decay_squared,
            outer: row(n - 1),
            second_outer: row(n.saturating_sub(2)),
            inner: row(0),
            second_inner: row(1.min(n - 1)),
            mean,
            to_shell,
            volume,
        }
    }

    /// Scale of the input term for a particle of radius R and diffusivity D: 1/R for a flux,
    /// D/R² for a fixed surface concentration.
    fn input_scale(&self, radius_m: f64, diffusivity_m2_s: f64) -> f64 {
        match self.boundary {
            Boundary::Flux => 1.0 / radius_m,
            Boundary::FixedConcentration => diffusivity_m2_s / (radius_m * radius_m),
        }
    }

    /// Modal coordinates of a uniform concentration.
    pub fn uniform(&self, concentration: f64) -> Vec<f64> {
        let shells = vec![concentration; self.shells];
        self.from_shells(&shells)
    }

    /// Modal coordinates of given shell concentrations.
    pub fn from_shells(&self, shells: &[f64]) -> Vec<f64> {
        // Inverse of c = M^{-1/2} Q q is q = Qᵀ M^{1/2} c = to_shellᵀ M c.
        (0..self.shells)
            .map(|k| (0..self.shells).map(|i| self.to_shell[(i, k)] * self.volume[i] * shells[i]).sum())
            .collect()
    }

    /// Shell concentrations (centre outwards) of modal coordinates.
    pub fn shells(&self, modes: &[f64]) -> Vec<f64> {
        (0..self.shells).map(|i| (0..self.shells).map(|k| self.to_shell[(i, k)] * modes[k]).sum()).collect()
    }

    /// Dimensionless shell volumes (ρ₊³ − ρ₋³)/3, centre outwards.
    pub fn shell_volumes(&self) -> &[f64] {
        &self.volume
    }

    /// Fills `step` with the response of every mode over `dt` for the given particle, to an
    /// input that moves linearly from u₀ at the step's start to u₁ at its end (a constant input
    /// is u₀ = u₁): q_k(dt) = decay_k · q_k(0) + gain_k · u₀ + ramp_gain_k · (u₁ − u₀).
    ///
    /// With μ the mode's rate and x = μ dt, the exact integrals over the step are
    /// gain = g·dt·(e^x − 1)/x and ramp_gain = g·dt·(e^x − 1 − x)/x² (the exponential-integrator
    /// functions φ₁ and φ₂: M. Hochbruck and A. Ostermann, "Exponential integrators", Acta
    /// Numerica 19 (2010) 209–286, §2).
    pub fn step_factors(&self, radius_m: f64, diffusivity_m2_s: f64, dt_s: f64, step: &mut ModeStep) {
        let n = self.shells;
        let rate_scale = diffusivity_m2_s / (radius_m * radius_m);
        let input_scale = self.input_scale(radius_m, diffusivity_m2_s);
        // gain = g·input_scale·(e^x − 1)/(λ·rate_scale) = (g/λ)·(input_scale/rate_scale)·(e^x − 1).
        let gain_scale = input_scale / rate_scale;
        // ramp_gain = g·input_scale·dt·(e^x − 1 − x)/x² = (g/λ²)·(gain_scale/(rate_scale·dt))·(e^x − 1 − x).
        let exponent_scale = rate_scale * dt_s;
        let ramp_scale = gain_scale / exponent_scale;
        step.decay.resize(n, 0.0);
        step.gain.resize(n, 0.0);
        step.ramp_gain.resize(n, 0.0);
        // Modes are slowest first: from the first one the step relaxes, all are relaxed.
        let live = self.decay.iter().position(|&l| l * exponent_scale < RELAXED_EXPONENT).unwrap_or(n);
        step.live = live;
        // Under a flux the slowest mode is the particle's content (λ = 0 up to round-off).
        step.conserved = (self.boundary == Boundary::Flux).then_some(0);
        for (d, &lambda) in step.decay[..live].iter_mut().zip(&self.decay) {
            *d = crate::material::fast_exp::exp_in_range(lambda * exponent_scale);
        }
        for k in 0..live {
            let x = self.decay[k] * exponent_scale;
            if self.decay[k] == 0.0 {
                step.gain[k] = self.input[k] * input_scale * dt_s;
                step.ramp_gain[k] = 0.5 * step.gain[k];
            } else if x > -1e-3 {
                // Series where the subtractions would cancel (truncation x⁶/720 and x⁵/5040).
                let e_minus_one = x * (1.0 + x * (1.0 / 2.0 + x * (1.0 / 6.0 + x * (1.0 / 24.0 + x / 120.0))));
                let phi2 = 1.0 / 2.0 + x * (1.0 / 6.0 + x * (1.0 / 24.0 + x * (1.0 / 120.0 + x / 720.0)));
                step.gain[k] = self.input_over_decay[k] * gain_scale * e_minus_one;
                step.ramp_gain[k] = self.input[k] * input_scale * dt_s * phi2;
            } else {
                step.gain[k] = self.input_over_decay[k] * gain_scale * (step.decay[k] - 1.0);
                step.ramp_gain[k] = self.input_over_decay_squared[k] * ramp_scale * (step.decay[k] - 1.0 - x);
            }
        }
        for k in live..n {
            // A relaxed mode sits at its steady value for the input, lagging a ramp by its own
            // time constant: −g·input_scale/μ per unit input, and (−1 − x)/x² of that gain.
            let x = self.decay[k] * exponent_scale;
            step.decay[k] = 0.0;
            step.gain[k] = -self.input_over_decay[k] * gain_scale;
            step.ramp_gain[k] = self.input_over_decay_squared[k] * ramp_scale * (-1.0 - x);
        }
    }

    /// Each mode's decay rate λ_k followed by its input weight g_k: the terms of
    /// dq_k/dt = (D/R²)·λ_k·q_k + s·g_k·u, s the input scale ([`SphereModes::rate_scales`]).
    pub fn rate_terms(&self) -> Vec<f64> {
        self.decay.iter().chain(&self.input).copied().collect()
    }

    /// The scales of the two terms above for a particle at an instant: (D/R², s·u).
    pub fn rate_scales(&self, radius_m: f64, diffusivity_m2_s: f64, input: f64) -> [f64; 2] {
        [diffusivity_m2_s / (radius_m * radius_m), self.input_scale(radius_m, diffusivity_m2_s) * input]
    }

    /// Rate of change of a linear functional `row` of the modal state, with `terms` from
    /// [`SphereModes::rate_terms`] and `scales` from [`SphereModes::rate_scales`].
    pub fn row_rate(row: &[f64], terms: &[f64], modes: &[f64], [rate_scale, input]: [f64; 2]) -> f64 {
        let (decay, gain) = terms.split_at(modes.len());
        let (mut relaxing, mut driven) = (0.0, 0.0);
        for (((r, l), g), q) in row.iter().zip(decay).zip(gain).zip(modes) {
            relaxing += r * l * q;
            driven += r * g;
        }
        rate_scale * relaxing + input * driven
    }

    fn dot(row: &[f64], modes: &[f64]) -> f64 {
        row.iter().zip(modes).map(|(a, b)| a * b).sum()
    }

    /// Several rows' products with one modal state, summed side by side (each in mode order, so
    /// equal to the bit to one product at a time, without one long chain of additions per row).
    pub fn dots<const N: usize>(rows: [&[f64]; N], modes: &[f64]) -> [f64; N] {
        let mut sums = [0.0; N];
        // Rows cut to the state's length up front, so the loop indexes without bounds checks.
        let rows = rows.map(|row| &row[..modes.len()]);
        for (k, q) in modes.iter().enumerate() {
            for (sum, row) in sums.iter_mut().zip(rows) {
                *sum += row[k] * q;
            }
        }
        sums
    }

    /// Volume-mean concentration.
    pub fn mean(&self, modes: &[f64]) -> f64 {
        Self::dot(&self.mean, modes)
    }

    /// Surface concentration, from a quadratic through the two outer shells that meets the
    /// boundary condition (the given inward flux, or the held value).
    pub fn surface(&self, modes: &[f64], input: f64, radius_m: f64, diffusivity_m2_s: f64) -> f64 {
        let outer = Self::dot(&self.outer, modes);
        let second = Self::dot(&self.second_outer, modes);
        self.surface_from_outer(outer, second, input, radius_m, diffusivity_m2_s)
    }

    /// [`SphereModes::surface`] from the outer and second-outer shell values.
    pub fn surface_from_outer(&self, outer: f64, second: f64, input: f64, radius_m: f64, diffusivity_m2_s: f64) -> f64 {
        match self.boundary {
            Boundary::FixedConcentration => input,
            Boundary::Flux => {
                // Quadratic c = a + b·s + k·s² in s = ρ − 1, with b fixed by the flux and a, k
                // matched to the r²-weighted averages of the two outer shells.
                let b = input / diffusivity_m2_s * radius_m;
                let [m1, m2] = self.outer_moments;
                if self.shells < 2 {
                    return outer - b * m1;
                }
                let [n1, n2] = self.second_outer_moments;
                let k = (outer - second - b * (m1 - n1)) / (m2 - n2);
                outer - b * m1 - k * m2
            }
        }
    }

    /// Centre concentration, from c = a + k r² through the two inner shells (zero gradient).
    pub fn centre(&self, modes: &[f64]) -> f64 {
        let c0 = Self::dot(&self.inner, modes);
        if self.shells < 2 {
            return c0;
        }
        centre_of(c0, Self::dot(&self.second_inner, modes), self.shells)
    }

    /// Rows giving the outer and second-outer shell values, so callers can evaluate the
    /// surface of a trial state (with [`ModeStep::project`]) without building it.
    pub fn outer_rows(&self) -> (&[f64], &[f64]) {
        (&self.outer, &self.second_outer)
    }

    pub fn mean_row(&self) -> &[f64] {
        &self.mean
    }

    /// Hoop-stress rows (see the field): row j gives σ_t at ρ = j/n per unit coefficient.
    pub fn hoop_rows(&self) -> &[f64] {
        &self.hoop
    }
}

/// Hoop stress at the centre and the interior faces, per unit coefficient, for each mode's
/// shell pattern (linearity: the stress of a modal state is the modal sum of these).
fn hoop_rows(to_shell: &DMatrix<f64>, volume: &[f64]) -> Vec<f64> {
    let n = volume.len();
    let mut rows = vec![0.0; n * n];
    for k in 0..n {
        let shells: Vec<f64> = (0..n).map(|i| to_shell[(i, k)]).collect();
        // The surface value only enters the last face, which is not among these rows.
        let faces = super::stress::face_stresses(1.0, &shells, volume, shells[n - 1]);
        let mean = shells.iter().zip(volume).map(|(c, v)| c * v).sum::<f64>() / volume.iter().sum::<f64>();
        let centre = if n < 2 { shells[0] } else { centre_of(shells[0], shells[1], n) };
        rows[k] = super::stress::centre_stress(1.0, mean, centre);
        for j in 1..n {
            rows[j * n + k] = faces[j - 1].1;
        }
    }
    rows
}

/// Centre value c = a + k ρ² matched to the r²-weighted averages of the two inner shells
/// (⟨ρ²⟩ = 3/5 h² and 93/35 h²), zero gradient at the centre.
fn centre_of(c0: f64, c1: f64, shells: usize) -> f64 {
    let h2 = (1.0 / shells as f64).powi(2);
    let k = (c1 - c0) / ((93.0 / 35.0 - 0.6) * h2);
    c0 - k * 0.6 * h2
}

/// r²-weighted mean of s and s², s = ρ − 1, over the shell ρ ∈ [lo, hi].
fn shell_moments(lo: f64, hi: f64) -> [f64; 2] {
    let weight = |r: f64| r.powi(3) / 3.0;
    let first = |r: f64| r.powi(4) / 4.0 - r.powi(3) / 3.0;
    let second = |r: f64| r.powi(5) / 5.0 - r.powi(4) / 2.0 + r.powi(3) / 3.0;
    let w = weight(hi) - weight(lo);
    [(first(hi) - first(lo)) / w, (second(hi) - second(lo)) / w]
}

/// Below this exponent λ·D/R²·dt a mode counts as relaxed within the step: e^−37 ≈ 9e-17, under
/// round-off of the modal amplitudes (stoichiometry, of order one).
const RELAXED_EXPONENT: f64 = -37.0;

/// Per-step modal factors, reused between steps to avoid allocation.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ModeStep {
    pub decay: Vec<f64>,
    pub gain: Vec<f64>,
    /// Response to an input that rises by one unit over the step from nil (see
    /// [`SphereModes::step_factors`]).
    pub ramp_gain: Vec<f64>,
    /// Modes before this index keep part of their start value; the rest relax completely
    /// (decay 0), so free responses need only the first `live`.
    pub live: usize,
    /// The mode that holds the particle's content (λ = 0), under a flux.
    pub conserved: Option<usize>,
}

impl ModeStep {
    /// Advances modal coordinates in place with a constant input `u`.
    pub fn apply(&self, modes: &mut [f64], u: f64) {
        for ((q, &d), &g) in modes.iter_mut().zip(&self.decay).zip(&self.gain) {
            *q = d * *q + g * u;
        }
    }

    /// Advances modal coordinates in place with an input moving linearly from `start` to `end`.
    pub fn apply_ramp(&self, modes: &mut [f64], start: f64, end: f64) {
        let rise = end - start;
        for (((q, &d), &g), &r) in modes.iter_mut().zip(&self.decay).zip(&self.gain).zip(&self.ramp_gain) {
            *q = d * *q + g * start + r * rise;
        }
    }

    /// [`ModeStep::apply_ramp`] for a step whose diffusivity drifts: the input at its start and
    /// end weighted by D̄/D there (`weights`), the step's factors at D̄. In the time τ = ∫D dt
    /// each mode obeys dq/dτ = (λ/R²)·q + g·u/D: a step of constant D̄ driven by u·D̄/D(t),
    /// carried as a ramp between its ends. The conserved mode (λ = 0) takes the input
    /// unweighted, so the particle's content changes by exactly ∫u dt.
    pub fn apply_drifting_ramp(&self, modes: &mut [f64], [start, end]: [f64; 2], [a, b]: [f64; 2]) {
        self.apply_ramp(modes, a * start, b * end);
        if a == 1.0 && b == 1.0 {
            return;
        }
        if let Some(k) = self.conserved {
            modes[k] += self.gain[k] * (1.0 - a) * start + self.ramp_gain[k] * ((1.0 - b) * end - (1.0 - a) * start);
        }
    }

    /// The conserved mode's share of [`ModeStep::input_and_ramp_responses`] (nil without one).
    pub fn conserved_responses<const N: usize>(&self, rows: [&[f64]; N]) -> ([f64; N], [f64; N]) {
        match self.conserved {
            Some(k) => (rows.map(|row| row[k] * self.gain[k]), rows.map(|row| row[k] * self.ramp_gain[k])),
            None => ([0.0; N], [0.0; N]),
        }
    }

    /// Value of a linear functional `row` after the step: free response plus `u` times the
    /// response to unit input. Returns (free, per unit input).
    pub fn project(&self, row: &[f64], modes: &[f64]) -> (f64, f64) {
        let [free] = self.free_responses([row], modes);
        let unit = row.iter().zip(&self.gain).map(|(r, g)| r * g).sum();
        (free, unit)
    }

    /// Free responses (no input) of several linear functionals after the step, in one pass
    /// over the modes that do not relax completely.
    pub fn free_responses<const N: usize>(&self, rows: [&[f64]; N], modes: &[f64]) -> [f64; N] {
        let mut free = [0.0; N];
        let live = self.live;
        // Cut to the live modes up front, so the loop indexes without bounds checks.
        let rows = rows.map(|row| &row[..live]);
        for (k, (decay, q)) in self.decay[..live].iter().zip(&modes[..live]).enumerate() {
            let dq = decay * q;
            for (f, row) in free.iter_mut().zip(rows) {
                *f += row[k] * dq;
            }
        }
        free
    }

    /// Responses of several linear functionals to a unit input held over the step and to an
    /// input rising from nil to one over it.
    pub fn input_and_ramp_responses<const N: usize>(&self, rows: [&[f64]; N]) -> ([f64; N], [f64; N]) {
        (SphereModes::dots(rows, &self.gain), SphereModes::dots(rows, &self.ramp_gain))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn uniform_state_round_trips_and_stays_put_without_input() {
        let modes = SphereModes::new(12, Boundary::Flux);
        let mut q = modes.uniform(1234.5);
        let mut step = ModeStep::default();
        modes.step_factors(5e-6, 1e-14, 1000.0, &mut step);
        step.apply(&mut q, 0.0);
        for c in modes.shells(&q) {
            assert!((c - 1234.5).abs() < 1e-8);
        }
        assert!((modes.surface(&q, 0.0, 5e-6, 1e-14) - 1234.5).abs() < 1e-8);
        assert!((modes.centre(&q) - 1234.5).abs() < 1e-8);
    }

    #[test]
    fn step_factors_match_the_direct_formulas() {
        // decay e^{μ dt}, gain g·s·(e^{μ dt} − 1)/μ and ramp_gain g·s·dt·φ₂(μ dt) with
        // φ₂(x) = (eˣ − 1 − x)/x² (Hochbruck and Ostermann 2010, §2) per mode, relaxed modes
        // included.
        let modes = SphereModes::new(16, Boundary::Flux);
        let (r, d) = (5e-6, 5e-14);
        let mut step = ModeStep::default();
        for dt in [1e-6, 0.3, 30.0, 900.0, 1e5] {
            modes.step_factors(r, d, dt, &mut step);
            for k in 0..16 {
                let mu = modes.decay[k] * d / (r * r);
                let decay = (mu * dt).exp();
                let gain = modes.input[k] / r * if mu == 0.0 { dt } else { (mu * dt).exp_m1() / mu };
                assert!((step.decay[k] - decay).abs() <= 1e-15, "dt {dt} mode {k}");
                assert!((step.gain[k] - gain).abs() <= 1e-12 * gain.abs().max(1e-300), "dt {dt} mode {k}");
                let x = mu * dt;
                // Near nil by its series (the conserved mode's λ is round-off).
                let phi2 = if x.abs() < 1e-3 { 0.5 + x / 6.0 + x * x / 24.0 } else { (x.exp() - 1.0 - x) / (x * x) };
                let ramp = modes.input[k] / r * dt * phi2;
                let tolerance = 1e-9 * ramp.abs() + 1e-300;
                assert!(
                    (step.ramp_gain[k] - ramp).abs() <= tolerance,
                    "dt {dt} mode {k}: {} vs {ramp}",
                    step.ramp_gain[k]
                );
            }
        }
    }

    #[test]
    fn a_ramped_step_matches_fine_constant_steps() {
        // A ramped step against 4000 constant substeps at each substep's middle value (second
        // order: error ~ (dt/4000)²); the ramp factors themselves are checked against their
        // formulas above.
        let modes = SphereModes::new(16, Boundary::Flux);
        let (r, d) = (5e-6, 5e-14);
        let mut step = ModeStep::default();
        for dt in [1e-6, 0.3, 30.0, 900.0, 1e5] {
            modes.step_factors(r, d, dt, &mut step);
            let (u0, u1) = (2e-5, -1e-5);
            let mut ramped = modes.uniform(0.4);
            step.apply_ramp(&mut ramped, u0, u1);
            let n = 4000;
            let mut fine = modes.uniform(0.4);
            let mut sub = ModeStep::default();
            modes.step_factors(r, d, dt / n as f64, &mut sub);
            for i in 0..n {
                sub.apply(&mut fine, u0 + (u1 - u0) * (i as f64 + 0.5) / n as f64);
            }
            let (a, b) = (modes.shells(&ramped), modes.shells(&fine));
            let scale = 3.0 * u0.abs() * dt / r + 1e-12;
            for (x, y) in a.iter().zip(&b) {
                assert!((x - y).abs() <= 1e-6 * scale, "dt {dt}: {x} vs {y}");
            }
            // A flat ramp is the constant input.
            let (mut flat, mut constant) = (modes.uniform(0.4), modes.uniform(0.4));
            step.apply_ramp(&mut flat, u1, u1);
            step.apply(&mut constant, u1);
            assert_eq!(flat, constant);
        }
    }

    #[test]
    fn modal_rates_match_a_short_step() {
        // d(row·q)/dt = Σ row_k ((D λ_k/R²)·q_k + g_k·u) against the change of the exact step over
        // δ, whose own error is about δ·|q″|/2 (δ far below the fastest mode's time constant).
        let modes = SphereModes::new(16, Boundary::Flux);
        let (r, d, u) = (5e-6, 5e-14, 2e-5);
        let mut q = modes.uniform(0.4);
        let mut step = ModeStep::default();
        modes.step_factors(r, d, 120.0, &mut step);
        step.apply(&mut q, -u);
        let terms = modes.rate_terms();
        let delta = 1e-9;
        modes.step_factors(r, d, delta, &mut step);
        let mut after = q.clone();
        step.apply(&mut after, u);
        let (outer, _) = modes.outer_rows();
        for row in [outer, modes.mean_row(), &modes.hoop_rows()[16..32]] {
            let rate = SphereModes::row_rate(row, &terms, &q, modes.rate_scales(r, d, u));
            let difference = (SphereModes::dot(row, &after) - SphereModes::dot(row, &q)) / delta;
            assert!((rate - difference).abs() <= 1e-5 * rate.abs(), "{rate} vs {difference}");
        }
    }

    #[test]
    fn a_drifting_diffusivity_is_a_ramped_input_in_its_own_time() {
        // D(t) = D̄·e^{κ(t/dt − 1/2)} (an Arrhenius diffusivity under a linear temperature) over one
        // step: the step at D̄ with the input u·D̄/D(t) ramped between its ends (what the cell
        // model's diffusivity drift does) against 4000 substeps, each at its own middle D.
        let modes = SphereModes::new(16, Boundary::Flux);
        let (r, d_mean, u) = (5e-6, 5e-14, 2e-5);
        for (dt, kappa) in [(30.0, 0.06), (300.0, 0.1), (3000.0, -0.2)] {
            let d_at = |s: f64| d_mean * f64::exp(kappa * (s - 0.5));
            // D̄ = Δτ/dt, the mean of D over the step.
            let d_bar = d_mean * (f64::exp(kappa / 2.0) - f64::exp(-kappa / 2.0)) / kappa;
            let mut step = ModeStep::default();
            modes.step_factors(r, d_bar, dt, &mut step);
            let mut drifted = modes.uniform(0.4);
            step.apply_drifting_ramp(&mut drifted, [u, u], [d_bar / d_at(0.0), d_bar / d_at(1.0)]);
            let mut held = modes.uniform(0.4);
            step.apply(&mut held, u);
            let n = 4000;
            let mut fine = modes.uniform(0.4);
            let mut sub = ModeStep::default();
            for i in 0..n {
                modes.step_factors(r, d_at((i as f64 + 0.5) / n as f64), dt / n as f64, &mut sub);
                sub.apply(&mut fine, u);
            }
            let surface = |q: &[f64]| modes.surface(q, u, r, d_at(1.0));
            let (ours, old, reference) = (surface(&drifted), surface(&held), surface(&fine));
            let change = (reference - 0.4).abs();
            assert!((ours - reference).abs() <= 3e-4 * change, "dt {dt}: {ours} vs {reference}");
            // The drift is what closes most of the gap.
            assert!((ours - reference).abs() < 0.1 * (old - reference).abs(), "dt {dt}");
            // The content is the input's integral, as held.
            assert!((modes.mean(&drifted) - modes.mean(&held)).abs() <= 1e-12 * modes.mean(&held), "dt {dt}");
        }
    }

    #[test]
    fn mean_rises_by_three_j_t_over_r() {
        // Mass balance (Crank 1975, ch. 6; docs/VALIDATION.md §1, derived): c̄ = c₀ + 3 J t / R.
        let modes = SphereModes::new(16, Boundary::Flux);
        let (r, d, j, t) = (5e-6, 1e-14, 1e-5, 300.0);
        let mut q = modes.uniform(100.0);
        let mut step = ModeStep::default();
        modes.step_factors(r, d, t, &mut step);
        step.apply(&mut q, j);
        let expected = 100.0 + 3.0 * j * t / r;
        assert!((modes.mean(&q) - expected).abs() < 1e-9 * expected);
    }
}
