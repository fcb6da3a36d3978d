//! Network builders shared by the search tests: small random networks,
//! lattices, random regular graphs, chains.
#![allow(dead_code)]

use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sliceplan::network::{Network, NetworkBuilder};

/// A random network of `n` tensors: each index has dimension 1..=4 and lies
/// on 1..=3 distinct tensors (so hyperedges, dangling and unit indices all
/// occur); each index is open with probability 0.15.
pub fn random_network(seed: u64, n: usize) -> Network {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut lists: Vec<Vec<usize>> = vec![Vec::new(); n];
    let m = rng.random_range(n..=2 * n + 2);
    let mut b = NetworkBuilder::new(format!("random-{seed}"));
    let mut open = Vec::new();
    for e in 0..m {
        let dim = rng.random_range(1..=4u64);
        let id = b.index(&format!("e{e}"), dim).unwrap();
        let deg = rng.random_range(1..=3usize.min(n));
        let mut ts: Vec<usize> = (0..n).collect();
        ts.shuffle(&mut rng);
        for &t in &ts[..deg] {
            lists[t].push(id);
        }
        if rng.random_bool(0.15) {
            open.push(format!("e{e}"));
        }
    }
    for (t, l) in lists.into_iter().enumerate() {
        b.tensor_by_ids(&format!("T{t}"), l, None).unwrap();
    }
    for o in open {
        b.open(&o, None).unwrap();
    }
    b.build().unwrap()
}

/// Builds a network from edges between tensors (one index per edge).
pub fn from_edges(name: &str, n: usize, edges: &[(usize, usize)], dim: u64) -> Network {
    let mut b = NetworkBuilder::new(name);
    let mut lists: Vec<Vec<usize>> = vec![Vec::new(); n];
    for (k, &(u, v)) in edges.iter().enumerate() {
        let id = b.index(&format!("b{k}"), dim).unwrap();
        lists[u].push(id);
        lists[v].push(id);
    }
    for (t, l) in lists.into_iter().enumerate() {
        b.tensor_by_ids(&format!("T{t}"), l, None).unwrap();
    }
    b.build().unwrap()
}

/// An open-boundary L x L lattice, closed (no open indices).
pub fn lattice_2d(l: usize, dim: u64) -> Network {
    let id = |x: usize, y: usize| x * l + y;
    let mut edges = Vec::new();
    for x in 0..l {
        for y in 0..l {
            if x + 1 < l {
                edges.push((id(x, y), id(x + 1, y)));
            }
            if y + 1 < l {
                edges.push((id(x, y), id(x, y + 1)));
            }
        }
    }
    from_edges(&format!("lattice-{l}x{l}"), l * l, &edges, dim)
}

/// An open-boundary L x L x L lattice.
pub fn lattice_3d(l: usize, dim: u64) -> Network {
    let id = |x: usize, y: usize, z: usize| (x * l + y) * l + z;
    let mut edges = Vec::new();
    for x in 0..l {
        for y in 0..l {
            for z in 0..l {
                if x + 1 < l {
                    edges.push((id(x, y, z), id(x + 1, y, z)));
                }
                if y + 1 < l {
                    edges.push((id(x, y, z), id(x, y + 1, z)));
                }
                if z + 1 < l {
                    edges.push((id(x, y, z), id(x, y, z + 1)));
                }
            }
        }
    }
    from_edges(&format!("lattice-{l}^3"), l * l * l, &edges, dim)
}

/// A random 3-regular multigraph-free graph on n (even) vertices by the
/// pairing model, retried until simple.
pub fn random_regular(n: usize, seed: u64) -> Network {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    loop {
        let mut points: Vec<usize> = (0..n).flat_map(|v| [v, v, v]).collect();
        points.shuffle(&mut rng);
        let edges: Vec<(usize, usize)> = points.chunks(2).map(|c| (c[0], c[1])).collect();
        let mut seen = std::collections::HashSet::new();
        if edges
            .iter()
            .all(|&(u, v)| u != v && seen.insert((u.min(v), u.max(v))))
        {
            return from_edges(&format!("rrg3-{n}"), n, &edges, 2);
        }
    }
}

/// The matrix chain with the given dimensions, both ends open.
pub fn chain(dims: &[u64]) -> Network {
    let names: Vec<String> = (0..dims.len()).map(|k| format!("i{k}")).collect();
    let mut b = NetworkBuilder::new("chain");
    for (k, &d) in dims.iter().enumerate() {
        b.declare(&names[k], d, None).unwrap();
    }
    for k in 0..dims.len() - 1 {
        b.tensor(
            &format!("A{}", k + 1),
            &[&names[k], &names[k + 1]],
            None,
            None,
        )
        .unwrap();
    }
    b.open(&names[0], None).unwrap();
    b.open(&names[dims.len() - 1], None).unwrap();
    b.build().unwrap()
}

/// A graph read the other way round, as in the PACE benchmark: every vertex
/// an index of dimension 2, every edge a tensor on its two end points. Then
/// the least op width of any tree is the treewidth + 1 (for treewidth at
/// least 2; see tests/search_elimination.rs).
pub fn graph_as_indices(name: &str, n: usize, edges: &[(usize, usize)]) -> Network {
    let mut b = NetworkBuilder::new(name);
    let mut id = vec![usize::MAX; n];
    for (k, &(u, v)) in edges.iter().enumerate() {
        for x in [u, v] {
            if id[x] == usize::MAX {
                id[x] = b.index(&format!("v{x}"), 2).unwrap();
            }
        }
        b.tensor_by_ids(&format!("e{k}"), vec![id[u], id[v]], None)
            .unwrap();
    }
    b.build().unwrap()
}

/// The edges of the k x k grid graph.
pub fn grid_edges(k: usize) -> Vec<(usize, usize)> {
    let mut edges = Vec::new();
    for x in 0..k {
        for y in 0..k {
            if x + 1 < k {
                edges.push((x * k + y, (x + 1) * k + y));
            }
            if y + 1 < k {
                edges.push((x * k + y, x * k + y + 1));
            }
        }
    }
    edges
}
