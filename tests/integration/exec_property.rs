//! Property test of the executor: on random small networks (hyperedges,
//! dangling and open indices, dimensions 1-4), random trees and random slice
//! sets, the gathered sliced value equals the unsliced contraction, and both
//! equal an independent direct summation (tests/common `brute_force`).

use crate::support::reference as common;

use num_complex::Complex64;
use proptest::prelude::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sliceplan::exec::verify::{contract_whole, relative_difference};
use sliceplan::exec::{chunk_jobs, gather, run_plan, GatherOutcome, RunOptions, Selection};
use sliceplan::network::{Dtype, Network, NetworkBuilder, Values};
use sliceplan::plan::Plan;
use sliceplan::tree::Tree;

/// A random network with at most 10 tensors whose direct summation stays
/// cheap (at most 4^8 index assignments).
fn random_network(rng: &mut ChaCha8Rng, dtype: Dtype) -> Network {
    let tensors = rng.random_range(1..=10usize);
    let indices = rng.random_range(1..=8usize);
    let mut legs: Vec<Vec<String>> = vec![Vec::new(); tensors];
    let mut b = NetworkBuilder::new("random");
    let mut open = Vec::new();
    for e in 0..indices {
        let name = format!("e{e}");
        b.declare(&name, rng.random_range(1..=4u64), None).unwrap();
        // Degree 1 (dangling), 2 (ordinary bond) or up to 4 (hyperedge).
        let degree = rng.random_range(1..=4usize.min(tensors));
        let mut owners: Vec<usize> = (0..tensors).collect();
        for k in 0..degree {
            let j = rng.random_range(k..tensors);
            owners.swap(k, j);
            legs[owners[k]].push(name.clone());
        }
        if rng.random_bool(0.25) {
            open.push(name);
        }
    }
    for (t, l) in legs.iter_mut().enumerate() {
        // Storage order of a tensor's indices is random too.
        for k in (1..l.len()).rev() {
            l.swap(k, rng.random_range(0..=k));
        }
        b.tensor(&format!("T{t}"), l, None, None).unwrap();
    }
    // Values need the dimensions, which the builder now knows: rebuild with them.
    let structure = {
        let mut b2 = b.clone();
        for name in &open {
            b2.open(name, None).unwrap();
        }
        b2.build().unwrap()
    };
    let mut b = NetworkBuilder::new("random");
    for idx in &structure.indices {
        b.declare(&idx.name, idx.dim, None).unwrap();
    }
    for t in &structure.tensors {
        let len: u64 = t
            .indices
            .iter()
            .map(|&e| structure.indices[e].dim)
            .product();
        let re: Vec<f64> = (0..len).map(|_| rng.random_range(-1.0..1.0)).collect();
        let im = dtype
            .is_complex()
            .then(|| (0..len).map(|_| rng.random_range(-1.0..1.0)).collect());
        let names: Vec<&str> = t
            .indices
            .iter()
            .map(|&e| structure.indices[e].name.as_str())
            .collect();
        b.tensor(&t.name, &names, Some(Values::Inline { re, im }), None)
            .unwrap();
    }
    for name in &open {
        b.open(name, None).unwrap();
    }
    b.dtype(dtype);
    b.build().unwrap()
}

/// A uniformly random merge sequence over `n` leaves.
fn random_tree(rng: &mut ChaCha8Rng, n: usize) -> Tree {
    let mut pool: Vec<usize> = (0..n).collect();
    let mut merges = Vec::new();
    while pool.len() > 1 {
        let a = pool.swap_remove(rng.random_range(0..pool.len()));
        let b = pool.swap_remove(rng.random_range(0..pool.len()));
        merges.push([a, b]);
        pool.push(n + merges.len() - 1);
    }
    Tree::new(n, merges).unwrap()
}

fn lanes_of(values: &[Complex64], dtype: Dtype) -> Vec<f64> {
    values
        .iter()
        .flat_map(|z| {
            if dtype.is_complex() {
                vec![z.re, z.im]
            } else {
                vec![z.re]
            }
        })
        .collect()
}

fn check_seed(seed: u64) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let dtype = if rng.random_bool(0.7) {
        Dtype::C128
    } else {
        Dtype::F64
    };
    let net = random_network(&mut rng, dtype);
    let tree = random_tree(&mut rng, net.num_tensors());
    let mut sliced: Vec<usize> = (0..net.num_indices())
        .filter(|_| rng.random_bool(0.4))
        .collect();
    for k in (1..sliced.len()).rev() {
        sliced.swap(k, rng.random_range(0..=k));
    }
    let budget = rng.random_range(0..4096u64);
    let plan = Plan::for_tree(&net, "random.toml", &tree, &sliced, dtype, budget);
    let total = plan.slice_count().unwrap();
    let dir = tempfile::tempdir().unwrap();
    let of = rng.random_range(1..=total.min(4));
    let jobs = chunk_jobs(total, &Selection::AllChunks { of }, dir.path()).unwrap();
    let options = RunOptions {
        threads: rng.random_range(1..=3),
        force: false,
    };
    let report = run_plan(&plan, &net, &jobs, &options, &|_| {}).unwrap();
    assert!(report.memory.measured_per_slice <= report.memory.predicted_per_slice);
    let gathered = match gather(&plan, &net, dir.path()).unwrap() {
        GatherOutcome::Complete(g) => g,
        GatherOutcome::Incomplete(i) => panic!("seed {seed}: incomplete {i:?}"),
    };
    let whole = contract_whole(&plan, &net, 1, u64::MAX).unwrap();
    // Independent reference: direct summation over every index assignment.
    let reference = lanes_of(&common::brute_force(&net, &common::all_values(&net)), dtype);
    assert_eq!(gathered.shape, whole.shape);
    let d1 = relative_difference(&gathered.lanes, &whole.lanes);
    let d2 = relative_difference(&whole.lanes, &reference);
    assert!(
        d1 <= 1e-10,
        "seed {seed}: sliced vs unsliced differ by {d1:e} (sliced {sliced:?}, tree {:?})",
        tree.merges()
    );
    assert!(
        d2 <= 1e-10,
        "seed {seed}: unsliced vs direct summation differ by {d2:e}"
    );
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 200, ..ProptestConfig::default() })]
    #[test]
    fn sliced_equals_unsliced_equals_direct_sum(seed in any::<u64>()) {
        check_seed(seed);
    }
}

#[test]
fn fixed_seeds() {
    for seed in 0..50 {
        check_seed(seed);
    }
}
