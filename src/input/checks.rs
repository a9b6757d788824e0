//! Value rules shared by the input files; every failed rule is kept, with its key and line.

use super::document::TomlDocument;
use super::error::InputError;

/// Collects the problems found while converting one document.
pub(crate) struct Checks<'d> {
    document: &'d TomlDocument,
    problems: Vec<InputError>,
    /// How many problems at the front explain the rest (see [`Checks::report_leading`]).
    leading: usize,
}

impl<'d> Checks<'d> {
    pub fn new(document: &'d TomlDocument) -> Self {
        Self { document, problems: Vec::new(), leading: 0 }
    }

    pub fn report(&mut self, key: &str, rule: impl Into<String>) {
        let problem = self.document.problem(key, rule);
        self.problems.push(problem);
    }

    /// Reports a problem ahead of those found so far: an implausible value (a radius typed in
    /// metres) explains the rules it breaks downstream, so it is the one to show first.
    pub fn report_leading(&mut self, key: &str, rule: impl Into<String>) {
        let problem = self.document.problem(key, rule);
        self.problems.insert(self.leading, problem);
        self.leading += 1;
    }

    /// Reports two keys that must not both be given against the one a `--set` value gave,
    /// else against `second`.
    pub fn report_conflict(&mut self, first: &str, second: &str, rule: impl Into<String>) {
        let rule = rule.into();
        let at_first = self.document.problem(first, rule.clone());
        let problem = if at_first.is_from_command_line() { at_first } else { self.document.problem(second, rule) };
        self.problems.push(problem);
    }

    /// True (and nothing reported) when `value` is finite.
    pub fn finite(&mut self, key: &str, value: f64) -> bool {
        if !value.is_finite() {
            self.report(key, format!("must be a finite number, found {value}"));
        }
        value.is_finite()
    }

    pub fn positive(&mut self, key: &str, value: f64) {
        if let Some(rule) = positive_violation(value) {
            self.report(key, rule);
        }
    }

    pub fn non_negative(&mut self, key: &str, value: f64) {
        if self.finite(key, value) && value < 0.0 {
            self.report(key, format!("must be zero or positive, found {value}"));
        }
    }

    /// `low ≤ value ≤ high`.
    pub fn within(&mut self, key: &str, value: f64, low: f64, high: f64) {
        if self.finite(key, value) && !(low..=high).contains(&value) {
            self.report(key, format!("must lie in {low}–{high}, found {value}"));
        }
    }

    /// `low < value < high`.
    pub fn strictly_between(&mut self, key: &str, value: f64, low: f64, high: f64) {
        if self.finite(key, value) && !(value > low && value < high) {
            self.report(key, format!("must lie strictly between {low} and {high}, found {value}"));
        }
    }

    /// A temperature in °C that is physically possible.
    pub fn celsius(&mut self, key: &str, value: f64) {
        if self.finite(key, value) && value <= -crate::material::constants::ZERO_CELSIUS_K {
            self.report(key, format!("must be above absolute zero (−273.15 °C), found {value}"));
        }
    }

    /// Whether a problem is already recorded against `key`.
    pub fn has_problem_at(&self, key: &str) -> bool {
        // Placing a key costs a line lookup; a valid document (every draw, nearly) has none.
        if self.problems.is_empty() {
            return false;
        }
        let placed = self.document.problem(key, "");
        self.problems.iter().any(|p| p.key == placed.key && p.file == placed.file)
    }

    pub fn problem_count(&self) -> usize {
        self.problems.len()
    }

    /// `value` when no rule failed, otherwise every problem in the order found.
    pub fn finish<T>(self, value: T) -> Result<T, Vec<InputError>> {
        if self.problems.is_empty() {
            Ok(value)
        } else {
            Err(self.problems)
        }
    }
}

/// The rule `value` breaks by not being a positive finite number, if it breaks one. Shared
/// with checks that do not run against a file (command-line flags).
pub(crate) fn positive_violation(value: f64) -> Option<String> {
    if !value.is_finite() {
        Some(format!("must be a finite number, found {value}"))
    } else if value <= 0.0 {
        Some(format!("must be positive, found {value}"))
    } else {
        None
    }
}
