//! `sliceplan jobs --status`: which chunks are missing and why, and a
//! resubmission script with exactly those ids.

use crate::support::jobs as jobs_support;

use std::path::Path;
use std::process::Command;

use jobs_support::*;
use sliceplan::jobs::directives::{option, options};
use sliceplan::jobs::{job_status, ChunkState, Scheduler, StandIn};

fn os(s: &str) -> &std::ffi::OsStr {
    s.as_ref()
}

#[test]
fn status_names_each_missing_chunk_and_resubmission_completes_the_job() {
    let tmp = tempfile::tempdir().unwrap();
    let base = tmp.path().canonicalize().unwrap();
    let bin_dir = base.join("bin");
    let stand_in = stand_in_binary(&bin_dir);
    let plan = write_grid_plan(&base.join("in"), 6, 4, Some(1.0));
    let dir = base.join("job");
    let (code, _, err) = sliceplan(&[
        os("jobs"),
        plan.as_os_str(),
        os("--out"),
        dir.as_os_str(),
        os("--chunks"),
        os("8"),
        os("--binary"),
        stand_in.as_os_str(),
    ]);
    assert_eq!(code, Some(0), "{err}");

    // Nothing ran yet: all 8 missing, never started.
    let st = job_status(&dir, None).unwrap();
    assert_eq!(st.missing, (0..8).collect::<Vec<_>>());
    assert!(st
        .missing_detail
        .iter()
        .all(|c| c.state == ChunkState::NotStarted));

    // Chunk 2 fails (exit 3), the others succeed; then chunk 5's partial is
    // deleted, and chunk 6 looks started but never ended (an .out log, no
    // exit code), as when the scheduler kills a task at its time limit.
    std::fs::write(bin_dir.join("fail-2"), "").unwrap();
    let out = Command::new(dir.join("run-local.sh")).output().unwrap();
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("1 of 8 chunks failed: 2"));
    std::fs::remove_file(dir.join("partials/chunk-5-of-8.partial")).unwrap();
    std::fs::remove_file(dir.join("partials/chunk-6-of-8.partial")).unwrap();
    std::fs::remove_file(dir.join("logs/chunk-6.exit")).unwrap();

    let (code, stdout, _) = sliceplan(&[os("jobs"), os("--status"), dir.as_os_str()]);
    assert_eq!(code, Some(1), "{stdout}");
    assert!(
        stdout.contains("5 of 8 chunks done; to resubmit 3: 2,5-6"),
        "{stdout}"
    );
    // Chunk 2 of 8 over 16 slices is slices 4..6 (chunk_range, closed form).
    assert!(
        stdout.contains("chunk 2 (slices 4..6): failed with exit code 3"),
        "{stdout}"
    );
    assert!(
        stdout.contains("chunk 5 (slices 10..12): ran (exit code 0) but its partial is gone"),
        "{stdout}"
    );
    assert!(
        stdout.contains("chunk 6 (slices 12..14): started, no exit code yet"),
        "{stdout}"
    );

    let (code, json, _) = sliceplan(&[os("jobs"), os("--status"), dir.as_os_str(), os("--json")]);
    assert_eq!(code, Some(1));
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["missing"], serde_json::json!([2, 5, 6]));
    assert_eq!(v["done"], 5);
    assert_eq!(v["missing_detail"][0]["state"], "failed");
    assert_eq!(v["missing_detail"][0]["exit_code"], 3);
    assert_eq!(v["missing_detail"][1]["state"], "lost");
    assert_eq!(v["missing_detail"][2]["state"], "started");

    // The resubmission holds exactly the missing ids.
    let resubmit = dir.join("resubmit.sbatch");
    let text = std::fs::read_to_string(&resubmit).unwrap();
    assert_eq!(option(&options(&text), "array"), Some("2,5-6"));
    // gather on the job's partials says the same and rewrites the script.
    std::fs::remove_file(&resubmit).unwrap();
    let (code, stdout, _) = sliceplan(&[
        os("gather"),
        plan.as_os_str(),
        dir.join("partials").as_os_str(),
    ]);
    assert_eq!(code, Some(1), "{stdout}");
    assert!(
        stdout.contains("missing chunks (of 8): 2, 5, 6"),
        "{stdout}"
    );
    assert!(stdout.contains("resubmission written: sbatch"), "{stdout}");
    let text = std::fs::read_to_string(&resubmit).unwrap();
    assert_eq!(option(&options(&text), "array"), Some("2,5-6"));

    // Run it under the stand-in scheduler with the failure fixed: done.
    std::fs::remove_file(bin_dir.join("fail-2")).unwrap();
    let mut sched = StandIn {
        run_tasks: true,
        ..StandIn::default()
    };
    sched.submit(&resubmit).unwrap();
    assert_eq!(sched.submissions[0].array, vec![2, 5, 6]);
    assert_eq!(
        sched.submissions[0].exit_codes,
        vec![(2, 0), (5, 0), (6, 0)]
    );
    let (code, stdout, _) = sliceplan(&[os("jobs"), os("--status"), dir.as_os_str()]);
    assert_eq!(code, Some(0), "{stdout}");
    assert!(stdout.contains("all 8 chunks done"), "{stdout}");
    // Nothing is left to resubmit, so the stale script is gone.
    assert!(!resubmit.exists());
    // The failed chunk's first attempt stays in its log (append mode).
    let err = std::fs::read_to_string(dir.join("logs/chunk-2.err")).unwrap();
    assert!(err.contains("fails on purpose"), "{err}");
}

#[test]
fn write_resubmit_refuses_ids_outside_the_manifest() {
    let tmp = tempfile::tempdir().unwrap();
    let stand_in = stand_in_binary(&tmp.path().join("bin"));
    let plan = write_grid_plan(&tmp.path().join("in"), 6, 2, Some(1.0));
    let dir = tmp.path().join("job");
    let (code, _, err) = sliceplan(&[
        os("jobs"),
        plan.as_os_str(),
        os("--out"),
        dir.as_os_str(),
        os("--binary"),
        stand_in.as_os_str(),
    ]);
    assert_eq!(code, Some(0), "{err}");
    // 2^2 = 4 slices, one per chunk: ids 0..3.
    let e = sliceplan::jobs::write_resubmit(&dir, &[1, 4]).unwrap_err();
    assert_eq!(e.exit_code(), 2);
    assert!(e.to_string().contains("chunk 4 is not in"), "{e}");
    assert!(e.to_string().contains("0 to 3"), "{e}");
    assert!(sliceplan::jobs::write_resubmit(&dir, &[]).is_err());
}

#[test]
fn status_refuses_a_plan_that_changed_since_the_jobs_were_written() {
    let tmp = tempfile::tempdir().unwrap();
    let stand_in = stand_in_binary(&tmp.path().join("bin"));
    let plan_path = write_grid_plan(&tmp.path().join("in"), 6, 3, Some(1.0));
    let dir = tmp.path().join("job");
    let (code, _, err) = sliceplan(&[
        os("jobs"),
        plan_path.as_os_str(),
        os("--out"),
        dir.as_os_str(),
        os("--binary"),
        stand_in.as_os_str(),
    ]);
    assert_eq!(code, Some(0), "{err}");
    let mut plan = sliceplan::plan::read_plan(&plan_path).unwrap();
    plan.sliced.pop();
    sliceplan::plan::write_plan(&plan_path, &plan).unwrap();
    let (code, _, err) = sliceplan(&[os("jobs"), os("--status"), dir.as_os_str()]);
    assert_eq!(code, Some(2));
    assert!(err.contains("the jobs were written for"), "{err}");
    assert!(
        err.contains(&*plan_path.display().to_string()) || err.contains("grid.plan.toml"),
        "{err}"
    );
}

#[test]
fn status_of_a_directory_without_a_manifest_names_the_file() {
    let tmp = tempfile::tempdir().unwrap();
    let (code, _, err) = sliceplan(&[os("jobs"), os("--status"), tmp.path().as_os_str()]);
    assert_eq!(code, Some(2));
    assert!(
        err.contains(&*Path::new("manifest.toml").display().to_string()),
        "{err}"
    );
}

/// Runs `sliceplan jobs --status DIR` with `path_dir` first on PATH.
fn status_with_path(dir: &Path, path_dir: &Path) -> (Option<i32>, String) {
    let path = format!(
        "{}:{}",
        path_dir.display(),
        std::env::var("PATH").unwrap_or_default()
    );
    let out = crate::support::bin::binary()
        .args([os("jobs"), os("--status"), dir.as_os_str()])
        .env("PATH", path)
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
    )
}

/// Regression: one second after `sbatch`, status called every chunk "not
/// started", wrote resubmit.sbatch for all of them and advised submitting
/// it, which would run every chunk twice. Now the scheduler is asked
/// (`squeue`, here a stand-in script printing what Slurm prints for an
/// array with one task running and the rest pending).
#[test]
fn chunks_the_scheduler_holds_are_never_resubmitted() {
    let tmp = tempfile::tempdir().unwrap();
    let base = tmp.path().canonicalize().unwrap();
    let plan = write_grid_plan(&base.join("in"), 6, 4, Some(1.0));
    let dir = base.join("job");
    let (code, _, err) = sliceplan(&[
        os("jobs"),
        plan.as_os_str(),
        os("--out"),
        dir.as_os_str(),
        os("--chunks"),
        os("8"),
    ]);
    assert_eq!(code, Some(0), "{err}");
    let fake = base.join("fake-slurm");
    std::fs::create_dir_all(&fake).unwrap();
    let squeue = fake.join("squeue");
    // squeue's array notation: task 0 running, tasks 1-5 and 7 pending.
    std::fs::write(
        &squeue,
        "#!/bin/sh\necho '41_0 R'\necho '41_[1-5,7%4] PD'\n",
    )
    .unwrap();
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(&squeue, std::fs::Permissions::from_mode(0o755)).unwrap();
    let (code, stdout) = status_with_path(&dir, &fake);
    assert_eq!(code, Some(1), "{stdout}");
    assert!(
        stdout.contains("0 of 8 chunks done; to resubmit 1: 6; queued or running 7: 0-5,7"),
        "{stdout}"
    );
    assert!(
        stdout.contains("chunk 0 (slices 0..2): running now"),
        "{stdout}"
    );
    let text = std::fs::read_to_string(dir.join("resubmit.sbatch")).unwrap();
    assert_eq!(option(&options(&text), "array"), Some("6"));
    // Every task held: nothing to resubmit, and no script left behind.
    std::fs::write(&squeue, "#!/bin/sh\necho '41_[0-7%4] PD'\n").unwrap();
    let (_, stdout) = status_with_path(&dir, &fake);
    assert!(
        stdout.contains("nothing to resubmit: wait for the queued and running chunks"),
        "{stdout}"
    );
    assert!(!dir.join("resubmit.sbatch").exists());
    // No squeue at all: the status says what it cannot know.
    std::fs::remove_file(&squeue).unwrap();
    let empty = base.join("no-slurm");
    std::fs::create_dir_all(&empty).unwrap();
    let out = crate::support::bin::binary()
        .args([os("jobs"), os("--status"), dir.as_os_str()])
        .env("PATH", &empty)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        stdout.contains("the scheduler could not be asked")
            && stdout.contains("if none of those chunks is queued or running, resubmit with"),
        "{stdout}"
    );
}
