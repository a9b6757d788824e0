//! Factors from the units in the file keys' suffixes to SI.

pub(crate) const NANO: f64 = 1e-9;
pub(crate) const MICRO: f64 = 1e-6;
pub(crate) const MILLI: f64 = 1e-3;
pub(crate) const KILO: f64 = 1e3;
pub(crate) const MEGA: f64 = 1e6;
pub(crate) const GIGA: f64 = 1e9;
/// cm³ → m³.
pub(crate) const CUBIC_CENTIMETRE: f64 = 1e-6;
/// per µm² → per m².
pub(crate) const PER_SQUARE_MICROMETRE: f64 = 1e12;
/// Percent → fraction.
pub(crate) const PERCENT: f64 = 1e-2;
