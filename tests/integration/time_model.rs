//! Calibration, the time model and the time checks of `run` and `jobs`,
//! through the binary: a calibrated profile is written and used by name,
//! `run` reports predicted and measured seconds per slice, and `jobs`
//! sizes `--time` from this host's calibrated profile. Every run of the
//! binary gets its own profile directory (`XDG_CONFIG_HOME`), so no test
//! sees the user's profiles or another test's. Nothing about wall-clock
//! time is asserted beyond "positive": the model's accuracy is measured by
//! `scripts/bench-time-model.sh`.

use std::path::Path;

use crate::support::bin::{binary, outcome};

/// Runs the binary in `dir` with `config` as its profile home.
fn sliceplan(dir: &Path, config: &Path, args: &[&str]) -> (Option<i32>, String, String) {
    outcome(
        binary()
            .args(args)
            .current_dir(dir)
            .env("XDG_CONFIG_HOME", config)
            .output()
            .unwrap(),
    )
}

fn demo(dir: &Path) -> String {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/ising-6x6.toml");
    std::fs::copy(src, dir.join("ising.toml")).unwrap();
    "ising.toml".into()
}

fn json(text: &str) -> serde_json::Value {
    serde_json::from_str(text).unwrap_or_else(|e| panic!("{e}: {text}"))
}

#[test]
fn a_calibrated_profile_is_found_by_name_and_used() {
    let dir = tempfile::tempdir().unwrap();
    let config = tempfile::tempdir().unwrap();
    let (code, out, err) = sliceplan(
        dir.path(),
        config.path(),
        &["calibrate", "--quick", "-o", "node-x", "--json"],
    );
    assert_eq!(code, Some(0), "{err}");
    let written = config.path().join("sliceplan/machines/node-x.toml");
    assert!(written.is_file(), "{out}");
    let v = json(&out);
    assert_eq!(v["machine"]["name"], "node-x");
    assert_eq!(v["machine"]["version"], 2);
    let net = demo(dir.path());
    // A fresh fit by name: its estimate comes from the calibrated profile.
    let (code, out, err) = sliceplan(
        dir.path(),
        config.path(),
        &[
            "fit",
            &net,
            "--machine",
            "node-x",
            "--trials",
            "4",
            "--json",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let v = json(&out);
    let s = v["estimate"]["seconds_per_slice"]
        .as_f64()
        .expect("an estimate");
    assert!(s > 0.0, "{v}");
    // The same file by path, and a bare name that is not there.
    let (code, _, err) = sliceplan(
        dir.path(),
        config.path(),
        &[
            "fit",
            &net,
            "--machine",
            written.to_str().unwrap(),
            "--trials",
            "2",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let (code, _, err) = sliceplan(
        dir.path(),
        config.path(),
        &["fit", &net, "--machine", "node-y", "--trials", "2"],
    );
    assert_eq!(code, Some(2));
    assert!(err.contains("node-x") && err.contains("cpu-64g"), "{err}");
}

#[test]
fn run_reports_predicted_and_measured_seconds_per_slice() {
    let dir = tempfile::tempdir().unwrap();
    let config = tempfile::tempdir().unwrap();
    let net = demo(dir.path());
    let (code, _, err) = sliceplan(
        dir.path(),
        config.path(),
        &["calibrate", "--quick", "-o", "prof.toml"],
    );
    assert_eq!(code, Some(0), "{err}");
    let (code, _, err) = sliceplan(
        dir.path(),
        config.path(),
        &[
            "plan",
            &net,
            "--budget",
            "6KiB",
            "--trials",
            "4",
            "--machine",
            "prof.toml",
            "-o",
            "a.plan.toml",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    // Every slice (at least two, one at a time): the first is timed apart.
    let (code, out, err) = sliceplan(
        dir.path(),
        config.path(),
        &["run", "a.plan.toml", "--all", "--threads", "1", "--json"],
    );
    assert_eq!(code, Some(0), "{err}");
    let v = json(&out);
    let t = &v["time"];
    let predicted = t["predicted"]["seconds_per_slice"]
        .as_f64()
        .expect("predicted");
    let measured = t["measured_seconds_per_slice"].as_f64().expect("measured");
    assert!(predicted > 0.0 && measured > 0.0, "{t}");
    assert!(t["ratio"].as_f64().unwrap() > 0.0);
    assert_eq!(t["threads_per_slice"], 1);
    assert_eq!(t["predicted"]["threads"], 1);
    assert_eq!(t["predicted"]["source"], "the plan's machine profile");
    // The text says both, side by side.
    let (code, out, err) = sliceplan(
        dir.path(),
        config.path(),
        &["run", "a.plan.toml", "--all", "--threads", "1", "--force"],
    );
    assert_eq!(code, Some(0), "{err}");
    let line = out
        .lines()
        .find(|l| l.starts_with("time per slice:"))
        .expect(&out);
    assert!(
        line.contains("predicted") && line.contains("measured"),
        "{line}"
    );

    // A plan without a machine: no prediction, and the way to get one.
    let (code, _, err) = sliceplan(
        dir.path(),
        config.path(),
        &[
            "plan",
            &net,
            "--budget",
            "6KiB",
            "--trials",
            "4",
            "-o",
            "b.plan.toml",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let (code, out, err) = sliceplan(
        dir.path(),
        config.path(),
        &["run", "b.plan.toml", "--all", "--threads", "1", "--json"],
    );
    assert_eq!(code, Some(0), "{err}");
    let v = json(&out);
    assert!(v["time"]["predicted"].is_null(), "{v}");
    assert!(v["time"]["measured_seconds_per_slice"].as_f64().unwrap() > 0.0);
    assert!(v["time"]["note"]
        .as_str()
        .unwrap()
        .contains("sliceplan calibrate"));
    // Once this host has a calibrated profile, run uses it.
    let (code, _, err) = sliceplan(dir.path(), config.path(), &["calibrate", "--quick"]);
    assert_eq!(code, Some(0), "{err}");
    let (code, out, err) = sliceplan(
        dir.path(),
        config.path(),
        &[
            "run",
            "b.plan.toml",
            "--all",
            "--threads",
            "1",
            "--force",
            "--json",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let v = json(&out);
    let source = v["time"]["predicted"]["source"]
        .as_str()
        .expect("a prediction");
    assert!(
        source.starts_with("this host's calibrated profile"),
        "{source}"
    );
    assert!(
        v["time"]["predicted"]["seconds_per_slice"]
            .as_f64()
            .unwrap()
            > 0.0
    );
}

#[test]
fn jobs_use_this_hosts_calibrated_profile_and_say_so() {
    let dir = tempfile::tempdir().unwrap();
    let config = tempfile::tempdir().unwrap();
    let net = demo(dir.path());
    let (code, _, err) = sliceplan(
        dir.path(),
        config.path(),
        &[
            "plan",
            &net,
            "--budget",
            "6KiB",
            "--trials",
            "4",
            "-o",
            "a.plan.toml",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    // No estimate in the plan, no calibrated profile: the time must be given.
    let (code, _, err) = sliceplan(
        dir.path(),
        config.path(),
        &["jobs", "a.plan.toml", "--out", "j1"],
    );
    assert_eq!(code, Some(2));
    assert!(
        err.contains("--time-per-task") && err.contains("sliceplan calibrate"),
        "{err}"
    );
    let (code, _, err) = sliceplan(dir.path(), config.path(), &["calibrate", "--quick"]);
    assert_eq!(code, Some(0), "{err}");
    let (code, out, err) = sliceplan(
        dir.path(),
        config.path(),
        &["jobs", "a.plan.toml", "--out", "j2", "--json"],
    );
    assert_eq!(code, Some(0), "{err}");
    let v = json(&out);
    let notes = v["notes"].to_string();
    assert!(notes.contains("this host's calibrated profile"), "{notes}");
    let basis = v["manifest"]["task"]["time"]["basis"].as_str().unwrap();
    assert!(basis.contains("with 1 thread(s) per slice"), "{basis}");
}
