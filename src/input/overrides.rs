//! `--set path.to.key=value` overrides, applied to a parsed TOML table before it is checked.
//!
//! The first path segment picks the file: `cell.…` the cell file, `profile.…` the step
//! profile, anything else the scenario. A bare `cell=…` or `profile=…` replaces the scenario's
//! file reference. Numeric segments index arrays of tables, counted from 0.

use super::error::InputError;

/// Which input file an override changes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OverrideTarget {
    Scenario,
    Cell,
    Profile,
}

impl OverrideTarget {
    /// What the user typed before the path inside the target file.
    pub fn prefix(self) -> &'static str {
        match self {
            OverrideTarget::Scenario => "",
            OverrideTarget::Cell => "cell.",
            OverrideTarget::Profile => "profile.",
        }
    }
}

/// One `--set` value.
#[derive(Debug, Clone, PartialEq)]
pub struct Override {
    pub target: OverrideTarget,
    /// Path inside the target file (the `cell.`/`profile.` prefix removed).
    pub path: Vec<String>,
    pub value: toml::Value,
    /// The argument as given, for messages.
    pub text: String,
}

impl Override {
    /// The dotted key as typed on the command line, e.g. `cell.negative.thickness_um`.
    pub fn key(&self) -> String {
        format!("{}{}", self.target.prefix(), self.path.join("."))
    }

    /// True when this override sets `key_path` (dotted, inside the target file) or a table or
    /// array that contains it.
    pub fn covers(&self, key_path: &str) -> bool {
        let key_segments: Vec<&str> = key_path.split('.').collect();
        self.path.len() <= key_segments.len() && self.path.iter().zip(&key_segments).all(|(a, b)| a == b)
    }
}

impl Override {
    /// `path=value` for a number, as an ensemble sets each drawn value. Every finite `f64`
    /// arrives unchanged, which formatting it as text for [`parse_override`] cannot promise:
    /// `1e20` prints as a whole number too large for TOML and would be read as text.
    pub fn number(path: &str, value: f64) -> Result<Self, InputError> {
        NumberPath::parse(path).map(|path| path.with_value(value))
    }
}

/// The path of an input that takes numbers (a sampled input, a fitted parameter), split once
/// so that each drawn or trial value becomes an [`Override`] without reading text again.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NumberPath {
    target: OverrideTarget,
    /// Inside the target file.
    path: Vec<String>,
    /// As given, trimmed.
    text: String,
}

impl NumberPath {
    /// `cell.negative.particle_radius_um` → the file it addresses and the path inside it.
    pub fn parse(path: &str) -> Result<Self, InputError> {
        let text = path.trim();
        let (target, path) = split_key_path(text)?;
        Ok(NumberPath { target, path, text: text.to_string() })
    }

    /// The override setting `value` (exactly, as a TOML float) at this path.
    pub fn with_value(&self, value: f64) -> Override {
        Override {
            target: self.target,
            path: self.path.clone(),
            value: toml::Value::Float(value),
            text: format!("{}={value}", self.text),
        }
    }
}

/// Parses `path.to.key=value`. The value is read as a TOML value (number, boolean, quoted
/// string, array, inline table) and otherwise taken as plain text.
pub fn parse_override(s: &str) -> Result<Override, InputError> {
    let Some((raw_path, raw_value)) = s.split_once('=') else {
        return Err(InputError::command_line(s.trim(), format!("expected `path.to.key=value`, found `{s}`")));
    };
    let raw_path = raw_path.trim();
    let (target, path) = split_key_path(raw_path)?;
    let raw_value = raw_value.trim();
    if raw_value.is_empty() {
        return Err(InputError::command_line(raw_path, "expected a value after `=`"));
    }
    Ok(Override { target, path, value: parse_value(raw_value), text: s.to_string() })
}

/// `cell.negative.thickness_um` → the file it addresses and the path inside that file.
fn split_key_path(raw_path: &str) -> Result<(OverrideTarget, Vec<String>), InputError> {
    let segments: Vec<String> = raw_path.split('.').map(|p| p.trim().to_string()).collect();
    if segments.iter().any(String::is_empty) {
        return Err(InputError::command_line(raw_path, "key path has an empty segment; write it as `table.key=value`"));
    }
    Ok(match segments.split_first() {
        Some((first, rest)) if first == "cell" && !rest.is_empty() => (OverrideTarget::Cell, rest.to_vec()),
        Some((first, rest)) if first == "profile" && !rest.is_empty() => (OverrideTarget::Profile, rest.to_vec()),
        _ => (OverrideTarget::Scenario, segments),
    })
}

fn parse_value(raw: &str) -> toml::Value {
    format!("value = {raw}")
        .parse::<toml::Table>()
        .ok()
        .and_then(|mut table| table.remove("value"))
        .unwrap_or_else(|| toml::Value::String(raw.to_string()))
}

/// Applies, in order, the overrides aimed at `target`, inserting missing keys and tables and
/// replacing existing values.
pub fn apply_overrides(
    table: &mut toml::Table,
    overrides: &[Override],
    target: OverrideTarget,
) -> Result<(), InputError> {
    for item in overrides.iter().filter(|o| o.target == target) {
        apply_one(table, item)?;
    }
    Ok(())
}

fn apply_one(table: &mut toml::Table, item: &Override) -> Result<(), InputError> {
    let Some((last, parents)) = item.path.split_last() else {
        return Err(InputError::command_line(item.key(), "empty key path"));
    };
    let mut node = Node::Table(table);
    let mut walked: Vec<&str> = Vec::new();
    for segment in parents {
        node = node.child(segment, &walked, item)?;
        walked.push(segment);
    }
    node.set(last, item.value.clone(), &walked, item)
}

/// A position in the tree being walked: tables are keyed by name, arrays by index.
enum Node<'t> {
    Table(&'t mut toml::Table),
    Array(&'t mut Vec<toml::Value>),
}

impl<'t> Node<'t> {
    fn child(self, segment: &str, walked: &[&str], item: &Override) -> Result<Node<'t>, InputError> {
        let value = match self {
            Node::Table(table) => {
                table.entry(segment.to_string()).or_insert_with(|| toml::Value::Table(toml::Table::new()))
            }
            Node::Array(array) => {
                let index = array_index(segment, array.len(), walked, item)?;
                &mut array[index]
            }
        };
        match value {
            toml::Value::Table(table) => Ok(Node::Table(table)),
            toml::Value::Array(array) => Ok(Node::Array(array)),
            other => Err(InputError::command_line(
                item.key(),
                format!(
                    "`{}` is {}, not a table, so it has no key `{}` to set",
                    join_path(walked, segment),
                    describe_value(other),
                    item.path.get(walked.len() + 1).map_or("", String::as_str),
                ),
            )),
        }
    }

    fn set(self, segment: &str, value: toml::Value, walked: &[&str], item: &Override) -> Result<(), InputError> {
        match self {
            Node::Table(table) => {
                table.insert(segment.to_string(), value);
            }
            Node::Array(array) => {
                let index = array_index(segment, array.len(), walked, item)?;
                array[index] = value;
            }
        }
        Ok(())
    }
}

fn array_index(segment: &str, len: usize, walked: &[&str], item: &Override) -> Result<usize, InputError> {
    let array_name = if walked.is_empty() { "the file".to_string() } else { format!("`{}`", walked.join(".")) };
    match segment.parse::<usize>() {
        Ok(index) if index < len => Ok(index),
        Ok(index) => Err(InputError::command_line(
            item.key(),
            format!(
                "index {index} is out of range: {array_name} has {len} entr{} (counted from 0)",
                if len == 1 { "y" } else { "ies" }
            ),
        )),
        Err(_) => Err(InputError::command_line(
            item.key(),
            format!("{array_name} is an array; expected an index (0, 1, …), found `{segment}`"),
        )),
    }
}

fn join_path(walked: &[&str], segment: &str) -> String {
    walked.iter().copied().chain([segment]).collect::<Vec<_>>().join(".")
}

fn describe_value(value: &toml::Value) -> &'static str {
    match value {
        toml::Value::String(_) => "text",
        toml::Value::Integer(_) | toml::Value::Float(_) => "a number",
        toml::Value::Boolean(_) => "a boolean",
        toml::Value::Datetime(_) => "a date",
        toml::Value::Array(_) => "an array",
        toml::Value::Table(_) => "a table",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parsed(s: &str) -> Override {
        match parse_override(s) {
            Ok(o) => o,
            Err(e) => panic!("{s}: {e}"),
        }
    }

    #[test]
    fn first_segment_picks_the_file() {
        let cell = parsed("cell.negative.particle_radius_um=4");
        assert_eq!(cell.target, OverrideTarget::Cell);
        assert_eq!(cell.path, ["negative", "particle_radius_um"]);
        assert_eq!(cell.value, toml::Value::Integer(4));
        assert_eq!(cell.key(), "cell.negative.particle_radius_um");

        let profile = parsed("profile.block.1.step.0.charge_c = 1.5");
        assert_eq!(profile.target, OverrideTarget::Profile);
        assert_eq!(profile.value, toml::Value::Float(1.5));

        let scenario = parsed("ambient_c=40");
        assert_eq!(scenario.target, OverrideTarget::Scenario);
        assert_eq!(scenario.path, ["ambient_c"]);

        let file_reference = parsed("cell=other.toml");
        assert_eq!(file_reference.target, OverrideTarget::Scenario);
        assert_eq!(file_reference.value, toml::Value::String("other.toml".into()));
    }

    #[test]
    fn numbers_keep_every_digit() {
        for value in [1e20, 4.0e-22, -0.5, 6.0] {
            let Ok(number) = Override::number(" cell.negative.particle_radius_um ", value) else {
                panic!("well-formed path")
            };
            assert_eq!(number.target, OverrideTarget::Cell);
            assert_eq!(number.path, ["negative", "particle_radius_um"]);
            assert_eq!(number.value, toml::Value::Float(value));
        }
        assert!(Override::number("a..b", 1.0).is_err_and(|e| e.is_from_command_line()));
        // The text form of 1e20 reads as a whole number too large for TOML, hence as text.
        assert!(matches!(parsed(&format!("a={}", 1e20)).value, toml::Value::String(_)));
    }

    #[test]
    fn values_are_toml_or_text() {
        assert_eq!(parsed("a=true").value, toml::Value::Boolean(true));
        assert_eq!(parsed("a=\"quoted\"").value, toml::Value::String("quoted".into()));
        assert_eq!(parsed("a=two words").value, toml::Value::String("two words".into()));
        let array = parsed("a=[[0, 1.0], [1, 0.1]]").value;
        assert!(matches!(array, toml::Value::Array(ref v) if v.len() == 2));
    }

    #[test]
    fn malformed_overrides_are_errors() {
        for bad in ["noequals", "a..b=1", "=3", "a="] {
            let error = parse_override(bad).err();
            assert!(error.is_some_and(|e| e.is_from_command_line()), "{bad}");
        }
    }

    #[test]
    fn apply_walks_tables_and_arrays() {
        let mut table: toml::Table =
            "[[block]]\n[[block.step]]\ncharge_c = 1.0\n[[block]]\n[[block.step]]\nrest = true\n"
                .parse()
                .unwrap_or_default();
        let overrides = [parsed("profile.block.1.step.0.end_time_s=60"), parsed("profile.new.key=1")];
        assert!(apply_overrides(&mut table, &overrides, OverrideTarget::Profile).is_ok());
        let step = &table["block"][1]["step"][0];
        assert_eq!(step.get("end_time_s"), Some(&toml::Value::Integer(60)));
        assert_eq!(table["new"].get("key"), Some(&toml::Value::Integer(1)));
    }

    #[test]
    fn apply_reports_bad_paths() {
        let mut table: toml::Table = "x = 1\n[[block]]\nrepeat = 2\n".parse().unwrap_or_default();
        for (text, expected) in [
            ("profile.block.3.repeat=1", "out of range"),
            ("profile.block.first.repeat=1", "expected an index"),
            ("profile.x.y=1", "not a table"),
        ] {
            let result = apply_overrides(&mut table, &[parsed(text)], OverrideTarget::Profile);
            let error = result.err().map(|e| e.to_string()).unwrap_or_default();
            assert!(error.starts_with("--set: profile."), "{error}");
            assert!(error.contains(expected), "{error}");
        }
    }
}
