//! Exact counts through the binary: counting networks (every value a whole
//! number) print their exact integer by default, past 2^53 and past 2^64,
//! computed modulo primes and rebuilt by the Chinese remainder theorem when
//! floating point could not hold them; a count that cannot be exact says so.

use crate::support::exec as exec_support;
use crate::support::formats as formats_util;

use std::path::Path;

use exec_support::{fibonacci_chain, sliceplan, stderr, stdout, write_case, write_native};
use serde_json::Value;
use sliceplan::network::Dtype;
use sliceplan::plan::Plan;
use sliceplan::tree::Tree;

fn json(out: &std::process::Output) -> Value {
    assert!(
        out.status.success(),
        "exit {:?}: {}\n{}",
        out.status.code(),
        stdout(out),
        stderr(out)
    );
    serde_json::from_str(&stdout(out))
        .unwrap_or_else(|e| panic!("not JSON ({e}): {}\n{}", stdout(out), stderr(out)))
}

/// Independent sets of the n x n grid graph by the row transfer matrix, in
/// u128: states are rows without two adjacent chosen vertices; consecutive
/// rows must not share a chosen column. This is OEIS A006506 ("number of
/// independent vertex sets in the n x n grid graph", equivalently n x n
/// binary matrices with no two adjacent ones).
fn a006506(n: usize) -> u128 {
    let rows: Vec<u32> = (0..1u32 << n).filter(|s| s & (s >> 1) == 0).collect();
    let mut count = vec![1u128; rows.len()];
    for _ in 1..n {
        count = rows
            .iter()
            .map(|&b| {
                rows.iter()
                    .zip(&count)
                    .filter(|(&a, _)| a & b == 0)
                    .map(|(_, &c)| c)
                    .sum()
            })
            .collect();
    }
    count.iter().sum()
}

/// The n x n grid graph in DIMACS form.
fn write_grid(path: &Path, n: usize) {
    let mut edges = Vec::new();
    for r in 0..n {
        for c in 0..n {
            let v = r * n + c + 1;
            if c + 1 < n {
                edges.push((v, v + 1));
            }
            if r + 1 < n {
                edges.push((v, v + n));
            }
        }
    }
    let mut text = format!("c {n}x{n} grid\np edge {} {}\n", n * n, edges.len());
    for (u, v) in edges {
        text.push_str(&format!("e {u} {v}\n"));
    }
    std::fs::write(path, text).unwrap();
}

/// Plans the independent sets of the n x n grid with slicing (a budget
/// below the unsliced peak), runs every chunk with `--verify`, gathers;
/// returns (run JSON, gather JSON, gather text).
fn grid_count(dir: &Path, n: usize, budget: &str) -> (Value, Value, String) {
    write_grid(&dir.join("grid.col"), n);
    // The tree first, then the plan for it: quicker in a debug build than
    // searching and slicing together.
    let t = sliceplan(
        dir,
        &[
            "plan",
            "grid.col",
            "--problem",
            "independent-sets",
            "--trials",
            "1",
            "-o",
            "grid.tree.toml",
        ],
    );
    assert!(t.status.success(), "{}{}", stdout(&t), stderr(&t));
    let p = sliceplan(
        dir,
        &[
            "plan",
            "grid.col",
            "--problem",
            "independent-sets",
            "--tree",
            "grid.tree.toml",
            "--budget",
            budget,
            "-o",
            "grid.plan.toml",
        ],
    );
    assert!(p.status.success(), "{}{}", stdout(&p), stderr(&p));
    let run = json(&sliceplan(
        dir,
        &[
            "run",
            "grid.plan.toml",
            "--all",
            "--out",
            "parts",
            "--verify",
            "--json",
        ],
    ));
    let gather = json(&sliceplan(
        dir,
        &["gather", "grid.plan.toml", "parts", "--json"],
    ));
    let text = stdout(&sliceplan(dir, &["gather", "grid.plan.toml", "parts"]));
    (run, gather, text)
}

#[test]
fn transfer_matrix_reference_matches_the_first_terms() {
    // The first terms of OEIS A006506 as listed there: 2, 7, 63, 1234,
    // 55447, 5598861 (from memory of the entry; 5598861 is also checked by
    // tests/end_to_end_values.rs).
    let head: Vec<u128> = (1..=6).map(a006506).collect();
    assert_eq!(head, vec![2, 7, 63, 1234, 55447, 5598861]);
}

#[test]
fn independent_sets_of_the_10x10_grid_past_2_to_53() {
    let want = a006506(10);
    assert!(want > 1 << 53 && want < u64::MAX as u128);
    check_grid(10, "12KiB", want);
}

#[test]
fn independent_sets_of_the_11x11_grid_past_2_to_64() {
    let want = a006506(11);
    assert!(want > u64::MAX as u128);
    check_grid(11, "16KiB", want);
}

/// The independent sets of the n x n grid through the binary, sliced, must
/// print `want` exactly (reference: the transfer matrix above, OEIS A006506).
fn check_grid(n: usize, budget: &str, want: u128) {
    let dir = tempfile::tempdir().unwrap();
    let (run, g, text) = grid_count(dir.path(), n, budget);
    assert!(run["run"]["slices_total"].as_u64().unwrap() > 1, "{run}");
    assert_eq!(g["exact"], true, "{g}");
    assert_eq!(g["exact_value"], want.to_string(), "n = {n}");
    assert_eq!(
        run["run"]["numerics"]["arithmetic"]["kind"], "modular",
        "{run}"
    );
    // The float contraction of --verify agrees with the exact count.
    assert_eq!(run["verify"]["agrees"], true, "{run}");
    // Memory metered within the prediction in modular arithmetic too.
    let m = &run["run"]["memory"];
    assert!(m["measured_per_slice"].as_u64() <= m["predicted_per_slice"].as_u64());
    assert!(
        text.starts_with(&format!("value: {want} (exact, ")),
        "{text}"
    );
}

/// Runs the SATLIB uf20-91 instances `first..=last` through the binary and
/// checks the printed exact counts against the corpus.
fn satlib_uf20(first: usize, last: usize) {
    // Corpus cnf/reference-counts.json: counts agreed by four independent
    // methods (brute force, two SDD compilers, backtracking).
    let refs: Vec<Value> = serde_json::from_str(
        &std::fs::read_to_string(formats_util::corpus().join("cnf/reference-counts.json")).unwrap(),
    )
    .unwrap();
    for k in first..=last {
        // SATLIB numbering: uf20-01 ... uf20-09, then uf20-010.
        let name = format!("uf20-91/uf20-0{k}.cnf");
        let r = refs.iter().find(|r| r["file"] == name.as_str()).unwrap();
        let file = formats_util::corpus().join("cnf").join(&name);
        let file = file.display().to_string();
        let dir = tempfile::tempdir().unwrap();
        let p = sliceplan(
            dir.path(),
            &[
                "plan",
                &file,
                "--budget",
                "4MiB",
                "--trials",
                "1",
                "-o",
                "f.plan.toml",
            ],
        );
        assert!(p.status.success(), "{file}: {}", stderr(&p));
        let o = sliceplan(dir.path(), &["run", "f.plan.toml", "--all"]);
        assert!(o.status.success(), "{file}: {}", stderr(&o));
        let want = r["count_sdd"].as_u64().unwrap();
        assert!(
            stdout(&o).contains(&format!("\nvalue: {want} (exact, f64)\n")),
            "{file}: {}",
            stdout(&o)
        );
    }
}

#[test]
fn satlib_uf20_model_counts_1_to_3() {
    satlib_uf20(1, 3);
}

#[test]
fn satlib_uf20_model_counts_4_to_6() {
    satlib_uf20(4, 6);
}

#[test]
fn satlib_uf20_model_counts_7_to_10() {
    satlib_uf20(7, 10);
}

#[test]
fn fibonacci_matrix_power_exactly_with_a_sliced_open_index() {
    // [[1,1],[1,0]]^100 = [[F101, F100], [F100, F99]] (OEIS A000045):
    // F101 = 573147844013817084101 is past 2^64. Computed here by the
    // recurrence in u128.
    let mut fib = vec![0u128, 1];
    for k in 2..=101 {
        fib.push(fib[k - 1] + fib[k - 2]);
    }
    let net = fibonacci_chain(100);
    let names = ["i0", "i30", "i60", "i90"];
    let sliced: Vec<usize> = names.iter().map(|n| net.index_id(n).unwrap()).collect();
    let plan = Plan::for_tree(
        &net,
        "fib.toml",
        &Tree::left_deep(100),
        &sliced,
        Dtype::F64,
        1 << 20,
    );
    let dir = tempfile::tempdir().unwrap();
    write_case(dir.path(), "fib", &net, &plan);
    let j = json(&sliceplan(
        dir.path(),
        &[
            "run",
            "fib.plan.toml",
            "--all",
            "--of",
            "4",
            "--verify",
            "-o",
            "fib.npy",
            "--json",
        ],
    ));
    let want: Vec<String> = [fib[101], fib[100], fib[100], fib[99]]
        .iter()
        .map(u128::to_string)
        .collect();
    assert_eq!(j["result"]["exact_values"], serde_json::json!(want));
    assert_eq!(j["verify"]["agrees"], true);
    // The .npy holds the values rounded to f64, with exponent 0.
    let npy = sliceplan::npy::read_npy(&dir.path().join("fib.npy")).unwrap();
    assert_eq!(npy.values[0].re, fib[101] as f64);
    assert_eq!(j["result"]["npy_exponent2"], 0);
}

#[test]
fn counts_that_cannot_be_exact_say_so() {
    // Planned in f32, the 6x6 grid's independent sets (bound 2^36 > 2^24)
    // are counted in floating point; the value (5598861, OEIS A006506)
    // comes with the reason it is not proven exact.
    let dir = tempfile::tempdir().unwrap();
    write_grid(&dir.path().join("grid.col"), 6);
    let p = sliceplan(
        dir.path(),
        &[
            "plan",
            "grid.col",
            "--problem",
            "independent-sets",
            "--budget",
            "1MiB",
            "--dtype",
            "f32",
            "--trials",
            "2",
            "-o",
            "g.plan.toml",
        ],
    );
    assert!(p.status.success(), "{}", stderr(&p));
    let o = sliceplan(dir.path(), &["run", "g.plan.toml", "--all"]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(
        stdout(&o)
            .contains("value: 5598861 (f32) (not exact: f32 holds 24 bits; plan with dtype f64"),
        "{}",
        stdout(&o)
    );
    // The same count in f64 is proven exact in floating point (bound 2^36).
    let net = sliceplan::formats::load(
        &dir.path().join("grid.col"),
        &sliceplan::formats::LoadOptions {
            problem: Some(sliceplan::formats::GraphProblem::IndependentSets),
            ..Default::default()
        },
    )
    .unwrap();
    write_native(&net, &dir.path().join("grid.toml"));
    let p = sliceplan(
        dir.path(),
        &[
            "plan",
            "grid.toml",
            "--budget",
            "1MiB",
            "--trials",
            "2",
            "-o",
            "h.plan.toml",
        ],
    );
    assert!(p.status.success(), "{}", stderr(&p));
    let j = json(&sliceplan(
        dir.path(),
        &["run", "h.plan.toml", "--all", "--json"],
    ));
    assert_eq!(j["result"]["exact_value"], "5598861");
    assert_eq!(j["run"]["numerics"]["arithmetic"]["kind"], "float");
}

#[test]
fn float_partials_of_an_exact_count_are_rerun_not_summed() {
    // Partials written in floating point (as version 1 files were) for a
    // network that is now counted exactly: gather rejects them, run redoes
    // them. [[1,1],[1,0]]^100 has the Fibonacci numbers F101, F100, F99
    // (OEIS A000045), computed here by the recurrence.
    let mut fib = vec![0u128, 1];
    for k in 2..=101 {
        fib.push(fib[k - 1] + fib[k - 2]);
    }
    let net = fibonacci_chain(100);
    let sliced = vec![net.index_id("i50").unwrap()];
    let plan = Plan::for_tree(
        &net,
        "fib.toml",
        &Tree::left_deep(100),
        &sliced,
        Dtype::F64,
        1 << 20,
    );
    let dir = tempfile::tempdir().unwrap();
    write_case(dir.path(), "fib", &net, &plan);
    let parts = dir.path().join("fib.partials");
    let jobs =
        sliceplan::exec::chunk_jobs(2, &sliceplan::exec::Selection::AllChunks { of: 2 }, &parts)
            .unwrap();
    std::fs::create_dir_all(&parts).unwrap();
    let options = sliceplan::exec::RunOptions {
        threads: 1,
        force: true,
    };
    sliceplan::exec::runner::run_plan_numerics(
        &sliceplan::exec::matmul::FaerMatMul,
        &plan,
        &net,
        &jobs,
        &options,
        &sliceplan::exec::exact::Numerics::float(),
        &|_| {},
    )
    .unwrap();
    let o = sliceplan(
        dir.path(),
        &["gather", "fib.plan.toml", "fib.partials", "--json"],
    );
    assert_eq!(o.status.code(), Some(1), "{}", stdout(&o));
    let j: Value = serde_json::from_str(&stdout(&o)).unwrap();
    let rejected = j["rejected"].as_array().unwrap();
    assert_eq!(rejected.len(), 2, "{j}");
    assert!(rejected[0]["reason"]
        .as_str()
        .unwrap()
        .contains("computed in floating point"));
    let j = json(&sliceplan(
        dir.path(),
        &["run", "fib.plan.toml", "--all", "--of", "2", "--json"],
    ));
    assert_eq!(j["run"]["chunks_skipped"], 0, "{j}");
    assert_eq!(
        j["result"]["exact_values"],
        serde_json::json!([fib[101], fib[100], fib[100], fib[99]].map(|x| x.to_string()))
    );
}
