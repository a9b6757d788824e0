//! The ensemble: Monte Carlo over uncertain inputs, reproducible by seed and independent of
//! thread count and sharding, giving quantile bands, end-of-life distributions and warranty
//! odds.

pub mod run;
pub mod sampling;
pub mod spec;
pub mod stats;
pub mod status;
pub mod summary;

pub use run::{run_ensemble, run_sample, EnsembleConfig, SampleRecord, Shard, Warranty, CURVE_QUANTITIES};
pub use sampling::{check_spec, sample_stream, Sampler, SamplingError, MAX_SAMPLES};
pub use spec::{CorrelationGroup, Distribution, Sampling, UncertainParameter, UncertaintySpec};
pub use stats::{clopper_pearson, quantile, quantile_standard_error, spearman};
pub use status::SampleStatus;
pub use summary::{summarize, EnsembleSummary, MOST_LEFT_OUT_FRACTION};
