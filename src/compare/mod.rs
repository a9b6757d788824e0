//! Comparing alternatives (charge protocols, temperature limits, state-of-charge windows) on
//! the same drawn samples, and fade tables over a grid of operating conditions.
//!
//! Common random numbers: sample i of every alternative is built from the same draw
//! `sampler.draw(i)`, so a difference between two alternatives on sample i is a *paired*
//! difference — the cell-to-cell spread both share cancels out of it. The command layer
//! supplies the function that turns a draw into each alternative's scenario (it loads files);
//! this module does no I/O.
//!
//! Samples whose life does not end within the horizon are *censored*: their life is only known
//! to exceed the horizon. They stay in every statistic — as `+∞` in the life quantiles (a
//! quantile that reaches them reads "beyond the horizon"), and at the horizon's value in the
//! paired differences, which are then bounds; the summaries count them.

mod run;
mod summary;
mod table;

/// The comparison's name for [`SampleStatus`], the one status of a forecast on drawn inputs.
pub use crate::ensemble::SampleStatus as OutcomeStatus;
pub use run::{
    charge_time_s, check_runs_at_beginning_of_life, comparison_tasks, run_comparison, run_comparison_observed,
    Alternative, CompareConfig, CompareError, Comparison, Life, Outcome,
};
pub use summary::{
    summarize_comparison, summarize_comparison_at, AlternativeSummary, CurveBand, PairedDifference, Spread,
    SPREAD_QUANTILES,
};
pub use table::{
    condition_scenario, run_table, run_table_observed, standard_cycle, table_tasks, Condition, ConditionResult,
    TableConfig, TABLE_QUANTILES,
};
