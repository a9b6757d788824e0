//! Lumped thermal balance: m c_p dT/dt = q − hA (T − T_amb), with Bernardi's heat
//! q = I (U_ocv − V) − I T dU_ocv/dT (positive current discharges).
//!
//! Reference: D. Bernardi, E. Pawlikowski, J. Newman, J. Electrochem. Soc. 132 (1985) 5.

/// Heat generated in the cell, W: irreversible I(U−V) minus reversible I·T·dU/dT.
pub fn bernardi_heat(current_a: f64, ocv_v: f64, voltage_v: f64, temperature_k: f64, entropic_v_k: f64) -> f64 {
    current_a * (ocv_v - voltage_v) - current_a * temperature_k * entropic_v_k
}

/// Temperature after `dt` with constant heat: the exact solution of the lumped balance,
/// T_∞ + (T₀ − T_∞) e^(−dt/τ), T_∞ = T_amb + q/hA, τ = m c_p / hA.
pub fn advance_temperature(
    temperature_k: f64,
    ambient_k: f64,
    heat_w: f64,
    heat_capacity_j_k: f64,
    conductance_w_k: f64,
    dt_s: f64,
) -> f64 {
    let steady = ambient_k + heat_w / conductance_w_k;
    steady + (temperature_k - steady) * crate::material::fast_exp::exp(-dt_s * conductance_w_k / heat_capacity_j_k)
}

/// Temperature after `dt` with heat moving linearly from `start_heat_w` to `end_heat_w`: with
/// θ = T − T_amb, k = hA/(m c_p) and x = −k dt, the exact solution is
/// θ₀ eˣ + dt/(m c_p)·[q₀ φ₁(x) + (q₁ − q₀) φ₂(x)], φ₁ = (eˣ − 1)/x, φ₂ = (eˣ − 1 − x)/x²
/// (M. Hochbruck and A. Ostermann, "Exponential integrators", Acta Numerica 19 (2010) 209–286,
/// §2). Second order in the step where heat held at its end value is first order.
pub fn advance_temperature_ramp(
    temperature_k: f64,
    ambient_k: f64,
    [start_heat_w, end_heat_w]: [f64; 2],
    heat_capacity_j_k: f64,
    conductance_w_k: f64,
    dt_s: f64,
) -> f64 {
    let x = -dt_s * conductance_w_k / heat_capacity_j_k;
    let decay = crate::material::fast_exp::exp(x);
    let (phi1, phi2) = if x > -1e-3 {
        // Series where the subtractions would cancel (truncation x⁵/720 and x⁵/5040).
        (
            1.0 + x * (1.0 / 2.0 + x * (1.0 / 6.0 + x * (1.0 / 24.0 + x / 120.0))),
            1.0 / 2.0 + x * (1.0 / 6.0 + x * (1.0 / 24.0 + x * (1.0 / 120.0 + x / 720.0))),
        )
    } else {
        ((decay - 1.0) / x, (decay - 1.0 - x) / (x * x))
    };
    let heating = dt_s / heat_capacity_j_k * (start_heat_w * phi1 + (end_heat_w - start_heat_w) * phi2);
    ambient_k + (temperature_k - ambient_k) * decay + heating
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_heat_ramp_matches_fine_constant_steps_and_a_flat_ramp_the_constant_solution() {
        // Exact solution against 20 000 substeps of constant heat at each substep's middle, whose
        // own error is about q'·h²/(12 m c_p) (5e-7 K at the longest step).
        let (t0, ambient, c, g) = (300.0, 290.0, 120.0, 0.4);
        for (dt, q0, q1) in [(1e-3, 2.0, 5.0), (30.0, 2.0, 5.0), (600.0, 8.0, -1.0), (1e5, 0.0, 3.0)] {
            let ramp = advance_temperature_ramp(t0, ambient, [q0, q1], c, g, dt);
            let n = 20_000;
            let h = dt / n as f64;
            let fine = (0..n).fold(t0, |t, i| {
                let q = q0 + (q1 - q0) * (i as f64 + 0.5) / n as f64;
                advance_temperature(t, ambient, q, c, g, h)
            });
            assert!((ramp - fine).abs() < 1e-6 * (1.0 + (fine - t0).abs()), "dt {dt}: {ramp} vs {fine}");
            let flat = advance_temperature_ramp(t0, ambient, [q1, q1], c, g, dt);
            let constant = advance_temperature(t0, ambient, q1, c, g, dt);
            assert!((flat - constant).abs() < 1e-12 * t0, "dt {dt}: {flat} vs {constant}");
        }
    }
}
