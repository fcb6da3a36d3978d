//! Entry points for the fuzz targets in `fuzz/` and their regression tests.
//!
//! Each function takes arbitrary bytes, runs one parser and what the tool
//! derives right after it, and must return without panicking, hanging or
//! allocating without bound, whatever the bytes. The fuzz targets call
//! these, and `tests/integration/fuzz_regressions.rs` replays every input the fuzzer
//! once crashed on through the same functions.

use std::path::Path;

use crate::formats::graph::{self, GraphProblem};
use crate::formats::{circuit, cnf, einsum, native, qasm, AmplitudeSpec};
use crate::network::Network;
use crate::tree::Tree;

/// A fuzz entry point.
pub type Target = fn(&[u8]);

/// The fuzz targets, by name (the file names under `fuzz/fuzz_targets/`).
pub const TARGETS: &[(&str, Target)] = &[
    ("native_network", native_network),
    ("einsum_equation", einsum_equation),
    ("qasm_circuit", qasm_circuit),
    ("cnf_formula", cnf_formula),
    ("graph_file", graph_file),
    ("tree_file", tree_file),
    ("plan_file", plan_file),
    ("partial_file", partial_file),
    ("npy_array", npy_array),
];

/// Fingerprints the network and costs a left-deep tree over it.
fn exercise(net: &Network) {
    let _ = net.fingerprint();
    if net.tensors.len() > 1 && net.tensors.len() < 200 {
        let _ = crate::cost::metrics(net, &Tree::left_deep(net.tensors.len()));
    }
}

/// Native TOML network files.
pub fn native_network(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    // `.npy` references resolve against a directory that does not exist, so
    // fuzzed input cannot make the parser read files of this machine.
    let base = Path::new("/nonexistent-sliceplan-fuzz");
    if let Ok(net) = native::parse_native(text, "fuzz.toml", base, "fuzz") {
        exercise(&net);
    }
}

/// Einsum equations with `--dims` and `--dim`: `equation|dims|default`.
pub fn einsum_equation(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let mut parts = text.splitn(3, '|');
    let eq = parts.next().unwrap_or("");
    let dims = parts.next().unwrap_or("");
    let default = parts.next().and_then(|d| d.trim().parse::<u64>().ok());
    let _ = einsum::parse_equation(eq);
    let Ok(dims) = einsum::parse_dims(dims) else {
        return;
    };
    if let Ok(net) = einsum::network_from_einsum(eq, default, &dims) {
        exercise(&net);
    }
}

/// OpenQASM 2.0 circuits and their amplitude networks.
pub fn qasm_circuit(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(c) = qasm::parse_qasm(text, "fuzz.qasm", "fuzz") {
        if let Ok(net) = circuit::amplitude_network(&c, &AmplitudeSpec::default()) {
            exercise(&net);
        }
    }
}

/// DIMACS CNF formulas and their model-counting networks.
pub fn cnf_formula(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(f) = cnf::parse_cnf(text, "fuzz.cnf") {
        if let Ok(net) = cnf::cnf_network(&f, "fuzz.cnf", "fuzz") {
            exercise(&net);
        }
    }
}

/// Graph files; the first byte picks the counting problem.
pub fn graph_file(data: &[u8]) {
    let Some((&pick, rest)) = data.split_first() else {
        return;
    };
    let Ok(text) = std::str::from_utf8(rest) else {
        return;
    };
    let problem = match pick % 4 {
        0 => GraphProblem::IndependentSets,
        1 => GraphProblem::Colorings {
            colors: u64::from(pick / 4 % 5),
        },
        2 => GraphProblem::PerfectMatchings,
        _ => GraphProblem::Ising {
            beta: 0.4,
            coupling: None,
            field: 0.1,
        },
    };
    if let Ok(g) = graph::parse_graph(text, "fuzz.col") {
        if let Ok(net) = graph::graph_network(&g, &problem, "fuzz.col", "fuzz") {
            exercise(&net);
        }
    }
}

/// Tree files, checked against a fixed five-tensor network.
pub fn tree_file(data: &[u8]) {
    static NET: std::sync::OnceLock<Network> = std::sync::OnceLock::new();
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let net = NET.get_or_init(|| {
        einsum::network_from_einsum("ab,bc,cd,da,ae->e", Some(2), &[])
            .expect("a fixed, valid equation")
    });
    if let Ok(tree) = crate::tree::parse_tree_text(text, "fuzz.tree.toml", net) {
        let _ = crate::cost::metrics(net, &tree);
    }
}

/// Plan files, and what `run`, `jobs` and `gather` derive from a plan
/// before they read the network.
pub fn plan_file(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Ok(plan) = crate::plan::parse_plan(text, "fuzz.plan.toml") {
        let _ = plan.fingerprint();
        if let Some(n) = plan.slice_count() {
            let _ = plan.slice_assignment(n.saturating_sub(1));
        }
    }
}

/// Partial-result files.
pub fn partial_file(data: &[u8]) {
    if let Ok(p) = crate::partial::decode(data) {
        let _ = p.header.slices();
        let _ = crate::partial::encode(&p);
    }
}

/// `.npy` arrays, as native network files reference them.
pub fn npy_array(data: &[u8]) {
    let _ = crate::npy::parse_npy(data, "fuzz.npy");
}
