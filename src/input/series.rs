//! Measured time series: CSV → [`crate::cycle::TimeSeries`].
//!
//! Lines are counted as in a text editor: the header is line 1.

use std::path::Path;

use super::document::read_text;
use super::error::InputError;
use super::plausible::impossible;
use super::profile::file_stem;
use super::suggest;
use crate::cycle::{SeriesSignal, TimeSeries, MAX_CYCLE_DURATION_S};
use crate::material::constants::ZERO_CELSIUS_K;

const TIME: &str = "time_s";
const CURRENT: &str = "current_a";
const POWER: &str = "power_w";
const AMBIENT: &str = "ambient_c";
const KNOWN_COLUMNS: [&str; 4] = [TIME, CURRENT, POWER, AMBIENT];
const HEADER_LINE: usize = 1;

/// Where each known column sits in a row.
struct Columns {
    time: usize,
    signal: SeriesSignal,
    value: usize,
    ambient: Option<usize>,
}

/// Reads a measured duty cycle; the first problem is the error.
pub fn load_series(path: &Path) -> Result<TimeSeries, InputError> {
    let text = read_text(path)?;
    parse_series(path, &text)
}

fn parse_series(path: &Path, text: &str) -> Result<TimeSeries, InputError> {
    let error =
        |line: usize, column: &str, rule: String| InputError::new(path, rule).with_line(Some(line)).with_key(column);
    let mut reader = csv::ReaderBuilder::new().trim(csv::Trim::All).has_headers(true).from_reader(text.as_bytes());
    let header = reader.headers().map_err(|e| csv_error(path, &e))?.clone();
    let columns = find_columns(path, &header)?;

    let mut series = TimeSeries {
        name: file_stem(path),
        signal: columns.signal,
        time_s: Vec::new(),
        value: Vec::new(),
        ambient_k: columns.ambient.map(|_| Vec::new()),
    };
    let mut last_line = HEADER_LINE;
    for record in reader.records() {
        let record = record.map_err(|e| csv_error(path, &e))?;
        let line = record.position().map_or(last_line + 1, |p| line_number(p.line()));
        last_line = line;
        let number = |column: usize| -> Result<f64, InputError> {
            let name = header.get(column).unwrap_or("");
            parse_number(record.get(column).unwrap_or("")).map_err(|rule| error(line, name, rule))
        };

        let time = number(columns.time)?;
        if let Some(&previous) = series.time_s.last() {
            if time <= previous {
                return Err(error(line, TIME, format!("time must increase strictly, found {time} after {previous}")));
            }
        }
        if time > MAX_CYCLE_DURATION_S {
            return Err(error(
                line,
                TIME,
                format!(
                    "a measured cycle may span at most {} days ({MAX_CYCLE_DURATION_S} s), found {time}",
                    MAX_CYCLE_DURATION_S / 86_400.0
                ),
            ));
        }
        series.time_s.push(time);
        series.value.push(number(columns.value)?);
        if let (Some(column), Some(ambient_k)) = (columns.ambient, series.ambient_k.as_mut()) {
            let celsius = number(column)?;
            if celsius <= -ZERO_CELSIUS_K {
                return Err(error(line, AMBIENT, format!("must be above absolute zero (−273.15 °C), found {celsius}")));
            }
            if let Some(rule) = impossible(AMBIENT, celsius) {
                return Err(error(line, AMBIENT, rule));
            }
            ambient_k.push(celsius + ZERO_CELSIUS_K);
        }
    }
    if series.time_s.len() < 2 {
        return Err(InputError::new(
            path,
            format!(
                "needs at least two rows (a value holds until the next row's time; the last row marks \
                 the end), found {}",
                series.time_s.len()
            ),
        )
        .with_line(Some(last_line)));
    }
    Ok(series)
}

fn find_columns(path: &Path, header: &csv::StringRecord) -> Result<Columns, InputError> {
    let header_error =
        |column: &str, rule: String| InputError::new(path, rule).with_line(Some(HEADER_LINE)).with_key(column);
    for (i, name) in header.iter().enumerate() {
        if !KNOWN_COLUMNS.contains(&name) {
            let rule = format!("unknown column{}", suggest::hint(name, &KNOWN_COLUMNS));
            return Err(header_error(name, rule));
        }
        if header.iter().take(i).any(|earlier| earlier == name) {
            return Err(header_error(name, "column appears twice".to_string()));
        }
    }
    let position = |name: &str| header.iter().position(|h| h == name);
    let time = position(TIME).ok_or_else(|| header_error(TIME, "required column is missing".to_string()))?;
    let (signal, value) = match (position(CURRENT), position(POWER)) {
        (Some(current), None) => (SeriesSignal::CurrentA, current),
        (None, Some(power)) => (SeriesSignal::PowerW, power),
        (Some(_), Some(_)) => {
            return Err(header_error(POWER, format!("give either `{CURRENT}` or `{POWER}`, not both")));
        }
        (None, None) => {
            return Err(header_error(CURRENT, format!("required column is missing: give `{CURRENT}` or `{POWER}`")));
        }
    };
    Ok(Columns { time, signal, value, ambient: position(AMBIENT) })
}

/// A finite number, or a rule saying what was found instead.
fn parse_number(field: &str) -> Result<f64, String> {
    if field.is_empty() {
        return Err("expected a number, found an empty field".to_string());
    }
    match field.parse::<f64>() {
        Ok(value) if value.is_finite() => Ok(value),
        Ok(_) => Err(format!("must be a finite number, found `{field}`")),
        Err(_) => Err(format!("expected a number, found `{field}`")),
    }
}

/// The csv crate counts lines from 1, as editors do; keep the conversion in one place.
fn line_number(csv_line: u64) -> usize {
    usize::try_from(csv_line).unwrap_or(usize::MAX)
}

fn csv_error(path: &Path, error: &csv::Error) -> InputError {
    match error.kind() {
        csv::ErrorKind::UnequalLengths { pos, expected_len, len } => {
            InputError::new(path, format!("row has {len} fields but the header has {expected_len}"))
                .with_line(pos.as_ref().map(|p| line_number(p.line())))
        }
        _ => InputError::new(path, format!("invalid CSV: {error}")),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> Result<TimeSeries, InputError> {
        parse_series(Path::new("duty.csv"), text)
    }

    #[test]
    fn reads_current_and_ambient() {
        let series = parse("time_s,current_a,ambient_c\n0,1.5,20\n10,-2,21\n").ok();
        let series = series.as_ref();
        assert_eq!(series.map(|s| s.signal), Some(SeriesSignal::CurrentA));
        assert_eq!(series.map(|s| s.time_s.clone()), Some(vec![0.0, 10.0]));
        assert_eq!(series.map(|s| s.value.clone()), Some(vec![1.5, -2.0]));
        let ambient = series.and_then(|s| s.ambient_k.clone()).unwrap_or_default();
        assert!((ambient[1] - (21.0 + ZERO_CELSIUS_K)).abs() < 1e-12);
    }

    #[test]
    fn line_numbers_count_the_header_as_line_one() {
        let error = parse("time_s,power_w\n0,1\n5,x\n").err();
        assert_eq!(error.as_ref().and_then(|e| e.line), Some(3));
        assert_eq!(error.and_then(|e| e.key), Some(POWER.to_string()));
    }

    #[test]
    fn ragged_rows_and_short_files_are_errors() {
        let ragged = parse("time_s,current_a\n0,1\n5\n").err();
        assert_eq!(ragged.and_then(|e| e.line), Some(3));
        let short = parse("time_s,current_a\n0,1\n").err();
        assert!(short.is_some_and(|e| e.rule.contains("at least two rows")));
        assert!(parse("").is_err());
    }
}
