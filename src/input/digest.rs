//! Content hashes of a run's inputs: what `run.json` records so that `--resume` and `merge`
//! compare what was computed from, not where the files were.
//!
//! TOML files are hashed as parsed with their overrides applied (comments, layout and key order
//! do not count; a changed value does); the scenario's `cell` and `profile` paths are left out,
//! since the files they name are hashed by their own content. Other files are hashed byte for
//! byte.

use std::path::Path;

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use super::document::{read_text, TomlDocument};
use super::duty::DutyFile;
use super::error::InputError;

/// What an input file is to the run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum InputRole {
    Scenario,
    Cell,
    Profile,
    Series,
    Uncertainty,
    /// Measured aging data a fit reads.
    AgingData,
}

/// One input file of a run: its role, where it was read (for the reader; not compared) and the
/// SHA-256 of its content after overrides.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct InputDigest {
    pub role: InputRole,
    pub path: String,
    pub sha256: String,
}

impl InputDigest {
    /// Same role and content, wherever the file lies.
    pub fn same_content(&self, other: &InputDigest) -> bool {
        self.role == other.role && self.sha256 == other.sha256
    }
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

pub(crate) fn sha256_of(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

/// The digest of a parsed TOML document with its overrides, `leave_out` top-level keys removed.
pub(crate) fn document_digest(role: InputRole, document: &TomlDocument, leave_out: &[&str]) -> InputDigest {
    let mut table = document.table().clone();
    for key in leave_out {
        table.remove(*key);
    }
    // The table's own text form: canonical for equal content (keys sorted, one notation).
    let text = toml::to_string(&table).unwrap_or_else(|_| format!("{table:?}"));
    InputDigest { role, path: document.path().display().to_string(), sha256: sha256_of(text.as_bytes()) }
}

pub(crate) fn duty_digest(duty: &DutyFile, path: &Path) -> Result<InputDigest, InputError> {
    match duty {
        DutyFile::Profile(document) => Ok(document_digest(InputRole::Profile, document, &[])),
        DutyFile::Series(_) => file_digest(InputRole::Series, path),
    }
}

/// The digest of a file's bytes as they are on disk.
pub fn file_digest(role: InputRole, path: &Path) -> Result<InputDigest, InputError> {
    let text = read_text(path)?;
    Ok(InputDigest { role, path: path.display().to_string(), sha256: sha256_of(text.as_bytes()) })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_matches_the_standard_test_vector() {
        // FIPS 180-2, appendix B.1: SHA-256("abc").
        assert_eq!(sha256_of(b"abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    }
}
