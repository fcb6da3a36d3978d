//! End to end on a real Slurm: plan -> job array -> partials -> gather, then
//! one partial deleted, found missing, resubmitted and gathered again.
//!
//! These tests are `#[ignore]`d so `cargo test` passes on a machine without
//! a scheduler. `scripts/slurm-e2e.sh` starts the local single-node Slurm
//! (`scripts/local-slurm.sh start`) and runs them with
//! `SLICEPLAN_SLURM_E2E=1`; without that variable they return at once.
//! Each wait on the scheduler is bounded (`SLICEPLAN_SLURM_E2E_TIMEOUT`
//! seconds, default 180).

use crate::support::jobs as jobs_support;

use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use jobs_support::*;
use sliceplan::jobs::{wait_until_done, Slurm};

fn os(s: &str) -> &OsStr {
    s.as_ref()
}

/// True when the tests should talk to Slurm; panics when asked to but no
/// `sbatch` is there (a CI that asked for the test must not pass silently).
fn slurm_wanted() -> bool {
    if std::env::var("SLICEPLAN_SLURM_E2E").as_deref() != Ok("1") {
        eprintln!(
            "skipped: set SLICEPLAN_SLURM_E2E=1 (scripts/slurm-e2e.sh does) to run against Slurm"
        );
        return false;
    }
    let found = std::process::Command::new("sbatch")
        .arg("--version")
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    assert!(
        found,
        "SLICEPLAN_SLURM_E2E=1 but `sbatch --version` fails: start Slurm with scripts/local-slurm.sh start"
    );
    true
}

fn timeout() -> Duration {
    let s = std::env::var("SLICEPLAN_SLURM_E2E_TIMEOUT")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(180);
    Duration::from_secs(s)
}

/// Waits for a job; returns the seconds it took.
fn wait(job: &str) -> f64 {
    let start = Instant::now();
    wait_until_done(
        &mut Slurm::default(),
        job,
        timeout(),
        Duration::from_millis(250),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    start.elapsed().as_secs_f64()
}

/// `jobs ... --json` (with `--submit`): the JSON and the submitted job id.
fn submit(args: &[&OsStr]) -> (serde_json::Value, String) {
    let mut all = args.to_vec();
    all.extend([os("--submit"), os("--json")]);
    let (code, out, err) = sliceplan(&all);
    let v: serde_json::Value = serde_json::from_str(&out)
        .unwrap_or_else(|e| panic!("jobs printed no JSON ({e}); exit {code:?}\n{out}\n{err}"));
    let job = v["submitted_job"]
        .as_str()
        .unwrap_or_else(|| panic!("nothing submitted: {v}"))
        .to_string();
    (v, job)
}

/// `jobs --status DIR --json`: exit code and the missing ids.
fn status(dir: &Path) -> (Option<i32>, Vec<u64>) {
    let (code, out, err) = sliceplan(&[os("jobs"), os("--status"), dir.as_os_str(), os("--json")]);
    let v: serde_json::Value =
        serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}{err}"));
    let missing = v["missing"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_u64().unwrap())
        .collect();
    (code, missing)
}

/// Writes the plan (n x n grid, k bonds sliced) and the jobs; returns the
/// plan path and the job directory.
fn setup(base: &Path, k: usize) -> (PathBuf, PathBuf) {
    let plan = write_grid_plan(&base.join("in"), 6, k, Some(1.0));
    (plan, base.join("job"))
}

#[test]
#[ignore = "needs Slurm: run scripts/slurm-e2e.sh"]
fn stand_in_array_on_slurm_from_a_nasty_path() {
    if !slurm_wanted() {
        return;
    }
    // A stand-in binary, so this part does not depend on the executor; the
    // job directory's name holds a space, quotes, `$` and `%`, which sbatch
    // must read back from the #SBATCH lines.
    let tmp = tempfile::tempdir().unwrap();
    let base = tmp
        .path()
        .canonicalize()
        .unwrap()
        .join("e2e 'q' \"d\" $X 50%");
    let bin_dir = tmp.path().canonicalize().unwrap().join("bin");
    let stand_in = stand_in_binary(&bin_dir);
    let (plan, dir) = setup(&base, 3);
    let (v, job) = submit(&[
        os("jobs"),
        plan.as_os_str(),
        os("--out"),
        dir.as_os_str(),
        os("--chunks"),
        os("8"),
        os("--binary"),
        stand_in.as_os_str(),
    ]);
    assert_eq!(v["array"], "0-7");
    let took = wait(&job);
    eprintln!("8-task stand-in array {job} finished in {took:.1} s");
    assert_eq!(status(&dir), (Some(0), vec![]));
    let plan = plan.canonicalize().unwrap();
    for i in 0..8 {
        let args = recorded_args(&bin_dir, i);
        assert_eq!(args[1], plan.display().to_string(), "chunk {i}: {args:?}");
        assert_eq!(args[3], i.to_string());
        // --chdir is taken literally (no % patterns there).
        assert_eq!(recorded_cwd(&bin_dir, i), dir.display().to_string());
        let log = std::fs::read_to_string(dir.join(format!("logs/chunk-{i}.out"))).unwrap();
        assert!(
            log.contains(&format!("== chunk {i} of 8: job {job}_{i} on")),
            "{log}"
        );
    }

    // One partial lost and one chunk failing: status names exactly those,
    // the resubmission runs exactly those.
    std::fs::remove_file(dir.join("partials/chunk-3-of-8.partial")).unwrap();
    std::fs::remove_file(dir.join("partials/chunk-6-of-8.partial")).unwrap();
    std::fs::write(bin_dir.join("fail-6"), "").unwrap();
    std::fs::remove_dir_all(bin_dir.join("calls")).unwrap();
    std::fs::create_dir(bin_dir.join("calls")).unwrap();
    assert_eq!(status(&dir), (Some(1), vec![3, 6]));
    let (_, job2) = submit(&[os("jobs"), os("--status"), dir.as_os_str()]);
    wait(&job2);
    // Chunk 6 failed again (exit 3, recorded by the task); chunk 3 is back.
    assert_eq!(status(&dir), (Some(1), vec![6]));
    let ran: Vec<u64> = (0..8)
        .filter(|&i| !recorded_args(&bin_dir, i).is_empty())
        .collect();
    assert_eq!(ran, vec![3, 6]);
    let exit = std::fs::read_to_string(dir.join("logs/chunk-6.exit")).unwrap();
    assert_eq!(exit.trim(), "3");
    std::fs::remove_file(bin_dir.join("fail-6")).unwrap();
    let (_, job3) = submit(&[os("jobs"), os("--status"), dir.as_os_str()]);
    wait(&job3);
    assert_eq!(status(&dir), (Some(0), vec![]));
}

/// The chunk ids a `gather --json` output lists as missing: the first array
/// of integers under a key whose name contains "missing".
fn missing_in(v: &serde_json::Value) -> Option<Vec<u64>> {
    match v {
        serde_json::Value::Object(map) => {
            for (k, x) in map {
                if k.contains("missing") {
                    if let Some(a) = x.as_array() {
                        if let Some(ids) = a.iter().map(|e| e.as_u64()).collect::<Option<Vec<_>>>()
                        {
                            return Some(ids);
                        }
                    }
                }
            }
            map.values().find_map(missing_in)
        }
        _ => None,
    }
}

/// `gather PLAN DIR -o OUT --json`: exit code, JSON (when printed), text.
fn gather(
    plan: &Path,
    partials: &Path,
    out: &Path,
) -> (Option<i32>, Option<serde_json::Value>, String) {
    let (code, stdout, stderr) = sliceplan(&[
        os("gather"),
        plan.as_os_str(),
        partials.as_os_str(),
        os("-o"),
        out.as_os_str(),
        os("--json"),
    ]);
    (
        code,
        serde_json::from_str(&stdout).ok(),
        format!("{stdout}{stderr}"),
    )
}

#[test]
#[ignore = "needs Slurm and the executor: run scripts/slurm-e2e.sh"]
fn grid_independent_sets_on_slurm() {
    if !slurm_wanted() {
        return;
    }
    let (code, _, _) = sliceplan(&[os("run"), os("--help")]);
    assert_eq!(
        code,
        Some(0),
        "this build has no `run` command: the end-to-end test needs the executor (`run`, `gather`)"
    );
    let tmp = tempfile::tempdir().unwrap();
    let base = tmp.path().canonicalize().unwrap();
    // 4 bonds sliced: 16 slices in 8 chunks of 2.
    let (plan, dir) = setup(&base, 4);
    let (_, job) = submit(&[
        os("jobs"),
        plan.as_os_str(),
        os("--out"),
        dir.as_os_str(),
        os("--chunks"),
        os("8"),
    ]);
    let took = wait(&job);
    eprintln!("8-task array {job} of `sliceplan run` finished in {took:.1} s");
    assert_eq!(
        status(&dir),
        (Some(0), vec![]),
        "see {}/logs",
        dir.display()
    );
    let partials = dir.join("partials");
    let result = base.join("result.npy");
    let (code, _, text) = gather(&plan, &partials, &result);
    assert_eq!(code, Some(0), "{text}");
    // OEIS A006506: the 6 x 6 grid graph has 5,598,861 independent sets.
    let value = sliceplan::npy::read_npy(&result).unwrap();
    assert_eq!(value.values.len(), 1);
    assert_eq!(value.values[0].re, 5_598_861.0);
    assert_eq!(value.values[0].im, 0.0);

    // Lose chunk 5's partial: gather and status both name exactly chunk 5.
    std::fs::remove_file(partials.join(sliceplan::jobs::partial_file_name(5, 8))).unwrap();
    let (code, json, text) = gather(&plan, &partials, &base.join("incomplete.npy"));
    assert_eq!(code, Some(1), "{text}");
    match json.as_ref().and_then(missing_in) {
        Some(ids) => assert_eq!(ids, vec![5], "{text}"),
        None => panic!("gather --json listed no missing chunk ids:\n{text}"),
    }
    assert_eq!(status(&dir), (Some(1), vec![5]));
    let text = std::fs::read_to_string(dir.join("resubmit.sbatch")).unwrap();
    let opts = sliceplan::jobs::directives::options(&text);
    assert_eq!(
        sliceplan::jobs::directives::option(&opts, "array"),
        Some("5")
    );

    let (_, job2) = submit(&[os("jobs"), os("--status"), dir.as_os_str()]);
    wait(&job2);
    assert_eq!(status(&dir), (Some(0), vec![]));
    let (code, _, text) = gather(&plan, &partials, &result);
    assert_eq!(code, Some(0), "{text}");
    // OEIS A006506 again, from the resubmitted chunk and the seven others.
    let value = sliceplan::npy::read_npy(&result).unwrap();
    assert_eq!(value.values[0].re, 5_598_861.0);
}
