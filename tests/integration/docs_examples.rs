//! Every command the README, the docs and `--help` show is run here, so the
//! examples cannot drift from the tool: each must name files that exist and
//! exit 0 (help examples and README lines), in the order the page shows
//! them, in a fresh directory holding copies of `demo-data/` and
//! `configs/`.
//!
//! What is read: lines `$ sliceplan ...` in fenced blocks and lines
//! `    sliceplan ...` (indented, as README code) of README.md and
//! docs/*.md, and the `Examples:` section of each command's `--help`.
//! A trailing ` # ...` is a comment. Lines with `--submit` or `--status`,
//! and everything a page runs after `sbatch` (which needs a cluster), may
//! also exit 1 ("not done yet"); `sbatch` itself is not run. Profiles that
//! `calibrate` writes go to the sandbox's own configuration directory.

use std::path::{Path, PathBuf};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A fresh directory with copies of the demo data and machine profiles.
fn sandbox() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    for sub in ["demo-data", "configs"] {
        copy_dir(&root().join(sub), &dir.path().join(sub));
    }
    dir
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for entry in std::fs::read_dir(from).unwrap() {
        let entry = entry.unwrap();
        let target = to.join(entry.file_name());
        if entry.file_type().unwrap().is_dir() {
            copy_dir(&entry.path(), &target);
        } else {
            std::fs::copy(entry.path(), &target).unwrap();
        }
    }
}

/// Splits a command line into words (double quotes group, as the docs
/// write them).
fn words(line: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut quoted = false;
    let mut any = false;
    for c in line.chars() {
        match c {
            '"' => {
                quoted = !quoted;
                any = true;
            }
            ' ' if !quoted => {
                if any || !cur.is_empty() {
                    out.push(std::mem::take(&mut cur));
                }
                any = false;
            }
            _ => cur.push(c),
        }
    }
    if any || !cur.is_empty() {
        out.push(cur);
    }
    out
}

/// The command lines of a markdown page, in order (without the leading
/// `$ ` or indentation).
fn page_commands(text: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut fenced = false;
    for line in text.lines() {
        if line.trim_start().starts_with("```") {
            fenced = !fenced;
            continue;
        }
        let cmd = if fenced {
            line.strip_prefix("$ ")
        } else {
            line.strip_prefix("    ")
                .filter(|l| l.starts_with("sliceplan ") || l.starts_with("scripts/"))
        };
        if let Some(c) = cmd {
            out.push(c.trim().to_string());
        }
    }
    out
}

/// Runs the command lines of one page in one sandbox; returns failures.
fn run_page(name: &str, commands: &[String]) -> Vec<String> {
    let dir = sandbox();
    let mut failures = Vec::new();
    let mut after_sbatch = false;
    for line in commands {
        // A trailing ` # ...` is a comment, as in a shell.
        let line = line.split(" # ").next().unwrap_or(line.as_str());
        let w = words(line);
        match w.first().map(String::as_str) {
            Some("sbatch") => {
                after_sbatch = true;
                continue;
            }
            Some("sliceplan") => {}
            // Scripts and other programs are run by their own tests.
            _ => continue,
        }
        // Profiles that `calibrate` writes stay in the sandbox.
        let out = crate::support::bin::binary()
            .args(&w[1..])
            .current_dir(dir.path())
            .env("XDG_CONFIG_HOME", dir.path().join("config"))
            .output()
            .unwrap();
        let code = out.status.code();
        let may_be_unfinished =
            after_sbatch || line.contains("--submit") || line.contains("--status");
        let ok = code == Some(0) || (may_be_unfinished && code == Some(1));
        if !ok {
            failures.push(format!(
                "{name}: `{line}` exited {code:?}\n{}",
                String::from_utf8_lossy(&out.stderr)
            ));
        }
    }
    failures
}

/// Long in a debug build (the walkthrough searches with 200 trials):
/// `scripts/long-tests.sh` runs it in release, in CI.
#[test]
#[ignore]
fn readme_and_docs_commands_run_as_written() {
    let mut pages = vec![root().join("README.md")];
    let mut docs: Vec<PathBuf> = std::fs::read_dir(root().join("docs"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "md"))
        .collect();
    docs.sort();
    pages.extend(docs);
    let mut failures = Vec::new();
    let mut count = 0;
    for page in &pages {
        let text = std::fs::read_to_string(page).unwrap();
        let commands = page_commands(&text);
        count += commands.len();
        failures.extend(run_page(&page.display().to_string(), &commands));
    }
    assert!(count >= 20, "only {count} commands found");
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// Long (examples use the default 10 s search): `scripts/long-tests.sh`
/// runs it in release, in CI.
#[test]
#[ignore]
fn help_examples_run_as_written() {
    // In an order where each example finds what earlier ones wrote.
    let order = [
        "generate",
        "calibrate",
        "import",
        "inspect",
        "plan",
        "fit",
        "report",
        "jobs",
        "run",
        "gather",
    ];
    let mut commands = Vec::new();
    for cmd in order {
        let out = crate::support::bin::binary()
            .args([cmd, "--help"])
            .output()
            .unwrap();
        let help = String::from_utf8_lossy(&out.stdout).into_owned();
        let examples = help
            .split("Examples:")
            .nth(1)
            .unwrap_or_else(|| panic!("`{cmd} --help` shows no examples"));
        let lines: Vec<String> = examples
            .lines()
            .skip(1)
            .map(str::trim)
            .take_while(|l| !l.is_empty())
            .map(String::from)
            .collect();
        assert!(!lines.is_empty(), "`{cmd} --help` shows no examples");
        commands.extend(lines);
    }
    let failures = run_page("--help", &commands);
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
