//! Known values through the whole pipeline with slicing forced: import (in
//! the library), search, slice under a budget small enough for at least 8
//! slices, write the plan, `run` several chunks with the real binary,
//! `gather`. Sources are named beside each value.

use crate::support::formats as formats_util;

use std::path::Path;

use num_complex::Complex64;
use serde_json::Value;
use sliceplan::cost::NodeSets;
use sliceplan::formats::graph::{graph_network, Graph, GraphProblem};
use sliceplan::formats::write::write_native;
use sliceplan::formats::{load, AmplitudeSpec, LoadOptions, OpenQubits};
use sliceplan::network::Network;
use sliceplan::plan::{write_plan, Plan};
use sliceplan::search::{find_tree, SearchOptions};
use sliceplan::slicing::greedy::greedy;
use sliceplan::slicing::SliceOptions;

/// Plans `net` with at least 8 slices, runs it in 4 chunks and gathers.
/// Returns the gather JSON and, for a tensor output, its values.
fn sliced_value(net: &Network, dir: &Path) -> (Value, Option<Vec<Complex64>>) {
    let dtype = net.dtype.unwrap_or_default();
    let tree = find_tree(net, &SearchOptions::trials(16, 1)).unwrap().tree;
    let sets = NodeSets::new(net, &tree);
    // Follow the greedy slicing under a budget nothing fits until the slice
    // set first reaches 8 slices, and give the plan exactly the budget that
    // set needs: slicing is forced, and the slice count stays small.
    let mut opts = SliceOptions::new(1, dtype);
    opts.frontier_extra = 0;
    let trail = greedy(&sets, net, &opts, &[]);
    let point = trail
        .iter()
        .find(|p| p.slices.exact.unwrap() >= 8)
        .expect("the greedy reaches 8 slices");
    let (sliced, budget) = (point.sliced.clone(), point.need.total_bytes().ceil() as u64);
    write_native(net, &dir.join("net.toml"), &Default::default()).unwrap();
    let plan = Plan::for_tree(net, "net.toml", &tree, &sliced, dtype, budget);
    assert!((8..=64).contains(&plan.slice_count().unwrap()));
    write_plan(&dir.join("p.plan.toml"), &plan).unwrap();
    for chunk in 0..4 {
        let out = crate::support::bin::binary()
            .args([
                "run",
                "p.plan.toml",
                "--chunk",
                &chunk.to_string(),
                "--of",
                "4",
                "--out",
                "parts",
                "--threads",
                "1",
            ])
            .current_dir(dir)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let out = crate::support::bin::binary()
        .args([
            "gather",
            "p.plan.toml",
            "parts",
            "--json",
            "-o",
            "result.npy",
        ])
        .current_dir(dir)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stdout)
    );
    let json: Value = serde_json::from_slice(&out.stdout).unwrap();
    let values = (!net.open.is_empty()).then(|| {
        sliceplan::npy::read_npy(&dir.join("result.npy"))
            .unwrap()
            .values
    });
    (json, values)
}

fn grid_graph(rows: usize, cols: usize) -> Graph {
    let mut edges = Vec::new();
    for r in 0..rows {
        for c in 0..cols {
            let v = r * cols + c;
            if c + 1 < cols {
                edges.push((v, v + 1));
            }
            if r + 1 < rows {
                edges.push((v, v + cols));
            }
        }
    }
    Graph::from_edges(rows * cols, &edges)
}

fn real_value(json: &Value) -> f64 {
    match &json["value"] {
        Value::Number(n) => n.as_f64().unwrap(),
        v => v["re"].as_f64().unwrap(),
    }
}

/// The value of a counting problem on the rows x cols grid graph, through
/// the sliced pipeline.
fn grid_count(rows: usize, cols: usize, problem: GraphProblem) -> f64 {
    let name = format!("grid {rows}x{cols}");
    let net = graph_network(&grid_graph(rows, cols), &problem, "grid", &name).unwrap();
    let dir = tempfile::tempdir().unwrap();
    real_value(&sliced_value(&net, dir.path()).0)
}

#[test]
fn independent_sets_of_the_6x6_grid() {
    // OEIS A006506 (independent vertex sets in the n x n grid graph), n = 6.
    assert_eq!(grid_count(6, 6, GraphProblem::IndependentSets), 5_598_861.0);
}

#[test]
fn domino_tilings_of_the_8x8_board() {
    // OEIS A004003 (domino tilings of the 2n x 2n board), n = 4: the
    // perfect matchings of the 8 x 8 grid graph (Kasteleyn 1961; Temperley
    // and Fisher 1961).
    assert_eq!(
        grid_count(8, 8, GraphProblem::PerfectMatchings),
        12_988_816.0
    );
}

#[test]
fn corpus_model_count() {
    // Corpus cnf/reference-counts.json: uf20-01 has 8 models (four
    // independent methods agree).
    let path = formats_util::corpus().join("cnf/uf20-91/uf20-01.cnf");
    let net = load(&path, &LoadOptions::default()).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let (json, _) = sliced_value(&net, dir.path());
    assert!((real_value(&json) - 8.0).abs() < 1e-9, "{json}");
}

#[test]
fn corpus_circuit_amplitudes() {
    // Corpus qasm/reference-amplitudes.json: statevector amplitudes of
    // small circuits from an independent library (same gate convention,
    // no phase factor). All qubits open, so open indices are sliced too.
    let text =
        std::fs::read_to_string(formats_util::corpus().join("qasm/reference-amplitudes.json"))
            .unwrap();
    let records: Vec<Value> = serde_json::from_str(&text).unwrap();
    for file in [
        "small/adder_n4.qasm",
        "small/basis_change_n3.qasm",
        "small/fredkin_n3.qasm",
    ] {
        let rec = records.iter().find(|r| r["file"] == file).unwrap();
        let options = LoadOptions {
            amplitude: AmplitudeSpec {
                bitstring: None,
                open: Some(OpenQubits::All),
            },
            ..LoadOptions::default()
        };
        let net = load(&formats_util::corpus().join("qasm").join(file), &options).unwrap();
        let dir = tempfile::tempdir().unwrap();
        let (_, values) = sliced_value(&net, dir.path());
        let state = values.unwrap();
        for a in rec["amplitudes"].as_array().unwrap() {
            let bits = a["bitstring"].as_str().unwrap();
            // Row-major over the open qubits, qubit 0 most significant.
            let k = bits
                .chars()
                .fold(0usize, |acc, b| acc * 2 + (b == '1') as usize);
            let want = Complex64::new(a["re"].as_f64().unwrap(), a["im"].as_f64().unwrap());
            assert!(
                (state[k] - want).norm() < 1e-10,
                "{file} <{bits}|: {} vs {want}",
                state[k]
            );
        }
    }
}
