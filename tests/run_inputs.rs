//! `merge` and `bands --resume` compare what runs were computed from, by content: an edited
//! input is refused, the same content under another path is accepted, and a journal with a
//! sample twice, a sample missing or a damaged record is refused naming the sample.

mod common;

use common::fadecast;
use predicates::prelude::*;
use std::fs;
use std::path::{Path, PathBuf};

/// The ensemble demo's scenario, cell and profile copied into `dir` (the scenario naming the
/// copies by relative path), so tests can move and edit them.
fn copy_inputs(dir: &Path) -> PathBuf {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    fs::create_dir_all(dir).unwrap();
    fs::copy(root.join(common::VAN_CELL), dir.join("cell.toml")).unwrap();
    fs::copy(root.join(common::PROFILE_OVERNIGHT), dir.join("profile.toml")).unwrap();
    let scenario = fs::read_to_string(root.join(common::BANDS)).unwrap();
    let scenario: Vec<String> = scenario
        .lines()
        .map(|line| {
            if line.starts_with("cell =") {
                "cell = \"cell.toml\"".to_string()
            } else if line.starts_with("profile =") {
                "profile = \"profile.toml\"".to_string()
            } else {
                line.to_string()
            }
        })
        .collect();
    let path = dir.join("scenario.toml");
    fs::write(&path, scenario.join("\n")).unwrap();
    path
}

/// A short run of the copied scenario (6 samples, 200 cycles), `extra` appended.
fn bands(scenario: &Path, out: &Path, extra: &[&str]) -> assert_cmd::assert::Assert {
    let mut cmd = fadecast();
    cmd.arg("bands").arg(scenario);
    cmd.args(["--samples", "6", "--seed", "5", "--cycles", "200", "--quiet", "--jobs", "1", "--out"]).arg(out);
    cmd.args(extra);
    cmd.assert()
}

fn merge(shards: &[&Path], out: &Path) -> assert_cmd::assert::Assert {
    let mut cmd = fadecast();
    cmd.arg("merge").args(shards).arg("--out").arg(out);
    cmd.assert()
}

/// The journal's records as byte ranges (u32 length, payload, u32 checksum each).
fn records(journal: &[u8]) -> Vec<std::ops::Range<usize>> {
    let mut ranges = Vec::new();
    let mut at = 0;
    while at < journal.len() {
        let length = u32::from_le_bytes(journal[at..at + 4].try_into().unwrap()) as usize;
        ranges.push(at..at + 8 + length);
        at += 8 + length;
    }
    ranges
}

/// The sample index a record holds (the payload's first u64), counted from 0.
fn sample_of(journal: &[u8], range: &std::ops::Range<usize>) -> u64 {
    u64::from_le_bytes(journal[range.start + 4..range.start + 12].try_into().unwrap())
}

#[test]
fn an_edited_input_is_refused_by_merge_and_resume() {
    let tmp = tempfile::tempdir().unwrap();
    let scenario = copy_inputs(&tmp.path().join("inputs"));
    let (first, second) = (tmp.path().join("shard1"), tmp.path().join("shard2"));
    bands(&scenario, &first, &["--shard", "1/2"]).success();
    // The cell file is edited between the shards: one film value changes.
    let cell = tmp.path().join("inputs/cell.toml");
    let text = fs::read_to_string(&cell).unwrap();
    let edited = text.replacen("film_mohm = 1.0", "film_mohm = 1.5", 1);
    assert_ne!(text, edited, "the edit must change the file");
    fs::write(&cell, edited).unwrap();
    bands(&scenario, &second, &["--shard", "2/2"]).success();
    merge(&[&first, &second], &tmp.path().join("merged")).code(2).stderr(
        predicate::str::contains("not a shard of the same run")
            .and(predicate::str::contains("cell file's content differs")),
    );
    assert!(!tmp.path().join("merged").exists());
    // Resuming the first shard after the edit is refused too.
    bands(&scenario, &first, &["--shard", "1/2", "--resume"])
        .code(2)
        .stderr(predicate::str::contains("--resume").and(predicate::str::contains("cell file's content differs")));
}

#[test]
fn the_same_content_under_another_path_merges_to_the_same_bytes() {
    let tmp = tempfile::tempdir().unwrap();
    let here = copy_inputs(&tmp.path().join("here"));
    let there = copy_inputs(&tmp.path().join("elsewhere/there"));
    let whole = tmp.path().join("whole");
    bands(&here, &whole, &[]).success();
    let (first, second) = (tmp.path().join("shard1"), tmp.path().join("shard2"));
    bands(&here, &first, &["--shard", "1/2"]).success();
    // Another directory, given as an absolute path: the same run by content.
    bands(&there.canonicalize().unwrap(), &second, &["--shard", "2/2"]).success();
    let merged = tmp.path().join("merged");
    merge(&[&first, &second], &merged).success();
    for name in ["bands.csv", "samples.csv", "summary.json"] {
        assert_eq!(fs::read(whole.join(name)).unwrap(), fs::read(merged.join(name)).unwrap(), "{name}");
    }
    // The description records each input's content hash and the tool's version.
    let run: serde_json::Value = serde_json::from_slice(&fs::read(merged.join("run.json")).unwrap()).unwrap();
    assert_eq!(run["tool_version"], env!("CARGO_PKG_VERSION"));
    let roles: Vec<&str> = run["inputs"].as_array().unwrap().iter().map(|i| i["role"].as_str().unwrap()).collect();
    assert_eq!(roles, ["scenario", "cell", "profile"]);
    assert!(run["inputs"].as_array().unwrap().iter().all(|i| i["sha256"].as_str().unwrap().len() == 64));
}

#[test]
fn a_sample_twice_a_sample_missing_and_a_damaged_record_are_named() {
    let tmp = tempfile::tempdir().unwrap();
    let scenario = copy_inputs(&tmp.path().join("inputs"));
    let (first, second) = (tmp.path().join("shard1"), tmp.path().join("shard2"));
    bands(&scenario, &first, &["--shard", "1/2"]).success();
    bands(&scenario, &second, &["--shard", "2/2"]).success();
    let journal_path = second.join("samples.journal");
    let journal = fs::read(&journal_path).unwrap();
    let ranges = records(&journal);
    assert_eq!(ranges.len(), 3, "shard 2/2 of 6 samples");
    let (kept, replaced) = (sample_of(&journal, &ranges[0]), sample_of(&journal, &ranges[1]));

    // The second record replaced by a copy of the first: one sample twice, one missing.
    let mut duplicated = journal[ranges[0].clone()].to_vec();
    duplicated.extend_from_slice(&journal[ranges[0].clone()]);
    duplicated.extend_from_slice(&journal[ranges[2].clone()]);
    fs::write(&journal_path, &duplicated).unwrap();
    merge(&[&first, &second], &tmp.path().join("m1"))
        .code(2)
        .stderr(predicate::str::contains(format!("holds sample {} twice", kept + 1)));

    // The second record dropped: the missing sample is named.
    let mut dropped = journal[ranges[0].clone()].to_vec();
    dropped.extend_from_slice(&journal[ranges[2].clone()]);
    fs::write(&journal_path, &dropped).unwrap();
    merge(&[&first, &second], &tmp.path().join("m2"))
        .code(2)
        .stderr(predicate::str::contains(format!("lacks sample {}", replaced + 1)));

    // One byte of the second record's values changed: corrupt, not unfinished.
    let mut damaged = journal.clone();
    damaged[ranges[1].end - 12] ^= 0x10;
    fs::write(&journal_path, &damaged).unwrap();
    merge(&[&first, &second], &tmp.path().join("m3")).code(2).stderr(
        predicate::str::contains(format!("record 2 (it claims sample {}) fails its checksum", replaced + 1))
            .and(predicate::str::contains("finish it with --resume").not()),
    );
    bands(&scenario, &second, &["--shard", "2/2", "--resume"])
        .code(2)
        .stderr(predicate::str::contains("fails its checksum"));
    for dir in ["m1", "m2", "m3"] {
        assert!(!tmp.path().join(dir).exists(), "{dir} is not written");
    }
}

#[test]
fn a_finished_run_is_not_discarded_without_force_and_merge_does_not_overwrite_a_shard() {
    let tmp = tempfile::tempdir().unwrap();
    let scenario = copy_inputs(&tmp.path().join("inputs"));
    let out = tmp.path().join("run");
    bands(&scenario, &out, &[]).success();
    let journal = fs::read(out.join("samples.journal")).unwrap();
    bands(&scenario, &out, &[])
        .code(2)
        .stderr(predicate::str::contains("--resume").and(predicate::str::contains("--force")));
    assert_eq!(fs::read(out.join("samples.journal")).unwrap(), journal, "the journal is kept");
    bands(&scenario, &out, &["--force"]).success();

    let (first, second) = (tmp.path().join("shard1"), tmp.path().join("shard2"));
    bands(&scenario, &first, &["--shard", "1/2"]).success();
    bands(&scenario, &second, &["--shard", "2/2"]).success();
    let before = fs::read(first.join("samples.journal")).unwrap();
    merge(&[&first, &second], &first).code(2).stderr(predicate::str::contains("one of the inputs being merged"));
    assert_eq!(fs::read(first.join("samples.journal")).unwrap(), before);
    // The same shard twice names both directories.
    merge(&[&first, &first], &tmp.path().join("twice"))
        .code(2)
        .stderr(predicate::str::contains("shard 1/2 is given twice"));
}
