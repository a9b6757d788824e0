//! Diffusion-induced stress in a linear-elastic sphere with a radial concentration profile.
//!
//! σ_r(r) = 2ΩE/(3(1−ν)) · [R⁻³∫₀ᴿ c r² dr − r⁻³∫₀ʳ c r² dr]
//! σ_t(r) = ΩE/(3(1−ν)) · [2R⁻³∫₀ᴿ c r² dr + r⁻³∫₀ʳ c r² dr − c(r)]
//! With c̄(r) the mean inside radius r these read σ_r = (2/3)·k·(c̄ − c̄(r)) and
//! σ_t = k·(2c̄/3 + c̄(r)/3 − c(r)), k = ΩE/(3(1−ν)); at the surface σ_r = 0 and
//! σ_t = k·(c̄ − c_s): compressive while lithium enters, tensile while it leaves.
//!
//! References: X. Zhang, W. Shyy, A. M. Sastry, J. Electrochem. Soc. 154 (2007) A910;
//! J. Christensen, J. Newman, J. Solid State Electrochem. 10 (2006) 293;
//! Y.-T. Cheng, M. W. Verbrugge, J. Power Sources 190 (2009) 453.

/// Tangential (hoop) stress at the particle surface, Pa (positive in tension).
pub fn surface_hoop_stress(coefficient: f64, mean: f64, surface: f64) -> f64 {
    coefficient * (mean - surface)
}

/// Stress at the centre, where radial and hoop stresses are equal, Pa.
pub fn centre_stress(coefficient: f64, mean: f64, centre: f64) -> f64 {
    2.0 / 3.0 * coefficient * (mean - centre)
}

/// Radial and hoop stresses at the outer face of every shell, from shell concentrations and
/// dimensionless shell volumes (ρ₊³ − ρ₋³)/3; the last face is the particle surface, where
/// the hoop stress uses the given surface concentration.
pub fn face_stresses(coefficient: f64, shells: &[f64], volumes: &[f64], surface: f64) -> Vec<(f64, f64)> {
    let total: f64 = volumes.iter().sum();
    let content: f64 = shells.iter().zip(volumes).map(|(c, v)| c * v).sum();
    let mean = content / total;
    let mut inside = 0.0;
    let mut inside_volume = 0.0;
    let n = shells.len();
    (0..n)
        .map(|i| {
            inside += shells[i] * volumes[i];
            inside_volume += volumes[i];
            let mean_inside = inside / inside_volume;
            // Face value: mean of neighbouring shells inside, the given surface value outside.
            let at_face = if i + 1 < n { 0.5 * (shells[i] + shells[i + 1]) } else { surface };
            let radial = 2.0 / 3.0 * coefficient * (mean - mean_inside);
            let hoop = coefficient * (2.0 * mean / 3.0 + mean_inside / 3.0 - at_face);
            (radial, hoop)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn uniform_concentration_is_stress_free() {
        let volumes: Vec<f64> =
            (0..8).map(|i| (((i + 1) as f64 / 8.0).powi(3) - (i as f64 / 8.0).powi(3)) / 3.0).collect();
        for (radial, hoop) in face_stresses(1e4, &[7.0; 8], &volumes, 7.0) {
            assert!(radial.abs() < 1e-9 && hoop.abs() < 1e-9);
        }
    }
}
