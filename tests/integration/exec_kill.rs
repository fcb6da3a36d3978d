//! A run killed with SIGKILL in the middle of a chunk leaves no partial that
//! gather accepts as complete, and running again completes the job.

use crate::support::exec as exec_support;

use std::time::{Duration, Instant};

use exec_support::{sliceplan, stderr, stdout, write_case};
use sliceplan::exec::verify::{contract_whole, relative_difference};
use sliceplan::network::{Dtype, Fill, NetworkBuilder, Values};
use sliceplan::plan::Plan;
use sliceplan::tree::Tree;

fn kill_case(dir: &std::path::Path) -> (sliceplan::network::Network, Plan) {
    // u[s,a] M1[a,b] M2[b,c] M3[c,d] w[d,s]: slicing s leaves the two
    // 512x512x512 products in every slice, so each chunk takes a while.
    let mut b = NetworkBuilder::new("kill");
    for (name, dim) in [("s", 16), ("a", 512), ("b", 512), ("c", 512), ("d", 512)] {
        b.declare(name, dim, None).unwrap();
    }
    for (k, (name, idx)) in [
        ("u", ["s", "a"]),
        ("M1", ["a", "b"]),
        ("M2", ["b", "c"]),
        ("M3", ["c", "d"]),
        ("w", ["d", "s"]),
    ]
    .into_iter()
    .enumerate()
    {
        let fill = Values::Fill(Fill::Random { seed: k as u64 });
        b.tensor(name, &idx, Some(fill), None).unwrap();
    }
    b.dtype(Dtype::C128);
    let net = b.build().unwrap();
    let tree = Tree::new(5, vec![[1, 2], [5, 3], [0, 6], [7, 4]]).unwrap();
    let plan = Plan::for_tree(&net, "kill.toml", &tree, &[0], Dtype::C128, 0);
    write_case(dir, "kill", &net, &plan);
    (net, plan)
}

#[test]
#[ignore = "writes the case to $SLICEPLAN_DEMO_DIR for manual runs"]
fn write_kill_case() {
    kill_case(std::path::Path::new(
        &std::env::var("SLICEPLAN_DEMO_DIR").unwrap(),
    ));
}

#[test]
fn killed_mid_chunk_then_completed() {
    let dir = tempfile::tempdir().unwrap();
    let (net, plan) = kill_case(dir.path());
    let parts = dir.path().join("parts");
    let count = || {
        std::fs::read_dir(&parts)
            .map(|d| {
                d.filter(|e| {
                    e.as_ref()
                        .unwrap()
                        .path()
                        .extension()
                        .is_some_and(|x| x == "partial")
                })
                .count()
            })
            .unwrap_or(0)
    };
    let mut child = crate::support::bin::binary()
        .args([
            "run",
            "kill.plan.toml",
            "--all",
            "--of",
            "8",
            "--threads",
            "1",
            "--out",
            "parts",
        ])
        .current_dir(dir.path())
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let start = Instant::now();
    while count() == 0 {
        assert!(
            start.elapsed() < Duration::from_secs(120),
            "no chunk finished in two minutes"
        );
        std::thread::sleep(Duration::from_millis(5));
    }
    // The first partial is in place, so the process is inside chunk 1 now.
    child.kill().unwrap(); // SIGKILL on Unix
    child.wait().unwrap();
    let written = count();
    assert!(
        written < 8,
        "the run finished before it could be killed; make the slices heavier"
    );

    let o = sliceplan(dir.path(), &["gather", "kill.plan.toml", "parts", "--json"]);
    assert_eq!(o.status.code(), Some(1), "{}", stdout(&o));
    let j: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert_eq!(
        j["rejected"],
        serde_json::json!([]),
        "every file left behind is either whole or not a partial"
    );
    assert_eq!(j["missing_chunks"].as_array().unwrap().len(), 8 - written);

    let o = sliceplan(
        dir.path(),
        &[
            "run",
            "kill.plan.toml",
            "--all",
            "--of",
            "8",
            "--threads",
            "2",
            "--out",
            "parts",
            "--json",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let j: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    assert_eq!(j["run"]["chunks_skipped"].as_u64(), Some(written as u64));
    let got = [
        j["result"]["value"]["re"].as_f64().unwrap(),
        j["result"]["value"]["im"].as_f64().unwrap(),
    ];
    // Reference: the same network contracted without slicing, in process.
    let whole = contract_whole(&plan, &net, 2, u64::MAX).unwrap();
    assert!(
        relative_difference(&got, &whole.lanes) < 1e-10,
        "{got:?} vs {:?}",
        whole.lanes
    );
}

/// Spawns the binary in `dir`, kills it (SIGKILL) after `after`, and
/// returns whether it had already finished by then.
fn spawn_and_kill(dir: &std::path::Path, args: &[&str], after: Duration) -> bool {
    let mut child = crate::support::bin::binary()
        .args(args)
        .current_dir(dir)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    std::thread::sleep(after);
    let finished = child.try_wait().unwrap().is_some();
    let _ = child.kill();
    child.wait().unwrap();
    finished
}

/// Wall time of one uninterrupted run of `args`.
fn timed(dir: &std::path::Path, args: &[&str]) -> Duration {
    let start = Instant::now();
    let o = sliceplan(dir, args);
    assert!(o.status.success(), "{}", stderr(&o));
    start.elapsed()
}

#[test]
fn random_kills_never_leave_a_broken_plan_or_partial() {
    use rand::{Rng, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(2026);
    let dir = tempfile::tempdir().unwrap();
    let demo = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/ising-6x6.toml");
    let demo = demo.to_str().unwrap();

    // plan -o: a file under the final name is always the whole plan a full
    // run writes (the search is seeded, so only the timing note differs).
    let plan_args = |out: &'static str| {
        vec![
            "plan",
            demo,
            "--budget",
            "6KiB",
            "--trials",
            "8",
            "--seed",
            "1",
            "--threads",
            "1",
            "-o",
            out,
        ]
    };
    let full = timed(dir.path(), &plan_args("reference.plan.toml"));
    let comparable = |path: &std::path::Path| {
        let mut p = sliceplan::plan::read_plan(path).unwrap();
        p.predicted.tree_source.clear();
        p
    };
    let reference = comparable(&dir.path().join("reference.plan.toml"));
    let (mut whole, mut absent) = (0, 0);
    for _ in 0..10 {
        let target = dir.path().join("killed.plan.toml");
        let _ = std::fs::remove_file(&target);
        let after = full.mul_f64(rng.random_range(0.5..1.5));
        spawn_and_kill(dir.path(), &plan_args("killed.plan.toml"), after);
        if target.exists() {
            assert_eq!(comparable(&target), reference, "killed after {after:?}");
            whole += 1;
        } else {
            absent += 1;
        }
    }
    eprintln!("plan -o: {whole} whole, {absent} absent after 10 kills");

    // run: every partial left behind reads back whole, and gather rejects
    // none of them; the last run completes the job with the right value.
    let (net, plan) = kill_case(dir.path());
    let run_args = [
        "run",
        "kill.plan.toml",
        "--all",
        "--of",
        "16",
        "--threads",
        "1",
        "--out",
        "parts",
    ];
    let full = timed(dir.path(), &[&run_args[..7], &["--out", "timing"]].concat());
    for _ in 0..8 {
        let after = full.mul_f64(rng.random_range(0.0..0.5));
        spawn_and_kill(dir.path(), &run_args, after);
        for entry in std::fs::read_dir(dir.path().join("parts"))
            .into_iter()
            .flatten()
        {
            let path = entry.unwrap().path();
            let name = path.file_name().unwrap().to_string_lossy().into_owned();
            if name.ends_with(".partial") {
                let p = sliceplan::partial::read_partial(&path)
                    .unwrap_or_else(|e| panic!("{name} is broken after a kill: {e}"));
                assert_eq!(p.header.plan_fingerprint, plan.fingerprint());
            } else {
                assert!(name.starts_with(".sliceplan-"), "unexpected file {name}");
            }
        }
        if dir.path().join("parts").exists() {
            let o = sliceplan(dir.path(), &["gather", "kill.plan.toml", "parts", "--json"]);
            let j: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
            // A complete gather has no "rejected" list; an incomplete one
            // must list none.
            let rejected = j.get("rejected").cloned().unwrap_or(serde_json::json!([]));
            assert_eq!(rejected, serde_json::json!([]), "{}", stdout(&o));
        }
    }
    let o = sliceplan(dir.path(), &[&run_args[..], &["--json"]].concat());
    assert!(o.status.success(), "{}", stderr(&o));
    let j: serde_json::Value = serde_json::from_str(&stdout(&o)).unwrap();
    let got = [
        j["result"]["value"]["re"].as_f64().unwrap(),
        j["result"]["value"]["im"].as_f64().unwrap(),
    ];
    // Reference: the same network contracted without slicing, in process.
    let whole = contract_whole(&plan, &net, 2, u64::MAX).unwrap();
    assert!(relative_difference(&got, &whole.lanes) < 1e-10);
}
