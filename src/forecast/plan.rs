//! How a cell is used in calendar time, how far to forecast, and when its life ends.

/// Use in calendar time.
#[derive(Debug, Clone, PartialEq)]
pub struct Usage {
    /// Duty cycles per day; 0 means storage only (each "cycle" is then a day at rest).
    pub cycles_per_day: f64,
    /// State of charge held while idle between cycles, 0–1.
    pub rest_soc: f64,
    /// Ambient temperature, K: one value, or twelve monthly values (January first).
    pub ambient_k: Ambient,
    /// Month the forecast starts in, 1–12.
    pub start_month: u32,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Ambient {
    Constant(f64),
    Monthly([f64; 12]),
}

/// How far to forecast.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Horizon {
    Cycles(f64),
    Years(f64),
}

/// End-of-life thresholds, as fractions of the fresh values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EndOfLife {
    /// Capacity at which life ends, fraction of fresh (default 0.8).
    pub capacity_fraction: f64,
    /// Resistance at which life ends, fraction of fresh (default 2.0).
    pub resistance_fraction: f64,
}

impl Default for EndOfLife {
    fn default() -> Self {
        EndOfLife { capacity_fraction: 0.8, resistance_fraction: 2.0 }
    }
}

/// What the forecast needs beyond the cycle model's scenario: the cell's aging laws (from the
/// cell file) and the forecast sections of the scenario file.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// Aging laws (all off when the cell file gives none).
    pub aging: crate::aging::AgingParams,
    /// The aging data the parameters were calibrated on, if any.
    pub calibration: Option<crate::aging::CalibrationRange>,
    pub usage: Usage,
    /// None when the scenario gives none; the command line must then.
    pub horizon: Option<Horizon>,
    pub end_of_life: EndOfLife,
    /// A pack's aging laws per position (each cell may carry its own drawn values); empty for
    /// a lone cell, or when every cell of the pack takes `aging`.
    pub pack_aging: Vec<crate::aging::AgingParams>,
}

impl Plan {
    /// The aging laws of the cell at a pack position.
    pub fn aging_at(&self, position: usize) -> &crate::aging::AgingParams {
        self.pack_aging.get(position).unwrap_or(&self.aging)
    }
}
