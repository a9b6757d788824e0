//! Mutation fuzzing of the input layer, in process: the bundled cell, profile, series, scenario,
//! fit, measured-data and uncertainty files are mutated (numbers, keys, values, headers, lines,
//! bytes; see `fuzz/mod.rs`), written to a scratch copy of the corpus and handed to the public
//! loaders, with `--set` overrides, ensemble-style draws at number paths and horizons too. Every
//! call must return (Ok or an error that can be displayed): a panic, a case over 20 s or a process
//! over 1 GiB is a failure, saved with its files under the findings directory.
//!
//! CI runs `FADECAST_FUZZ_CASES` cases (default 300, a second or two). The campaign of issue 15:
//!
//! ```text
//! FADECAST_FUZZ_CASES=1000000 FADECAST_FUZZ_JOBS=2 FADECAST_FUZZ_SEED=15 \
//!     cargo test --release --test fuzz_inputs -- --nocapture
//! ```
//!
//! One case again: `FADECAST_FUZZ_SEED=S FADECAST_FUZZ_ONLY=I cargo test --test fuzz_inputs`.

mod fuzz;

use fadecast::input::{
    check_cell, detect_kind, load_duty, load_fit, load_measured, load_profile, load_series, load_uncertainty_file,
    number_paths, parse_horizon, parse_override, InputError, Override, ScenarioTemplate,
};
use fuzz::{
    campaign_range, env_number, findings_dir, mutated, random_override, scratch_dir, write_corpus, Corpus, FileKind,
    Rng,
};
use std::cell::RefCell;
use std::io::Write as _;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

/// A case longer than this is a failure (issue 15: no run over 20 s).
const CASE_LIMIT: Duration = Duration::from_secs(20);
/// Peak resident memory of the whole harness above this is a failure (issue 15: 1 GB).
const MEMORY_LIMIT_KB: u64 = 1 << 20;
/// Nominal capacity of the 5 Ah demo cell in coulomb, for loading profiles on their own.
const DEMO_CAPACITY_COULOMB: f64 = 5.0 * 3600.0;
/// Where the standalone uncertainty file goes inside a worker's corpus copy.
const UNCERTAINTY_FILE: &str = "examples/uncertainty.toml";

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
enum Target {
    Cell,
    Profile,
    Series,
    Scenario,
    Fit,
    Measured,
    Uncertainty,
    Overrides,
    Horizon,
}

const TARGETS: [Target; 9] = [
    Target::Cell,
    Target::Profile,
    Target::Series,
    Target::Scenario,
    Target::Fit,
    Target::Measured,
    Target::Uncertainty,
    Target::Overrides,
    Target::Horizon,
];

/// Everything a case does, decided before anything runs so that it can be saved.
#[derive(Debug)]
struct Case {
    target: Target,
    /// The file handed to the loader, relative to the corpus copy.
    main: PathBuf,
    /// Files replaced by mutated bytes, relative to the corpus copy.
    writes: Vec<(PathBuf, Vec<u8>)>,
    /// `--set` arguments as typed.
    overrides: Vec<String>,
    /// Number paths and values set on a loaded scenario, as an ensemble draw would.
    draws: Vec<(String, f64)>,
    /// `--cycles`, `--years`, or the nominal capacity a profile is loaded against.
    numbers: (Option<f64>, Option<f64>),
    /// The scenario an uncertainty file is checked against.
    companion: PathBuf,
}

fn pick_target(rng: &mut Rng) -> Target {
    // Weights: the scenario and `--set` paths reach every loader, so they get the most cases.
    match rng.below(100) {
        0..=14 => Target::Cell,
        15..=26 => Target::Profile,
        27..=32 => Target::Series,
        33..=54 => Target::Scenario,
        55..=60 => Target::Fit,
        61..=67 => Target::Measured,
        68..=74 => Target::Uncertainty,
        75..=97 => Target::Overrides,
        _ => Target::Horizon,
    }
}

/// A number for a draw or a flag: interesting text read as `f64`, else random bits.
fn random_f64(rng: &mut Rng) -> f64 {
    fuzz::interesting_number(rng, Some(1.0)).replace('_', "").parse().unwrap_or_else(|_| f64::from_bits(rng.next_u64()))
}

/// The files a scenario names, relative to the corpus root.
fn referenced(corpus: &Corpus, scenario: &Path) -> Vec<PathBuf> {
    let text = &corpus.file(scenario.to_str().expect("utf-8 path")).text;
    let table: toml::Table = text.parse().expect("bundled scenario parses");
    let dir = scenario.parent().expect("in examples/");
    ["cell", "profile"].iter().filter_map(|k| table.get(*k)?.as_str().map(|p| dir.join(p))).collect()
}

fn uncertainty_section(corpus: &Corpus) -> String {
    let text = &corpus.file("examples/van-fleet-bands.toml").text;
    // The header at the start of a line, not the mention in the opening comment.
    let start = text.find("\n[uncertainty]").expect("the bands demo has an [uncertainty] section");
    text[start + 1..].to_string()
}

fn make_case(corpus: &Corpus, seed: u64, index: u64) -> Case {
    let mut rng = Rng::for_case(seed, index);
    let target = pick_target(&mut rng);
    let scenarios = corpus.of_kind(FileKind::Scenario);
    let mut case = Case {
        target,
        main: PathBuf::new(),
        writes: Vec::new(),
        overrides: Vec::new(),
        draws: Vec::new(),
        numbers: (None, None),
        companion: PathBuf::new(),
    };
    let one_file = |rng: &mut Rng, kind: FileKind, case: &mut Case| {
        let file = *rng.pick(&corpus.of_kind(kind));
        case.main = file.path.clone();
        case.writes.push((file.path.clone(), mutated(rng, &file.text, corpus)));
    };
    let some_overrides = |rng: &mut Rng, case: &mut Case, p: f64| {
        if rng.chance(p) {
            case.overrides = (0..rng.range(1, 3)).map(|_| random_override(rng, corpus)).collect();
        }
    };
    match target {
        Target::Cell => {
            one_file(&mut rng, FileKind::Cell, &mut case);
            some_overrides(&mut rng, &mut case, 0.3);
        }
        Target::Profile => {
            one_file(&mut rng, FileKind::Profile, &mut case);
            case.numbers.0 = Some(if rng.chance(0.9) { DEMO_CAPACITY_COULOMB } else { random_f64(&mut rng) });
            some_overrides(&mut rng, &mut case, 0.3);
        }
        Target::Series => one_file(&mut rng, FileKind::Series, &mut case),
        Target::Fit => {
            one_file(&mut rng, FileKind::Fit, &mut case);
            some_overrides(&mut rng, &mut case, 0.2);
        }
        Target::Measured => one_file(&mut rng, FileKind::Measured, &mut case),
        Target::Scenario => {
            let scenario = rng.pick(&scenarios).path.clone();
            let mut candidates = vec![scenario.clone()];
            candidates.extend(referenced(corpus, &scenario));
            // Mostly the scenario itself; its cell or duty cycle otherwise, or several at once.
            for (i, path) in candidates.iter().enumerate() {
                let p = if i == 0 { 0.6 } else { 0.25 };
                if rng.chance(p) {
                    let original = normalized_text(corpus, path);
                    case.writes.push((path.clone(), mutated(&mut rng, &original, corpus)));
                }
            }
            case.main = scenario;
            some_overrides(&mut rng, &mut case, 0.2);
            if rng.chance(0.5) {
                case.draws = (0..rng.range(1, 3))
                    .map(|_| (rng.pick(&corpus.override_keys).clone(), random_f64(&mut rng)))
                    .collect();
            }
        }
        Target::Uncertainty => {
            case.main = PathBuf::from(UNCERTAINTY_FILE);
            case.writes.push((case.main.clone(), mutated(&mut rng, &uncertainty_section(corpus), corpus)));
            // The scenario it is checked against: the one it was written for, mostly.
            let scenario = if rng.chance(0.7) {
                "examples/van-fleet-bands.toml".into()
            } else {
                rng.pick(&scenarios).path.clone()
            };
            case.companion = scenario;
        }
        Target::Overrides => {
            case.main = rng.pick(&scenarios).path.clone();
            case.overrides = (0..rng.range(1, 4)).map(|_| random_override(&mut rng, corpus)).collect();
        }
        Target::Horizon => {
            let maybe = |rng: &mut Rng| if rng.chance(0.7) { Some(random_f64(rng)) } else { None };
            case.numbers = (maybe(&mut rng), maybe(&mut rng));
        }
    }
    case
}

/// The corpus text of `path`, which may be spelled with `..` (`examples/../profiles/x`).
fn normalized_text(corpus: &Corpus, path: &Path) -> String {
    let mut parts: Vec<&std::ffi::OsStr> = Vec::new();
    for component in path.components() {
        match component {
            std::path::Component::ParentDir => {
                parts.pop();
            }
            other => parts.push(other.as_os_str()),
        }
    }
    let clean: PathBuf = parts.iter().collect();
    corpus.file(clean.to_str().expect("utf-8 path")).text.clone()
}

/// Runs the case's loaders on the files in `root`; true when the main load succeeded. Errors
/// are displayed, as the binary would.
fn execute(case: &Case, root: &Path) -> bool {
    // Displaying is part of the answer: a message built from the input must not panic either.
    let verbose = std::env::var_os("FADECAST_FUZZ_VERBOSE").is_some();
    let show = |error: &InputError| {
        let text = std::hint::black_box(error.to_string());
        if verbose {
            say(&format!("  {text}\n"));
        }
    };
    let path = root.join(&case.main);
    let parsed: Vec<Override> = case
        .overrides
        .iter()
        .filter_map(|text| match parse_override(text) {
            Ok(o) => Some(o),
            Err(e) => {
                show(&e);
                None
            }
        })
        .collect();
    match case.target {
        Target::Cell => {
            let _ = detect_kind(&path).map_err(|e| show(&e));
            check_cell(&path, &parsed).map_err(|errors| errors.iter().for_each(show)).is_ok()
        }
        Target::Profile => {
            let capacity = case.numbers.0.unwrap_or(DEMO_CAPACITY_COULOMB);
            let _ = detect_kind(&path).map_err(|e| show(&e));
            let _ = load_duty(&path, capacity, &parsed).map_err(|e| show(&e));
            load_profile(&path, capacity, &parsed).map_err(|e| show(&e)).is_ok()
        }
        Target::Series => {
            let _ = load_duty(&path, DEMO_CAPACITY_COULOMB, &[]).map_err(|e| show(&e));
            load_series(&path).map_err(|e| show(&e)).is_ok()
        }
        Target::Fit => load_fit(&path, &parsed).map_err(|e| show(&e)).is_ok(),
        Target::Measured => load_measured(&path).map_err(|e| show(&e)).is_ok(),
        Target::Uncertainty => {
            load_uncertainty_file(&path, &root.join(&case.companion), &[]).map_err(|e| show(&e)).is_ok()
        }
        Target::Scenario | Target::Overrides => {
            let _ = detect_kind(&path).map_err(|e| show(&e));
            match ScenarioTemplate::check(&path, &parsed) {
                Ok(template) => {
                    let keys: Vec<String> = case.draws.iter().map(|(k, _)| k.clone()).collect();
                    let values: Vec<f64> = case.draws.iter().map(|(_, v)| *v).collect();
                    match number_paths(&keys) {
                        Ok(paths) => {
                            let _ = template.build(&paths, &values).map_err(|e| show(&e));
                        }
                        Err(e) => show(&e),
                    }
                    for (key, value) in &case.draws {
                        let _ = Override::number(key, *value).map_err(|e| show(&e));
                    }
                    true
                }
                Err(errors) => {
                    errors.iter().for_each(show);
                    false
                }
            }
        }
        Target::Horizon => parse_horizon(case.numbers.0, case.numbers.1).map_err(|e| show(&e)).is_ok(),
    }
}

thread_local! {
    /// The last panic's message and place, recorded by the hook instead of printed.
    static LAST_PANIC: RefCell<Option<String>> = const { RefCell::new(None) };
}

#[derive(Debug)]
struct Failure {
    class: &'static str,
    index: u64,
    target: Target,
    detail: String,
    saved: PathBuf,
}

/// Saves a failing case's files and arguments for reproduction.
fn save_finding(corpus: &Corpus, seed: u64, index: u64, class: &str, detail: &str) -> PathBuf {
    let case = make_case(corpus, seed, index);
    let dir = findings_dir().join(format!("inputs-{class}-seed{seed}-case{index}"));
    let _ = std::fs::remove_dir_all(&dir);
    write_corpus(corpus, &dir);
    for (path, bytes) in &case.writes {
        let _ = std::fs::write(dir.join(path), bytes);
    }
    let note = format!(
        "class: {class}\ntarget: {:?}\nfile: {}\noverrides: {:?}\ndraws: {:?}\nnumbers: {:?}\ndetail: {detail}\n\
         reproduce: FADECAST_FUZZ_SEED={seed} FADECAST_FUZZ_ONLY={index} cargo test --release --test fuzz_inputs -- --nocapture\n",
        case.target,
        case.main.display(),
        case.overrides,
        case.draws,
        case.numbers,
    );
    let _ = std::fs::write(dir.join("CASE.txt"), note);
    dir
}

/// Peak resident memory of this process so far, in KiB (0 where /proc is missing).
fn peak_rss_kb() -> u64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines().find(|l| l.starts_with("VmHWM:")).and_then(|l| l.split_whitespace().nth(1)?.parse().ok())
        })
        .unwrap_or(0)
}

/// Writes to the real stderr, past the test harness's capture, for progress and hangs.
fn say(text: &str) {
    let _ = std::io::stderr().write_all(text.as_bytes());
}

struct Shared {
    corpus: Corpus,
    seed: u64,
    next: AtomicU64,
    end: u64,
    failures: Mutex<Vec<Failure>>,
    counts: Mutex<std::collections::BTreeMap<Target, (u64, u64)>>,
    slowest: Mutex<(Duration, u64)>,
}

fn worker(shared: &Shared, name: &str, running: &AtomicU64, started_ms: &AtomicU64, clock: Instant) {
    let root = scratch_dir(&format!("inputs-{name}"));
    write_corpus(&shared.corpus, &root);
    let _ = std::fs::write(root.join(UNCERTAINTY_FILE), uncertainty_section(&shared.corpus));
    let mut counts = std::collections::BTreeMap::new();
    let mut slowest = (Duration::ZERO, 0);
    loop {
        let index = shared.next.fetch_add(1, Ordering::Relaxed);
        if index >= shared.end {
            break;
        }
        let case = make_case(&shared.corpus, shared.seed, index);
        for (path, bytes) in &case.writes {
            std::fs::write(root.join(path), bytes).expect("write mutated file");
        }
        running.store(index, Ordering::Relaxed);
        started_ms.store(clock.elapsed().as_millis() as u64 + 1, Ordering::Relaxed);
        let start = Instant::now();
        let result = catch_unwind(AssertUnwindSafe(|| execute(&case, &root)));
        let took = start.elapsed();
        started_ms.store(0, Ordering::Relaxed);
        let entry = counts.entry(case.target).or_insert((0u64, 0u64));
        entry.0 += 1;
        entry.1 += u64::from(matches!(result, Ok(true)));
        if took > slowest.0 {
            slowest = (took, index);
        }
        let mut failure = None;
        if result.is_err() {
            let message = LAST_PANIC.with(|p| p.borrow_mut().take()).unwrap_or_default();
            failure = Some(("panic", message));
        } else if took > CASE_LIMIT {
            failure = Some(("slow", format!("{took:?}")));
        } else if index.is_multiple_of(256) && peak_rss_kb() > MEMORY_LIMIT_KB {
            failure = Some(("memory", format!("peak RSS {} KiB", peak_rss_kb())));
        }
        if let Some((class, detail)) = failure {
            let saved = save_finding(&shared.corpus, shared.seed, index, class, &detail);
            say(&format!("fuzz_inputs: {class} in case {index} ({:?}): {detail}\n", case.target));
            shared.failures.lock().expect("lock").push(Failure { class, index, target: case.target, detail, saved });
        }
        // Restore the corpus copy for the next case.
        for (path, _) in &case.writes {
            let original = if path == Path::new(UNCERTAINTY_FILE) {
                uncertainty_section(&shared.corpus)
            } else {
                normalized_text(&shared.corpus, path)
            };
            std::fs::write(root.join(path), original).expect("restore corpus file");
        }
        if index > 0 && index.is_multiple_of(100_000) {
            say(&format!("fuzz_inputs: {index} cases, {:.0} s\n", clock.elapsed().as_secs_f64()));
        }
    }
    let _ = std::fs::remove_dir_all(&root);
    let mut total = shared.counts.lock().expect("lock");
    for (target, (n, accepted)) in counts {
        let entry = total.entry(target).or_insert((0, 0));
        entry.0 += n;
        entry.1 += accepted;
    }
    let mut worst = shared.slowest.lock().expect("lock");
    if slowest.0 > worst.0 {
        *worst = slowest;
    }
}

#[test]
fn loaders_return_an_answer_for_every_mutated_input() {
    let seed = env_number("FADECAST_FUZZ_SEED", 1);
    let (start, end) = campaign_range("FADECAST_FUZZ_CASES", 300);
    let jobs = env_number("FADECAST_FUZZ_JOBS", 1).max(1) as usize;
    let shared = Arc::new(Shared {
        corpus: Corpus::load(),
        seed,
        next: AtomicU64::new(start),
        end,
        failures: Mutex::new(Vec::new()),
        counts: Mutex::new(Default::default()),
        slowest: Mutex::new((Duration::ZERO, 0)),
    });

    // Panics are counted, not printed; the hook keeps the message for the findings.
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|info| {
        let location = info.location().map(|l| format!(" at {}:{}", l.file(), l.line())).unwrap_or_default();
        let payload = info
            .payload()
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| info.payload().downcast_ref::<String>().cloned())
            .unwrap_or_default();
        LAST_PANIC.with(|p| *p.borrow_mut() = Some(format!("{payload}{location}")));
    }));

    let clock = Instant::now();
    let running: Arc<Vec<(AtomicU64, AtomicU64)>> =
        Arc::new((0..jobs).map(|_| (AtomicU64::new(0), AtomicU64::new(0))).collect());
    let done = Arc::new(AtomicBool::new(false));
    // A case that never returns cannot be caught in process: the watchdog saves it and ends
    // the run, so a hang is reported rather than waited on.
    let watchdog = {
        let (shared, running, done) = (Arc::clone(&shared), Arc::clone(&running), Arc::clone(&done));
        std::thread::spawn(move || {
            while !done.load(Ordering::Relaxed) {
                std::thread::sleep(Duration::from_millis(200));
                let now = clock.elapsed().as_millis() as u64;
                for (index, started) in running.iter() {
                    let started = started.load(Ordering::Relaxed);
                    if started != 0 && now.saturating_sub(started) > CASE_LIMIT.as_millis() as u64 {
                        let index = index.load(Ordering::Relaxed);
                        let saved = save_finding(&shared.corpus, shared.seed, index, "hang", "over 20 s");
                        say(&format!("fuzz_inputs: case {index} ran over 20 s; saved in {}\n", saved.display()));
                        std::process::exit(3);
                    }
                }
            }
        })
    };
    let workers: Vec<_> = (0..jobs)
        .map(|j| {
            let (shared, running) = (Arc::clone(&shared), Arc::clone(&running));
            std::thread::spawn(move || {
                let (index, started) = &running[j];
                worker(&shared, &j.to_string(), index, started, clock);
            })
        })
        .collect();
    for handle in workers {
        handle.join().expect("worker thread");
    }
    done.store(true, Ordering::Relaxed);
    watchdog.join().expect("watchdog");
    std::panic::set_hook(default_hook);

    let elapsed = clock.elapsed();
    let failures = shared.failures.lock().expect("lock");
    let counts = shared.counts.lock().expect("lock");
    let slowest = *shared.slowest.lock().expect("lock");
    let total: u64 = counts.values().map(|c| c.0).sum();
    let peak = peak_rss_kb();
    let mut by_class = std::collections::BTreeMap::new();
    for f in failures.iter() {
        *by_class.entry(f.class).or_insert(0) += 1;
    }
    // Per target: executions (of which the main load accepted the input).
    let per_target: Vec<String> = TARGETS
        .iter()
        .map(|t| {
            let (n, accepted) = counts.get(t).copied().unwrap_or_default();
            format!("{t:?} {n} ({accepted} accepted)")
        })
        .collect();
    say(&format!(
        "fuzz_inputs: seed {seed}, cases {start}..{end}: {total} executions in {:.1} s ({} jobs); {}; \
         slowest case {} took {:.3} s; peak RSS {} MiB; failures {:?}\n",
        elapsed.as_secs_f64(),
        jobs,
        per_target.join(", "),
        slowest.1,
        slowest.0.as_secs_f64(),
        peak / 1024,
        by_class,
    ));
    if peak > MEMORY_LIMIT_KB && failures.iter().all(|f| f.class != "memory") {
        panic!("the harness's peak RSS {peak} KiB is over 1 GiB");
    }
    assert!(
        failures.is_empty(),
        "{} failing cases:\n{}",
        failures.len(),
        failures
            .iter()
            .map(|f| format!("  {} case {} ({:?}): {} — {}", f.class, f.index, f.target, f.detail, f.saved.display()))
            .collect::<Vec<_>>()
            .join("\n")
    );
}
