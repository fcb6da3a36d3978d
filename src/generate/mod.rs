//! Network families for demos, tests and benchmarks: lattices of any
//! dimension, matrix chains, random regular graphs, brickwork circuits.
//!
//! The functions here build the structure (tensors, indices, open indices).
//! Values come from [`values`] (seeded random or ones), [`ising`] (the
//! Ising model on a lattice) and [`circuit`] (brickwork circuits with gate
//! values); graph problems on a random regular graph come from
//! [`crate::formats::graph`].

pub mod circuit;
pub mod ising;
pub mod values;

use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::error::{Error, Result};
use crate::network::{Network, NetworkBuilder};

const AXES: [char; 4] = ['x', 'y', 'z', 'w'];

/// A lattice with one tensor per site and one index per nearest-neighbour
/// bond, all of dimension `bond`.
///
/// `shape` gives the side lengths (1 to 4 dimensions). With `periodic`, the
/// last site of each row is bonded to the first (sides must then be at least
/// 3, so that no two bonds of a site coincide). Sites are named
/// `s<i>_<j>...`; the bond along axis `x` leaving site (i, j) is `x<i>_<j>`.
///
/// ```
/// let net = sliceplan::generate::lattice(&[4, 4], 2, false).unwrap();
/// assert_eq!(net.num_tensors(), 16);
/// assert_eq!(net.num_indices(), 24); // 2 * 4 * 3 bonds
/// ```
pub fn lattice(shape: &[usize], bond: u64, periodic: bool) -> Result<Network> {
    let label = format!("lattice {:?}", shape);
    if shape.is_empty() || shape.len() > AXES.len() || shape.contains(&0) {
        return Err(Error::usage(format!(
            "{label}: give 1 to 4 side lengths, each at least 1"
        )));
    }
    if periodic && shape.iter().any(|&s| s < 3) {
        return Err(Error::usage(format!(
            "{label}: periodic sides must be at least 3"
        )));
    }
    let sites = checked_count(
        &label,
        "sites",
        shape.iter().try_fold(1usize, |a, &s| a.checked_mul(s)),
    )?;
    let coords = |mut s: usize| -> Vec<usize> {
        let mut c = vec![0; shape.len()];
        for k in (0..shape.len()).rev() {
            c[k] = s % shape[k];
            s /= shape[k];
        }
        c
    };
    let join = |c: &[usize]| c.iter().map(usize::to_string).collect::<Vec<_>>().join("_");
    let mut b = NetworkBuilder::new(&label);
    b.name(format!(
        "{} lattice{}, bond {bond}",
        shape
            .iter()
            .map(usize::to_string)
            .collect::<Vec<_>>()
            .join("x"),
        if periodic { " (periodic)" } else { "" }
    ));
    let mut legs: Vec<Vec<usize>> = vec![Vec::new(); sites];
    for s in 0..sites {
        let c = coords(s);
        for (axis, &side) in shape.iter().enumerate() {
            let wraps = c[axis] + 1 == side;
            if wraps && !periodic {
                continue;
            }
            let mut n = c.clone();
            n[axis] = (c[axis] + 1) % side;
            let t = n
                .iter()
                .zip(shape)
                .fold(0, |acc, (&x, &side)| acc * side + x);
            let e = b.index(&format!("{}{}", AXES[axis], join(&c)), bond)?;
            legs[s].push(e);
            legs[t].push(e);
        }
    }
    for (s, l) in legs.into_iter().enumerate() {
        b.tensor_by_ids(&format!("s{}", join(&coords(s))), l, None)?;
    }
    b.build()
}

/// The chain of matrices A1 (d0 x d1), A2 (d1 x d2), ...; the outer indices
/// are open, so the total ops of a tree equal its scalar multiplications.
///
/// ```
/// let net = sliceplan::generate::matrix_chain(&[30, 35, 15, 5, 10, 20, 25]).unwrap();
/// assert_eq!(net.num_tensors(), 6);
/// ```
pub fn matrix_chain(dims: &[u64]) -> Result<Network> {
    if dims.len() < 2 {
        return Err(Error::usage("a matrix chain needs at least two dimensions"));
    }
    let mut b = NetworkBuilder::new("matrix chain");
    b.name(format!("matrix chain {dims:?}"));
    let ids: Vec<usize> = dims
        .iter()
        .enumerate()
        .map(|(k, &d)| b.index(&format!("i{k}"), d))
        .collect::<Result<_>>()?;
    for k in 0..dims.len() - 1 {
        b.tensor_by_ids(&format!("A{}", k + 1), vec![ids[k], ids[k + 1]], None)?;
    }
    b.open("i0", None)?;
    b.open(&format!("i{}", dims.len() - 1), None)?;
    b.build()
}

/// A uniformly drawn simple `degree`-regular graph on `n` vertices (pairing
/// model with rejection of loops and multi-edges), reproducible from `seed`.
///
/// Reference: Bollobás, "A probabilistic proof of an asymptotic formula for
/// the number of labelled regular graphs", European J. Combin. 1 (1980).
/// Expected time O(n·degree·e^((degree²-1)/4)); fine for degree ≤ 4.
pub fn random_regular_graph(n: usize, degree: usize, seed: u64) -> Result<Vec<(usize, usize)>> {
    if degree >= n || (n * degree) % 2 == 1 {
        return Err(Error::invalid(
            "degree",
            format!(
                "no simple {degree}-regular graph on {n} vertices: need degree < n and n*degree even"
            ),
        ));
    }
    checked_count("regular graph", "vertices", Some(n))?;
    checked_count(
        "regular graph",
        "edges",
        n.checked_mul(degree).map(|e| e / 2),
    )?;
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut edges = circulant(n, degree);
    // Degree-preserving double-edge swaps (the switch Markov chain): pick
    // edges a-b and c-d, rewire to a-d and c-b (or a-c and b-d) when that
    // keeps the graph simple. Ten swaps per edge mix the start well for
    // demos and benchmarks (common practice; not a proof of uniformity).
    let mut present: std::collections::HashSet<(usize, usize)> = edges.iter().copied().collect();
    let m = edges.len();
    for _ in 0..10 * m {
        let (i, j) = (rng.random_range(0..m), rng.random_range(0..m));
        if i == j {
            continue;
        }
        let ((a, b), (c, d)) = (edges[i], edges[j]);
        let (x, y) = if rng.random_bool(0.5) {
            ((a, d), (c, b))
        } else {
            ((a, c), (b, d))
        };
        let key = |(u, v): (usize, usize)| (u.min(v), u.max(v));
        let (x, y) = (key(x), key(y));
        if x.0 == x.1 || y.0 == y.1 || x == y || present.contains(&x) || present.contains(&y) {
            continue;
        }
        present.remove(&edges[i]);
        present.remove(&edges[j]);
        present.insert(x);
        present.insert(y);
        edges[i] = x;
        edges[j] = y;
    }
    edges.sort_unstable();
    Ok(edges)
}

/// A simple `degree`-regular graph on `n` vertices (degree < n, n x degree
/// even): vertex i joins i +- 1, ..., i +- degree/2 around a circle, and,
/// for an odd degree (so n is even), the opposite vertex i + n/2.
fn circulant(n: usize, degree: usize) -> Vec<(usize, usize)> {
    let mut edges = Vec::with_capacity(n * degree / 2);
    for i in 0..n {
        for k in 1..=degree / 2 {
            let j = (i + k) % n;
            edges.push((i.min(j), i.max(j)));
        }
        if degree % 2 == 1 && i < n / 2 {
            edges.push((i, i + n / 2));
        }
    }
    edges
}

/// `count` items of a generated network, refused past
/// [`crate::network::MAX_TENSORS`] (or when the count overflows) before
/// anything is allocated.
fn checked_count(label: &str, what: &str, count: Option<usize>) -> Result<usize> {
    let max = crate::network::MAX_TENSORS;
    match count {
        Some(n) if n <= max => Ok(n),
        _ => Err(Error::invalid(
            "shape",
            format!(
                "{label}: {} {what}; a network holds at most {max} tensors",
                count.map_or_else(|| "more than 2^64".to_string(), |n| n.to_string())
            ),
        )),
    }
}

/// One tensor per vertex and one index of dimension `bond` per edge
/// (vertex `v` is `v<v>`, edge k between a and b is `e<a>_<b>`).
pub fn graph_network(n: usize, edges: &[(usize, usize)], bond: u64) -> Result<Network> {
    let mut b = NetworkBuilder::new("graph");
    b.name(format!(
        "graph with {n} vertices and {} edges, bond {bond}",
        edges.len()
    ));
    let mut legs: Vec<Vec<usize>> = vec![Vec::new(); n];
    for &(u, v) in edges {
        if u >= n || v >= n || u == v {
            return Err(Error::usage(format!(
                "edge ({u}, {v}) is not an edge between two of the {n} vertices"
            )));
        }
        let e = b.index(&format!("e{u}_{v}"), bond)?;
        legs[u].push(e);
        legs[v].push(e);
    }
    for (v, l) in legs.into_iter().enumerate() {
        b.tensor_by_ids(&format!("v{v}"), l, None)?;
    }
    b.build()
}

/// The amplitude network of a brickwork circuit on a `rows` x `cols` qubit
/// grid: `depth` layers of two-qubit gates on grid neighbours, each layer
/// using one of four patterns (horizontal pairs from even or odd columns,
/// vertical pairs from even or odd rows), the patterns cycling in an order
/// shuffled per cycle by `seed`. Every qubit starts in a one-index state
/// tensor `init<q>` and ends in a one-index projector `out<q>`; gate tensors
/// `g<layer>_<a>_<b>` carry (a in, b in, a out, b out). The value is a scalar.
pub fn brickwork(rows: usize, cols: usize, depth: usize, seed: u64) -> Result<Network> {
    if rows * cols < 2 {
        return Err(Error::usage(
            "a brickwork circuit needs at least two qubits",
        ));
    }
    let qubits = rows * cols;
    let mut b = NetworkBuilder::new("brickwork");
    b.name(format!(
        "brickwork circuit {rows}x{cols}, depth {depth}, seed {seed}"
    ));
    let mut wire: Vec<usize> = Vec::with_capacity(qubits);
    let mut version = vec![0usize; qubits];
    for q in 0..qubits {
        let e = b.index(&format!("q{q}_0"), 2)?;
        b.tensor_by_ids(&format!("init{q}"), vec![e], None)?;
        wire.push(e);
    }
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut patterns = [0usize, 1, 2, 3];
    for layer in 0..depth {
        if layer % 4 == 0 {
            patterns.shuffle(&mut rng);
        }
        for (a, c) in brick_pairs(rows, cols, patterns[layer % 4]) {
            let mut legs = vec![wire[a], wire[c]];
            for q in [a, c] {
                version[q] += 1;
                let e = b.index(&format!("q{q}_{}", version[q]), 2)?;
                legs.push(e);
                wire[q] = e;
            }
            b.tensor_by_ids(&format!("g{layer}_{a}_{c}"), legs, None)?;
        }
    }
    for (q, &e) in wire.iter().enumerate() {
        b.tensor_by_ids(&format!("out{q}"), vec![e], None)?;
    }
    b.build()
}

/// The qubit pairs of one brickwork pattern (0, 1: horizontal from even or
/// odd columns; 2, 3: vertical from even or odd rows).
pub fn brick_pairs(rows: usize, cols: usize, pattern: usize) -> Vec<(usize, usize)> {
    let mut pairs = Vec::new();
    for r in 0..rows {
        for c in 0..cols {
            let q = r * cols + c;
            match pattern {
                0 | 1 if c % 2 == pattern && c + 1 < cols => pairs.push((q, q + 1)),
                2 | 3 if r % 2 == pattern - 2 && r + 1 < rows => pairs.push((q, q + cols)),
                _ => {}
            }
        }
    }
    pairs
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lattice_counts() {
        // Open L x L grid: L^2 sites, 2 L (L - 1) bonds; periodic: 2 L^2 bonds.
        let open = lattice(&[5, 5], 2, false).unwrap();
        assert_eq!((open.num_tensors(), open.num_indices()), (25, 40));
        let torus = lattice(&[5, 5], 2, true).unwrap();
        assert_eq!((torus.num_tensors(), torus.num_indices()), (25, 50));
        // 3D open cube 3^3: 3 * 3^2 * 2 = 54 bonds.
        assert_eq!(lattice(&[3, 3, 3], 2, false).unwrap().num_indices(), 54);
        assert!(lattice(&[2, 2], 2, true).is_err());
    }

    #[test]
    fn regular_graph_is_regular_and_simple() {
        let edges = random_regular_graph(50, 3, 1).unwrap();
        assert_eq!(edges.len(), 75);
        let mut deg = [0usize; 50];
        for &(a, b) in &edges {
            deg[a] += 1;
            deg[b] += 1;
        }
        assert!(deg.iter().all(|&d| d == 3));
        assert_eq!(edges, random_regular_graph(50, 3, 1).unwrap());
        assert!(random_regular_graph(5, 3, 0).is_err());
    }

    #[test]
    fn brickwork_shape() {
        let net = brickwork(2, 2, 4, 0).unwrap();
        // Each of the four patterns on a 2x2 grid: pattern 0 has 2 pairs,
        // pattern 1 none, pattern 2 has 2, pattern 3 none: 4 gates in all.
        assert_eq!(net.num_tensors(), 4 + 4 + 4);
        assert!(net.open.is_empty());
    }
}
