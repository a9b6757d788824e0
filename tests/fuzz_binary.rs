//! Mutation fuzzing of the binary: `check`, `cycle` and `forecast` (short horizons) on mutated
//! scenarios, cells and profiles and on random `--set` values, each run in its own process
//! under a 20 s CPU-time limit (300 s of wall time for one that blocks) and a 1 GiB
//! address-space limit, its peak resident memory measured. Exit 0, 1 or 2 is an answer; a panic
//! (101), a signal (abort, crash), any other exit code, a run over 20 s or over 1 GiB is a
//! failure, saved with its inputs and command line under the findings directory.
//!
//! CI runs `FADECAST_FUZZ_RUNS` runs (default 30, a few seconds). The campaign of issue 15:
//!
//! ```text
//! FADECAST_FUZZ_RUNS=13000 FADECAST_FUZZ_SEED=15 \
//!     nice -n 10 cargo test --release --test fuzz_binary -- --nocapture
//! ```
//!
//! One run again: `FADECAST_FUZZ_SEED=S FADECAST_FUZZ_ONLY=I cargo test --release --test
//! fuzz_binary -- --nocapture`, or the command line saved in the finding's `CASE.txt`.
#![cfg(target_os = "linux")]

mod fuzz;

use fuzz::{
    campaign_range, env_number, findings_dir, mutate_number, mutated, random_override, scratch_dir, write_corpus,
    Corpus, FileKind, Rng,
};
use std::collections::BTreeMap;
use std::io::Write as _;
use std::os::unix::process::CommandExt as _;
use std::path::{Path, PathBuf};
use std::process::Stdio;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

/// Issue 15: no run over 20 s … of CPU time, which the machine's other load does not stretch
/// as it stretches wall time (campaigns run niced on shared cores).
const CPU_LIMIT: Duration = Duration::from_secs(20);
/// A run that does not end yet stays under the CPU limit (blocked on a read, or starved of CPU
/// by other load) is stopped after this, and classed apart.
const WALL_LIMIT: Duration = Duration::from_secs(300);
/// … or over 1 GB. The address-space limit makes a runaway allocation fail at once (an abort,
/// classed as memory) instead of after minutes of growth.
const MEMORY_LIMIT_BYTES: u64 = 1 << 30;
/// Findings saved per failure class; further ones are only counted.
const SAVED_PER_CLASS: usize = 40;

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Command {
    Check,
    Cycle,
    Forecast,
}

/// One run, decided before it starts so that it can be saved.
#[derive(Debug)]
struct Run {
    command: Command,
    /// Files replaced by mutated bytes, relative to the corpus copy.
    writes: Vec<(PathBuf, Vec<u8>)>,
    /// Arguments after the binary's name; the output directory is `out`.
    args: Vec<String>,
}

/// The files a scenario names, relative to the corpus root and without `..`.
fn referenced(corpus: &Corpus, scenario: &Path) -> Vec<PathBuf> {
    let text = &corpus.file(scenario.to_str().expect("utf-8 path")).text;
    let table: toml::Table = text.parse().expect("bundled scenario parses");
    let dir = scenario.parent().expect("in examples/");
    ["cell", "profile"]
        .iter()
        .filter_map(|k| table.get(*k)?.as_str())
        .map(|p| {
            let mut parts: Vec<std::ffi::OsString> = Vec::new();
            for component in dir.join(p).components() {
                match component {
                    std::path::Component::ParentDir => {
                        parts.pop();
                    }
                    other => parts.push(other.as_os_str().to_owned()),
                }
            }
            parts.iter().collect()
        })
        .collect()
}

fn make_run(corpus: &Corpus, seed: u64, index: u64) -> Run {
    let mut rng = Rng::for_case(seed, index);
    let command = match rng.below(10) {
        0..=1 => Command::Check,
        2..=5 => Command::Cycle,
        _ => Command::Forecast,
    };
    let scenario = rng.pick(&corpus.of_kind(FileKind::Scenario)).path.clone();
    let mut files = vec![scenario.clone()];
    files.extend(referenced(corpus, &scenario));
    let mut writes: Vec<(PathBuf, Vec<u8>)> = Vec::new();
    let mut sets = Vec::new();
    match rng.below(100) {
        // Numbers only, in one or more of the three files: most such inputs load, so these
        // runs reach the simulation with values no demo has.
        0..=49 => {
            for _ in 0..rng.range(1, 3) {
                let path = rng.pick(&files).clone();
                let text = match writes.iter().position(|(p, _)| *p == path) {
                    Some(i) => String::from_utf8(writes.remove(i).1).expect("numbers keep UTF-8"),
                    None => corpus.file(path.to_str().expect("utf-8 path")).text.clone(),
                };
                writes.push((path, mutate_number(&mut rng, &text).into_bytes()));
            }
        }
        50..=74 => sets = (0..rng.range(1, 3)).map(|_| random_override(&mut rng, corpus)).collect(),
        _ => {
            let path = rng.pick(&files).clone();
            let original = corpus.file(path.to_str().expect("utf-8 path")).text.clone();
            writes.push((path, mutated(&mut rng, &original, corpus)));
        }
    }
    let mut args: Vec<String> = Vec::new();
    match command {
        Command::Check => {
            args.push("check".into());
            // The scenario, or the cell or profile on its own (detected by kind).
            let file = if rng.chance(0.7) { scenario } else { rng.pick(&files).clone() };
            args.push(file.to_string_lossy().into_owned());
        }
        Command::Cycle => {
            args.extend(["cycle".into(), scenario.to_string_lossy().into_owned(), "--out".into(), "out".into()]);
        }
        Command::Forecast => {
            args.extend(["forecast".into(), scenario.to_string_lossy().into_owned(), "--out".into(), "out".into()]);
            match rng.below(20) {
                0 => args.extend(["--years".into(), format!("{:.3}", 0.05 + 0.45 * rng.unit())]),
                1 => args.extend(["--cycles".into(), rng.range(20, 50).to_string(), "--every-cycle".into()]),
                _ => args.extend(["--cycles".into(), rng.range(20, 200).to_string()]),
            }
        }
    }
    for set in sets {
        args.push("--set".into());
        args.push(set);
    }
    Run { command, writes, args }
}

/// How a run ended.
#[derive(Debug)]
struct Ending {
    /// Exit code, or the signal that ended it.
    code: Option<i32>,
    signal: Option<i32>,
    wall: Duration,
    /// User plus system time.
    cpu: Duration,
    peak_rss_bytes: u64,
    killed_for_time: bool,
}

/// Runs the binary in `workdir` with the limits, its output to `logs`/stdout.txt and
/// stderr.txt, reaping it with `wait4` for its resource usage.
fn execute(binary: &Path, workdir: &Path, logs: &Path, args: &[String]) -> Ending {
    let stdout = std::fs::File::create(logs.join("stdout.txt")).expect("stdout file");
    let stderr = std::fs::File::create(logs.join("stderr.txt")).expect("stderr file");
    let mut command = std::process::Command::new(binary);
    command.args(args).current_dir(workdir).stdin(Stdio::null()).stdout(stdout).stderr(stderr);
    // SAFETY: between fork and exec only async-signal-safe calls (setrlimit) are made.
    unsafe {
        command.pre_exec(|| {
            let memory = libc::rlimit { rlim_cur: MEMORY_LIMIT_BYTES, rlim_max: MEMORY_LIMIT_BYTES };
            let no_core = libc::rlimit { rlim_cur: 0, rlim_max: 0 };
            // SIGXCPU a second past the limit, SIGKILL a second later.
            let seconds = CPU_LIMIT.as_secs() as libc::rlim_t;
            let cpu = libc::rlimit { rlim_cur: seconds + 1, rlim_max: seconds + 2 };
            if libc::setrlimit(libc::RLIMIT_AS, &memory) != 0
                || libc::setrlimit(libc::RLIMIT_CORE, &no_core) != 0
                || libc::setrlimit(libc::RLIMIT_CPU, &cpu) != 0
            {
                return Err(std::io::Error::last_os_error());
            }
            Ok(())
        });
    }
    let start = Instant::now();
    let child = command.spawn().expect("start fadecast");
    let pid = child.id() as libc::pid_t;
    let mut status: libc::c_int = 0;
    // SAFETY: rusage is plain old data, filled in by wait4.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    let mut killed_for_time = false;
    let mut pause = Duration::from_micros(200);
    loop {
        // SAFETY: pid is our child; status and usage are valid for writes.
        let reaped = unsafe { libc::wait4(pid, &mut status, libc::WNOHANG, &mut usage) };
        if reaped == pid {
            break;
        }
        assert!(reaped == 0, "wait4 failed: {}", std::io::Error::last_os_error());
        if start.elapsed() > WALL_LIMIT && !killed_for_time {
            // SAFETY: signalling our own, not yet reaped, child.
            unsafe { libc::kill(pid, libc::SIGKILL) };
            killed_for_time = true;
        }
        std::thread::sleep(pause);
        pause = (pause * 2).min(Duration::from_millis(20));
    }
    let wall = start.elapsed();
    // The child was reaped above; dropping the handle does not wait again.
    drop(child);
    let (code, signal) = if libc::WIFEXITED(status) {
        (Some(libc::WEXITSTATUS(status)), None)
    } else {
        (None, libc::WIFSIGNALED(status).then(|| libc::WTERMSIG(status)))
    };
    let seconds = |t: libc::timeval| Duration::new(t.tv_sec as u64, t.tv_usec as u32 * 1000);
    let cpu = seconds(usage.ru_utime) + seconds(usage.ru_stime);
    Ending { code, signal, wall, cpu, peak_rss_bytes: usage.ru_maxrss as u64 * 1024, killed_for_time }
}

/// The failure class of a run, or `None` when it answered (exit 0, 1 or 2 within the limits).
fn classify(ending: &Ending, stderr: &str) -> Option<&'static str> {
    if ending.cpu > CPU_LIMIT || ending.signal == Some(libc::SIGXCPU) {
        return Some("timeout");
    }
    if ending.killed_for_time {
        return Some("stalled");
    }
    if ending.peak_rss_bytes > MEMORY_LIMIT_BYTES || stderr.contains("memory allocation of") {
        return Some("memory");
    }
    match (ending.code, ending.signal) {
        (Some(0..=2), _) => None,
        (Some(101), _) => Some("panic"),
        (Some(134), _) | (None, Some(libc::SIGABRT)) => Some("abort"),
        (None, Some(_)) => Some("signal"),
        _ => Some("exit-code"),
    }
}

#[derive(Debug, Default)]
struct Tally {
    /// (command, exit code) → runs that answered.
    answers: BTreeMap<(Command, i32), u64>,
    /// (class, command) → failures.
    failures: BTreeMap<(&'static str, Command), u64>,
    saved: Vec<String>,
    /// Most CPU time of one run, and its index.
    slowest: (Duration, u64),
    peak_rss_bytes: u64,
    total_wall: Duration,
}

fn say(text: &str) {
    let _ = std::io::stderr().write_all(text.as_bytes());
}

fn save_finding(root: &Path, run: &Run, class: &str, seed: u64, index: u64, ending: &Ending) -> PathBuf {
    let dir = findings_dir().join(format!("binary-{class}-seed{seed}-run{index}"));
    let _ = std::fs::remove_dir_all(&dir);
    for sub in ["examples", "profiles"] {
        copy_tree(&root.join(sub), &dir.join(sub));
    }
    let _ = std::fs::copy(root.join("stderr.txt"), dir.join("stderr.txt"));
    let quoted: Vec<String> = run.args.iter().map(|a| format!("'{}'", a.replace('\'', r"'\''"))).collect();
    let note = format!(
        "class: {class}\ncommand: {:?}\nended: {ending:?}\nmutated files: {:?}\n\
         reproduce (from this directory): prlimit --as={MEMORY_LIMIT_BYTES} timeout 20 fadecast {}\n\
         or: FADECAST_FUZZ_SEED={seed} FADECAST_FUZZ_ONLY={index} cargo test --release --test fuzz_binary -- --nocapture\n",
        run.command,
        run.writes.iter().map(|(p, _)| p).collect::<Vec<_>>(),
        quoted.join(" "),
    );
    let _ = std::fs::write(dir.join("CASE.txt"), note);
    dir
}

fn copy_tree(from: &Path, to: &Path) {
    let _ = std::fs::create_dir_all(to);
    let Ok(entries) = std::fs::read_dir(from) else { return };
    for entry in entries.flatten() {
        let path = entry.path();
        if path.is_dir() {
            copy_tree(&path, &to.join(entry.file_name()));
        } else {
            let _ = std::fs::copy(&path, to.join(entry.file_name()));
        }
    }
}

fn worker(corpus: &Corpus, seed: u64, next: &AtomicU64, end: u64, name: &str, tally: &Mutex<Tally>, clock: Instant) {
    let binary = &binary_under_test();
    let root = scratch_dir(&format!("binary-{name}"));
    write_corpus(corpus, &root);
    loop {
        let index = next.fetch_add(1, Ordering::Relaxed);
        if index >= end {
            break;
        }
        let run = make_run(corpus, seed, index);
        for (path, bytes) in &run.writes {
            std::fs::write(root.join(path), bytes).expect("write mutated file");
        }
        let ending = execute(binary, &root, &root, &run.args);
        let stderr = std::fs::read_to_string(root.join("stderr.txt")).unwrap_or_default();
        let class = classify(&ending, &stderr);
        if std::env::var_os("FADECAST_FUZZ_VERBOSE").is_some() {
            let last = stderr.lines().last().unwrap_or("");
            say(&format!(
                "run {index}: {:?} → {:?}/{:?} in {:?} CPU: {last}\n",
                run.args, ending.code, ending.signal, ending.cpu
            ));
        }
        {
            let mut tally = tally.lock().expect("lock");
            tally.total_wall += ending.wall;
            tally.peak_rss_bytes = tally.peak_rss_bytes.max(ending.peak_rss_bytes);
            if ending.cpu > tally.slowest.0 {
                tally.slowest = (ending.cpu, index);
            }
            match class {
                None => *tally.answers.entry((run.command, ending.code.unwrap_or(-1))).or_insert(0) += 1,
                Some(class) => {
                    *tally.failures.entry((class, run.command)).or_insert(0) += 1;
                    let of_class: u64 = tally.failures.iter().filter(|((c, _), _)| *c == class).map(|(_, n)| n).sum();
                    let first_line = stderr.lines().last().unwrap_or("").to_string();
                    let saved = if of_class as usize <= SAVED_PER_CLASS {
                        save_finding(&root, &run, class, seed, index, &ending).display().to_string()
                    } else {
                        "(not saved)".to_string()
                    };
                    say(&format!("fuzz_binary: {class} in run {index}: {:?} — {first_line} — {saved}\n", run.args));
                    tally.saved.push(format!("{class} run {index}: {} — {saved}", run.args.join(" ")));
                }
            }
        }
        // Restore the corpus copy and clear the outputs for the next run.
        for (path, _) in &run.writes {
            let original = &corpus.file(path.to_str().expect("utf-8 path")).text;
            std::fs::write(root.join(path), original).expect("restore corpus file");
        }
        let _ = std::fs::remove_dir_all(root.join("out"));
        if index > 0 && index.is_multiple_of(1000) {
            let failures = &tally.lock().expect("lock").failures;
            say(&format!(
                "fuzz_binary: run {index}, {:.0} s, failures so far {failures:?}\n",
                clock.elapsed().as_secs_f64()
            ));
        }
    }
    let _ = std::fs::remove_dir_all(&root);
}

#[test]
fn binary_answers_every_mutated_run_within_limits() {
    let seed = env_number("FADECAST_FUZZ_SEED", 1);
    let (start, end) = campaign_range("FADECAST_FUZZ_RUNS", 30);
    let jobs = env_number("FADECAST_FUZZ_JOBS", 1).max(1) as usize;
    let corpus = Arc::new(Corpus::load());
    let next = Arc::new(AtomicU64::new(start));
    let tally = Arc::new(Mutex::new(Tally::default()));
    let clock = Instant::now();
    let workers: Vec<_> = (0..jobs)
        .map(|j| {
            let (corpus, next, tally) = (Arc::clone(&corpus), Arc::clone(&next), Arc::clone(&tally));
            std::thread::spawn(move || worker(&corpus, seed, &next, end, &j.to_string(), &tally, clock))
        })
        .collect();
    for handle in workers {
        handle.join().expect("worker thread");
    }
    let tally = tally.lock().expect("lock");
    let mut per_command: BTreeMap<Command, u64> = BTreeMap::new();
    for ((command, _), n) in &tally.answers {
        *per_command.entry(*command).or_insert(0) += n;
    }
    say(&format!(
        "fuzz_binary: seed {seed}, runs {start}..{end} in {:.1} s ({jobs} jobs, {:.1} s of runs); answered by \
         command {per_command:?}; by (command, exit) {:?}; slowest run {} took {:.2} s of CPU; peak RSS {} MiB; failures by (class, command) {:?}\n",
        clock.elapsed().as_secs_f64(),
        tally.total_wall.as_secs_f64(),
        tally.answers,
        tally.slowest.1,
        tally.slowest.0.as_secs_f64(),
        tally.peak_rss_bytes >> 20,
        tally.failures,
    ));
    assert!(tally.failures.is_empty(), "failing runs:\n{}", tally.saved.join("\n"));
}

/// The failures the campaigns found, one command line each in `tests/data/fuzz/findings.txt`
/// (run from the repository root, `--out` added), replayed with the driver's limits; every one
/// must end (exit 0, 1 or 2) in under 2 s. Ignored in the default run only because it starts a
/// dozen processes; every finding now ends at once with exit 2.
#[test]
#[ignore = "fuzz findings of issue 15, fixed by its input ranges and caps; run with --ignored"]
fn fuzz_findings_end_within_two_seconds() {
    let binary = &binary_under_test();
    let root = fuzz::repository();
    let list = std::fs::read_to_string(root.join("tests/data/fuzz/findings.txt")).expect("findings list");
    let out = scratch_dir("findings");
    let mut problems = Vec::new();
    let mut replayed = 0;
    for line in list.lines().map(str::trim).filter(|l| !l.is_empty() && !l.starts_with('#')) {
        let mut args: Vec<String> = line.split_whitespace().map(str::to_string).collect();
        if args[0] != "check" {
            args.extend(["--out".to_string(), out.join("out").to_string_lossy().into_owned()]);
        }
        // Output files go to the scratch directory; inputs are read from the repository.
        let ending = execute(binary, root, &out, &args);
        let stderr = std::fs::read_to_string(out.join("stderr.txt")).unwrap_or_default();
        let class = classify(&ending, &stderr);
        if class.is_some() || ending.wall > Duration::from_secs(2) {
            problems.push(format!(
                "{line} → {class:?}, exit {:?}, {:.1} s of CPU",
                ending.code,
                ending.cpu.as_secs_f64()
            ));
        }
        replayed += 1;
    }
    let _ = std::fs::remove_dir_all(&out);
    assert!(replayed > 0, "no findings listed");
    assert!(problems.is_empty(), "fuzz findings that still fail:\n{}", problems.join("\n"));
}

/// The driver's verdicts, on made-up endings.
#[test]
fn endings_are_classified_as_issue_15_counts_them() {
    let ending = |code: Option<i32>, signal: Option<i32>, cpu_s: u64, rss_mib: u64, killed: bool| Ending {
        code,
        signal,
        wall: Duration::from_secs(cpu_s),
        cpu: Duration::from_secs(cpu_s),
        peak_rss_bytes: rss_mib << 20,
        killed_for_time: killed,
    };
    for code in 0..=2 {
        assert_eq!(classify(&ending(Some(code), None, 1, 10, false), ""), None);
    }
    assert_eq!(classify(&ending(Some(101), None, 1, 10, false), "thread 'main' panicked"), Some("panic"));
    assert_eq!(classify(&ending(None, Some(libc::SIGABRT), 1, 10, false), ""), Some("abort"));
    assert_eq!(classify(&ending(None, Some(libc::SIGSEGV), 1, 10, false), ""), Some("signal"));
    assert_eq!(classify(&ending(Some(3), None, 1, 10, false), ""), Some("exit-code"));
    assert_eq!(classify(&ending(None, Some(libc::SIGXCPU), 21, 10, false), ""), Some("timeout"));
    assert_eq!(classify(&ending(Some(0), None, 25, 10, false), ""), Some("timeout"));
    assert_eq!(classify(&ending(None, Some(libc::SIGKILL), 2, 10, true), ""), Some("stalled"));
    assert_eq!(classify(&ending(Some(1), None, 1, 1100, false), ""), Some("memory"));
    let oom = "memory allocation of 8589934592 bytes failed";
    assert_eq!(classify(&ending(None, Some(libc::SIGABRT), 1, 900, false), oom), Some("memory"));
}

/// The binary the runs start: `FADECAST_FUZZ_BINARY` (a frozen copy, so a long campaign is not
/// changed under it by a rebuild), else the one cargo built with this test.
fn binary_under_test() -> std::path::PathBuf {
    std::env::var_os("FADECAST_FUZZ_BINARY")
        .map(std::path::PathBuf::from)
        .unwrap_or_else(|| Path::new(env!("CARGO_BIN_EXE_fadecast")).to_path_buf())
}
