//! The demo data's provenance (issue: "every demo value's comment names a published range; no
//! file in the repository cites a document outside it").
//!
//! Every value in `examples/cells/*.toml` carries a comment with its provenance label — a
//! citation with its year, "from memory", "derived", "common practice", or "invented" (a value
//! with no published range says so) — and every comment that is not invented names a range or a
//! source. Every Markdown document any repository file names exists in the repository, and no
//! file reaches outside it by path.

use std::path::{Path, PathBuf};

fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Whether a comment names its provenance.
fn has_label(comment: &str) -> bool {
    let year = comment
        .split(|c: char| !c.is_ascii_digit())
        .any(|w| w.len() == 4 && (w.starts_with("19") || w.starts_with("20")));
    year || ["from memory", "derived", "common practice", "invented"].iter().any(|l| comment.contains(l))
}

/// Whether a comment names a range ("a–b", "~x", "≈", "of order") or a source with its year.
fn names_range_or_source(comment: &str) -> bool {
    let year = comment
        .split(|c: char| !c.is_ascii_digit())
        .any(|w| w.len() == 4 && (w.starts_with("19") || w.starts_with("20")));
    year || comment.contains('–') || comment.contains('~') || comment.contains('≈') || comment.contains("derived")
}

#[test]
fn every_demo_cell_value_names_its_provenance() {
    let mut missing = Vec::new();
    let dir = repo().join("examples/cells");
    let mut files: Vec<_> = std::fs::read_dir(&dir).unwrap().map(|e| e.unwrap().path()).collect();
    files.sort();
    assert!(files.len() >= 2, "the demo cells");
    for file in files.iter().filter(|p| p.extension().is_some_and(|e| e == "toml")) {
        let text = std::fs::read_to_string(file).unwrap();
        for (n, line) in text.lines().enumerate() {
            let line = line.trim();
            if line.is_empty() || line.starts_with('#') || line.starts_with('[') {
                continue;
            }
            let Some((key, rest)) = line.split_once('=') else { continue };
            let key = key.trim();
            if key == "name" || key == "enabled" {
                continue;
            }
            let comment = rest.split_once('#').map(|(_, c)| c).unwrap_or("");
            let ok = has_label(comment) && (comment.contains("invented") || names_range_or_source(comment));
            if !ok {
                missing.push(format!("{}:{}: {line}", file.display(), n + 1));
            }
        }
    }
    assert!(missing.is_empty(), "values without a named range or provenance:\n{}", missing.join("\n"));
}

/// Text files of the repository (not the build output, not version control).
fn text_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        if name.starts_with('.') || name == "target" {
            continue;
        }
        if path.is_dir() {
            text_files(&path, out);
        } else if ["rs", "md", "toml", "csv", "sh"].iter().any(|e| path.extension().is_some_and(|x| x == *e))
            || name == "run"
        {
            out.push(path);
        }
    }
}

#[test]
fn no_file_cites_a_document_outside_the_repository() {
    let root = repo();
    let mut files = Vec::new();
    text_files(&root, &mut files);
    let mut outside = Vec::new();
    for file in &files {
        let Ok(text) = std::fs::read_to_string(file) else { continue };
        for (n, line) in text.lines().enumerate() {
            // Written in pieces so this file does not name them itself.
            if line.contains(concat!("..", "/shared")) || line.contains(concat!("/wo", "rk/")) {
                outside.push(format!("{}:{}: {line}", file.display(), n + 1));
            }
            // Every Markdown document named must be one of the repository's (at its root, under
            // docs/, or beside the naming file).
            for word in line.split(|c: char| !(c.is_alphanumeric() || "_-./".contains(c))) {
                let Some(stem) = word.strip_suffix(".md") else { continue };
                if stem.is_empty() {
                    continue;
                }
                let named = format!("{stem}.md");
                let found = [root.join(&named), root.join("docs").join(&named), file.parent().unwrap().join(&named)]
                    .iter()
                    .any(|p| p.is_file());
                if !found {
                    outside.push(format!("{}:{}: names {named}", file.display(), n + 1));
                }
            }
        }
    }
    assert!(outside.is_empty(), "references outside the repository:\n{}", outside.join("\n"));
}
