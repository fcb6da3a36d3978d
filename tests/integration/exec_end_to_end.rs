//! End to end through the binary: plan → run (several chunks) → gather on
//! networks with known values, with slicing forced (at least 8 slices), and
//! gather's refusals of damaged, missing and foreign partials.

use crate::support::exec as exec_support;

use std::path::Path;

use exec_support::{fibonacci_chain, independent_set_grid, sliceplan, stderr, stdout, write_case};
use sliceplan::jobs::chunk_range;
use sliceplan::network::{Dtype, Network};
use sliceplan::plan::Plan;
use sliceplan::tree::Tree;

/// Bond indices in the middle of the grid, to slice.
fn middle_bonds(net: &Network, names: &[&str]) -> Vec<usize> {
    names.iter().map(|n| net.index_id(n).unwrap()).collect()
}

fn grid_case(dir: &Path) -> (Network, Plan) {
    let net = independent_set_grid(6);
    let tree = Tree::left_deep(36);
    let peak = |p: &Plan| p.predicted.per_slice_peak_bytes.parse::<u64>().unwrap();
    let whole = Plan::for_tree(&net, "grid.toml", &tree, &[], Dtype::F64, 0);
    // Bonds chosen to lower the peak, at least 8 slices; the budget is the
    // per-slice peak they reach, which the unsliced contraction exceeds.
    let sliced = exec_support::slice_greedily(&net, &tree, 8);
    let probe = Plan::for_tree(&net, "grid.toml", &tree, &sliced, Dtype::F64, 0);
    let budget = peak(&probe);
    assert!(peak(&whole) > budget, "slicing is needed to fit the budget");
    let plan = Plan::for_tree(&net, "grid.toml", &tree, &sliced, Dtype::F64, budget);
    let slices = plan.slice_count().unwrap();
    assert!((8..=256).contains(&slices), "{slices} slices");
    write_case(dir, "grid", &net, &plan);
    (net, plan)
}

fn json(out: &std::process::Output) -> serde_json::Value {
    serde_json::from_str(&stdout(out))
        .unwrap_or_else(|e| panic!("not JSON ({e}): {}\n{}", stdout(out), stderr(out)))
}

#[test]
fn independent_sets_of_the_6x6_grid_in_four_chunks() {
    let dir = tempfile::tempdir().unwrap();
    let (_, plan) = grid_case(dir.path());
    for i in 0..4 {
        let o = sliceplan(
            dir.path(),
            &[
                "run",
                "grid.plan.toml",
                "--chunk",
                &i.to_string(),
                "--of",
                "4",
                "--out",
                "parts",
                "--threads",
                "1",
            ],
        );
        assert!(o.status.success(), "chunk {i}: {}", stderr(&o));
    }
    let o = sliceplan(
        dir.path(),
        &[
            "gather",
            "grid.plan.toml",
            "parts",
            "-o",
            "grid.npy",
            "--json",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let j = json(&o);
    // OEIS A006506: the 6x6 grid graph has 5,598,861 independent sets.
    assert_eq!(j["value"], 5_598_861.0);
    assert_eq!(j["slices"].as_u64(), plan.slice_count());
    assert_eq!(j["partials"], 4);
    let npy = sliceplan::npy::read_npy(&dir.path().join("grid.npy")).unwrap();
    assert_eq!(npy.shape, Vec::<u64>::new());
    assert_eq!(npy.values[0].re, 5_598_861.0);
}

#[test]
fn run_all_with_verify_and_a_sliced_open_index() {
    let dir = tempfile::tempdir().unwrap();
    let net = fibonacci_chain(12);
    // Slice the open row index i0 and three inner bonds: 16 slices, and
    // slices fill different rows of the output instead of all being summed.
    let sliced = middle_bonds(&net, &["i0", "i3", "i6", "i9"]);
    let plan = Plan::for_tree(
        &net,
        "fib.toml",
        &Tree::left_deep(12),
        &sliced,
        Dtype::F64,
        1 << 20,
    );
    write_case(dir.path(), "fib", &net, &plan);
    let o = sliceplan(
        dir.path(),
        &[
            "run",
            "fib.plan.toml",
            "--all",
            "--of",
            "5",
            "--verify",
            "-o",
            "fib.npy",
            "--json",
            "--threads",
            "2",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let j = json(&o);
    assert_eq!(j["verify"]["agrees"], true);
    assert_eq!(j["result"]["shape"], serde_json::json!([2, 2]));
    let npy = sliceplan::npy::read_npy(&dir.path().join("fib.npy")).unwrap();
    let got: Vec<f64> = npy.values.iter().map(|z| z.re).collect();
    // [[1,1],[1,0]]^12 = [[F13, F12], [F12, F11]] = [[233, 144], [144, 89]] (Fibonacci numbers, OEIS A000045).
    assert_eq!(got, vec![233.0, 144.0, 144.0, 89.0]);
    // The partials went next to the plan; a second --all finds them all valid.
    let o = sliceplan(
        dir.path(),
        &["run", "fib.plan.toml", "--all", "--of", "5", "--json"],
    );
    let j = json(&o);
    assert_eq!(
        (
            j["run"]["chunks_skipped"].as_u64(),
            j["run"]["slices_run"].as_u64()
        ),
        (Some(5), Some(0))
    );
}

#[test]
fn gather_refuses_damaged_missing_and_foreign_partials() {
    let dir = tempfile::tempdir().unwrap();
    let (net, plan) = grid_case(dir.path());
    let total = plan.slice_count().unwrap();
    let o = sliceplan(
        dir.path(),
        &[
            "run",
            "grid.plan.toml",
            "--all",
            "--of",
            "4",
            "--out",
            "parts",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let parts = dir.path().join("parts");
    let file = |i: u64| parts.join(sliceplan::jobs::partial_file_name(i, 4));

    // One flipped byte in the middle of chunk 2's data.
    let mut bytes = std::fs::read(file(2)).unwrap();
    let mid = bytes.len() / 2;
    bytes[mid] ^= 0x01;
    std::fs::write(file(2), &bytes).unwrap();
    // Chunk 1 deleted.
    std::fs::remove_file(file(1)).unwrap();
    let o = sliceplan(dir.path(), &["gather", "grid.plan.toml", "parts", "--json"]);
    assert_eq!(o.status.code(), Some(1), "{}", stdout(&o));
    let j = json(&o);
    assert_eq!(j["complete"], false);
    assert_eq!(j["missing_chunks"], serde_json::json!([1, 2]));
    assert_eq!(j["chunks_of"], 4);
    let rejected = j["rejected"].as_array().unwrap();
    assert_eq!(rejected.len(), 1);
    assert!(rejected[0]["file"]
        .as_str()
        .unwrap()
        .ends_with("chunk-2-of-4.partial"));
    assert!(rejected[0]["reason"].as_str().unwrap().contains("checksum"));
    // Chunks 1 and 2 of 4 are adjacent ranges (jobs::chunk_range): one gap.
    let gap = [chunk_range(total, 1, 4).start, chunk_range(total, 2, 4).end];
    assert_eq!(
        j["missing"],
        serde_json::json!([{"start": gap[0], "end": gap[1]}])
    );

    // Re-running completes it: the damaged chunk is redone, the valid ones kept.
    let o = sliceplan(
        dir.path(),
        &[
            "run",
            "grid.plan.toml",
            "--all",
            "--of",
            "4",
            "--out",
            "parts",
            "--json",
        ],
    );
    let j = json(&o);
    assert_eq!(j["run"]["chunks_skipped"], 2);
    assert_eq!(j["result"]["value"], 5_598_861.0);

    // A partial of another plan (same network, another slice set) is refused.
    let other = Plan::for_tree(
        &net,
        "grid.toml",
        &Tree::left_deep(36),
        &plan.sliced_ids(&net).unwrap()[1..],
        Dtype::F64,
        0,
    );
    exec_support::write_case(dir.path(), "other", &net, &other);
    let o = sliceplan(
        dir.path(),
        &[
            "run",
            "other.plan.toml",
            "--chunk",
            "0",
            "--of",
            "2",
            "--out",
            "otherparts",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    std::fs::copy(
        dir.path().join("otherparts/chunk-0-of-2.partial"),
        parts.join("stray.partial"),
    )
    .unwrap();
    let o = sliceplan(dir.path(), &["gather", "grid.plan.toml", "parts"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("stray.partial") && stderr(&o).contains("belongs to plan"),
        "{}",
        stderr(&o)
    );
}

#[test]
fn bad_arguments_exit_2_and_name_the_fix() {
    let dir = tempfile::tempdir().unwrap();
    let (_, plan) = grid_case(dir.path());
    let o = sliceplan(
        dir.path(),
        &["run", "grid.plan.toml", "--chunk", "4", "--of", "4"],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("numbered 0..4"), "{}", stderr(&o));
    let o = sliceplan(dir.path(), &["run", "grid.plan.toml", "--slices", "3..999"]);
    assert_eq!(o.status.code(), Some(2));
    let want = format!("{} slices", plan.slice_count().unwrap());
    assert!(stderr(&o).contains(&want), "{}", stderr(&o));
    let o = sliceplan(dir.path(), &["run", "missing.plan.toml", "--all"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("missing.plan.toml"), "{}", stderr(&o));
    let o = sliceplan(dir.path(), &["gather", "grid.plan.toml", "nowhere"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("nowhere"), "{}", stderr(&o));
}

#[test]
#[ignore = "writes a demo case to $SLICEPLAN_DEMO_DIR for manual inspection"]
fn write_demo_case() {
    let dir = std::path::PathBuf::from(std::env::var("SLICEPLAN_DEMO_DIR").unwrap());
    grid_case(&dir);
}

#[test]
fn networks_that_cannot_be_contracted_as_planned_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    // Structure only: no values to contract.
    let bare = sliceplan::generate::lattice(&[2, 2], 2, false).unwrap();
    let plan = Plan::for_tree(&bare, "bare.toml", &Tree::left_deep(4), &[0], Dtype::F64, 0);
    write_case(dir.path(), "bare", &bare, &plan);
    let o = sliceplan(dir.path(), &["run", "bare.plan.toml", "--all"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("has no values"), "{}", stderr(&o));
    // Complex values given inline, but a real dtype in the plan.
    let mut b = sliceplan::network::NetworkBuilder::new("cx");
    b.declare("i", 2, None).unwrap();
    let v = sliceplan::network::Values::Inline {
        re: vec![1.0, 2.0],
        im: Some(vec![0.0, 1.0]),
    };
    b.tensor("A", &["i"], Some(v.clone()), None).unwrap();
    b.tensor("B", &["i"], Some(v), None).unwrap();
    let cx = b.build().unwrap();
    let plan = Plan::for_tree(&cx, "cx.toml", &Tree::left_deep(2), &[], Dtype::F64, 0);
    write_case(dir.path(), "cx", &cx, &plan);
    let o = sliceplan(dir.path(), &["run", "cx.plan.toml", "--all"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("tensor 'A' has complex values"),
        "{}",
        stderr(&o)
    );
}
