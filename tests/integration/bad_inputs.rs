//! The file-based bad-input corpus in `tests/bad-inputs/`: every case in
//! `cases.toml` runs the real binary with the corpus as its working
//! directory. A `[[case]]` must exit 2 with its fragment in stderr, print
//! nothing on stdout, write nothing into its `{tmp}` directory and not panic;
//! an `[[incomplete]]` entry (a damaged partial that gather rejects) must
//! exit 1 with its fragment in the report on stdout. Every file of the corpus
//! must be used by some case, and at least 45 cases must be about a file.
//! All failures are collected and reported together, each naming its case.

use std::collections::{BTreeMap, BTreeSet};
use std::fs::File;
use std::path::{Component, Path, PathBuf};
use std::process::Stdio;
use std::time::{Duration, Instant, SystemTime};

use serde::Deserialize;

/// How long one case may run before it counts as a hang.
const TIMEOUT: Duration = Duration::from_secs(60);
/// The least number of cases that are about a bad file.
const MIN_FILE_CASES: usize = 45;
/// Files of the corpus that are not inputs.
const NOT_INPUTS: &[&str] = &["cases.toml", "README.md"];
/// Inputs that misbehave today, kept for later; not run, not counted.
const PENDING_DIR: &str = "pending";

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct Manifest {
    #[serde(default)]
    support: Vec<String>,
    #[serde(default)]
    case: Vec<Case>,
    #[serde(default)]
    incomplete: Vec<Case>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct Case {
    file: Option<String>,
    args: Vec<String>,
    expect: String,
}

impl Case {
    fn label(&self) -> String {
        match &self.file {
            Some(f) => format!("{f} (sliceplan {})", self.args.join(" ")),
            None => format!("sliceplan {}", self.args.join(" ")),
        }
    }
}

struct Outcome {
    code: Option<i32>,
    stdout: String,
    stderr: String,
    /// Names of whatever the command left in its `{tmp}` directory.
    left_in_tmp: Vec<String>,
}

fn corpus() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad-inputs")
}

fn read_manifest(root: &Path) -> Manifest {
    let text = std::fs::read_to_string(root.join("cases.toml")).expect("read cases.toml");
    toml::from_str(&text).unwrap_or_else(|e| panic!("cases.toml: {e}"))
}

/// Runs one case in `root` with `{tmp}` replaced by a fresh directory; a
/// case that runs longer than [`TIMEOUT`] is killed and reported.
fn run(root: &Path, case: &Case) -> Result<Outcome, String> {
    let tmp = tempfile::tempdir().map_err(|e| e.to_string())?;
    let capture = tempfile::tempdir().map_err(|e| e.to_string())?;
    let tmp_str = tmp.path().to_str().ok_or("temporary path is not UTF-8")?;
    let args: Vec<String> = case
        .args
        .iter()
        .map(|a| a.replace("{tmp}", tmp_str))
        .collect();
    let out_path = capture.path().join("stdout");
    let err_path = capture.path().join("stderr");
    let mut child = crate::support::bin::binary()
        .args(&args)
        .current_dir(root)
        .stdin(Stdio::null())
        .stdout(File::create(&out_path).map_err(|e| e.to_string())?)
        .stderr(File::create(&err_path).map_err(|e| e.to_string())?)
        .spawn()
        .map_err(|e| format!("cannot start the binary: {e}"))?;
    let start = Instant::now();
    let status = loop {
        if let Some(status) = child.try_wait().map_err(|e| e.to_string())? {
            break status;
        }
        if start.elapsed() > TIMEOUT {
            let _ = child.kill();
            let _ = child.wait();
            return Err(format!(
                "still running after {} s; killed",
                TIMEOUT.as_secs()
            ));
        }
        std::thread::sleep(Duration::from_millis(10));
    };
    let read =
        |p: &Path| String::from_utf8_lossy(&std::fs::read(p).unwrap_or_default()).into_owned();
    let mut left_in_tmp: Vec<String> = std::fs::read_dir(tmp.path())
        .map_err(|e| e.to_string())?
        .map(|e| e.map(|e| e.file_name().to_string_lossy().into_owned()))
        .collect::<Result<_, _>>()
        .map_err(|e| e.to_string())?;
    left_in_tmp.sort();
    Ok(Outcome {
        code: status.code(),
        stdout: read(&out_path),
        stderr: read(&err_path),
        left_in_tmp,
    })
}

/// What is wrong with the outcome of a `[[case]]`, if anything.
fn check_case(case: &Case, out: &Outcome) -> Vec<String> {
    let mut problems = Vec::new();
    if out.code != Some(2) {
        problems.push(format!("exit code {:?}, expected 2", out.code));
    }
    if !out.stderr.contains(&case.expect) {
        problems.push(format!("stderr lacks {:?}", case.expect));
    }
    if !out.stdout.is_empty() {
        problems.push(format!(
            "stdout is not empty: {:?}",
            first_chars(&out.stdout)
        ));
    }
    problems.extend(check_clean(out));
    problems
}

/// What is wrong with the outcome of an `[[incomplete]]` gather, if anything.
fn check_incomplete(case: &Case, out: &Outcome) -> Vec<String> {
    let mut problems = Vec::new();
    if out.code != Some(1) {
        problems.push(format!("exit code {:?}, expected 1", out.code));
    }
    if !out.stdout.contains(&case.expect) {
        problems.push(format!("stdout lacks {:?}", case.expect));
    }
    if !out.stdout.contains("incomplete") || out.stdout.contains("summed ") {
        problems.push(format!(
            "stdout does not read as an incomplete gather: {:?}",
            first_chars(&out.stdout)
        ));
    }
    problems.extend(check_clean(out));
    problems
}

/// What every case requires whatever its exit code: nothing written and no
/// panic.
fn check_clean(out: &Outcome) -> Vec<String> {
    let mut problems = Vec::new();
    if !out.left_in_tmp.is_empty() {
        problems.push(format!("left output behind: {:?}", out.left_in_tmp));
    }
    problems.extend(check_no_panic(out));
    problems
}

fn check_no_panic(out: &Outcome) -> Vec<String> {
    [
        "panicked",
        "RUST_BACKTRACE",
        "stack backtrace",
        "overflowed its stack",
    ]
    .iter()
    .filter(|w| out.stderr.contains(*w))
    .map(|w| format!("stderr mentions {w:?}"))
    .collect()
}

fn first_chars(s: &str) -> String {
    s.chars().take(300).collect()
}

/// Every file under `dir` (recursively) as a path relative to `root` with
/// `/` separators, with its size and modification time.
fn snapshot(root: &Path, dir: &Path, into: &mut BTreeMap<String, (u64, Option<SystemTime>)>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            snapshot(root, &path, into);
        } else {
            let meta = std::fs::metadata(&path).unwrap();
            into.insert(relative(root, &path), (meta.len(), meta.modified().ok()));
        }
    }
}

fn relative(root: &Path, path: &Path) -> String {
    let rel = path.strip_prefix(root).unwrap();
    rel.components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect::<Vec<_>>()
        .join("/")
}

/// `path` (relative to `root`) with `.` and `..` resolved lexically, when it
/// stays inside `root`.
fn normalise(path: &str) -> Option<String> {
    let mut parts: Vec<String> = Vec::new();
    for c in Path::new(path).components() {
        match c {
            Component::Normal(p) => parts.push(p.to_string_lossy().into_owned()),
            Component::CurDir => {}
            Component::ParentDir => {
                parts.pop()?;
            }
            _ => return None,
        }
    }
    Some(parts.join("/"))
}

/// True when `file` is `used` itself or lies inside the directory `used`.
fn covers(used: &str, file: &str) -> bool {
    !used.is_empty()
        && (file == used || file.strip_prefix(used).is_some_and(|r| r.starts_with('/')))
}

#[test]
fn every_bad_input_in_the_corpus_is_refused_clearly() {
    let root = corpus();
    let manifest = read_manifest(&root);
    let mut failures = Vec::new();

    // Which files the cases use: their `file` and any argument naming a path
    // of the corpus (a directory argument uses every file below it).
    let mut files = BTreeMap::new();
    snapshot(&root, &root, &mut files);
    let inputs: BTreeSet<&String> = files
        .keys()
        .filter(|f| !NOT_INPUTS.contains(&f.as_str()) && !covers(PENDING_DIR, f))
        .collect();
    let support: BTreeSet<String> = manifest.support.iter().cloned().collect();
    for s in &support {
        if !files.contains_key(s) {
            failures.push(format!("support file {s}: does not exist"));
        }
    }
    let all_cases = manifest.case.iter().chain(&manifest.incomplete);
    let mut used: BTreeSet<String> = BTreeSet::new();
    for case in all_cases {
        if let Some(f) = &case.file {
            if !root.join(f).exists() {
                failures.push(format!("{}: the case's file does not exist", case.label()));
            }
            used.extend(normalise(f));
        }
        used.extend(case.args.iter().filter_map(|a| normalise(a)));
    }
    for f in &inputs {
        if !support.contains(*f) && !used.iter().any(|u| covers(u, f)) {
            failures.push(format!(
                "{f}: no case uses this file (add a case, or list it in `support`)"
            ));
        }
    }
    let file_cases = manifest
        .case
        .iter()
        .filter(|c| c.file.as_ref().is_some_and(|f| !support.contains(f)))
        .count();
    if file_cases < MIN_FILE_CASES {
        failures.push(format!(
            "only {file_cases} [[case]] entries name a bad file; the corpus needs at least {MIN_FILE_CASES}"
        ));
    }

    for case in &manifest.case {
        match run(&root, case) {
            Ok(out) => {
                let problems = check_case(case, &out);
                if !problems.is_empty() {
                    failures.push(format!(
                        "{}: {}\n    stderr: {}",
                        case.label(),
                        problems.join("; "),
                        first_chars(out.stderr.trim())
                    ));
                }
            }
            Err(e) => failures.push(format!("{}: {e}", case.label())),
        }
    }
    for case in &manifest.incomplete {
        match run(&root, case) {
            Ok(out) => {
                let problems = check_incomplete(case, &out);
                if !problems.is_empty() {
                    failures.push(format!(
                        "{}: {}\n    stdout: {}\n    stderr: {}",
                        case.label(),
                        problems.join("; "),
                        first_chars(out.stdout.trim()),
                        first_chars(out.stderr.trim())
                    ));
                }
            }
            Err(e) => failures.push(format!("{}: {e}", case.label())),
        }
    }

    // Bad input must never change the corpus itself.
    let mut after = BTreeMap::new();
    snapshot(&root, &root, &mut after);
    if after != files {
        let before: BTreeSet<_> = files.iter().collect();
        let now: BTreeSet<_> = after.iter().collect();
        let changed: Vec<&String> = before
            .symmetric_difference(&now)
            .map(|(name, _)| *name)
            .collect::<BTreeSet<_>>()
            .into_iter()
            .collect();
        failures.push(format!(
            "running the cases changed files in the corpus: {changed:?}"
        ));
    }

    assert!(
        failures.is_empty(),
        "{} problem(s) in tests/bad-inputs ({} cases, {} incomplete gathers):\n{}",
        failures.len(),
        manifest.case.len(),
        manifest.incomplete.len(),
        failures.join("\n")
    );
    eprintln!(
        "checked {} cases ({file_cases} about a bad file) and {} incomplete gathers",
        manifest.case.len(),
        manifest.incomplete.len()
    );
}
