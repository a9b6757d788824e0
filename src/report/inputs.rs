//! Plain-text descriptions of loaded inputs, with the quantities derived from them, for
//! `fadecast check`.

use super::text::{duration, sig};
use crate::cycle::{Balance, Cell, Drive, DutyCycle, SeriesSignal, Step, StepEnd, TimeSeries};
use crate::material::constants::{SECONDS_PER_HOUR, ZERO_CELSIUS_K};
use std::fmt::Write;

/// The cell's electrodes, balance at low rate, limits and thermal time constant.
/// `balance` is `None` when the electrodes could not be balanced in the voltage window.
pub fn cell_report(cell: &Cell, balance: Option<&Balance>) -> String {
    let ah = |coulomb: f64| coulomb / SECONDS_PER_HOUR;
    let neg_ah = ah(cell.negative.capacity_coulomb());
    let pos_ah = ah(cell.positive.capacity_coulomb());
    let nominal_ah = ah(cell.nominal_capacity_coulomb);
    let mut out = String::new();
    let mut line = |label: &str, value: String| {
        let _ = writeln!(out, "  {label:<28}{value}");
    };
    line("nominal capacity", format!("{} Ah", sig(nominal_ah, 4)));
    line("voltage window", format!("{} – {} V", sig(cell.voltage_min_v, 4), sig(cell.voltage_max_v, 4)));
    for (name, electrode, capacity_ah) in
        [("negative electrode", &cell.negative, neg_ah), ("positive electrode", &cell.positive, pos_ah)]
    {
        line(
            name,
            format!(
                "{:.3} Ah active material, particle radius {} µm, OCP {}",
                capacity_ah,
                sig(electrode.particle_radius_m * 1e6, 3),
                electrode.ocp.describe()
            ),
        );
    }
    let np_ratio = balance.map_or(neg_ah / pos_ah, |b| b.np_ratio);
    line("N/P capacity ratio", format!("{np_ratio:.3} (negative/positive)"));
    line("lithium inventory", format!("{:.3} Ah", ah(cell.lithium_inventory_coulomb())));
    match balance {
        Some(b) => {
            line(
                "balanced capacity",
                format!(
                    "{:.3} Ah at low rate, {} °C",
                    ah(b.capacity_coulomb),
                    sig(cell.reference_temperature_k - ZERO_CELSIUS_K, 3)
                ),
            );
            line("balanced energy", format!("{:.2} Wh", b.energy_j(cell) / SECONDS_PER_HOUR));
            line(
                "stoichiometry when full",
                format!("negative {:.4}, positive {:.4}", b.neg_stoich_full, b.pos_stoich_full),
            );
            line(
                "stoichiometry when empty",
                format!("negative {:.4}, positive {:.4}", b.neg_stoich_empty, b.pos_stoich_empty),
            );
        }
        None => line(
            "balanced capacity",
            "not found: the electrodes do not reach both ends of the voltage window \
             (check stoichiometries, OCP and window)"
                .to_string(),
        ),
    }
    let c_rate = |amps: f64| sig(amps / nominal_ah, 3);
    line(
        "current limits",
        format!(
            "charge {} A ({} C), discharge {} A ({} C)",
            sig(cell.max_charge_current_a, 4),
            c_rate(cell.max_charge_current_a),
            sig(cell.max_discharge_current_a, 4),
            c_rate(cell.max_discharge_current_a)
        ),
    );
    line(
        "temperature window",
        format!(
            "{} – {} °C",
            sig(cell.temperature_min_k - ZERO_CELSIUS_K, 3),
            sig(cell.temperature_max_k - ZERO_CELSIUS_K, 3)
        ),
    );
    let tau_s = cell.thermal_time_constant_s();
    line("thermal time constant", format!("{} (m·cp / hA)", duration(tau_s)));
    out
}

/// The duty cycle in words. C-rates are relative to `capacity_ah` when a cell is known; with
/// `None` they are shown for a 1 Ah cell (1 C = 1 A) and the report says so.
pub fn duty_report(duty: &DutyCycle, start_soc: f64, capacity_ah: Option<f64>) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "  {:<28}{:.0} %", "start state of charge", start_soc * 100.0);
    match duty {
        DutyCycle::Steps(profile) => {
            let _ = writeln!(out, "  {:<28}{} after expanding repeats", "steps", profile.steps.len());
            if capacity_ah.is_none() {
                let _ = writeln!(
                    out,
                    "  (no cell given: C-rates are relative to a 1 Ah cell, so 1 C = 1 A; \
                     check a scenario to see them for its cell)"
                );
            }
            let capacity_ah = capacity_ah.unwrap_or(1.0);
            out.push_str(&step_table(&profile.steps, capacity_ah));
        }
        DutyCycle::Series(series) => out.push_str(&series_report(series)),
    }
    out
}

/// Totals over a measured series: each sample's value holds until the next sample's time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SeriesTotals {
    pub duration_s: f64,
    /// ∫ value dt over the discharging and the charging parts, both positive: C for a current
    /// series, J for a power series.
    pub discharged: f64,
    pub charged: f64,
}

pub fn series_totals(series: &TimeSeries) -> SeriesTotals {
    let mut totals = SeriesTotals { duration_s: 0.0, discharged: 0.0, charged: 0.0 };
    for (window, &value) in series.time_s.windows(2).zip(&series.value) {
        let held = value * (window[1] - window[0]);
        if held > 0.0 {
            totals.discharged += held;
        } else {
            totals.charged -= held;
        }
    }
    if let (Some(first), Some(last)) = (series.time_s.first(), series.time_s.last()) {
        totals.duration_s = last - first;
    }
    totals
}

fn series_report(series: &TimeSeries) -> String {
    let totals = series_totals(series);
    let mut out = String::new();
    let (signal, unit) = match series.signal {
        SeriesSignal::CurrentA => ("current", "Ah"),
        SeriesSignal::PowerW => ("power", "Wh"),
    };
    let _ = writeln!(out, "  {:<28}{} samples of {signal}", "series", series.time_s.len());
    let _ = writeln!(out, "  {:<28}{:.3} h", "duration", totals.duration_s / SECONDS_PER_HOUR);
    let per_hour = |x: f64| x / SECONDS_PER_HOUR;
    let _ = writeln!(
        out,
        "  {:<28}{:.3} {unit} discharged, {:.3} {unit} charged",
        if unit == "Ah" { "charge throughput" } else { "energy throughput" },
        per_hour(totals.discharged),
        per_hour(totals.charged)
    );
    if let Some(ambient_k) = &series.ambient_k {
        let (lo, hi) = ambient_k.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &t| (lo.min(t), hi.max(t)));
        let _ = writeln!(
            out,
            "  {:<28}{:.1} – {:.1} °C (from the file; replaces the scenario's ambient)",
            "ambient",
            lo - ZERO_CELSIUS_K,
            hi - ZERO_CELSIUS_K
        );
    }
    out
}

/// The steps as a table: step (number and label), mode, set point, and what ends it (the
/// first end reached; the cell's voltage window ends every step too).
pub fn step_table(steps: &[Step], capacity_ah: f64) -> String {
    let header = ["step", "mode", "set point", "ends when"].map(String::from);
    let rows: Vec<[String; 4]> = steps
        .iter()
        .enumerate()
        .map(|(index, step)| {
            let (mode, set_point) = step_mode(step.drive, capacity_ah);
            let ends: Vec<String> = step.ends.iter().map(|end| step_end(*end, step.drive, capacity_ah)).collect();
            [
                format!("{} {}", index + 1, step.label),
                mode,
                set_point,
                if ends.is_empty() { "–".into() } else { ends.join(" or ") },
            ]
        })
        .collect();
    let widths: Vec<usize> =
        (0..4).map(|c| rows.iter().chain([&header]).map(|r| r[c].chars().count()).max().unwrap_or(0)).collect();
    let mut out = String::new();
    for row in std::iter::once(&header).chain(&rows) {
        let mut line = String::from("   ");
        for (cell, width) in row.iter().zip(&widths) {
            line.push_str(cell);
            line.push_str(&" ".repeat(width - cell.chars().count() + 2));
        }
        let _ = writeln!(out, "{}", line.trim_end());
    }
    out
}

/// A drive as a mode and its set point.
fn step_mode(drive: Drive, capacity_ah: f64) -> (String, String) {
    let verb = if direction(drive) > 0.0 { "discharge" } else { "charge" };
    match drive {
        Drive::Current(amps) => (format!("constant current, {verb}"), with_c_rate(amps, capacity_ah)),
        Drive::Power(watts) => (format!("constant power, {verb}"), format!("{} W", sig(watts.abs(), 4))),
        Drive::Voltage(volts) => ("constant voltage".into(), format!("{} V", sig(volts, 4))),
        Drive::Rest => ("rest".into(), "–".into()),
    }
}

/// An end condition in the table's short form (`V ≤ 2.8 V`, `I ≤ 0.25 A (0.05 C)`, `1 h`).
fn step_end(end: StepEnd, drive: Drive, capacity_ah: f64) -> String {
    let towards = if direction(drive) > 0.0 { "≤" } else { "≥" };
    match end {
        StepEnd::Voltage(volts) => format!("V {towards} {} V", sig(volts, 4)),
        StepEnd::CurrentBelow(amps) => format!("|I| ≤ {}", with_c_rate(amps, capacity_ah)),
        StepEnd::Time(seconds) => format!("{} elapsed", duration(seconds)),
        StepEnd::Soc(fraction) => format!("SOC {towards} {} %", sig(fraction * 100.0, 3)),
        StepEnd::Charge(coulomb) => format!("{} Ah passed", sig(coulomb / SECONDS_PER_HOUR, 4)),
    }
}

/// One step in words, e.g. "charge: charge at 5 A (1 C) until the voltage rises to 4.2 V".
pub fn describe_step(step: &Step, capacity_ah: f64) -> String {
    let drive = describe_drive(step.drive, capacity_ah);
    let ends: Vec<String> = step.ends.iter().map(|end| describe_end(*end, step.drive, capacity_ah)).collect();
    let ends = if ends.is_empty() { String::new() } else { format!(" until {}", ends.join(", or ")) };
    format!("{}: {drive}{ends}", step.label)
}

fn with_c_rate(amps: f64, capacity_ah: f64) -> String {
    format!("{} A ({} C)", sig(amps.abs(), 4), sig(amps.abs() / capacity_ah, 3))
}

/// +1 for a discharging drive, −1 for a charging one, 0 when the drive does not fix a sign.
fn direction(drive: Drive) -> f64 {
    match drive {
        Drive::Current(value) | Drive::Power(value) => value.signum(),
        Drive::Voltage(_) | Drive::Rest => 0.0,
    }
}

fn describe_drive(drive: Drive, capacity_ah: f64) -> String {
    let verb = if direction(drive) > 0.0 { "discharge" } else { "charge" };
    match drive {
        Drive::Current(amps) => format!("{verb} at {}", with_c_rate(amps, capacity_ah)),
        Drive::Power(watts) => format!("{verb} at {} W", sig(watts.abs(), 4)),
        Drive::Voltage(volts) => format!("hold {} V", sig(volts, 4)),
        Drive::Rest => "rest".to_string(),
    }
}

fn describe_end(end: StepEnd, drive: Drive, capacity_ah: f64) -> String {
    let moves = match direction(drive) {
        d if d > 0.0 => "falls to",
        d if d < 0.0 => "rises to",
        _ => "reaches",
    };
    match end {
        StepEnd::Voltage(volts) => format!("the voltage {moves} {} V", sig(volts, 4)),
        StepEnd::CurrentBelow(amps) => {
            format!("the current falls to {}", with_c_rate(amps, capacity_ah))
        }
        StepEnd::Time(seconds) => format!("{} have passed", duration(seconds)),
        StepEnd::Soc(fraction) => {
            format!("the state of charge {moves} {} %", sig(fraction * 100.0, 3))
        }
        StepEnd::Charge(coulomb) => {
            format!("{} Ah have passed", sig(coulomb / SECONDS_PER_HOUR, 4))
        }
    }
}

/// A fit description as `check` shows it: the datasets (points, axis, range, scenario) and the
/// free parameters with their bounds.
pub fn fit_report(name: &str, problem: &crate::calibrate::FitProblem, scenarios: &[String]) -> String {
    let mut text = format!("  {:<28}{}\n", "name", name);
    text.push_str("  datasets\n");
    for (d, scenario) in problem.datasets.iter().zip(scenarios) {
        let first = d.points.first().map_or(0.0, |p| p.x);
        let last = d.points.last().map_or(0.0, |p| p.x);
        let resistance = d.points.iter().filter(|p| p.resistance_mohm.is_some()).count();
        let _ = writeln!(
            text,
            "    {:<24}{} points, {} {}–{}, {} with resistance; scenario {}",
            d.name,
            d.points.len(),
            d.axis.column(),
            sig(first, 6),
            sig(last, 6),
            resistance,
            scenario
        );
    }
    text.push_str("  free parameters\n");
    for p in &problem.parameters {
        let _ = writeln!(
            text,
            "    {:<52}{} to {}{}, from {}",
            p.path,
            p.low,
            p.high,
            if p.log { " (log)" } else { "" },
            sig(p.initial, 4)
        );
    }
    text
}

/// Measured aging data as `check` shows them: the axis, the points' range and what was measured.
pub fn aging_data_report(axis: crate::calibrate::Axis, points: &[crate::calibrate::MeasuredPoint]) -> String {
    let capacities: Vec<f64> = points.iter().map(|p| p.capacity_ah).collect();
    let low = capacities.iter().copied().fold(f64::INFINITY, f64::min);
    let high = capacities.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let resistance = points.iter().filter(|p| p.resistance_mohm.is_some()).count();
    let mut text = String::new();
    let _ = writeln!(text, "  {:<28}{}", "axis", axis.column());
    let _ = writeln!(
        text,
        "  {:<28}{} from {} to {}",
        "points",
        points.len(),
        sig(points.first().map_or(0.0, |p| p.x), 6),
        sig(points.last().map_or(0.0, |p| p.x), 6)
    );
    let _ = writeln!(text, "  {:<28}{} to {} Ah", "capacity", sig(low, 4), sig(high, 4));
    let _ = writeln!(text, "  {:<28}{} of {} points", "resistance measured", resistance, points.len());
    text
}

/// An `[uncertainty]` section as `check` shows it: each parameter's distribution.
pub fn uncertainty_report(spec: &crate::ensemble::UncertaintySpec) -> String {
    use crate::ensemble::Distribution as D;
    let sampling = match spec.sampling {
        crate::ensemble::Sampling::MonteCarlo => "monte-carlo",
        crate::ensemble::Sampling::LatinHypercube => "latin-hypercube",
    };
    let mut text = format!("  {:<28}{sampling}\n", "sampling");
    for p in &spec.parameters {
        let shape = match p.distribution {
            D::Normal { mean, sd } => format!("normal, mean {} sd {}", sig(mean, 4), sig(sd, 4)),
            D::LogNormal { median, sigma_ln } => {
                format!("log-normal, median {} sigma_ln {}", sig(median, 4), sig(sigma_ln, 4))
            }
            D::Uniform { low, high } => format!("uniform, {} to {}", sig(low, 4), sig(high, 4)),
            D::TruncatedNormal { mean, sd, low, high } => format!(
                "truncated normal, mean {} sd {} within {} to {}",
                sig(mean, 4),
                sig(sd, 4),
                sig(low, 4),
                sig(high, 4)
            ),
        };
        let _ = writeln!(text, "    {:<52}{shape}{}", p.path, if p.per_cell { " (per cell)" } else { "" });
    }
    let _ = writeln!(text, "  {:<28}{}", "correlated groups", spec.groups.len());
    text.push_str("  (its paths are checked against a scenario when bands, compare or table sample it)\n");
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_read_as_words() {
        let charge = Step {
            label: "charge".into(),
            drive: Drive::Current(-5.0),
            ends: vec![StepEnd::Voltage(4.2), StepEnd::Time(5400.0)],
        };
        assert_eq!(
            describe_step(&charge, 5.0),
            "charge: charge at 5 A (1 C) until the voltage rises to 4.2 V, or 90.0 min have passed"
        );
        let hold = Step { label: "cv".into(), drive: Drive::Voltage(4.2), ends: vec![StepEnd::CurrentBelow(0.25)] };
        assert_eq!(describe_step(&hold, 5.0), "cv: hold 4.2 V until the current falls to 0.25 A (0.05 C)");
    }

    #[test]
    fn series_totals_hold_each_value_until_the_next_sample() {
        let series = TimeSeries {
            name: "t".into(),
            signal: SeriesSignal::CurrentA,
            time_s: vec![0.0, 3600.0, 5400.0, 7200.0],
            value: vec![2.0, -4.0, 0.0, 99.0],
            ambient_k: None,
        };
        let totals = series_totals(&series);
        assert_eq!(totals.duration_s, 7200.0);
        assert_eq!(totals.discharged, 7200.0);
        assert_eq!(totals.charged, 7200.0);
    }
}
