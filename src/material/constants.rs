//! Physical constants (CODATA 2018 exact values where defined).

/// Faraday constant, C/mol (CODATA 2018, exact).
pub const FARADAY: f64 = 96_485.332_12;
/// Molar gas constant, J/(mol K) (CODATA 2018, exact).
pub const GAS_CONSTANT: f64 = 8.314_462_618;
/// 0 °C in kelvin.
pub const ZERO_CELSIUS_K: f64 = 273.15;
/// Seconds in an hour, for Ah ↔ C conversions.
pub const SECONDS_PER_HOUR: f64 = 3600.0;
