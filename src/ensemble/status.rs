//! What one forecast of drawn inputs came to: one status for an ensemble's samples and for
//! every alternative of a comparison on each sample.

use crate::forecast::StopReason;

/// What one sample (of an ensemble, or of one alternative in a comparison) came to.
#[derive(Debug, Clone, PartialEq)]
pub enum SampleStatus {
    Ok,
    /// The drawn inputs break an input rule (e.g. a normal draw gave a negative radius).
    Invalid(String),
    /// The forecast stopped before the horizon: the cell was exhausted or the forecast failed;
    /// the detail says where and why.
    Failed(String),
}

impl SampleStatus {
    /// The status of a forecast that ran, from where it stopped.
    pub fn of_stop(stop: &StopReason) -> Self {
        match stop {
            StopReason::Horizon => SampleStatus::Ok,
            StopReason::Exhausted { cycle } => {
                SampleStatus::Failed(format!("no usable capacity left at cycle {cycle:.0}"))
            }
            StopReason::Failed { cycle, detail } => SampleStatus::Failed(format!("at cycle {cycle:.0}: {detail}")),
        }
    }
}
