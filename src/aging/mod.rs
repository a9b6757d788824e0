//! The aging model: a slow state that changes a little each cycle, and one file per
//! mechanism that turns a cycle record into rates of change of that state.

pub mod params;

pub use params::{ActiveLossParams, AgingParams, CalibrationRange, CrackingParams, FilmParams, PlatingParams};
