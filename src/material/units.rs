//! Factors from the units in the file keys' suffixes to SI.

pub const NANO: f64 = 1e-9;
pub const MICRO: f64 = 1e-6;
pub const MILLI: f64 = 1e-3;
pub const KILO: f64 = 1e3;
pub const MEGA: f64 = 1e6;
pub const GIGA: f64 = 1e9;
/// cm³ → m³.
pub const CUBIC_CENTIMETRE: f64 = 1e-6;
/// per µm² → per m².
pub const PER_SQUARE_MICROMETRE: f64 = 1e12;
/// Percent → fraction.
pub const PERCENT: f64 = 1e-2;
