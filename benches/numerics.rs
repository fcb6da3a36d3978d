//! Numerics benchmark (run with `scripts/bench-numerics.sh`): the cost of
//! power-of-two rescaling and of exact (modular) counting against plain f64
//! on the same plans. Prints times and ratios; asserts nothing about time.
//!
//! Cases:
//! * a random-valued lattice (f64): plain f64 without rescaling, against
//!   scaled arithmetic;
//! * the independent sets of an n x n grid (a counting network whose bound
//!   passes 2^53): plain f64 (rounded), scaled f64, and the exact count
//!   modulo primes, with the cost per prime.
//!
//! Usage: `numerics [--quick]`.

use std::time::Instant;

use sliceplan::exec::exact::Numerics;
use sliceplan::exec::matmul::FaerMatMul;
use sliceplan::exec::runner::run_plan_numerics;
use sliceplan::exec::{chunk_jobs, RunOptions, Selection};
use sliceplan::formats::graph::{graph_network, Graph, GraphProblem};
use sliceplan::network::{Dtype, Fill, Network, NetworkBuilder, Values};
use sliceplan::partial::Arithmetic;
use sliceplan::plan::Plan;
use sliceplan::search::{find_tree, SearchOptions};

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    let (lattice, grid) = if quick { (8, 10) } else { (12, 14) };
    println!(
        "numerics: seconds per run (best of 3), {threads} thread(s); ratio = time / plain f64"
    );
    let net = random_lattice(lattice);
    let plan = plan_for(&net);
    println!(
        "random {lattice}x{lattice} lattice, bond 2, f64: {} tensors, total ops 2^{:.1}",
        net.num_tensors(),
        plan.predicted.total_ops_log2
    );
    let plain = time(&plan, &net, &unscaled(), threads);
    let scaled = time(&plan, &net, &Numerics::float(), threads);
    row("plain f64 (no rescaling)", plain, plain);
    row("scaled f64", scaled, plain);

    let net = grid_independent_sets(grid);
    let plan = plan_for(&net);
    let exact = Numerics::for_network(&net, Dtype::F64).unwrap();
    let primes = match &exact.arithmetic {
        Arithmetic::Modular { primes } => primes.len(),
        Arithmetic::Float => 0,
    };
    println!(
        "independent sets of the {grid}x{grid} grid, f64: {} tensors, total ops 2^{:.1}, bound 2^{:.0}, {primes} primes",
        net.num_tensors(),
        plan.predicted.total_ops_log2,
        exact.bound_log2.unwrap_or(0.0)
    );
    let plain = time(&plan, &net, &unscaled(), threads);
    let scaled = time(&plan, &net, &Numerics::float(), threads);
    let modular = time(&plan, &net, &exact, threads);
    row("plain f64 (no rescaling; rounded)", plain, plain);
    row("scaled f64 (rounded)", scaled, plain);
    row(&format!("exact, modulo {primes} primes"), modular, plain);
    println!(
        "  exact per prime / plain f64: {:.2}",
        modular / primes.max(1) as f64 / plain
    );
}

fn unscaled() -> Numerics {
    Numerics {
        scaled: false,
        ..Numerics::float()
    }
}

fn row(label: &str, t: f64, base: f64) {
    println!("  {label:<36} {t:>9.4} s   ratio {:>6.2}", t / base);
}

/// The best of three runs of every slice of `plan` in one chunk.
fn time(plan: &Plan, net: &Network, numerics: &Numerics, threads: usize) -> f64 {
    let total = plan.slice_count().unwrap();
    (0..3)
        .map(|_| {
            let dir = tempfile::tempdir().unwrap();
            let jobs = chunk_jobs(total, &Selection::AllChunks { of: 1 }, dir.path()).unwrap();
            let options = RunOptions {
                threads,
                force: true,
            };
            let t = Instant::now();
            run_plan_numerics(&FaerMatMul, plan, net, &jobs, &options, numerics, &|_| {}).unwrap();
            t.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

/// A plan without slicing for the best of a few searched trees.
fn plan_for(net: &Network) -> Plan {
    let tree = find_tree(net, &SearchOptions::trials(8, 1)).unwrap().tree;
    Plan::for_tree(net, "bench", &tree, &[], Dtype::F64, u64::MAX)
}

/// An n x n open lattice of bond dimension 2 with seeded random values.
fn random_lattice(n: usize) -> Network {
    let s = sliceplan::generate::lattice(&[n, n], 2, false).unwrap();
    let mut b = NetworkBuilder::new("lattice");
    for i in &s.indices {
        b.declare(&i.name, i.dim, None).unwrap();
    }
    for (t, tensor) in s.tensors.iter().enumerate() {
        let names: Vec<&str> = tensor
            .indices
            .iter()
            .map(|&e| s.indices[e].name.as_str())
            .collect();
        let fill = Values::Fill(Fill::Random { seed: t as u64 });
        b.tensor(&tensor.name, &names, Some(fill), None).unwrap();
    }
    b.dtype(Dtype::F64);
    b.build().unwrap()
}

/// The independent-set counting network of the n x n grid graph.
fn grid_independent_sets(n: usize) -> Network {
    let mut edges = Vec::new();
    for r in 0..n {
        for c in 0..n {
            let v = r * n + c;
            if c + 1 < n {
                edges.push((v, v + 1));
            }
            if r + 1 < n {
                edges.push((v, v + n));
            }
        }
    }
    let g = Graph::from_edges(n * n, &edges);
    graph_network(&g, &GraphProblem::IndependentSets, "grid", "grid").unwrap()
}
