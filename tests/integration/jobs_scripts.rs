//! The generated scripts as sbatch and bash see them: every `#SBATCH`
//! option read back, `--mem` never below the plan's need, and scripts that
//! run from paths holding spaces, quotes, `$`, `%` and backquotes.

use crate::support::jobs as jobs_support;

use std::path::{Path, PathBuf};
use std::process::Command;

use jobs_support::*;
use sliceplan::jobs::directives::{directive_words, option, options};
use sliceplan::jobs::scheduler::expand_pattern;
use sliceplan::jobs::{Scheduler, StandIn};
use sliceplan::plan::{read_plan, write_plan};

/// A directory name no script may take literally.
const NASTY: &str = "run dir 'q' \"dq\" $HOME `id` 100%";

fn os(s: &str) -> &std::ffi::OsStr {
    s.as_ref()
}

/// Writes a job directory for the 6 x 6 grid plan (k sliced bonds) under
/// `base/NASTY`; returns (plan path, job dir).
fn nasty_jobs(base: &Path, k: usize, extra: &[&str]) -> (PathBuf, PathBuf) {
    let root = base.canonicalize().unwrap().join(NASTY);
    let plan = write_grid_plan(&root.join("in put"), 6, k, Some(1.0));
    let out = root.join("job $dir");
    let mut args = vec![os("jobs"), plan.as_os_str(), os("--out"), out.as_os_str()];
    args.extend(extra.iter().map(|s| os(s)));
    let (code, stdout, stderr) = sliceplan(&args);
    assert_eq!(code, Some(0), "{stdout}{stderr}");
    (plan, out)
}

/// The arguments `run` must get for chunk i of n.
fn expected_args(plan: &Path, out: &Path, i: u64, n: u64, threads: u64) -> Vec<String> {
    vec![
        "run".into(),
        plan.display().to_string(),
        "--chunk".into(),
        i.to_string(),
        "--of".into(),
        n.to_string(),
        "--threads".into(),
        threads.to_string(),
        "--out".into(),
        out.join("partials").display().to_string(),
    ]
}

/// `--mem=NM` in bytes (Slurm's M is 2^20 bytes).
fn mem_bytes(value: &str) -> u64 {
    value
        .strip_suffix('M')
        .expect("--mem in M")
        .parse::<u64>()
        .unwrap()
        << 20
}

#[test]
fn every_sbatch_line_is_an_option_sbatch_knows() {
    let tmp = tempfile::tempdir().unwrap();
    let stand_in = stand_in_binary(&tmp.path().join("bin"));
    let (_, dir) = nasty_jobs(
        tmp.path(),
        3,
        &[
            "--binary",
            stand_in.to_str().unwrap(),
            "--partition",
            "cpu,gpu",
        ],
    );
    let text = std::fs::read_to_string(dir.join("submit.sbatch")).unwrap();
    // Each directive line carries exactly one --name=value word.
    let lines = text.lines().filter(|l| l.starts_with("#SBATCH")).count();
    let words = directive_words(&text);
    assert_eq!(words.len(), lines, "{words:?}");
    let known = [
        "job-name",
        "array",
        "cpus-per-task",
        "mem",
        "time",
        "partition",
        "account",
        "chdir",
        "output",
        "error",
        "open-mode",
    ];
    let opts = options(&text);
    for o in &opts {
        assert!(known.contains(&o.name.as_str()), "unexpected option {o:?}");
    }
    // 2^3 = 8 slices, default one chunk per slice: ids 0..7.
    assert_eq!(option(&opts, "array"), Some("0-7"));
    assert_eq!(option(&opts, "partition"), Some("cpu,gpu"));
    assert_eq!(option(&opts, "chdir"), Some(dir.to_str().unwrap()));
    // The log pattern expands to the real file of task 3 (the %% of "100%"
    // is one percent sign again).
    let out = expand_pattern(option(&opts, "output").unwrap(), "77", 3);
    assert_eq!(out, dir.join("logs/chunk-3.out").display().to_string());
    // 1 slice per task x 1.0 s x 2 + 120 s = 122 s -> 3 minutes (closed form).
    assert_eq!(option(&opts, "time"), Some("00:03:00"));
}

#[test]
fn memory_is_never_below_the_plans_need() {
    // For several slices-at-once settings and sizes, the --mem request is at
    // least the per-slice peak times slices at once (the floor) and
    // at least the whole process need recorded in the manifest.
    for (at_once, peak, mem_arg) in [
        (1u64, None, "auto"),
        (3, None, "auto"),
        (4, Some(3u64 << 30), "auto"),
        (2, Some(5u64 << 20), "11MiB"),
    ] {
        let tmp = tempfile::tempdir().unwrap();
        let plan_path = write_grid_plan(tmp.path(), 6, 4, Some(1.0));
        let mut plan = read_plan(&plan_path).unwrap();
        plan.slices_at_once = at_once;
        if let Some(p) = peak {
            plan.predicted.per_slice_peak_bytes = p.to_string();
        }
        write_plan(&plan_path, &plan).unwrap();
        let out = tmp.path().join("job");
        let (code, stdout, stderr) = sliceplan(&[
            os("jobs"),
            plan_path.as_os_str(),
            os("--out"),
            out.as_os_str(),
            os("--mem"),
            os(mem_arg),
        ]);
        assert_eq!(code, Some(0), "{stdout}{stderr}");
        let text = std::fs::read_to_string(out.join("submit.sbatch")).unwrap();
        let mem = mem_bytes(option(&options(&text), "mem").unwrap());
        let peak: u64 = plan.predicted.per_slice_peak_bytes.parse().unwrap();
        assert!(mem >= peak * at_once, "{mem} < {peak} x {at_once}");
        let m = sliceplan::jobs::read_manifest(&out).unwrap();
        assert!(mem >= m.task.mem.need_bytes);
        // need = 5,120 B inputs + 16 B output accumulator (one real f64
        // lane and its compensation) + at_once x peak (closed form, see
        // jobs_snapshots.rs for the input count).
        assert_eq!(m.task.mem.need_bytes, 5120 + 16 + at_once * peak);
        // Default CPUs per task: one per slice at once.
        assert_eq!(
            option(&options(&text), "cpus-per-task"),
            Some(&*at_once.to_string())
        );
    }
}

#[test]
fn run_local_runs_every_chunk_from_a_nasty_path() {
    let tmp = tempfile::tempdir().unwrap();
    let bin_dir = tmp.path().join("bin");
    let stand_in = stand_in_binary(&bin_dir);
    let (plan, dir) = nasty_jobs(
        tmp.path(),
        4,
        &["--binary", stand_in.to_str().unwrap(), "--chunks", "5"],
    );
    let out = Command::new(dir.join("run-local.sh"))
        .args(["-j", "2"])
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{stdout}{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(
        stdout.contains("run-local.sh: all 5 chunks done"),
        "{stdout}"
    );
    let plan = plan.canonicalize().unwrap();
    for i in 0..5 {
        assert_eq!(
            recorded_args(&bin_dir, i),
            expected_args(&plan, &dir, i, 5, 1)
        );
        let partial = dir
            .join("partials")
            .join(sliceplan::jobs::partial_file_name(i, 5));
        assert!(partial.is_file(), "{}", partial.display());
        let exit = std::fs::read_to_string(dir.join(format!("logs/chunk-{i}.exit"))).unwrap();
        assert_eq!(exit.trim(), "0");
    }
    // Bad usage: an id outside 0..5 exits 2 and names the range.
    let out = Command::new(dir.join("run-local.sh"))
        .arg("5")
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("ids run from 0 to 4"));
}

#[test]
fn the_array_script_runs_under_the_stand_in_scheduler_from_a_nasty_path() {
    let tmp = tempfile::tempdir().unwrap();
    let bin_dir = tmp.path().join("bin");
    let stand_in = stand_in_binary(&bin_dir);
    let (plan, dir) = nasty_jobs(
        tmp.path(),
        3,
        &[
            "--binary",
            stand_in.to_str().unwrap(),
            "--chunks",
            "4",
            "--cpus-per-task",
            "2",
        ],
    );
    let mut sched = StandIn {
        run_tasks: true,
        ..StandIn::default()
    };
    let job = sched.submit(&dir.join("submit.sbatch")).unwrap();
    assert_eq!(job, "1");
    let sub = &sched.submissions[0];
    assert_eq!(sub.array, vec![0, 1, 2, 3]);
    assert_eq!(sub.exit_codes, vec![(0, 0), (1, 0), (2, 0), (3, 0)]);
    let plan = plan.canonicalize().unwrap();
    for i in 0..4 {
        assert_eq!(
            recorded_args(&bin_dir, i),
            expected_args(&plan, &dir, i, 4, 2)
        );
        assert_eq!(recorded_cwd(&bin_dir, i), dir.display().to_string());
        let log = std::fs::read_to_string(dir.join(format!("logs/chunk-{i}.out"))).unwrap();
        assert!(
            log.contains(&format!("== chunk {i} of 4: job 1_{i} on")),
            "{log}"
        );
        assert!(
            log.contains(&format!("== chunk {i} finished with exit code 0")),
            "{log}"
        );
    }
}

#[test]
fn the_array_script_refuses_to_run_outside_an_array() {
    let tmp = tempfile::tempdir().unwrap();
    let stand_in = stand_in_binary(&tmp.path().join("bin"));
    let (_, dir) = nasty_jobs(tmp.path(), 1, &["--binary", stand_in.to_str().unwrap()]);
    let out = Command::new("bash")
        .arg(dir.join("submit.sbatch"))
        .env_remove("SLURM_ARRAY_TASK_ID")
        .output()
        .unwrap();
    assert_ne!(out.status.code(), Some(0));
    assert!(String::from_utf8_lossy(&out.stderr).contains("submit it with sbatch"));
}
