//! Results of other values are never reused: the network fingerprint covers
//! the values, so plans, partials and job directories of one set of values
//! do not pass for another. Through the real binary.
//!
//! Regression: the fingerprint covered the structure only. Importing a
//! circuit again with another `--bitstring` (or generating a lattice at
//! another `--beta`) and planning gave the same fingerprints, so `run
//! --all` skipped every chunk "with a valid partial" and printed the old
//! value with exit 0, and `jobs --status` and `gather` agreed.

use crate::support::bin::run_in as sliceplan;
use std::path::Path;

fn ok(dir: &Path, args: &[&str]) -> String {
    let (code, out, err) = sliceplan(dir, args);
    assert_eq!(code, Some(0), "{args:?}: {out}{err}");
    out
}

/// The `value:` line of `run --all`.
fn value_line(out: &str) -> String {
    out.lines()
        .find(|l| l.starts_with("value:"))
        .unwrap_or_else(|| panic!("no value in {out}"))
        .to_string()
}

/// Imports the demo circuit for `bits`, plans it into `c.plan.toml` with
/// slicing forced, and runs every chunk into `parts/`; returns run's text.
fn amplitude(dir: &Path, bits: &str) -> String {
    let qasm = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/circuits/ghz-teleport.qasm");
    ok(
        dir,
        &[
            "import",
            qasm.to_str().unwrap(),
            "--bitstring",
            bits,
            "-o",
            "c.toml",
        ],
    );
    // 2,700 B is below the unsliced need (2.88 KiB), so the plan slices.
    ok(
        dir,
        &[
            "plan",
            "c.toml",
            "--budget",
            "2700",
            "--trials",
            "4",
            "-o",
            "c.plan.toml",
        ],
    );
    ok(dir, &["run", "c.plan.toml", "--all", "--out", "parts"])
}

#[test]
fn another_bitstring_is_contracted_again_not_taken_from_old_partials() {
    let dir = tempfile::tempdir().unwrap();
    let first = amplitude(dir.path(), "011101");
    let second = amplitude(dir.path(), "011100");
    assert!(
        second.contains("skipped 0 with a valid partial"),
        "{second}"
    );
    // The reference: the same amplitude computed in a fresh directory.
    let fresh = tempfile::tempdir().unwrap();
    let reference = amplitude(fresh.path(), "011100");
    assert_eq!(value_line(&second), value_line(&reference));
    assert_ne!(value_line(&second), value_line(&first));
    // gather of the directory holding both sets: only the new plan's
    // partials count; the others are rejected as another plan's.
    let (code, out, _) = sliceplan(dir.path(), &["gather", "c.plan.toml", "parts"]);
    assert_eq!(code, Some(0), "{out}");
    assert_eq!(value_line(&out), value_line(&reference));
}

#[test]
fn another_beta_is_another_network_for_jobs_too() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let lattice = |beta: &str| {
        ok(
            d,
            &[
                "generate", "lattice", "--shape", "4x4", "--model", "ising", "--beta", beta, "-o",
                "l.toml",
            ],
        )
    };
    lattice("0.3");
    let fp = |d: &Path| {
        let out = ok(d, &["inspect", "l.toml", "--json"]);
        let v: serde_json::Value = serde_json::from_str(&out).unwrap();
        v["network"]["fingerprint"].as_str().unwrap().to_string()
    };
    let before = fp(d);
    ok(
        d,
        &[
            "plan",
            "l.toml",
            "--budget",
            "3KiB",
            "--trials",
            "4",
            "-o",
            "l.plan.toml",
        ],
    );
    ok(
        d,
        &[
            "jobs",
            "l.plan.toml",
            "--out",
            "job",
            "--time-per-task",
            "00:05:00",
        ],
    );
    lattice("0.5");
    assert_ne!(fp(d), before, "the temperature changes the fingerprint");
    // The old plan no longer fits the network.
    let (code, _, err) = sliceplan(d, &["run", "l.plan.toml", "--all"]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("the plan was made for network"), "{err}");
    // A new plan is another plan for the job directory.
    ok(
        d,
        &[
            "plan",
            "l.toml",
            "--budget",
            "3KiB",
            "--trials",
            "4",
            "-o",
            "l.plan.toml",
        ],
    );
    let (code, _, err) = sliceplan(
        d,
        &[
            "jobs",
            "l.plan.toml",
            "--out",
            "job",
            "--time-per-task",
            "00:05:00",
        ],
    );
    assert_eq!(code, Some(1), "{err}");
    assert!(err.contains("holds the jobs of plan"), "{err}");
}
