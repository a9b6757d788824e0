//! What every mechanism's parameters share: the reader of its cell-file table (implemented by
//! the input layer, which knows files and lines) and the calibration range of the whole set.
//! Each mechanism's own parameters live in its file.

use super::{AgingParams, Side};

/// The range of aging data the parameters were fitted to, per axis the data used; forecasts
/// beyond it are warned about. `None` in the cell means the parameters are uncalibrated (demo
/// values).
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize)]
pub struct CalibrationRange {
    pub cycles: Option<f64>,
    pub days: Option<f64>,
    /// Equivalent full cycles.
    pub efc: Option<f64>,
    /// Lowest and highest ambient temperature of the fitted data, K.
    pub temperature_k: Option<(f64, f64)>,
}

/// Reads one mechanism table's values (already parsed into the mechanism's section struct)
/// and checks each against its rule; every problem is kept, with the key's file and line, by
/// the input layer. Missing or bad values come back as NaN placeholders: a reported problem
/// makes the whole cell an error before anything uses them.
pub trait TableReader {
    /// `table.key` of a key in this table, for reports.
    fn key(&self, field: &str) -> String;
    /// Reports a broken rule at `table.field`.
    fn report(&mut self, field: &str, rule: String);
    /// A required value, > 0.
    fn positive(&mut self, field: &str, value: Option<f64>) -> f64;
    /// A required value, ≥ 0.
    fn non_negative(&mut self, field: &str, value: Option<f64>) -> f64;
    /// A required value in 0–1.
    fn fraction(&mut self, field: &str, value: Option<f64>) -> f64;
    /// An optional value, > 0.
    fn optional_positive(&mut self, field: &str, value: Option<f64>, default: f64) -> f64;
    /// A finite value.
    fn finite(&mut self, field: &str, value: f64) -> f64;
    /// `transfer_coefficient`, strictly between 0 and 1 (default ½).
    fn transfer_coefficient(&mut self, value: Option<f64>) -> f64;
    /// A required activation energy in kJ/mol, returned in J/mol.
    fn activation_j_mol(&mut self, field: &str, value: Option<f64>) -> f64;
    /// The table's `reference_temperature_c` (default: the cell's), returned in K.
    fn reference_temperature_k(&mut self, value: Option<f64>) -> f64;
    /// Radius of the particles of the electrode the table sits under, as written (µm).
    fn particle_radius_um(&self) -> f64;
}

/// Serde default of every table's `enabled` key: a table that is present is switched on.
pub(crate) fn switched_on() -> bool {
    true
}

/// A mechanism's cell-file table as written (the serde section type in its file).
pub trait MechanismTable {
    /// `enabled = false` switches the mechanism off without deleting the table.
    fn enabled(&self) -> bool;
    /// Reads the table found under `side` into the mechanism's field of the parameters.
    fn store(&self, rules: &mut dyn TableReader, side: Side, aging: &mut AgingParams);
}
