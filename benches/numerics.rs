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
    // One thread and CPU time: the machine is shared, and CPU seconds of a
    // single thread move far less with other load than wall time does.
    let threads = 1;
    // Full size: about 2^33 and 2^30 multiply-adds (trees found in 8 trials).
    let (lattice, bond, grid) = if quick { (8, 2, 12) } else { (10, 4, 20) };
    println!(
        "numerics: CPU seconds per run (best of 5, taking turns), {threads} thread; ratio = time / plain f64"
    );
    let net = random_lattice(lattice, bond);
    let plan = plan_for(&net);
    println!(
        "random {lattice}x{lattice} lattice, bond {bond}, f64: {} tensors, total ops 2^{:.1}",
        net.num_tensors(),
        plan.predicted.total_ops_log2
    );
    let t = times(&plan, &net, &[unscaled(), Numerics::float()], threads);
    row("plain f64 (no rescaling)", t[0], t[0]);
    row("scaled f64", t[1], t[0]);

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
    let t = times(
        &plan,
        &net,
        &[unscaled(), Numerics::float(), exact],
        threads,
    );
    let (plain, modular) = (t[0], t[2]);
    row("plain f64 (no rescaling; rounded)", t[0], plain);
    row("scaled f64 (rounded)", t[1], plain);
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

/// For each arithmetic, the best of five runs of every slice of `plan` in
/// one chunk; the arithmetics take turns, so a slow spell of the machine
/// (shared with other work) hits them alike.
fn times(plan: &Plan, net: &Network, arithmetics: &[Numerics], threads: usize) -> Vec<f64> {
    let total = plan.slice_count().unwrap();
    let mut best = vec![f64::INFINITY; arithmetics.len()];
    for _ in 0..5 {
        for (b, numerics) in best.iter_mut().zip(arithmetics) {
            let dir = tempfile::tempdir().unwrap();
            let jobs = chunk_jobs(total, &Selection::AllChunks { of: 1 }, dir.path()).unwrap();
            let options = RunOptions {
                threads,
                force: true,
            };
            let t = cpu_seconds();
            run_plan_numerics(&FaerMatMul, plan, net, &jobs, &options, numerics, &|_| {}).unwrap();
            *b = b.min(cpu_seconds() - t);
        }
    }
    best
}

/// CPU seconds (user and system) this process has used.
fn cpu_seconds() -> f64 {
    // SAFETY: getrusage writes into the struct it is given.
    let mut u: libc::rusage = unsafe { std::mem::zeroed() };
    unsafe { libc::getrusage(libc::RUSAGE_SELF, &mut u) };
    let t = |v: libc::timeval| v.tv_sec as f64 + v.tv_usec as f64 * 1e-6;
    t(u.ru_utime) + t(u.ru_stime)
}

/// A plan without slicing for the best of a few searched trees.
fn plan_for(net: &Network) -> Plan {
    let tree = find_tree(net, &SearchOptions::trials(8, 1)).unwrap().tree;
    Plan::for_tree(net, "bench", &tree, &[], Dtype::F64, u64::MAX)
}

/// An n x n open lattice of the given bond dimension with seeded random values.
fn random_lattice(n: usize, bond: u64) -> Network {
    let s = sliceplan::generate::lattice(&[n, n], bond, false).unwrap();
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
