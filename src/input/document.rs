//! A TOML input file on its way to typed structs: read, parsed, overridden, deserialized, and
//! able to put a file and line on any problem found along the way.

use std::path::{Path, PathBuf};

use serde::de::DeserializeOwned;

use super::error::InputError;
use super::locate::{line_of_offset, KeyIndex, Located};
use super::overrides::{apply_overrides, Override, OverrideTarget};
use super::suggest;

#[derive(Debug, Clone)]
pub(crate) struct TomlDocument {
    path: PathBuf,
    source: String,
    index: KeyIndex,
    /// The file as written.
    original: toml::Table,
    /// The file with the overrides applied; this is what gets deserialized.
    table: toml::Table,
    target: OverrideTarget,
    applied: Vec<Override>,
}

impl TomlDocument {
    /// Reads and parses `path`; syntax errors carry their line.
    pub fn read(path: &Path, target: OverrideTarget) -> Result<Self, InputError> {
        let source = read_text(path)?;
        Self::parse(path, source, target)
    }

    /// Reads and parses `path` and applies the overrides meant for it.
    pub fn read_overridden(path: &Path, target: OverrideTarget, overrides: &[Override]) -> Result<Self, InputError> {
        let mut document = Self::read(path, target)?;
        document.apply_overrides(overrides)?;
        Ok(document)
    }

    pub fn parse(path: &Path, source: String, target: OverrideTarget) -> Result<Self, InputError> {
        let original = source.parse::<toml::Table>().map_err(|error| syntax_error(path, &source, &error))?;
        let index = KeyIndex::new(&source);
        Ok(Self {
            path: path.to_path_buf(),
            source,
            index,
            table: original.clone(),
            original,
            target,
            applied: Vec::new(),
        })
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The parsed table, overrides included.
    pub fn table(&self) -> &toml::Table {
        &self.table
    }

    /// Applies the overrides meant for this document's file.
    pub fn apply_overrides(&mut self, overrides: &[Override]) -> Result<(), InputError> {
        apply_overrides(&mut self.table, overrides, self.target)?;
        self.applied.extend(overrides.iter().filter(|o| o.target == self.target).cloned());
        Ok(())
    }

    /// Deserializes the overridden table. On failure the error names the file and line, or
    /// the `--set` value whose arrival made the table invalid.
    pub fn deserialize<T: DeserializeOwned>(&self) -> Result<T, InputError> {
        let error = match self.table.clone().try_into::<T>() {
            Ok(value) => return Ok(value),
            Err(error) => error,
        };
        if self.applied.is_empty() || self.original.clone().try_into::<T>().is_err() {
            return Err(self.file_shape_error::<T>(&error));
        }
        // The file alone is fine: find the first override that breaks it.
        let mut table = self.original.clone();
        for item in &self.applied {
            if apply_overrides(&mut table, std::slice::from_ref(item), self.target).is_err() {
                continue;
            }
            if let Err(override_error) = table.clone().try_into::<T>() {
                let shape = ShapeError::from_message(override_error.message());
                return Err(InputError::command_line(item.key(), shape.override_rule()));
            }
        }
        Err(InputError::command_line(
            self.applied.last().map(Override::key).unwrap_or_default(),
            ShapeError::from_message(error.message()).override_rule(),
        ))
    }

    /// Parsing the source text again gives the error a byte span, hence a line and key.
    fn file_shape_error<T: DeserializeOwned>(&self, fallback: &toml::de::Error) -> InputError {
        let error = toml::from_str::<T>(&self.source).err();
        let error = error.as_ref().unwrap_or(fallback);
        let shape = ShapeError::from_message(error.message());
        let span = error.span();
        let span_text = span.clone().and_then(|span| self.source.get(span)).unwrap_or("");
        let entry = span.as_ref().and_then(|span| self.index.entry_at_offset(span.start));
        let key = shape.key(entry, span_text);
        let line = span.filter(|_| !span_text.is_empty()).map(|span| line_of_offset(&self.source, span.start));
        let error = InputError::new(&self.path, shape.rule).with_line(line);
        match key {
            Some(key) if !key.is_empty() => error.with_key(key),
            _ => error,
        }
    }

    /// An error about `key_path` (dotted, inside this file): placed on the `--set` value that
    /// supplied it (or created the table it belongs to), or on its line in the file.
    pub fn problem(&self, key_path: &str, rule: impl Into<String>) -> InputError {
        if self.applied.iter().any(|o| o.covers(key_path)) || self.added_by_override(key_path) {
            return InputError::command_line(format!("{}{key_path}", self.target.prefix()), rule);
        }
        InputError::new(&self.path, rule).with_line(self.index.line_of(key_path)).with_key(key_path)
    }

    /// True when the outermost part of `key_path` missing from the file as written was
    /// brought in by a `--set` value: a table the file lacks, created by setting a key in it,
    /// has no line of its own to report.
    fn added_by_override(&self, key_path: &str) -> bool {
        let segments: Vec<&str> = key_path.split('.').collect();
        let Some(present) = present_depth(&self.original, &segments) else {
            return false;
        };
        let added = &segments[..=present];
        self.applied.iter().any(|o| o.path.len() >= added.len() && o.path.iter().zip(added).all(|(a, b)| a == b))
    }
}

/// How many leading segments of `segments` exist in `table`, or `None` when all do.
fn present_depth(table: &toml::Table, segments: &[&str]) -> Option<usize> {
    let (first, rest) = segments.split_first()?;
    let mut node = match table.get(*first) {
        Some(value) => value,
        None => return Some(0),
    };
    for (depth, segment) in rest.iter().enumerate() {
        let child = match node {
            toml::Value::Table(table) => table.get(*segment),
            toml::Value::Array(array) => segment.parse::<usize>().ok().and_then(|i| array.get(i)),
            _ => None,
        };
        match child {
            Some(child) => node = child,
            None => return Some(depth + 1),
        }
    }
    None
}

/// Whether the file at `path`, with `overrides` applied, has the shape `T` expects (every key
/// known, every value of the right type), without checking any value against its rules.
pub(crate) fn check_shape<T: DeserializeOwned>(
    path: &Path,
    target: OverrideTarget,
    overrides: &[Override],
) -> Result<(), InputError> {
    TomlDocument::read_overridden(path, target, overrides)?.deserialize::<T>().map(drop)
}

/// The largest input file read: far above any cell, profile or measured day (a one-second
/// series of a year is about 30 MB), small enough that memory stays bounded.
pub const MAX_INPUT_BYTES: u64 = 64 * 1024 * 1024;

/// Reads a whole input file as UTF-8 text. Only regular files are read (a FIFO or a device
/// would block or never end), and none larger than [`MAX_INPUT_BYTES`].
pub(crate) fn read_text(path: &Path) -> Result<String, InputError> {
    use std::io::Read;
    let metadata = std::fs::metadata(path).map_err(|error| InputError::unreadable(path, &error))?;
    if !metadata.is_file() {
        let what = if metadata.is_dir() { "a directory" } else { "not a regular file (a pipe or a device?)" };
        return Err(InputError::new(path, format!("is {what}; give the path of an input file")));
    }
    if metadata.len() > MAX_INPUT_BYTES {
        return Err(InputError::new(
            path,
            format!("is {} bytes; input files may hold at most {MAX_INPUT_BYTES} bytes", metadata.len()),
        ));
    }
    let file = std::fs::File::open(path).map_err(|error| InputError::unreadable(path, &error))?;
    let mut bytes = Vec::new();
    // The file may grow after the size check; read no more than the cap allows.
    file.take(MAX_INPUT_BYTES + 1).read_to_end(&mut bytes).map_err(|error| InputError::unreadable(path, &error))?;
    if bytes.len() as u64 > MAX_INPUT_BYTES {
        return Err(InputError::new(path, format!("input files may hold at most {MAX_INPUT_BYTES} bytes")));
    }
    String::from_utf8(bytes).map_err(|error| {
        InputError::new(
            path,
            format!("file is not UTF-8 text (invalid byte at offset {})", error.utf8_error().valid_up_to()),
        )
    })
}

fn syntax_error(path: &Path, source: &str, error: &toml::de::Error) -> InputError {
    let mut rule = format!("invalid TOML: {}", error.message());
    let line = error.span().map(|span| {
        let text = source.get(span.clone()).unwrap_or("").trim();
        if !text.is_empty() && text.len() <= 40 && !text.contains('\n') {
            rule.push_str(&format!(" (at `{text}`)"));
        }
        line_of_offset(source, span.start)
    });
    InputError::new(path, rule).with_line(line)
}

/// A serde structure error (unknown key, wrong type, missing key) restated for the user.
struct ShapeError {
    rule: String,
    /// The key the message names, when it names one.
    named: NamedKey,
}

enum NamedKey {
    /// Reported at the unknown key itself.
    Unknown(String),
    /// Reported at the table that lacks the key.
    Missing(String),
    None,
}

impl ShapeError {
    fn from_message(message: &str) -> Self {
        if let Some(rest) = message.strip_prefix("unknown field ") {
            let names = backticked(rest);
            let typed = names.first().copied().unwrap_or("");
            let allowed = names.get(1..).unwrap_or_default();
            return Self {
                rule: format!("unknown key{}", suggest::hint(typed, allowed)),
                named: NamedKey::Unknown(typed.to_string()),
            };
        }
        if let Some(rest) = message.strip_prefix("missing field ") {
            let field = backticked(rest).first().map(|s| s.to_string()).unwrap_or_default();
            return Self { rule: "required key is missing".to_string(), named: NamedKey::Missing(field) };
        }
        if let Some((found, expected)) =
            message.strip_prefix("invalid type: ").and_then(|rest| rest.rsplit_once(", expected "))
        {
            return Self {
                rule: format!("expected {}, found {}", describe_expected(expected), describe_found(found)),
                named: NamedKey::None,
            };
        }
        Self { rule: message.to_string(), named: NamedKey::None }
    }

    /// The key to report, given the index entry at the error's position and the source text
    /// of its span.
    fn key(&self, entry: Option<Located<'_>>, span_text: &str) -> Option<String> {
        match (&self.named, entry) {
            // A missing field is reported at its table: a `[header]`, an inline `{…}`, or the
            // document root (an empty span).
            (NamedKey::Missing(field), Some(entry)) if span_text.starts_with(['[', '{']) => {
                Some(format!("{}.{field}", entry.path))
            }
            (NamedKey::Missing(field), _) => Some(field.clone()),
            // An unknown `[[name]]` header resolves to `name.0`; the key is `name`.
            (NamedKey::Unknown(name), Some(entry)) => {
                let segments: Vec<&str> = entry.path.split('.').collect();
                let end = segments.iter().rposition(|s| s == name).map_or(segments.len(), |i| i + 1);
                Some(segments[..end].join("."))
            }
            (NamedKey::Unknown(name), None) => Some(name.clone()),
            (NamedKey::None, entry) => entry.map(|e| e.path.to_string()),
        }
    }

    /// The rule as reported against a `--set` value, whose key is the override's own.
    fn override_rule(self) -> String {
        match self.named {
            NamedKey::Missing(field) => format!("leaves required key `{field}` missing"),
            _ => self.rule,
        }
    }
}

/// The names between backticks, in order: "`a`, expected `b` or `c`" → [a, b, c].
fn backticked(text: &str) -> Vec<&str> {
    text.split('`').skip(1).step_by(2).collect()
}

fn describe_expected(serde_expected: &str) -> String {
    match serde_expected {
        "f64" | "f32" => "a number".to_string(),
        "i64" | "i32" | "u64" | "u32" | "usize" => "a whole number".to_string(),
        "a string" | "a borrowed string" | "String" => "text in quotes".to_string(),
        "a boolean" => "`true` or `false`".to_string(),
        "a sequence" => "an array".to_string(),
        other if other.starts_with("struct ") || other == "a map" => "a table".to_string(),
        other => other.to_string(),
    }
}

fn describe_found(serde_found: &str) -> String {
    if serde_found == "map" {
        return "a table".to_string();
    }
    if serde_found == "sequence" {
        return "an array".to_string();
    }
    serde_found.replace("floating point", "number").replace("integer", "whole number")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn serde_messages_are_restated() {
        let unknown = ShapeError::from_message(
            "unknown field `partical_radius_um`, expected one of `thickness_um`, `particle_radius_um`",
        );
        assert_eq!(unknown.rule, "unknown key; did you mean `particle_radius_um`?");
        let wrong = ShapeError::from_message("invalid type: string \"six\", expected f64");
        assert_eq!(wrong.rule, "expected a number, found string \"six\"");
        let missing = ShapeError::from_message("missing field `name`");
        assert!(matches!(missing.named, NamedKey::Missing(ref field) if field == "name"));
    }
}
