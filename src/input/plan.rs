//! The forecast sections of a scenario file (`[usage]`, `[horizon]`, `[end_of_life]`) →
//! [`crate::forecast::Plan`], and the same horizon rules for the `--cycles` / `--years` flags.

use serde::Deserialize;

use super::checks::{positive_violation, Checks};
use super::error::InputError;
use super::units::PERCENT;
use crate::forecast::{Ambient, EndOfLife, Horizon, Plan, Usage};
use crate::material::constants::ZERO_CELSIUS_K;

const DEFAULT_CYCLES_PER_DAY: f64 = 1.0;
const DEFAULT_REST_SOC_PCT: f64 = 50.0;
const DEFAULT_START_MONTH: i64 = 1;
const DEFAULT_END_OF_LIFE_CAPACITY_PCT: f64 = 80.0;
const DEFAULT_END_OF_LIFE_RESISTANCE_PCT: f64 = 200.0;

pub(super) const MONTH_NAMES: [&str; 12] = [
    "January",
    "February",
    "March",
    "April",
    "May",
    "June",
    "July",
    "August",
    "September",
    "October",
    "November",
    "December",
];

/// `[usage]`: how the cell is used in calendar time.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct UsageSection {
    cycles_per_day: Option<f64>,
    rest_soc_pct: Option<f64>,
    /// Twelve values, January first.
    monthly_ambient_c: Option<Vec<f64>>,
    start_month: Option<i64>,
}

/// `[horizon]`: how far to forecast, in cycles or in years.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct HorizonSection {
    cycles: Option<f64>,
    years: Option<f64>,
}

/// `[end_of_life]`: thresholds in percent of the fresh cell's values.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct EndOfLifeSection {
    capacity_pct: Option<f64>,
    resistance_pct: Option<f64>,
}

/// The forecast sections as written; an absent section takes its documented defaults.
pub(super) struct PlanSections<'f> {
    pub usage: Option<&'f UsageSection>,
    pub horizon: Option<&'f HorizonSection>,
    pub end_of_life: Option<&'f EndOfLifeSection>,
    /// The scenario's `ambient_c`, the ambient when `[usage]` gives no monthly values.
    pub ambient_c: f64,
}

pub(super) fn convert_plan(checks: &mut Checks<'_>, sections: PlanSections<'_>) -> Plan {
    let default_usage = UsageSection::default();
    let default_end_of_life = EndOfLifeSection::default();
    let usage = convert_usage(checks, sections.usage.unwrap_or(&default_usage), sections.ambient_c);
    let horizon = sections.horizon.and_then(|section| convert_horizon(checks, section));
    if usage.cycles_per_day == 0.0 && matches!(horizon, Some(Horizon::Cycles(_))) {
        // In storage the forecast steps through days; a cycle count would never be reached.
        checks.report_conflict(
            "usage.cycles_per_day",
            "horizon.cycles",
            "storage only (`cycles_per_day = 0`) runs no cycles; give the horizon in `years`",
        );
    }
    let end_of_life = convert_end_of_life(checks, sections.end_of_life.unwrap_or(&default_end_of_life));
    // The cell's aging laws are set once the cell file is read.
    Plan { aging: Default::default(), calibration: None, usage, horizon, end_of_life, pack_aging: Vec::new() }
}

fn convert_usage(checks: &mut Checks<'_>, section: &UsageSection, ambient_c: f64) -> Usage {
    let cycles_per_day = section.cycles_per_day.unwrap_or(DEFAULT_CYCLES_PER_DAY);
    checks.non_negative("usage.cycles_per_day", cycles_per_day);
    let rest_soc_pct = section.rest_soc_pct.unwrap_or(DEFAULT_REST_SOC_PCT);
    checks.within("usage.rest_soc_pct", rest_soc_pct, 0.0, 100.0);
    let start_month = section.start_month.unwrap_or(DEFAULT_START_MONTH);
    if !(1..=12).contains(&start_month) {
        checks.report("usage.start_month", format!("must lie in 1–12 (1 = January), found {start_month}"));
    }
    let ambient_k = match &section.monthly_ambient_c {
        None => Ambient::Constant(ambient_c + ZERO_CELSIUS_K),
        Some(monthly) => Ambient::Monthly(convert_monthly_ambient(checks, monthly)),
    };
    Usage {
        cycles_per_day,
        rest_soc: rest_soc_pct * PERCENT,
        ambient_k,
        start_month: u32::try_from(start_month).unwrap_or(0),
    }
}

/// Twelve monthly temperatures in °C → K. A wrong count gives placeholder values: the
/// reported problem makes the scenario an error before anything uses them.
fn convert_monthly_ambient(checks: &mut Checks<'_>, monthly_c: &[f64]) -> [f64; 12] {
    const KEY: &str = "usage.monthly_ambient_c";
    let Ok(monthly_c) = <[f64; 12]>::try_from(monthly_c) else {
        checks.report(KEY, format!("twelve monthly values expected, found {}", monthly_c.len()));
        return [f64::NAN; 12];
    };
    for (name, celsius) in MONTH_NAMES.iter().zip(monthly_c) {
        if !celsius.is_finite() {
            checks.report(KEY, format!("{name}: must be a finite number, found {celsius}"));
        } else if celsius <= -ZERO_CELSIUS_K {
            checks.report(KEY, format!("{name}: must be above absolute zero (−273.15 °C), found {celsius}"));
        }
    }
    monthly_c.map(|celsius| celsius + ZERO_CELSIUS_K)
}

fn convert_horizon(checks: &mut Checks<'_>, section: &HorizonSection) -> Option<Horizon> {
    if section.cycles.is_none() && section.years.is_none() {
        checks.report(
            "horizon",
            "needs `cycles` or `years` (or leave the table out and give the horizon on the command line)",
        );
        return None;
    }
    match horizon_from(section.cycles, section.years) {
        Ok(horizon) => horizon,
        Err(HorizonProblem::Both) => {
            checks.report_conflict("horizon.cycles", "horizon.years", "give either `cycles` or `years`, not both");
            None
        }
        Err(HorizonProblem::BadValue { key, rule }) => {
            let key = match key {
                HorizonKey::Cycles => "horizon.cycles",
                HorizonKey::Years => "horizon.years",
            };
            checks.report(key, rule);
            None
        }
    }
}

fn convert_end_of_life(checks: &mut Checks<'_>, section: &EndOfLifeSection) -> EndOfLife {
    let capacity_pct = section.capacity_pct.unwrap_or(DEFAULT_END_OF_LIFE_CAPACITY_PCT);
    checks.strictly_between("end_of_life.capacity_pct", capacity_pct, 0.0, 100.0);
    let resistance_pct = section.resistance_pct.unwrap_or(DEFAULT_END_OF_LIFE_RESISTANCE_PCT);
    if checks.finite("end_of_life.resistance_pct", resistance_pct) && resistance_pct <= 100.0 {
        checks.report(
            "end_of_life.resistance_pct",
            format!("must be above 100 (the fresh cell's resistance), found {resistance_pct}"),
        );
    }
    EndOfLife { capacity_fraction: capacity_pct * PERCENT, resistance_fraction: resistance_pct * PERCENT }
}

/// The forecast horizon from the command line's `--cycles N` / `--years Y` (at most one, a
/// positive number); `None` when neither is given. Errors name the flag.
pub fn parse_horizon(cycles: Option<f64>, years: Option<f64>) -> Result<Option<Horizon>, InputError> {
    horizon_from(cycles, years).map_err(|problem| match problem {
        HorizonProblem::Both => InputError::command_line_flag("--years", "give either --cycles or --years, not both"),
        HorizonProblem::BadValue { key: HorizonKey::Cycles, rule } => InputError::command_line_flag("--cycles", rule),
        HorizonProblem::BadValue { key: HorizonKey::Years, rule } => InputError::command_line_flag("--years", rule),
    })
}

/// Which of the two ways of giving a horizon a value belongs to.
#[derive(Debug, Clone, Copy)]
enum HorizonKey {
    Cycles,
    Years,
}

enum HorizonProblem {
    /// Both a number of cycles and of years were given.
    Both,
    /// The one value given is not a positive finite number.
    BadValue { key: HorizonKey, rule: String },
}

/// The one rule set shared by the scenario's `[horizon]` and the command-line flags.
fn horizon_from(cycles: Option<f64>, years: Option<f64>) -> Result<Option<Horizon>, HorizonProblem> {
    let checked = |key, value: f64, horizon| {
        let row = match key {
            HorizonKey::Cycles => "horizon.cycles",
            HorizonKey::Years => "horizon.years",
        };
        // The plausibility table's bound keeps the work of one forecast finite.
        match positive_violation(value).or_else(|| super::plausible::impossible(row, value)) {
            Some(rule) => Err(HorizonProblem::BadValue { key, rule }),
            None => Ok(Some(horizon)),
        }
    };
    match (cycles, years) {
        (Some(_), Some(_)) => Err(HorizonProblem::Both),
        (Some(cycles), None) => checked(HorizonKey::Cycles, cycles, Horizon::Cycles(cycles)),
        (None, Some(years)) => checked(HorizonKey::Years, years, Horizon::Years(years)),
        (None, None) => Ok(None),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn command_line_horizon_takes_one_positive_value() {
        assert_eq!(parse_horizon(None, None), Ok(None));
        assert_eq!(parse_horizon(Some(250.0), None), Ok(Some(Horizon::Cycles(250.0))));
        assert_eq!(parse_horizon(None, Some(1.5)), Ok(Some(Horizon::Years(1.5))));

        let both = parse_horizon(Some(1.0), Some(1.0)).expect_err("both flags");
        assert_eq!(both.key.as_deref(), Some("--years"));
        assert!(both.rule.contains("not both"), "{both}");
        assert!(both.is_from_command_line());

        for (cycles, years, flag, rule) in [
            (Some(0.0), None, "--cycles", "must be positive, found 0"),
            (Some(-3.0), None, "--cycles", "must be positive, found -3"),
            (None, Some(f64::INFINITY), "--years", "must be a finite number"),
            (None, Some(f64::NAN), "--years", "must be a finite number"),
        ] {
            let error = parse_horizon(cycles, years).expect_err(flag);
            assert_eq!(error.key.as_deref(), Some(flag), "{error}");
            assert!(error.rule.contains(rule), "{error}");
            assert!(!error.to_string().contains('\n'));
        }
    }
}
