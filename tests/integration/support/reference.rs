//! Helpers shared by the integration tests: an independent reference
//! contraction by direct summation, and small builders.

use num_complex::Complex64;
use rand::Rng;
use rand_chacha::ChaCha8Rng;
use sliceplan::network::{values::materialize, Network, NetworkBuilder};
use sliceplan::tree::Tree;

/// The network's value by direct summation over every assignment of every
/// index: for each assignment, the product of the tensors' entries, added to
/// the output entry that the open indices select. Output is row-major over
/// the open indices in order. Exponential; for networks with few indices.
pub fn brute_force(net: &Network, values: &[Vec<Complex64>]) -> Vec<Complex64> {
    let dims = net.dims();
    let out_len: u64 = net.open.iter().map(|&e| dims[e]).product();
    let mut out = vec![Complex64::new(0.0, 0.0); out_len as usize];
    let mut assign = vec![0u64; dims.len()];
    loop {
        let mut term = Complex64::new(1.0, 0.0);
        for (t, tensor) in net.tensors.iter().enumerate() {
            let mut off = 0u64;
            for &e in &tensor.indices {
                off = off * dims[e] + assign[e];
            }
            term *= values[t][off as usize];
        }
        let mut o = 0u64;
        for &e in &net.open {
            o = o * dims[e] + assign[e];
        }
        out[o as usize] += term;
        // Next assignment (odometer).
        let mut k = 0;
        loop {
            if k == dims.len() {
                return out;
            }
            assign[k] += 1;
            if assign[k] < dims[k] {
                break;
            }
            assign[k] = 0;
            k += 1;
        }
    }
}

/// Every tensor's values, materialised.
pub fn all_values(net: &Network) -> Vec<Vec<Complex64>> {
    (0..net.num_tensors())
        .map(|t| materialize(net, t).expect("test networks have values"))
        .collect()
}

/// Shape of the random networks of [`random_network`].
#[derive(Debug, Clone)]
pub struct RandomShape {
    /// Number of tensors (one more may be added for unused indices).
    pub tensors: std::ops::RangeInclusive<usize>,
    /// Size of the index pool.
    pub pool: std::ops::RangeInclusive<usize>,
    /// Index dimensions.
    pub dims: std::ops::RangeInclusive<u64>,
    /// Indices per tensor.
    pub legs: std::ops::RangeInclusive<usize>,
    /// Chance that an index is open.
    pub open: f64,
}

/// A random network: tensors with indices drawn from a small pool, so that
/// hyperedges and indices on one tensor only occur. Indices no tensor drew
/// go to one extra tensor `Textra`.
pub fn random_network(rng: &mut ChaCha8Rng, shape: &RandomShape) -> Network {
    let pool = rng.random_range(shape.pool.clone());
    let tensors = rng.random_range(shape.tensors.clone());
    let mut b = NetworkBuilder::new("random");
    for e in 0..pool {
        b.declare(&format!("i{e}"), rng.random_range(shape.dims.clone()), None)
            .unwrap();
    }
    let mut used = vec![false; pool];
    for t in 0..tensors {
        let k = rng.random_range(shape.legs.clone()).min(pool);
        let mut idx: Vec<usize> = Vec::new();
        while idx.len() < k {
            let e = rng.random_range(0..pool);
            if !idx.contains(&e) {
                idx.push(e);
            }
        }
        idx.iter().for_each(|&e| used[e] = true);
        let names: Vec<String> = idx.iter().map(|e| format!("i{e}")).collect();
        b.tensor(&format!("T{t}"), &names, None, None).unwrap();
    }
    let extra: Vec<String> = (0..pool)
        .filter(|&e| !used[e])
        .map(|e| format!("i{e}"))
        .collect();
    if !extra.is_empty() {
        b.tensor("Textra", &extra, None, None).unwrap();
    }
    for e in 0..pool {
        if rng.random_bool(shape.open) {
            b.open(&format!("i{e}"), None).unwrap();
        }
    }
    b.build().unwrap()
}

/// A random binary tree over `n` leaves (random pairwise merges).
pub fn random_tree(rng: &mut ChaCha8Rng, n: usize) -> Tree {
    let mut live: Vec<usize> = (0..n).collect();
    let mut merges = Vec::new();
    while live.len() > 1 {
        let a = live.swap_remove(rng.random_range(0..live.len()));
        let b = live.swap_remove(rng.random_range(0..live.len()));
        merges.push([a, b]);
        live.push(n + merges.len() - 1);
    }
    Tree::new(n, merges).unwrap()
}
