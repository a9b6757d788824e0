//! The one error type of the input layer: which file, which line, which key, which rule.

use std::fmt;
use std::path::{Path, PathBuf};

/// Where a value came from when it was given on the command line instead of in a file.
pub const COMMAND_LINE_SOURCE: &str = "--set";

/// Where a value came from when it was given as a command-line flag (`--cycles`), whose name
/// is then the error's key.
pub const COMMAND_LINE_FLAG_SOURCE: &str = "command line";

/// A problem with an input file (or a `--set` value), displayed on one line as
/// `file:line: key: rule`; parts that are unknown are left out.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub struct InputError {
    /// The file at fault, or `--set` for a command-line override.
    pub file: PathBuf,
    /// 1-based line in `file`, when the problem can be pinned to one.
    pub line: Option<usize>,
    /// Dotted key path (`negative.particle_radius_um`, `block.0.step.1`) or CSV column.
    pub key: Option<String>,
    /// What is wrong and, where it helps, what would be right.
    pub rule: String,
}

impl InputError {
    pub fn new(file: impl Into<PathBuf>, rule: impl Into<String>) -> Self {
        Self { file: file.into(), line: None, key: None, rule: rule.into() }
    }

    /// An error about a value given with `--set`; `key` is the dotted path as typed.
    pub fn command_line(key: impl Into<String>, rule: impl Into<String>) -> Self {
        Self::new(COMMAND_LINE_SOURCE, rule).with_key(key)
    }

    /// An error about the value of a command-line flag such as `--cycles`.
    pub fn command_line_flag(flag: impl Into<String>, rule: impl Into<String>) -> Self {
        Self::new(COMMAND_LINE_FLAG_SOURCE, rule).with_key(flag)
    }

    /// A file that could not be read at all.
    pub fn unreadable(path: &Path, error: &std::io::Error) -> Self {
        let rule = match error.kind() {
            std::io::ErrorKind::NotFound => "file does not exist".to_string(),
            _ => format!("file cannot be read: {error}"),
        };
        Self::new(path, rule)
    }

    pub fn with_line(mut self, line: Option<usize>) -> Self {
        self.line = line;
        self
    }

    pub fn with_key(mut self, key: impl Into<String>) -> Self {
        self.key = Some(key.into());
        self
    }

    /// True when the value at fault was given on the command line (`--set` or a flag).
    pub fn is_from_command_line(&self) -> bool {
        self.file.as_os_str() == COMMAND_LINE_SOURCE || self.file.as_os_str() == COMMAND_LINE_FLAG_SOURCE
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file.display())?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
        }
        if let Some(key) = &self.key {
            write!(f, ": {key}")?;
        }
        // The rule may quote user text; keep the message on one line regardless.
        write!(f, ": {}", self.rule.replace(['\n', '\r'], " "))
    }
}

/// The first problem of a non-empty list, for callers that report one error.
pub(crate) fn first_problem(mut problems: Vec<InputError>) -> InputError {
    if problems.is_empty() {
        // Unreachable by construction; an empty list still must not panic.
        return InputError::new("<input>", "validation failed without a recorded problem");
    }
    problems.swap_remove(0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn display_leaves_out_missing_parts() {
        let full = InputError::new("cell.toml", "must be positive").with_line(Some(7)).with_key("a.b");
        assert_eq!(full.to_string(), "cell.toml:7: a.b: must be positive");
        let no_line = InputError::new("cell.toml", "must be positive").with_key("a.b");
        assert_eq!(no_line.to_string(), "cell.toml: a.b: must be positive");
        let bare = InputError::new("cell.toml", "file does not exist");
        assert_eq!(bare.to_string(), "cell.toml: file does not exist");
        let cli = InputError::command_line("cell.x", "unknown key");
        assert_eq!(cli.to_string(), "--set: cell.x: unknown key");
        assert!(cli.is_from_command_line());
        let flag = InputError::command_line_flag("--cycles", "must be positive, found 0");
        assert_eq!(flag.to_string(), "command line: --cycles: must be positive, found 0");
        assert!(flag.is_from_command_line());
    }

    #[test]
    fn display_is_one_line() {
        let e = InputError::new("f.toml", "a\nb");
        assert!(!e.to_string().contains('\n'));
    }
}
