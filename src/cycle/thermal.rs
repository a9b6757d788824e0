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
    steady + (temperature_k - steady) * super::fast_exp::exp(-dt_s * conductance_w_k / heat_capacity_j_k)
}
