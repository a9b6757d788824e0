//! What one forecast of drawn inputs came to: one status for an ensemble's samples and for
//! every alternative of a comparison on each sample.

use crate::forecast::StopReason;

/// What one sample (of an ensemble, or of one alternative in a comparison) came to.
#[derive(Debug, Clone, PartialEq)]
pub enum SampleStatus {
    Ok,
    /// The drawn inputs break an input rule (e.g. a normal draw gave a negative radius).
    Invalid(String),
    /// The forecast stopped before the horizon: the cell was exhausted or the forecast failed,
    /// where and why in the stop reason (`cycling`: whether it counted cycles or storage days).
    Failed {
        stop: StopReason,
        cycling: bool,
    },
}

impl SampleStatus {
    /// The status of a forecast that ran, from where it stopped.
    pub fn of_stop(stop: &StopReason, cycling: bool) -> Self {
        match stop {
            StopReason::Horizon => SampleStatus::Ok,
            _ => SampleStatus::Failed { stop: stop.clone(), cycling },
        }
    }
}
