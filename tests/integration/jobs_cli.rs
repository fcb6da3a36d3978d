//! `sliceplan jobs` through the real binary: options, the values they turn
//! into, and bad input (exit 2) or requests that cannot be met (exit 1).

use crate::support::jobs as jobs_support;

use std::ffi::OsStr;
use std::path::{Path, PathBuf};

use jobs_support::*;
use sliceplan::jobs::directives::{option, options};

fn os(s: &str) -> &OsStr {
    s.as_ref()
}

/// A plan with 2^4 = 16 slices (estimate 10 s per slice when `estimate`).
fn plan16(dir: &Path, estimate: bool) -> PathBuf {
    write_grid_plan(&dir.join("in"), 6, 4, estimate.then_some(10.0))
}

/// Runs `jobs PLAN --out DIR --binary /bin/true EXTRA...`.
fn jobs(plan: &Path, out: &Path, extra: &[&str]) -> (Option<i32>, String, String) {
    let mut args = vec![
        os("jobs"),
        plan.as_os_str(),
        os("--out"),
        out.as_os_str(),
        os("--binary"),
        os("/bin/true"),
    ];
    args.extend(extra.iter().map(|s| os(s)));
    sliceplan(&args)
}

fn sbatch_option(dir: &Path, name: &str) -> Option<String> {
    let text = std::fs::read_to_string(dir.join("submit.sbatch")).unwrap();
    option(&options(&text), name).map(String::from)
}

#[test]
fn a_plan_without_estimate_needs_a_time() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan16(tmp.path(), false);
    let out = tmp.path().join("job");
    let (code, _, err) = jobs(&plan, &out, &[]);
    assert_eq!(code, Some(2));
    assert!(err.contains("the plan has no time estimate"), "{err}");
    assert!(err.contains("HH:MM:SS"), "{err}");
    let (code, _, err) = jobs(&plan, &out, &["--time-per-task", "1-02:03:04"]);
    assert_eq!(code, Some(0), "{err}");
    assert_eq!(sbatch_option(&out, "time").as_deref(), Some("1-02:03:04"));
}

#[test]
fn slices_per_task_makes_chunks_of_at_most_that_many() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan16(tmp.path(), true);
    let out = tmp.path().join("job");
    let (code, _, err) = jobs(
        &plan,
        &out,
        &["--slices-per-task", "3", "--max-running", "2"],
    );
    assert_eq!(code, Some(0), "{err}");
    // ceil(16 / 3) = 6 chunks; 16 = 4 x 3 + 2 x 2 (chunk_range, closed form).
    let m = sliceplan::jobs::read_manifest(&out).unwrap();
    assert_eq!(m.chunks, 6);
    let sizes: Vec<u64> = m
        .chunk_list
        .iter()
        .map(|c| c.end_slice - c.first_slice)
        .collect();
    assert_eq!(sizes, vec![3, 3, 3, 3, 2, 2]);
    assert_eq!(sbatch_option(&out, "array").as_deref(), Some("0-5%2"));
    // 3 slices x 10 s x 2 + 120 s = 180 s = 00:03:00 (closed form).
    assert_eq!(sbatch_option(&out, "time").as_deref(), Some("00:03:00"));
}

#[test]
fn json_output_lists_the_files_and_the_requests() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan16(tmp.path(), true);
    let out = tmp.path().join("job");
    let (code, json, err) = jobs(&plan, &out, &["--chunks", "4", "--json"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["array"], "0-3");
    assert_eq!(v["manifest"]["chunks"], 4);
    assert_eq!(v["manifest"]["slices"], 16);
    assert_eq!(v["files"].as_array().unwrap().len(), 3);
    assert!(v["manifest"]["task"]["mem"]["mib"].as_u64().unwrap() >= 128);
    assert!(v["submitted_job"].is_null());
}

#[test]
fn bad_values_exit_2_before_anything_is_written() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan16(tmp.path(), true);
    let out = tmp.path().join("job");
    for (extra, says) in [
        (&["--chunks", "17"][..], "only 16 slice(s); give 1 to 16"),
        (&["--chunks", "0"][..], "--chunks: must be at least 1"),
        (&["--mem", "lots"][..], "--mem: 'lots' is not a size"),
        // The inputs alone are 5,120 B > 4 KiB = 4,096 B (jobs_snapshots.rs).
        (&["--mem", "4KiB"][..], "below what one task needs"),
        (&["--time-per-task", "25:61:00"][..], "write HH:MM:SS"),
        (
            &["--partition", "a b"][..],
            "--partition: 'a b' is not a valid name",
        ),
        (
            &["--account", "x;y"][..],
            "--account: 'x;y' is not a valid name",
        ),
        (
            &["--max-running", "0"][..],
            "--max-running: must be at least 1",
        ),
        (
            &["--cpus-per-task", "0"][..],
            "--cpus-per-task: must be at least 1",
        ),
    ] {
        let (code, _, err) = jobs(&plan, &out, extra);
        assert_eq!(code, Some(2), "{extra:?}: {err}");
        assert!(err.contains(says), "{extra:?}: {err}");
        assert!(!out.join("submit.sbatch").exists(), "{extra:?}");
    }
    // A job directory with a newline in its name cannot go into a script line.
    let (code, _, err) = jobs(&plan, &tmp.path().join("a\nb"), &[]);
    assert_eq!(code, Some(2));
    assert!(err.contains("control character"), "{err}");
}

#[test]
fn usage_errors_from_the_command_line_exit_2() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan16(tmp.path(), true);
    // PLAN without --out.
    let (code, _, _) = sliceplan(&[os("jobs"), plan.as_os_str()]);
    assert_eq!(code, Some(2));
    // --status with writing options.
    let (code, _, err) = sliceplan(&[os("jobs"), os("--status"), os("x"), os("--chunks"), os("2")]);
    assert_eq!(code, Some(2));
    assert!(err.contains("cannot be used with"), "{err}");
    // --chunks with --slices-per-task.
    let (code, _, _) = jobs(
        &plan,
        &tmp.path().join("j"),
        &["--chunks", "2", "--slices-per-task", "2"],
    );
    assert_eq!(code, Some(2));
}

#[test]
fn a_moved_network_is_named_with_the_way_out() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan16(tmp.path(), true);
    let moved = tmp.path().join("elsewhere.toml");
    std::fs::rename(tmp.path().join("in/grid.toml"), &moved).unwrap();
    let out = tmp.path().join("job");
    let (code, _, err) = jobs(&plan, &out, &[]);
    assert_eq!(code, Some(2));
    assert!(
        err.contains("grid.toml") && err.contains("--network"),
        "{err}"
    );
    let (code, _, err) = jobs(&plan, &out, &["--network", moved.to_str().unwrap()]);
    assert_eq!(code, Some(0), "{err}");
}

#[test]
fn another_plans_job_directory_is_replaced_only_with_force() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan16(tmp.path(), true);
    let out = tmp.path().join("job");
    assert_eq!(jobs(&plan, &out, &[]).0, Some(0));
    let other = write_grid_plan(&tmp.path().join("other"), 6, 3, Some(1.0));
    // Without partials: still another plan's jobs.
    let (code, _, err) = jobs(&other, &out, &[]);
    assert_eq!(code, Some(1));
    assert!(
        err.contains("holds the jobs of plan") && err.contains("--force"),
        "{err}"
    );
    std::fs::write(out.join("partials/chunk-0-of-16.partial"), "x").unwrap();
    let (code, _, err) = jobs(&other, &out, &[]);
    assert_eq!(code, Some(1));
    assert!(err.contains("and 1 of its partials"), "{err}");
    // The same plan again is fine (e.g. new resources).
    assert_eq!(jobs(&plan, &out, &["--chunks", "16"]).0, Some(0));
    // --force replaces the jobs and moves the partial aside, byte for byte.
    let old_fp = std::fs::read_to_string(out.join("manifest.toml")).unwrap();
    let (code, stdout, err) = jobs(&other, &out, &["--force"]);
    assert_eq!(code, Some(0), "{err}");
    assert!(stdout.contains("moved 1 partial(s)"), "{stdout}");
    assert_ne!(
        std::fs::read_to_string(out.join("manifest.toml")).unwrap(),
        old_fp
    );
    let aside: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with("partials.replaced-"))
        .collect();
    assert_eq!(aside.len(), 1, "{aside:?}");
    let moved = out.join(&aside[0]).join("chunk-0-of-16.partial");
    assert_eq!(std::fs::read_to_string(moved).unwrap(), "x");
    assert!(!out.join("partials/chunk-0-of-16.partial").exists());
}

#[test]
fn a_manifest_that_is_not_ours_is_not_overwritten() {
    let tmp = tempfile::tempdir().unwrap();
    let plan = plan16(tmp.path(), true);
    let out = tmp.path().join("mine");
    std::fs::create_dir_all(&out).unwrap();
    std::fs::write(out.join("manifest.toml"), "owner = \"someone else\"\n").unwrap();
    let (code, _, err) = jobs(&plan, &out, &[]);
    assert_eq!(code, Some(1));
    assert!(
        err.contains("is not a job manifest") && err.contains("--force"),
        "{err}"
    );
    assert_eq!(
        std::fs::read_to_string(out.join("manifest.toml")).unwrap(),
        "owner = \"someone else\"\n"
    );
    assert_eq!(jobs(&plan, &out, &["--force"]).0, Some(0));
}
