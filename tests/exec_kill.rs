//! A run killed with SIGKILL in the middle of a chunk leaves no partial that
//! gather accepts as complete, and running again completes the job.

mod exec_support;

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
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_sliceplan"))
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
