//! The ensemble: Monte Carlo over uncertain inputs, reproducible by seed and independent of
//! thread count and sharding, giving quantile bands, end-of-life distributions and warranty
//! odds.

pub mod spec;

pub use spec::{CorrelationGroup, Distribution, Sampling, UncertainParameter, UncertaintySpec};
