//! Step profiles: blocks of steps in TOML → [`crate::cycle::StepProfile`], repeats expanded,
//! C-rates turned into amps, every end in SI units.

use std::path::Path;

use serde::Deserialize;

use super::checks::Checks;
use super::document::{check_shape, TomlDocument};
use super::error::{first_problem, InputError};
use super::overrides::{Override, OverrideTarget};
use super::plausible::report_implausible;
use crate::cycle::{Drive, Step, StepEnd, StepProfile, MAX_STEP_DURATION_S};
use crate::material::constants::SECONDS_PER_HOUR;

const DEFAULT_START_SOC_PCT: f64 = 100.0;
const MAX_REPEAT: i64 = 100_000;
/// Guards memory: the expanded list is held in full.
const MAX_EXPANDED_STEPS: u64 = 1_000_000;
/// The largest current or power, as a multiple of the cell's rating, a step may ask of one
/// cell; the same bound as the `charge_c` / `discharge_c` rows of the plausibility table.
pub(super) const MAX_C_RATE: f64 = 100.0;

const DRIVE_KEYS: &str = "charge_c, charge_a, discharge_c, discharge_a, charge_w, discharge_w, hold_v or rest = true";
const TIME_ENDS: &str = "end_time_s, end_time_min or end_time_h";
const CV_ENDS: &str = "a constant-voltage step needs a taper end (end_current_c or end_current_a) \
                       or a time end (end_time_s, end_time_min or end_time_h)";
const TAPER_ENDS: &str = "a taper end (end_current_c or end_current_a)";

/// The step profile file as written.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ProfileFile {
    name: Option<String>,
    #[allow(dead_code)] // Free text for the reader of the file; the model does not use it.
    description: Option<String>,
    start_soc_pct: Option<f64>,
    #[serde(default)]
    block: Vec<BlockSection>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct BlockSection {
    repeat: Option<i64>,
    #[serde(default)]
    step: Vec<StepSection>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct StepSection {
    label: Option<String>,
    charge_c: Option<f64>,
    charge_a: Option<f64>,
    discharge_c: Option<f64>,
    discharge_a: Option<f64>,
    charge_w: Option<f64>,
    discharge_w: Option<f64>,
    hold_v: Option<f64>,
    rest: Option<bool>,
    end_voltage_v: Option<f64>,
    end_current_c: Option<f64>,
    end_current_a: Option<f64>,
    end_time_s: Option<f64>,
    end_time_min: Option<f64>,
    end_time_h: Option<f64>,
    end_soc_pct: Option<f64>,
    end_charge_ah: Option<f64>,
}

/// The cell's voltage window, when known, bounds constant-voltage holds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct VoltageWindow {
    pub min_v: f64,
    pub max_v: f64,
}

impl VoltageWindow {
    /// Watts per C-rate of a cell of `amps_per_c_rate`: the window's middle stands for the
    /// nominal voltage (common practice, no source).
    pub fn watts_per_c_rate(&self, amps_per_c_rate: f64) -> f64 {
        amps_per_c_rate * 0.5 * (self.min_v + self.max_v)
    }
}

/// A step key's name, its value if given, and what a value means (given amps per C-rate).
type KeyMeaning<T> = (&'static str, Option<f64>, fn(f64, f64) -> T);

/// A drive key found in a step: its name, its value as written and what it means.
struct DriveKey {
    name: &'static str,
    written: f64,
    drive: Drive,
}

/// An end key found in a step.
struct EndKey {
    name: &'static str,
    written: f64,
    end: StepEnd,
}

impl EndKey {
    fn is_time(&self) -> bool {
        matches!(self.end, StepEnd::Time(_))
    }

    fn is_taper(&self) -> bool {
        matches!(self.end, StepEnd::CurrentBelow(_))
    }
}

/// Reads a step profile; returns it with its start state of charge (fraction, default 1).
/// C-rates are relative to `nominal_capacity_coulomb`.
pub fn load_profile(
    path: &Path,
    nominal_capacity_coulomb: f64,
    overrides: &[Override],
) -> Result<(StepProfile, f64), InputError> {
    check_profile(path, nominal_capacity_coulomb, None, overrides).map_err(first_problem)
}

/// Like [`load_profile`], also checking holds against `window`, returning every problem.
pub(crate) fn check_profile(
    path: &Path,
    nominal_capacity_coulomb: f64,
    window: Option<VoltageWindow>,
    overrides: &[Override],
) -> Result<(StepProfile, f64), Vec<InputError>> {
    let document = TomlDocument::read_overridden(path, OverrideTarget::Profile, overrides).map_err(|e| vec![e])?;
    check_profile_document(&document, nominal_capacity_coulomb, window)
}

/// [`check_profile`] on a step profile already read, with its overrides applied.
pub(crate) fn check_profile_document(
    document: &TomlDocument,
    nominal_capacity_coulomb: f64,
    window: Option<VoltageWindow>,
) -> Result<(StepProfile, f64), Vec<InputError>> {
    let file: ProfileFile = document.deserialize().map_err(|e| vec![e])?;
    let amps_per_c_rate = nominal_capacity_coulomb / SECONDS_PER_HOUR;
    convert_profile(document, file, amps_per_c_rate, window)
}

/// Whether `overrides` leave the step profile well-formed (known keys, values of the right
/// type); no value is checked against its rules.
pub(super) fn check_profile_shape(path: &Path, overrides: &[Override]) -> Result<(), InputError> {
    check_shape::<ProfileFile>(path, OverrideTarget::Profile, overrides)
}

fn convert_profile(
    document: &TomlDocument,
    file: ProfileFile,
    amps_per_c_rate: f64,
    window: Option<VoltageWindow>,
) -> Result<(StepProfile, f64), Vec<InputError>> {
    let mut checks = Checks::new(document);
    let name = match &file.name {
        Some(name) if name.trim().is_empty() => {
            checks.report("name", "must not be empty (or leave it out to use the file name)");
            String::new()
        }
        Some(name) => name.trim().to_string(),
        None => file_stem(document.path()),
    };
    let start_soc_pct = file.start_soc_pct.unwrap_or(DEFAULT_START_SOC_PCT);
    checks.within("start_soc_pct", start_soc_pct, 0.0, 100.0);

    if file.block.is_empty() {
        checks.report("block", "the profile has no blocks; add a [[block]] with [[block.step]] tables");
    }
    let mut steps = Vec::new();
    let mut expanded_count: u64 = 0;
    let mut position_in_file = 0;
    for (b, block) in file.block.iter().enumerate() {
        let repeat = block.repeat.unwrap_or(1);
        if !(1..=MAX_REPEAT).contains(&repeat) {
            checks.report(&format!("block.{b}.repeat"), format!("must lie in 1–{MAX_REPEAT}, found {repeat}"));
        }
        if block.step.is_empty() {
            checks.report(&format!("block.{b}"), "the block has no steps; add [[block.step]] tables");
        }
        let mut block_steps = Vec::new();
        for (s, section) in block.step.iter().enumerate() {
            position_in_file += 1;
            let key = format!("block.{b}.step.{s}");
            if let Some(step) = convert_step(&mut checks, &key, section, position_in_file, amps_per_c_rate, window) {
                block_steps.push(step);
            }
        }
        let repeat = u64::try_from(repeat.clamp(1, MAX_REPEAT)).unwrap_or(1);
        expanded_count = expanded_count.saturating_add(repeat.saturating_mul(block.step.len() as u64));
        if expanded_count <= MAX_EXPANDED_STEPS {
            for _ in 0..repeat {
                steps.extend(block_steps.iter().cloned());
            }
        }
    }
    if expanded_count > MAX_EXPANDED_STEPS {
        checks.report(
            "block",
            format!(
                "the repeats expand to {expanded_count} steps, more than the \
                 {MAX_EXPANDED_STEPS} allowed"
            ),
        );
    }
    report_implausible(&mut checks, document);
    checks.finish((StepProfile { name, steps }, start_soc_pct / 100.0))
}

fn convert_step(
    checks: &mut Checks<'_>,
    key: &str,
    section: &StepSection,
    position_in_file: usize,
    amps_per_c_rate: f64,
    window: Option<VoltageWindow>,
) -> Option<Step> {
    let key_of = |field: &str| format!("{key}.{field}");
    let drives = drive_keys(checks, key, section, amps_per_c_rate);
    let ends = end_keys(section, amps_per_c_rate);
    for found in &drives {
        if found.name != "rest" {
            checks.positive(&key_of(found.name), found.written);
        }
    }
    if let Some(window) = window {
        check_rates_against_cell(checks, key, &drives, &ends, amps_per_c_rate, window);
    }
    for found in &ends {
        if found.is_time() && found.written.is_finite() && seconds_of(found.end) > MAX_STEP_DURATION_S {
            checks.report(
                &key_of(found.name),
                format!(
                    "a step may last at most {} h (the simulator's limit per step), found {} {}",
                    MAX_STEP_DURATION_S / SECONDS_PER_HOUR,
                    found.written,
                    found.name.rsplit('_').next().unwrap_or("")
                ),
            );
        }
        if found.name == "end_soc_pct" {
            checks.within(&key_of(found.name), found.written, 0.0, 100.0);
        } else {
            checks.positive(&key_of(found.name), found.written);
        }
    }

    let drive = match drives.as_slice() {
        [] => {
            checks.report(key, format!("the step has no drive key; give exactly one of {DRIVE_KEYS}"));
            None
        }
        [only] => Some(only.drive),
        [first, second, ..] => {
            checks.report(
                &key_of(second.name),
                format!("a step has exactly one drive key, but this one also has `{}`", first.name),
            );
            None
        }
    };
    if ends.is_empty() {
        match drive {
            Some(Drive::Rest) => checks.report(&key_of("rest"), format!("a rest needs a time end: {TIME_ENDS}")),
            Some(Drive::Voltage(_)) => checks.report(&key_of("hold_v"), CV_ENDS),
            _ => checks
                .report(key, "the step has no end key; give at least one end_* key (end_voltage_v, end_time_s, …)"),
        }
    } else if let Some(drive) = drive {
        check_ends_apply(checks, key, drive, &ends);
    }
    if let (Some(Drive::Voltage(volts)), Some(window)) = (drive, window) {
        if volts.is_finite() && !(window.min_v..=window.max_v).contains(&volts) {
            checks.report(
                &key_of("hold_v"),
                format!(
                    "must lie inside the cell's voltage window {}–{} V, found {volts} V",
                    window.min_v, window.max_v
                ),
            );
        }
    }

    let label = match &section.label {
        Some(label) => label.clone(),
        None => format!("step {position_in_file}"),
    };
    Some(Step { label, drive: drive?, ends: ends.iter().map(|e| e.end).collect() })
}

/// Seconds of a time end (0 for any other end).
fn seconds_of(end: StepEnd) -> f64 {
    match end {
        StepEnd::Time(seconds) => seconds,
        _ => 0.0,
    }
}

/// Currents and powers in absolute units, judged as multiples of the cell's rating: a current
/// or power beyond [`MAX_C_RATE`] times the nominal capacity (or energy) cannot be a duty cycle
/// of this cell (a kW typed as W, a pack's current given to one cell).
fn check_rates_against_cell(
    checks: &mut Checks<'_>,
    key: &str,
    drives: &[DriveKey],
    ends: &[EndKey],
    amps_per_c_rate: f64,
    window: VoltageWindow,
) {
    let watts_per_c_rate = window.watts_per_c_rate(amps_per_c_rate);
    let absolute =
        drives.iter().map(|d| (d.name, d.written)).chain(ends.iter().map(|e| (e.name, e.written))).filter_map(
            |(name, written)| match name {
                "charge_a" | "discharge_a" | "end_current_a" => Some((name, written, written / amps_per_c_rate, "A")),
                "charge_w" | "discharge_w" => Some((name, written, written / watts_per_c_rate, "W")),
                _ => None,
            },
        );
    for (name, written, c_rate, unit) in absolute {
        if c_rate.is_finite() && c_rate > MAX_C_RATE {
            checks.report(
                &format!("{key}.{name}"),
                format!(
                    "{written} {unit} is {c_rate:.0} times the cell's rating (1 C = {:.4} {unit}); at most {MAX_C_RATE} C \
                     is plausible for one cell",
                    if unit == "A" { amps_per_c_rate } else { watts_per_c_rate }
                ),
            );
        }
    }
}

/// Which end keys make sense for which drive (see FORMATS.md, step profile rules).
fn check_ends_apply(checks: &mut Checks<'_>, key: &str, drive: Drive, ends: &[EndKey]) {
    let key_of = |field: &str| format!("{key}.{field}");
    match drive {
        Drive::Rest => {
            for end in ends.iter().filter(|e| !e.is_time()) {
                checks.report(
                    &key_of(end.name),
                    format!("does not apply to a rest; a rest ends on time only ({TIME_ENDS})"),
                );
            }
            if !ends.iter().any(EndKey::is_time) {
                checks.report(&key_of("rest"), format!("a rest needs a time end: {TIME_ENDS}"));
            }
        }
        Drive::Voltage(_) => {
            for end in ends.iter().filter(|e| matches!(e.end, StepEnd::Voltage(_))) {
                checks.report(
                    &key_of(end.name),
                    format!(
                        "does not apply to a constant-voltage step (hold_v); end it with {TAPER_ENDS} \
                         or a time end"
                    ),
                );
            }
            if !ends.iter().any(|e| e.is_taper() || e.is_time()) {
                checks.report(&key_of("hold_v"), CV_ENDS);
            }
        }
        Drive::Current(_) | Drive::Power(_) => {
            for end in ends.iter().filter(|e| e.is_taper()) {
                checks.report(&key_of(end.name), "applies only to constant-voltage steps (hold_v)");
            }
        }
    }
}

fn drive_keys(checks: &mut Checks<'_>, key: &str, section: &StepSection, amps_per_c_rate: f64) -> Vec<DriveKey> {
    // Positive current or power discharges the cell.
    let candidates: [KeyMeaning<Drive>; 7] = [
        ("charge_c", section.charge_c, |v, a| Drive::Current(-v * a)),
        ("charge_a", section.charge_a, |v, _| Drive::Current(-v)),
        ("discharge_c", section.discharge_c, |v, a| Drive::Current(v * a)),
        ("discharge_a", section.discharge_a, |v, _| Drive::Current(v)),
        ("charge_w", section.charge_w, |v, _| Drive::Power(-v)),
        ("discharge_w", section.discharge_w, |v, _| Drive::Power(v)),
        ("hold_v", section.hold_v, |v, _| Drive::Voltage(v)),
    ];
    let mut found: Vec<DriveKey> = candidates
        .into_iter()
        .filter_map(|(name, value, drive)| {
            value.map(|written| DriveKey { name, written, drive: drive(written, amps_per_c_rate) })
        })
        .collect();
    match section.rest {
        Some(true) => found.push(DriveKey { name: "rest", written: 1.0, drive: Drive::Rest }),
        Some(false) => checks.report(&format!("{key}.rest"), "can only be `true`; leave it out for a driven step"),
        None => {}
    }
    found
}

fn end_keys(section: &StepSection, amps_per_c_rate: f64) -> Vec<EndKey> {
    let candidates: [KeyMeaning<StepEnd>; 8] = [
        ("end_voltage_v", section.end_voltage_v, |v, _| StepEnd::Voltage(v)),
        ("end_current_c", section.end_current_c, |v, a| StepEnd::CurrentBelow(v * a)),
        ("end_current_a", section.end_current_a, |v, _| StepEnd::CurrentBelow(v)),
        ("end_time_s", section.end_time_s, |v, _| StepEnd::Time(v)),
        ("end_time_min", section.end_time_min, |v, _| StepEnd::Time(v * 60.0)),
        ("end_time_h", section.end_time_h, |v, _| StepEnd::Time(v * SECONDS_PER_HOUR)),
        ("end_soc_pct", section.end_soc_pct, |v, _| StepEnd::Soc(v / 100.0)),
        ("end_charge_ah", section.end_charge_ah, |v, _| StepEnd::Charge(v * SECONDS_PER_HOUR)),
    ];
    candidates
        .into_iter()
        .filter_map(|(name, value, end)| {
            value.map(|written| EndKey { name, written, end: end(written, amps_per_c_rate) })
        })
        .collect()
}

pub(crate) fn file_stem(path: &Path) -> String {
    path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_default()
}
