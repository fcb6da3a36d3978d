//! `sliceplan plan` through the real binary: JSON keys, the tree file,
//! determinism on the command line, and bad input.

use crate::support::bin::run as sliceplan;

const CHAIN: [&str; 4] = [
    "--einsum",
    "ab,bc,cd,de,ef,fg->ag",
    "--dims",
    "a=30,b=35,c=15,d=5,e=10,f=20,g=25",
];

#[test]
fn plan_json_has_the_documented_keys() {
    let mut args = vec!["plan"];
    args.extend(CHAIN);
    args.extend(["--trials", "20", "--json"]);
    let (code, stdout, stderr) = sliceplan(&args);
    assert_eq!(code, Some(0), "{stderr}");
    // Exactly one JSON object on stdout.
    let v: serde_json::Value = serde_json::from_str(&stdout).expect("one JSON object");
    assert_eq!(v["network"]["tensors"], 6);
    assert_eq!(v["network"]["indices"], 7);
    assert!(v["network"]["fingerprint"].is_string());
    // Cormen et al. §15.2: 15,125 scalar multiplications.
    assert_eq!(v["tree"]["total_ops"], "15125");
    assert!((v["tree"]["total_ops_log2"].as_f64().unwrap() - 15125f64.log2()).abs() < 1e-9);
    for key in ["width", "op_width", "peak_log2", "height"] {
        assert!(v["tree"][key].is_number(), "tree.{key}");
    }
    // The largest input, A1 (30x35), bounds the width from below and is
    // reached: width = log2 1050.
    let lb = v["lower_bound"]["width"].as_f64().unwrap();
    assert!((lb - 1050f64.log2()).abs() < 1e-9, "{lb}");
}

#[test]
fn tree_file_round_trips_through_inspect() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("chain.tree.toml");
    let p = path.to_str().unwrap();
    let mut args = vec!["plan"];
    args.extend(CHAIN);
    args.extend(["--trials", "5", "-o", p]);
    let (code, stdout, stderr) = sliceplan(&args);
    assert_eq!(code, Some(0), "{stderr}");
    assert!(stdout.contains("15,125"), "{stdout}");
    let mut args = vec!["inspect"];
    args.extend(CHAIN);
    args.extend(["--tree", p, "--json"]);
    let (code, stdout, stderr) = sliceplan(&args);
    assert_eq!(code, Some(0), "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(v["tree"]["total_ops"], "15125");
}

#[test]
fn same_seed_same_output_on_the_command_line() {
    // A ring of 30 matrices with bond dimension 3, closed.
    let letters: Vec<char> = "abcdefghijklmnopqrstuvwxyzABCD".chars().collect();
    let ops: Vec<String> = (0..30)
        .map(|k| format!("{}{}", letters[k], letters[(k + 1) % 30]))
        .collect();
    let eq = format!("{}->", ops.join(","));
    let dir = tempfile::tempdir().unwrap();
    let mut files = Vec::new();
    for threads in ["1", "2"] {
        let path = dir.path().join(format!("t{threads}.toml"));
        let p = path.to_str().unwrap().to_string();
        let (code, _, stderr) = sliceplan(&[
            "plan",
            "--einsum",
            &eq,
            "--dim",
            "3",
            "--trials",
            "25",
            "--seed",
            "9",
            "--threads",
            threads,
            "-o",
            &p,
        ]);
        assert_eq!(code, Some(0), "{stderr}");
        files.push(std::fs::read(&path).unwrap());
    }
    assert_eq!(files[0], files[1]);
}

#[test]
fn bad_options_exit_2_with_a_hint() {
    let cases: [(&[&str], &str); 7] = [
        (
            &["--threads", "100000"],
            "--threads: 100000 threads is too many",
        ),
        // clap lists the values of the objective enum.
        (
            &["--objective", "fast"],
            "[possible values: ops, peak, width",
        ),
        (&["--time", "soon"], "write e.g. 10s"),
        (&["--trials", "0"], "at least 1"),
        (&["--objective", "mix", "--weights", "1,2"], "three weights"),
        (
            &["--objective", "mix"],
            "--weights: --objective mix needs three weights",
        ),
        (
            &["--max-width", "3"],
            "--max-width: goes with --objective ops-within",
        ),
    ];
    for (extra, hint) in cases {
        let mut args = vec!["plan"];
        args.extend(CHAIN);
        args.extend(extra);
        let (code, stdout, stderr) = sliceplan(&args);
        assert_eq!(code, Some(2), "{extra:?}: {stderr}");
        assert!(stdout.is_empty());
        assert!(stderr.contains(hint), "{extra:?}: {stderr}");
    }
}

#[test]
fn partitioning_trials_are_reproducible_across_processes() {
    // Regression: METIS keeps its random state in a C global, so two
    // threads partitioning at once made trees depend on timing. A brickwork
    // circuit is large enough for the partitioning finder; three runs with
    // two threads and one with one thread must write the same tree.
    let dir = tempfile::tempdir().unwrap();
    let net = dir.path().join("b.toml");
    let net = net.to_str().unwrap();
    let (code, _, err) = sliceplan(&[
        "generate",
        "brickwork",
        "--rows",
        "4",
        "--cols",
        "4",
        "--depth",
        "10",
        "--seed",
        "3",
        "-o",
        net,
    ]);
    assert_eq!(code, Some(0), "{err}");
    let mut files = Vec::new();
    for (run, threads) in ["2", "2", "2", "1"].iter().enumerate() {
        let out = dir.path().join(format!("t{run}.toml"));
        let out = out.to_str().unwrap();
        let (code, _, err) = sliceplan(&[
            "plan",
            net,
            "--trials",
            "24",
            "--seed",
            "5",
            "--threads",
            threads,
            "-o",
            out,
        ]);
        assert_eq!(code, Some(0), "{err}");
        files.push(std::fs::read(out).unwrap());
    }
    assert!(files.iter().all(|f| *f == files[0]));
}

/// Regression: trial 0 could be a partitioning trial dropped at the
/// deadline, leaving no tree and a panic ("trial 0 always runs and always
/// yields a tree") under `--time 1ms --threads 1`. Every seed must now give
/// a valid tree and exit 0.
#[test]
fn tiny_time_budget_never_panics() {
    for seed in 0..12 {
        let seed = seed.to_string();
        let (code, stdout, stderr) = sliceplan(&[
            "plan",
            "demo-data/ising-6x6.toml",
            "--time",
            "1ms",
            "--threads",
            "1",
            "--seed",
            &seed,
            "--json",
        ]);
        assert_eq!(code, Some(0), "seed {seed}: {stderr}");
        assert!(!stderr.contains("panicked"), "seed {seed}: {stderr}");
        let v: serde_json::Value = serde_json::from_str(&stdout).expect("one JSON object");
        // 96 tensors (the demo's 6x6 open-boundary lattice: 36 sites and
        // 2 x 6 x 5 = 60 bonds); any valid tree has a finite cost.
        assert_eq!(v["network"]["tensors"], 96);
        assert!(v["tree"]["total_ops_log2"].as_f64().unwrap().is_finite());
    }
}

#[test]
fn plan_json_says_where_the_time_went_and_which_simple_orders_were_priced() {
    let demo = concat!(env!("CARGO_MANIFEST_DIR"), "/demo-data/ising-6x6.toml");
    let (code, stdout, stderr) = sliceplan(&["plan", demo, "--trials", "4", "--json"]);
    assert_eq!(code, Some(0), "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).expect("one JSON object");
    let search = &v["search"];
    for key in ["simplify", "candidates", "trials", "refine", "pricing"] {
        let t = search["phases"][key].as_f64().unwrap_or(-1.0);
        assert!(t >= 0.0, "search.phases.{key} = {t}");
    }
    let candidates = search["candidates"].as_array().expect("candidates");
    let names: Vec<&str> = candidates
        .iter()
        .map(|c| c["finder"].as_str().unwrap())
        .collect();
    assert!(
        names.contains(&"file-order") && names.contains(&"min-fill"),
        "{names:?}"
    );
    // The search's guarantee: its tree is never worse, in total ops (the
    // objective), than any simple order it priced.
    let best = v["tree"]["total_ops_log2"].as_f64().unwrap();
    for c in candidates {
        assert!(best <= c["total_ops_log2"].as_f64().unwrap() + 1e-9, "{c}");
    }
}

#[test]
fn op_width_is_an_objective_on_the_command_line() {
    let mut args = vec!["plan"];
    args.extend(CHAIN);
    args.extend(["--trials", "4", "--objective", "op-width", "--json"]);
    let (code, stdout, stderr) = sliceplan(&args);
    assert_eq!(code, Some(0), "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(v["search"]["objective"], "op-width");
    // Least op width, worked out by hand from the chain's dimensions
    // (Cormen et al. §15.2): the step that sums b holds a (open, 30), b (35)
    // and an index of the block right of b, at least d = 5, so every tree
    // has a step of >= 30 x 35 x 5 = 5,250. The tree (A1 (A2 A3)) ((A4 A5)
    // A6) reaches it: steps 35x15x5, 30x35x5, 5x10x20, 5x20x25, 30x5x25, the
    // largest 5,250. The exact search (6 tensors) must find exactly that.
    let op_width = v["tree"]["op_width"].as_f64().unwrap();
    assert!((op_width - 5250f64.log2()).abs() < 1e-9, "{op_width}");
}
