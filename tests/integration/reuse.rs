//! Reuse of slice-invariant work (issue 15): plans that hold intermediates
//! computed once per process give the same values as plans and runs that
//! repeat them in every slice, through the library and the binary; the
//! executor's counted memory stays within the prediction; the overhead and
//! its lower bound are reported; plans from before reuse still load.

use std::path::{Path, PathBuf};
use std::process::Output;

use crate::support::formats as formats_util;

use num_complex::Complex64;
use serde_json::Value;
use sliceplan::command::fit::FitOptions;
use sliceplan::command::plan::{plan, PlanOptions};
use sliceplan::command::run::{run, RunOptions, RunOutcome, Which};
use sliceplan::command::{Hooks, NetworkSource, TreeChoice};
use sliceplan::exec::runner::predicted_process_bytes;
use sliceplan::formats::{load, AmplitudeSpec, LoadOptions, OpenQubits};
use sliceplan::plan::{parse_plan, read_plan, Plan};
use sliceplan::search::SearchOptions;

fn demo(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-data")
        .join(name)
}

fn open_all() -> LoadOptions {
    LoadOptions {
        amplitude: AmplitudeSpec {
            bitstring: None,
            open: Some(OpenQubits::All),
        },
        ..LoadOptions::default()
    }
}

fn fredkin() -> PathBuf {
    formats_util::corpus().join("qasm/small/fredkin_n3.qasm")
}

/// Budgets at which the search (4 trials, seed 1) picks slice sets with
/// held intermediates (found by trying budgets with the binary; the tests
/// assert that something is held, so a change of search shows up here).
const ISING_BUDGET: u64 = 6 << 10;
const FREDKIN_BUDGET: u64 = 3600;

/// Plans `net` under `budget` through the library (`command::plan`).
fn plan_file(net: &Path, load: LoadOptions, budget: u64, reuse: bool, out: &Path) -> Plan {
    let mut fit = FitOptions::new(
        NetworkSource::File {
            path: net.to_path_buf(),
            load,
        },
        TreeChoice::Search(SearchOptions::trials(4, 1)),
    );
    fit.budget_bytes = Some(budget);
    fit.reuse = reuse;
    let opts = PlanOptions {
        fit,
        output: Some(out.to_path_buf()),
    };
    plan(&opts, &Hooks::quiet()).expect("plan runs");
    read_plan(out).expect("the plan reads back")
}

/// Runs every slice of the plan at `path` through the library
/// (`command::run`, one thread) and gathers.
fn run_all(path: &Path, reuse: bool, out: &Path, npy: Option<PathBuf>) -> RunOutcome {
    let opts = RunOptions {
        plan: path.to_path_buf(),
        which: Which::All(None),
        threads: 1,
        out: Some(out.to_path_buf()),
        force: false,
        verify: false,
        output: npy,
        network: None,
        available_memory: None,
        reuse,
    };
    let outcome = run(&opts, &Hooks::quiet()).expect("run runs");
    assert!(outcome.succeeded());
    outcome
}

/// The gathered value of a scalar network, as the JSON report gives it.
fn scalar_value(outcome: &RunOutcome) -> f64 {
    let json = serde_json::to_value(outcome.result.as_ref().unwrap()).unwrap();
    match &json["value"] {
        Value::Number(n) => n.as_f64().unwrap(),
        v => v["re"].as_f64().unwrap(),
    }
}

/// Z of demo-data/ising-6x6.toml (ferromagnetic Ising, J = 1, no field,
/// 6x6 open lattice, beta = 0.3) by the row transfer matrix, independently
/// of the network: Z = 1^T (D T)^5 D 1 with D the diagonal of row weights
/// exp(beta x horizontal neighbour products) and T the vertical coupling
/// exp(beta x sum_c s_c t_c) over the 64 row states.
fn ising_z_by_transfer_matrix() -> f64 {
    let beta = 0.3f64;
    let l = 6;
    let spin = |s: usize, c: usize| if (s >> c) & 1 == 0 { 1.0 } else { -1.0 };
    let row_weight =
        |s: usize| (beta * (0..l - 1).map(|c| spin(s, c) * spin(s, c + 1)).sum::<f64>()).exp();
    let couple =
        |s: usize, t: usize| (beta * (0..l).map(|c| spin(s, c) * spin(t, c)).sum::<f64>()).exp();
    let n = 1 << l;
    let mut v: Vec<f64> = (0..n).map(row_weight).collect();
    for _ in 1..l {
        v = (0..n)
            .map(|t| row_weight(t) * (0..n).map(|s| v[s] * couple(s, t)).sum::<f64>())
            .collect();
    }
    v.iter().sum()
}

/// The reference amplitudes of corpus circuit `file` (corpus
/// qasm/reference-amplitudes.json: statevector amplitudes from an
/// independent library), as (row-major index, amplitude).
fn reference_amplitudes(file: &str) -> Vec<(usize, Complex64)> {
    let text =
        std::fs::read_to_string(formats_util::corpus().join("qasm/reference-amplitudes.json"))
            .unwrap();
    let records: Vec<Value> = serde_json::from_str(&text).unwrap();
    let rec = records.iter().find(|r| r["file"] == file).unwrap();
    rec["amplitudes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| {
            // Row-major over the open qubits, qubit 0 most significant.
            let k = a["bitstring"]
                .as_str()
                .unwrap()
                .chars()
                .fold(0usize, |acc, b| acc * 2 + (b == '1') as usize);
            let z = Complex64::new(a["re"].as_f64().unwrap(), a["im"].as_f64().unwrap());
            (k, z)
        })
        .collect()
}

/// The executor's counted memory with reuse on stays within the cost
/// model's prediction, and the process's within the plan's budget.
fn check_memory(outcome: &RunOutcome, plan: &Plan, net: &sliceplan::network::Network) {
    let m = &outcome.run.memory;
    assert_eq!(m.held_intermediates, plan.held.len());
    assert!(m.measured_per_slice <= m.predicted_per_slice, "{m:?}");
    assert!(m.measured_setup <= m.predicted_setup, "{m:?}");
    let predicted = predicted_process_bytes(plan, net, 1).unwrap();
    // The tracked peak covers inputs, held intermediates and the slice; the
    // running sum is held beside them.
    assert!(
        m.tracked_process_peak + m.accumulator <= predicted,
        "{m:?} vs {predicted}"
    );
    assert!(predicted <= plan.budget_bytes, "{predicted} > budget");
}

#[test]
fn library_lattice_values_are_the_same_with_and_without_reuse() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("ising.plan.toml");
    let p = plan_file(
        &demo("ising-6x6.toml"),
        LoadOptions::default(),
        ISING_BUDGET,
        true,
        &path,
    );
    assert!(p.reuse && !p.held.is_empty(), "nothing held: {:?}", p.held);
    let net = load(&demo("ising-6x6.toml"), &LoadOptions::default()).unwrap();
    let with = run_all(&path, true, &dir.path().join("a"), None);
    check_memory(&with, &p, &net);
    // What `jobs` asks the scheduler for (`--mem`) comes from the plan's
    // record; it is the executor's own prediction, held intermediates in.
    let need = sliceplan::jobs::resources::process_need(&p, &net).unwrap();
    assert!(need.reused_bytes > 0.0);
    assert_eq!(
        need.total_bytes(),
        predicted_process_bytes(&p, &net, 1).unwrap() as f64
    );
    let without = run_all(&path, false, &dir.path().join("b"), None);
    assert_eq!(without.run.memory.held_intermediates, 0);
    // The same merges in the same order of slices: bit for bit.
    assert_eq!(
        scalar_value(&with).to_bits(),
        scalar_value(&without).to_bits()
    );
    // The row transfer matrix (above) is the outside reference.
    let want = ising_z_by_transfer_matrix();
    assert!((scalar_value(&with) - want).abs() <= 1e-10 * want);
}

#[test]
fn library_circuit_values_are_the_same_with_and_without_reuse() {
    let dir = tempfile::tempdir().unwrap();
    let (r, n) = (
        dir.path().join("r.plan.toml"),
        dir.path().join("n.plan.toml"),
    );
    let with_plan = plan_file(&fredkin(), open_all(), FREDKIN_BUDGET, true, &r);
    assert!(with_plan.reuse && !with_plan.held.is_empty());
    let plain_plan = plan_file(&fredkin(), open_all(), FREDKIN_BUDGET, false, &n);
    assert!(!plain_plan.reuse && plain_plan.held.is_empty());
    let native = with_plan.network_path_from(&r);
    let net = load(&native, &LoadOptions::default()).unwrap();
    let with = run_all(
        &r,
        true,
        &dir.path().join("a"),
        Some(dir.path().join("a.npy")),
    );
    check_memory(&with, &with_plan, &net);
    run_all(
        &r,
        false,
        &dir.path().join("b"),
        Some(dir.path().join("b.npy")),
    );
    run_all(
        &n,
        true,
        &dir.path().join("c"),
        Some(dir.path().join("c.npy")),
    );
    let read = |f: &str| {
        sliceplan::npy::read_npy(&dir.path().join(f))
            .unwrap()
            .values
    };
    let (a, b) = (read("a.npy"), read("b.npy"));
    assert_eq!(a, b, "held vs repeated on the same plan");
    // A plan made without reuse may slice differently: equal to rounding.
    for (x, y) in a.iter().zip(read("c.npy")) {
        assert!((x - y).norm() < 1e-12);
    }
    for (k, want) in reference_amplitudes("small/fredkin_n3.qasm") {
        assert!((a[k] - want).norm() < 1e-10, "{k}: {} vs {want}", a[k]);
    }
}

fn sliceplan(dir: &Path, args: &[&str]) -> Output {
    crate::support::bin::binary()
        .current_dir(dir)
        .args(args)
        .env_remove("SLICEPLAN_AVAILABLE_MEMORY")
        .output()
        .unwrap()
}

fn ok(o: &Output) -> Value {
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    serde_json::from_slice(&o.stdout).unwrap_or(Value::Null)
}

#[test]
fn binary_circuit_values_are_the_same_with_and_without_reuse() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let q = fredkin();
    let q = q.to_str().unwrap();
    let budget = FREDKIN_BUDGET.to_string();
    let common = [
        "--open", "all", "--budget", &budget, "--trials", "4", "--seed", "1",
    ];
    ok(&sliceplan(
        d,
        &[&["plan", q], &common[..], &["-o", "r.plan.toml"]].concat(),
    ));
    ok(&sliceplan(
        d,
        &[
            &["plan", q],
            &common[..],
            &["--no-reuse", "-o", "n.plan.toml"],
        ]
        .concat(),
    ));
    let r = read_plan(&d.join("r.plan.toml")).unwrap();
    let n = read_plan(&d.join("n.plan.toml")).unwrap();
    assert!(r.reuse && !r.held.is_empty() && !n.reuse && n.held.is_empty());
    let run_json = |plan: &str, out: &str, extra: &[&str]| {
        let npy = format!("{out}.npy");
        let args = [
            &["run", plan, "--all", "--threads", "1", "--json"][..],
            &["--out", out, "-o", &npy],
            extra,
        ]
        .concat();
        ok(&sliceplan(d, &args))
    };
    let a = run_json("r.plan.toml", "a", &[]);
    assert_eq!(a["run"]["memory"]["held_intermediates"], r.held.len());
    run_json("r.plan.toml", "b", &["--no-reuse"]);
    run_json("n.plan.toml", "c", &[]);
    let read = |f: &str| sliceplan::npy::read_npy(&d.join(f)).unwrap().values;
    let (a, b, c) = (read("a.npy"), read("b.npy"), read("c.npy"));
    assert_eq!(a, b);
    for (k, want) in reference_amplitudes("small/fredkin_n3.qasm") {
        // Corpus qasm/reference-amplitudes.json (independent library).
        assert!((a[k] - want).norm() < 1e-10, "{k}: {} vs {want}", a[k]);
        assert!((c[k] - want).norm() < 1e-10, "{k}: {} vs {want}", c[k]);
    }
}

#[test]
fn binary_lattice_values_and_fit_figures() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let net = demo("ising-6x6.toml");
    let net = net.to_str().unwrap();
    let budget = ISING_BUDGET.to_string();
    let common = ["--budget", &budget, "--trials", "4", "--seed", "1"];
    // fit --json: the result with reuse, the plain figure and the bound.
    let fit = ok(&sliceplan(
        d,
        &[&["fit", net, "--json"], &common[..]].concat(),
    ));
    let s = &fit["slicing"];
    assert_eq!(s["reuse"], true);
    assert!(s["held_intermediates"].as_u64().unwrap() > 0);
    let (over, plain) = (
        s["overhead"].as_f64().unwrap(),
        s["plain_overhead"].as_f64().unwrap(),
    );
    assert!(over <= plain, "{s}");
    // The bound holds for every fitting set on the chosen tree, so for the
    // chosen one too.
    let b = &fit["overhead_lower_bound"];
    assert!(b["total_ops_log2"].as_f64().unwrap() <= s["total_ops_log2"].as_f64().unwrap() + 1e-9);
    assert!(b["overhead"].as_f64().unwrap() <= over + 1e-9);
    // Text: the bound beside the result.
    let text = sliceplan(d, &[&["fit", net], &common[..]].concat());
    let text = String::from_utf8_lossy(&text.stdout);
    assert!(
        text.contains("with reuse") && text.contains("overhead >="),
        "{text}"
    );
    // --no-reuse gives the plain figures.
    let fit = ok(&sliceplan(
        d,
        &[&["fit", net, "--json", "--no-reuse"], &common[..]].concat(),
    ));
    let s = &fit["slicing"];
    assert_eq!(s["reuse"], false);
    assert_eq!(s["held_intermediates"], 0);
    assert_eq!(s["overhead"], s["plain_overhead"]);
    // Values through plan and run: held, repeated, and planned without.
    ok(&sliceplan(
        d,
        &[&["plan", net], &common[..], &["-o", "r.plan.toml"]].concat(),
    ));
    ok(&sliceplan(
        d,
        &[
            &["plan", net],
            &common[..],
            &["--no-reuse", "-o", "n.plan.toml"],
        ]
        .concat(),
    ));
    let value = |plan: &str, out: &str, extra: &[&str]| {
        let args = [
            &[
                "run",
                plan,
                "--all",
                "--threads",
                "1",
                "--json",
                "--out",
                out,
            ][..],
            extra,
        ]
        .concat();
        ok(&sliceplan(d, &args))["result"]["value"]
            .as_f64()
            .unwrap()
    };
    let a = value("r.plan.toml", "a", &[]);
    let b = value("r.plan.toml", "b", &["--no-reuse"]);
    let c = value("n.plan.toml", "c", &[]);
    assert_eq!(a.to_bits(), b.to_bits());
    // Outside reference: the row transfer matrix (above).
    let want = ising_z_by_transfer_matrix();
    for v in [a, c] {
        assert!((v - want).abs() <= 1e-10 * want, "{v} vs {want}");
    }
}

#[test]
fn fit_json_carries_slicing_when_none_is_needed() {
    let dir = tempfile::tempdir().unwrap();
    let net = demo("ising-6x6.toml");
    let fit = ok(&sliceplan(
        dir.path(),
        &[
            "fit",
            net.to_str().unwrap(),
            "--budget",
            "1GiB",
            "--trials",
            "4",
            "--json",
        ],
    ));
    // DESIGN section 5: slices "1", no indices, overhead 1.
    let s = &fit["slicing"];
    assert_eq!(s["slices"], "1");
    assert_eq!(s["indices"], Value::Array(Vec::new()));
    assert_eq!(s["overhead"], 1.0);
}

#[test]
fn plans_written_before_reuse_load_with_reuse_off() {
    let bad = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad-inputs");
    // plan/good.plan.toml was written before reuse existed: no reuse,
    // held, ops_bound or reused bytes.
    let text = std::fs::read_to_string(bad.join("plan/good.plan.toml")).unwrap();
    assert!(!text.contains("reuse") && !text.contains("held"));
    let p = parse_plan(&text, "good.plan.toml").unwrap();
    assert!(!p.reuse && p.held.is_empty() && p.ops_bound.is_none());
    assert_eq!(p.predicted.reused_bytes, "0");
    assert_eq!(p.predicted.setup_bytes, "0");
    // The binary reports it and runs a slice of it.
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("parts");
    let o = sliceplan(
        &bad,
        &[
            "run",
            "plan/good.plan.toml",
            "--slices",
            "0..1",
            "--out",
            out.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = sliceplan(&bad, &["report", "plan/good.plan.toml"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // A plan that lists held intermediates without reuse is refused.
    let broken = text.replace("seed = 0", "seed = 0\nheld = [6]");
    let e = parse_plan(&broken, "x.plan.toml").unwrap_err().to_string();
    assert!(
        e.contains("x.plan.toml") && e.contains("reuse is false"),
        "{e}"
    );
}
