//! Shared by the two fuzz harnesses (`fuzz_inputs.rs` in process, `fuzz_binary.rs` over the
//! binary): a seeded generator, the corpus of bundled input files, and the mutations applied to
//! them. Everything a case does follows from (run seed, case index), so any case can be made
//! again with `FADECAST_FUZZ_SEED` and `FADECAST_FUZZ_ONLY` (see DEVELOPERS.md, "Fuzzing").

// Each harness uses a subset of this module.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

/// SplitMix64: tiny, seedable and stable across crate versions, so a recorded (seed, case)
/// still names the same inputs after a dependency update.
#[derive(Debug, Clone)]
pub struct Rng(u64);

impl Rng {
    /// The generator for case `index` of the run seeded with `seed`.
    pub fn for_case(seed: u64, index: u64) -> Self {
        let mut rng = Rng(seed ^ index.wrapping_mul(0xD1B5_4A32_D192_ED03));
        rng.next_u64();
        rng
    }

    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in `0..n` (`n` > 0).
    pub fn below(&mut self, n: usize) -> usize {
        (self.next_u64() % n as u64) as usize
    }

    /// Uniform in `low..=high`.
    pub fn range(&mut self, low: usize, high: usize) -> usize {
        low + self.below(high - low + 1)
    }

    pub fn chance(&mut self, p: f64) -> bool {
        self.unit() < p
    }

    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }

    pub fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

/// Reads an environment variable as a number, with a default when it is unset.
pub fn env_number(name: &str, default: u64) -> u64 {
    match std::env::var(name) {
        Ok(text) => text.trim().replace('_', "").parse().unwrap_or_else(|_| panic!("{name}={text} is not a number")),
        Err(_) => default,
    }
}

/// The cases or runs a campaign covers: `FADECAST_FUZZ_ONLY` alone, else `count_var` of them
/// (default `default_count`) from `FADECAST_FUZZ_FIRST`, which shifts the range to continue or
/// split a campaign.
pub fn campaign_range(count_var: &str, default_count: u64) -> (u64, u64) {
    match std::env::var("FADECAST_FUZZ_ONLY") {
        Ok(_) => {
            let only = env_number("FADECAST_FUZZ_ONLY", 0);
            (only, only + 1)
        }
        Err(_) => {
            let first = env_number("FADECAST_FUZZ_FIRST", 0);
            (first, first + env_number(count_var, default_count))
        }
    }
}

/// What a corpus file is, which decides the loader it goes to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileKind {
    Cell,
    Profile,
    Series,
    Scenario,
    Fit,
    Measured,
}

/// One bundled input file, by its path relative to the repository root.
#[derive(Debug, Clone)]
pub struct CorpusFile {
    pub kind: FileKind,
    pub path: PathBuf,
    pub text: String,
}

/// The bundled inputs, plus the key names and table headers seen in them (the dictionary the
/// key and header mutations draw from).
#[derive(Debug)]
pub struct Corpus {
    pub files: Vec<CorpusFile>,
    pub keys: Vec<String>,
    pub headers: Vec<String>,
    /// `--set` key paths that exist in the files (scenario keys bare, `cell.`, `profile.`).
    pub override_keys: Vec<String>,
    /// The numbers the files give at those paths, to derive plausible `--set` values from.
    pub override_values: std::collections::BTreeMap<String, f64>,
}

/// The repository, whose `examples/` and `profiles/` are the corpus.
pub fn repository() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

impl Corpus {
    pub fn load() -> Self {
        let root = repository();
        let mut files = Vec::new();
        for (dir, ext) in [("examples", "toml"), ("examples/cells", "toml"), ("profiles", "toml"), ("profiles", "csv")]
        {
            files.extend(list(root, dir, ext).into_iter().map(|path| {
                let kind = match (dir, ext) {
                    ("examples", _) => FileKind::Scenario,
                    ("examples/cells", _) => FileKind::Cell,
                    (_, "csv") => FileKind::Series,
                    _ => FileKind::Profile,
                };
                read_corpus_file(root, kind, path)
            }));
        }
        files.extend(list(root, "examples/fit", "toml").into_iter().map(|p| read_corpus_file(root, FileKind::Fit, p)));
        files.extend(
            list(root, "examples/fit", "csv").into_iter().map(|p| read_corpus_file(root, FileKind::Measured, p)),
        );

        let mut keys = Vec::new();
        let mut headers = Vec::new();
        let mut override_keys = Vec::new();
        let mut override_values = std::collections::BTreeMap::new();
        for file in &files {
            let prefix = match file.kind {
                FileKind::Cell => "cell.",
                FileKind::Profile => "profile.",
                FileKind::Scenario => "",
                _ => continue,
            };
            for (key, number) in key_paths(&file.text) {
                let key = format!("{prefix}{key}");
                if let Some(number) = number {
                    override_values.insert(key.clone(), number);
                }
                override_keys.push(key);
            }
            for line in file.text.lines() {
                let line = line.trim();
                if line.starts_with('[') {
                    headers.push(line.split('#').next().unwrap_or(line).trim().to_string());
                } else if let Some((key, _)) = line.split_once('=') {
                    keys.push(key.trim().to_string());
                }
            }
        }
        for list in [&mut keys, &mut headers, &mut override_keys] {
            list.sort();
            list.dedup();
            list.retain(|k| !k.is_empty() && !k.starts_with('#'));
        }
        Corpus { files, keys, headers, override_keys, override_values }
    }

    pub fn of_kind(&self, kind: FileKind) -> Vec<&CorpusFile> {
        self.files.iter().filter(|f| f.kind == kind).collect()
    }

    pub fn file(&self, relative: &str) -> &CorpusFile {
        self.files.iter().find(|f| f.path == Path::new(relative)).unwrap_or_else(|| panic!("{relative} not in corpus"))
    }
}

fn list(root: &Path, dir: &str, ext: &str) -> Vec<PathBuf> {
    let mut paths: Vec<PathBuf> = std::fs::read_dir(root.join(dir))
        .unwrap_or_else(|e| panic!("{dir}: {e}"))
        .filter_map(|entry| entry.ok().map(|e| e.path()))
        .filter(|p| p.is_file() && p.extension().is_some_and(|e| e == ext))
        .map(|p| p.strip_prefix(root).expect("under the root").to_path_buf())
        .collect();
    paths.sort();
    paths
}

fn read_corpus_file(root: &Path, kind: FileKind, path: PathBuf) -> CorpusFile {
    let text = std::fs::read_to_string(root.join(&path)).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    CorpusFile { kind, path, text }
}

/// Dotted key paths of a TOML text, with arrays of tables counted from 0, as `--set` spells
/// them (`block.0.step.1.charge_c`), each with its number if it is one.
fn key_paths(text: &str) -> Vec<(String, Option<f64>)> {
    let Ok(table) = text.parse::<toml::Table>() else { return Vec::new() };
    let mut out = Vec::new();
    walk(&toml::Value::Table(table), String::new(), &mut out);
    out
}

fn walk(value: &toml::Value, prefix: String, out: &mut Vec<(String, Option<f64>)>) {
    let join = |key: &str| if prefix.is_empty() { key.to_string() } else { format!("{prefix}.{key}") };
    match value {
        toml::Value::Table(table) => table.iter().for_each(|(k, v)| walk(v, join(k), out)),
        toml::Value::Array(items) if items.iter().all(toml::Value::is_table) && !items.is_empty() => {
            items.iter().enumerate().for_each(|(i, v)| walk(v, join(&i.to_string()), out))
        }
        toml::Value::Float(x) => out.push((prefix, Some(*x))),
        toml::Value::Integer(n) => out.push((prefix, Some(*n as f64))),
        _ => out.push((prefix, None)),
    }
}

/// Copies the corpus into `dir` with the repository's layout, so the scenarios' relative
/// references (`cells/…`, `../profiles/…`) resolve inside `dir`.
pub fn write_corpus(corpus: &Corpus, dir: &Path) {
    for file in &corpus.files {
        let target = dir.join(&file.path);
        std::fs::create_dir_all(target.parent().expect("has a parent")).expect("create corpus dir");
        std::fs::write(&target, &file.text).expect("write corpus file");
    }
}

/// A scratch directory for a worker: on tmpfs when there is one, since the in-process harness
/// writes a few files per case a million times.
pub fn scratch_dir(name: &str) -> PathBuf {
    let shm = Path::new("/dev/shm");
    let base = if shm.is_dir() { shm.to_path_buf() } else { std::env::temp_dir() };
    let dir = base.join(format!("fadecast-fuzz-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("create scratch dir");
    dir
}

/// Where failing cases are saved: `FADECAST_FUZZ_FINDINGS`, or beside the build.
pub fn findings_dir() -> PathBuf {
    std::env::var_os("FADECAST_FUZZ_FINDINGS")
        .map(PathBuf::from)
        .unwrap_or_else(|| Path::new(env!("CARGO_TARGET_TMPDIR")).join("fuzz-findings"))
}

/// Numbers that break assumptions: zero and signs, the ends of `f64` and `i64`, subnormals,
/// non-finite values, unit slips, and spellings TOML or a CSV reader may or may not accept.
const INTERESTING: &[&str] = &[
    "0",
    "-0",
    "0.0",
    "-0.0",
    "1",
    "-1",
    "2",
    "1e308",
    "-1e308",
    "1.7976931348623157e308",
    "1e-308",
    "5e-324",
    "2.2250738585072014e-308",
    "1e30",
    "-1e30",
    "1e9",
    "-1e9",
    "1e12",
    "1e-30",
    "1e-12",
    "nan",
    "+nan",
    "-nan",
    "inf",
    "+inf",
    "-inf",
    "NaN",
    "Infinity",
    "9223372036854775807",
    "-9223372036854775808",
    "9223372036854775808",
    "18446744073709551616",
    "2147483648",
    "4294967296",
    "1e400",
    "-1e400",
    "298.15",
    "273.15",
    "0.9",
    "100",
    "1000",
    "5000",
    "1e6",
    "0.001",
    "1_000",
    "0x10",
    "0o7",
    "0b1",
    "1.",
    ".5",
    "1e",
    "--1",
    "1e-400",
    "3600",
    "86400",
    "1e15",
];

/// One of [`INTERESTING`] or a number derived from `original` (scaled by a unit factor,
/// negated, nudged).
pub fn interesting_number(rng: &mut Rng, original: Option<f64>) -> String {
    if let (Some(x), true) = (original, rng.chance(0.5)) {
        let factors = [1e3, 1e-3, 1e6, 1e-6, -1.0, 0.0, 10.0, 0.1, 1e30, 1e-30, 1e300, 2.0, 0.5, 1.0 + 1e-12, 3.6e3];
        // Half unit slips and extremes, half a spread of up to 100× either way, which mostly
        // passes the input rules and so reaches the simulation.
        let factor = if rng.chance(0.5) { *rng.pick(&factors) } else { 10f64.powf(4.0 * rng.unit() - 2.0) };
        let value = x * factor;
        return if rng.chance(0.5) { format!("{value:e}") } else { format!("{value:?}") };
    }
    if rng.chance(0.1) {
        // A random bit pattern: every float, subnormals and NaN payloads included.
        let value = f64::from_bits(rng.next_u64());
        return format!("{value:e}");
    }
    rng.pick(INTERESTING).to_string()
}

/// Byte ranges of the number-looking tokens of `text`.
pub fn number_spans(text: &str) -> Vec<(usize, usize)> {
    let bytes = text.as_bytes();
    let mut spans = Vec::new();
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b'#' {
            // A TOML comment: its numbers change nothing.
            while i < bytes.len() && bytes[i] != b'\n' {
                i += 1;
            }
            continue;
        }
        let starts = bytes[i].is_ascii_digit()
            || ((bytes[i] == b'-' || bytes[i] == b'+' || bytes[i] == b'.')
                && bytes.get(i + 1).is_some_and(u8::is_ascii_digit));
        // Digits inside names (`van-pouch-5ah`, `step_2`) are not numbers.
        let word = |b: u8| b.is_ascii_alphanumeric() || b == b'_';
        let after_word =
            i > 0 && (word(bytes[i - 1]) || (matches!(bytes[i - 1], b'-' | b'.') && i > 1 && word(bytes[i - 2])));
        if starts && !after_word {
            let start = i;
            i += 1;
            while i < bytes.len() {
                let b = bytes[i];
                let exponent_sign = (b == b'-' || b == b'+') && matches!(bytes[i - 1], b'e' | b'E');
                if b.is_ascii_digit() || b == b'.' || b == b'_' || b == b'e' || b == b'E' || exponent_sign {
                    i += 1;
                } else {
                    break;
                }
            }
            if !bytes.get(i).is_some_and(|b| b.is_ascii_alphabetic() || *b == b'-') {
                spans.push((start, i));
            }
        } else {
            i += 1;
        }
    }
    spans
}

/// Replaces one number of `text` with an interesting one. Only numbers change, so most such
/// files still parse and reach the rules (and, through the binary, the simulation).
pub fn mutate_number(rng: &mut Rng, text: &str) -> String {
    let spans = number_spans(text);
    if spans.is_empty() {
        return text.to_string();
    }
    let (start, end) = *rng.pick(&spans);
    let original = text[start..end].replace('_', "").parse::<f64>().ok();
    format!("{}{}{}", &text[..start], interesting_number(rng, original), &text[end..])
}

/// Values of other types, odd strings and paths, for `key = value` lines.
const ODD_VALUES: &[&str] = &[
    "\"text\"",
    "\"\"",
    "true",
    "false",
    "[]",
    "[1, 2]",
    "[[1.0], [2.0]]",
    "{}",
    "{ a = 1 }",
    "1979-05-27",
    "1979-05-27T07:32:00Z",
    "'''\nmulti\n'''",
    "\"../profiles/van-day.csv\"",
    "\"cells/van-pouch-5ah.toml\"",
    "\"../examples/lab-cccv-1c.toml\"",
    "\"lab-cccv-1c.toml\"",
    "\"cells\"",
    "\".\"",
    "\"/dev/null\"",
    "\"missing.toml\"",
    "\"storage-25c.csv\"",
    "\"../van-depot-storage.toml\"",
    "\"log-normal\"",
    "\"uniform\"",
    "\"latin-hypercube\"",
    "\"\\u0000\"",
    "\"ü\"",
    "[\"a\", \"b\"]",
    "[[1.0, 0.5], [0.5, 1.0]]",
    "\"1e30\"",
];

/// Bytes that mean something to TOML or CSV, and some that are not UTF-8.
const ODD_BYTES: &[u8] = b"\0\"'[]={},#\n\r\t\\.-+e_ \xff\xc3\x80";

/// The number of mutations a case stacks.
pub fn mutation_count(rng: &mut Rng) -> usize {
    match rng.below(10) {
        0..=4 => 1,
        5..=7 => 2,
        8 => rng.range(3, 5),
        _ => rng.range(6, 12),
    }
}

/// Applies one random mutation to `data`: numbers, keys, values, headers, whole lines (deleted,
/// repeated, swapped, borrowed from another corpus file), or raw bytes. The result is kept
/// under 1 MiB so each case stays fast.
pub fn mutate(rng: &mut Rng, data: &mut Vec<u8>, corpus: &Corpus) {
    const LIMIT: usize = 1 << 20;
    let text = String::from_utf8_lossy(data).into_owned();
    let mut lines: Vec<String> = text.split_inclusive('\n').map(str::to_string).collect();
    let choice = rng.below(100);
    let new_text: Option<String> = match choice {
        0..=29 => Some(mutate_number(rng, &text)),
        30..=34 => {
            // Several numbers at once, so more than one rule is off.
            let mut t = text.clone();
            for _ in 0..rng.range(2, 6) {
                t = mutate_number(rng, &t);
            }
            Some(t)
        }
        35..=41 if !lines.is_empty() => {
            lines.remove(rng.below(lines.len()));
            None
        }
        42..=47 if !lines.is_empty() => {
            let i = rng.below(lines.len());
            let copies = if rng.chance(0.9) { rng.range(1, 3) } else { rng.range(10, 2000) };
            let line = ensure_newline(&lines[i]);
            for _ in 0..copies {
                lines.insert(i, line.clone());
            }
            None
        }
        48..=51 if lines.len() > 1 => {
            let (a, b) = (rng.below(lines.len()), rng.below(lines.len()));
            lines.swap(a, b);
            None
        }
        52..=57 => {
            let donor = rng.pick(&corpus.files);
            let donor_lines: Vec<&str> = donor.text.split_inclusive('\n').collect();
            if !donor_lines.is_empty() {
                let line = ensure_newline(donor_lines[rng.below(donor_lines.len())]);
                lines.insert(rng.below(lines.len() + 1), line);
            }
            None
        }
        58..=64 => {
            let assignments: Vec<usize> = (0..lines.len()).filter(|&i| lines[i].contains('=')).collect();
            if !assignments.is_empty() {
                let i = *rng.pick(&assignments);
                let (key, _) = lines[i].split_once('=').expect("has =");
                lines[i] = format!("{key}= {}\n", rng.pick(ODD_VALUES));
            }
            None
        }
        65..=70 => {
            let assignments: Vec<usize> = (0..lines.len()).filter(|&i| lines[i].contains('=')).collect();
            if !assignments.is_empty() {
                let i = *rng.pick(&assignments);
                let (key, value) = lines[i].split_once('=').expect("has =");
                let new_key = match rng.below(3) {
                    0 => rng.pick(&corpus.keys).clone(),
                    1 => format!("{}x", key.trim()),
                    _ => format!("{}.{}", key.trim(), rng.pick(&corpus.keys)),
                };
                lines[i] = format!("{new_key} ={value}");
            }
            None
        }
        71..=74 => {
            let header = rng.pick(&corpus.headers).clone();
            lines.insert(rng.below(lines.len() + 1), format!("{header}\n"));
            None
        }
        75..=79 if !data.is_empty() => {
            let i = rng.below(data.len());
            data[i] = if rng.chance(0.5) { *rng.pick(ODD_BYTES) } else { data[i] ^ (1 << rng.below(8)) };
            return;
        }
        80..=84 => {
            let i = rng.below(data.len() + 1);
            let count = rng.range(1, 4);
            for _ in 0..count {
                data.insert(i, *rng.pick(ODD_BYTES));
            }
            return;
        }
        85..=89 if !data.is_empty() => {
            let start = rng.below(data.len());
            let end = (start + rng.range(1, 64)).min(data.len());
            data.drain(start..end);
            return;
        }
        90..=93 if !data.is_empty() => {
            let start = rng.below(data.len());
            let end = (start + rng.range(1, 256)).min(data.len());
            let chunk = data[start..end].to_vec();
            let at = rng.below(data.len() + 1);
            data.splice(at..at, chunk);
            return;
        }
        94..=96 => {
            data.truncate(rng.below(data.len() + 1));
            return;
        }
        _ => {
            // A CSV column or TOML array grown or shrunk: one comma-separated field removed
            // or repeated on a line.
            if !lines.is_empty() {
                let i = rng.below(lines.len());
                let mut fields: Vec<String> = lines[i].trim_end_matches('\n').split(',').map(str::to_string).collect();
                let j = rng.below(fields.len());
                if rng.chance(0.5) && fields.len() > 1 {
                    fields.remove(j);
                } else {
                    let field = fields[j].clone();
                    fields.insert(j, field);
                }
                lines[i] = format!("{}\n", fields.join(","));
            }
            None
        }
    };
    let new_text = new_text.unwrap_or_else(|| lines.concat());
    if new_text.len() <= LIMIT {
        *data = new_text.into_bytes();
    }
}

fn ensure_newline(line: &str) -> String {
    if line.ends_with('\n') {
        line.to_string()
    } else {
        format!("{line}\n")
    }
}

/// Mutates `original` with a stacked number of mutations.
pub fn mutated(rng: &mut Rng, original: &str, corpus: &Corpus) -> Vec<u8> {
    let mut data = original.as_bytes().to_vec();
    for _ in 0..mutation_count(rng) {
        mutate(rng, &mut data, corpus);
    }
    data
}

/// A `--set` argument: a key path that exists (most of the time) or a broken one, and a value
/// that is interesting, of another type, or not TOML at all.
pub fn random_override(rng: &mut Rng, corpus: &Corpus) -> String {
    let key = match rng.below(10) {
        0..=6 => rng.pick(&corpus.override_keys).clone(),
        7 => format!("{}.{}", rng.pick(&["cell", "profile", "usage", "horizon"]), rng.pick(&corpus.keys)),
        8 => {
            let k = rng.pick(&corpus.override_keys).clone();
            let bad = ["", ".", "..", "x.", ".x", "block.99.step.0.charge_c", "9999999999999999999999", "-1"];
            match rng.below(3) {
                0 => format!("{k}{}", rng.pick(&bad)),
                1 => format!("{}{k}", rng.pick(&bad)),
                _ => rng.pick(&bad).to_string(),
            }
        }
        _ => rng.pick(&["cell", "profile", "ambient_c", "name", "uncertainty", "usage", "block.0"]).to_string(),
    };
    let value = match rng.below(10) {
        0..=6 => interesting_number(rng, corpus.override_values.get(&key).copied()),
        7 => rng.pick(ODD_VALUES).to_string(),
        8 => String::new(),
        _ => "=1".to_string(),
    };
    if rng.chance(0.03) {
        return key; // no `=` at all
    }
    format!("{key}={value}")
}
