//! A proven lower bound on the width of every tree of a network.
//!
//! # What it computes
//!
//! [`width_lower_bound`] returns the largest of three bounds (log2 elements,
//! dimension-weighted, width counting leaves and the root as in DESIGN §3):
//!
//! 1. the largest tensor (every leaf is a node of the tree);
//! 2. the output: the root keeps every open index;
//! 3. two thirds of the weighted degeneracy D of the line graph L of the
//!    network without its dangling indices (indices on one tensor, not open),
//!    or of its weighted minor-min-width when that is larger (same
//!    argument on a minor of L; see `minor_min_width`).
//!
//! # Why 3 holds
//!
//! L has a vertex per index of weight w(e) = log2 dim(e), and an edge
//! between two indices on a common tensor. Let I(v) be the index set of
//! node v. From any tree, bags B(t) = I(t) at leaves and
//! B(v) = I(a) ∪ I(b) at a merge of a and b, each without dangling indices,
//! form a tree decomposition of L: every index and every pair of indices on
//! one tensor lies in that tensor's leaf bag, and the nodes whose bag holds
//! e are the leaves holding e plus the parents of the nodes keeping e, a
//! connected set.
//!
//! In any tree decomposition, some bag holds a vertex x together with all
//! its neighbours (a leaf bag of a decomposition without redundant bags has
//! a vertex seen nowhere else), so its weight is at least
//! f(x) = w(x) + Σ w(neighbours of x). Restricting the decomposition to an
//! induced subgraph H gives the same inside H, so some bag weighs at least
//! D = max over H of min over x in H of f_H(x). Since f_H only shrinks when
//! vertices are removed, D is found exactly by removing a vertex of least f
//! repeatedly and recording the largest f seen at removal (the argument of
//! the ordinary degeneracy, Matula and Beck, J. ACM 30(3), 1983).
//!
//! A leaf bag weighs at most the width W. At a merge, every non-dangling
//! index of B(v) lies in at least two of I(a), I(b), I(v): one kept by only
//! one operand touches no tensor of the other, so it is not complete at v
//! (unless it were dangling) and v keeps it. So 2 w(B(v)) ≤ w(I(a)) +
//! w(I(b)) + w(I(v)) ≤ 3W, and W ≥ 2D/3.
//!
//! # Complexity
//!
//! O(Σ_e Σ_{t ∋ e} deg(t) · log m) time for m indices (neighbour lists are
//! recomputed from the tensors, not stored), O(m + n) memory.
//!
//! # Example
//!
//! ```
//! use sliceplan::formats::einsum::network_from_einsum;
//! use sliceplan::search::width_lower_bound;
//! // A ring of four 2x2 matrices: every index has two neighbours, so
//! // D = 3 and the bound is 2; the best tree reaches width 2.
//! let net = network_from_einsum("ab,bc,cd,da->", Some(2), &[]).unwrap();
//! let lb = width_lower_bound(&net);
//! assert!((lb.width - 2.0).abs() < 1e-12);
//! assert!((lb.line_graph - 2.0).abs() < 1e-12);
//! ```

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use serde::Serialize;

use crate::network::Network;
use crate::num::Ordered;

/// The lower bound on width and its parts (log2 elements).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WidthBound {
    /// The best of the parts.
    pub width: f64,
    /// The largest tensor.
    pub largest_tensor: f64,
    /// The output (sum of the open indices).
    pub output: f64,
    /// Two thirds of the weighted degeneracy (or minor-min-width, when
    /// larger) of the line graph.
    pub line_graph: f64,
}

/// The weighted minor-min-width of the line graph restricted to `in_graph`:
/// repeatedly take a vertex v of least f (own weight plus neighbours'),
/// record f, and contract v into its neighbour of least degree, the merged
/// vertex weighing the smaller of the two weights. `None` when the graph is
/// too large to build (over 4 million adjacency pairs).
///
/// Why it is a bound: contracting an edge (x, y) of a graph maps a tree
/// decomposition to one of the minor by writing z for x and y in every bag;
/// the bags holding z form a connected subtree (those of x and of y meet,
/// as x and y share a bag), and no bag gets heavier when w(z) = min(w(x),
/// w(y)). So each recorded minimum, a lower bound for the minor, is one for
/// the line graph (the weighted form of the contraction degeneracy of
/// Bodlaender, Koster and Wolle, "Contraction and treewidth lower bounds",
/// J. Graph Algorithms Appl. 10(1), 2006).
fn minor_min_width(net: &Network, in_graph: &[bool], w: &[f64]) -> Option<f64> {
    let pairs: usize = net.tensors.iter().map(|t| t.indices.len().pow(2)).sum();
    if pairs > 4_000_000 {
        return None;
    }
    let m = w.len();
    let mut adj: Vec<Vec<u32>> = vec![Vec::new(); m];
    for t in &net.tensors {
        let ids: Vec<usize> = t.indices.iter().copied().filter(|&e| in_graph[e]).collect();
        for &a in &ids {
            adj[a].extend(ids.iter().filter(|&&b| b != a).map(|&b| b as u32));
        }
    }
    for list in adj.iter_mut() {
        list.sort_unstable();
        list.dedup();
    }
    let mut weight = w.to_vec();
    let mut alive = in_graph.to_vec();
    let value = |x: usize, adj: &[Vec<u32>], weight: &[f64]| -> f64 {
        adj[x]
            .iter()
            .fold(weight[x], |acc, &y| acc + weight[y as usize])
    };
    let mut f: Vec<f64> = (0..m).map(|x| value(x, &adj, &weight)).collect();
    let mut heap: BinaryHeap<Reverse<(Ordered, usize)>> = (0..m)
        .filter(|&x| alive[x])
        .map(|x| Reverse((Ordered(f[x]), x)))
        .collect();
    let mut best = 0.0f64;
    while let Some(Reverse((Ordered(fv), v))) = heap.pop() {
        if !alive[v] || fv != f[v] {
            continue;
        }
        best = best.max(fv);
        alive[v] = false;
        let Some(&u) = adj[v].iter().min_by_key(|&&x| (adj[x as usize].len(), x)) else {
            continue;
        };
        let u = u as usize;
        let from_v = std::mem::take(&mut adj[v]);
        for &x in &from_v {
            let x = x as usize;
            if x == u {
                continue;
            }
            let list = &mut adj[x];
            list.retain(|&y| y as usize != v);
            if let Err(pos) = list.binary_search(&(u as u32)) {
                list.insert(pos, u as u32);
            }
        }
        let mut merged: Vec<u32> = adj[u].iter().chain(from_v.iter()).copied().collect();
        merged.sort_unstable();
        merged.dedup();
        merged.retain(|&y| y as usize != u && y as usize != v);
        adj[u] = merged;
        weight[u] = weight[u].min(weight[v]);
        f[u] = value(u, &adj, &weight);
        heap.push(Reverse((Ordered(f[u]), u)));
        for i in 0..adj[u].len() {
            let x = adj[u][i] as usize;
            f[x] = value(x, &adj, &weight);
            heap.push(Reverse((Ordered(f[x]), x)));
        }
    }
    Some(best)
}

/// A proven lower bound on the width of every tree (see the module docs).
pub fn width_lower_bound(net: &Network) -> WidthBound {
    bounds(net).0
}

/// A proven lower bound on the op width of every tree of at least two
/// tensors: the largest of the width bound and the line graph's weighted
/// degeneracy or minor-min-width D itself (not 2D/3). Why: the operands
/// and the result of a merge lie inside the union its ops multiply over,
/// so op width >= width; and the unions of the merges, with the leaves'
/// index sets, are the bags of a tree decomposition of the line graph
/// (module docs) in which every leaf bag lies inside its parent merge's
/// union, so some union weighs at least D.
pub fn op_width_lower_bound(net: &Network) -> f64 {
    lower_bounds(net).1
}

/// The width bound and the op-width bound together (one pass).
pub(super) fn lower_bounds(net: &Network) -> (WidthBound, f64) {
    let (bound, line) = bounds(net);
    let op = if net.num_tensors() < 2 {
        0.0
    } else {
        bound.width.max(line)
    };
    (bound, op)
}

/// The width bound, and the line graph's D (degeneracy or minor-min-width).
fn bounds(net: &Network) -> (WidthBound, f64) {
    let w = net.log2_dims();
    let open = net.open_mask();
    let incidence = net.incidence();
    let largest_tensor = (0..net.num_tensors())
        .map(|t| net.tensor_size_log2(t))
        .fold(0.0f64, f64::max);
    // A fold from +0 (an empty f64 sum is -0, which prints as -0.00).
    let output = net.open.iter().fold(0.0, |acc, &e| acc + w[e]);
    let m = net.num_indices();
    let in_graph: Vec<bool> = (0..m)
        .map(|e| w[e] > 0.0 && (incidence[e].len() >= 2 || open[e]))
        .collect();
    let mut present = in_graph.clone();
    let mut stamp = vec![0usize; m];
    let mut clock = 0usize;
    // Calls `visit` once per present neighbour of e.
    let neighbours = |e: usize,
                      present: &[bool],
                      stamp: &mut [usize],
                      clock: &mut usize,
                      visit: &mut dyn FnMut(usize)| {
        *clock += 1;
        stamp[e] = *clock;
        for &t in &incidence[e] {
            for &f in &net.tensors[t].indices {
                if present[f] && stamp[f] != *clock {
                    stamp[f] = *clock;
                    visit(f);
                }
            }
        }
    };
    let mut f = vec![0.0f64; m];
    let mut heap = BinaryHeap::new();
    for e in (0..m).filter(|&e| in_graph[e]) {
        let mut sum = w[e];
        neighbours(e, &present, &mut stamp, &mut clock, &mut |g| sum += w[g]);
        f[e] = sum;
        heap.push(Reverse((Ordered(sum), e)));
    }
    let mut degeneracy = 0.0f64;
    while let Some(Reverse((Ordered(value), e))) = heap.pop() {
        if !present[e] || value != f[e] {
            continue;
        }
        degeneracy = degeneracy.max(value);
        present[e] = false;
        let mut touched = Vec::new();
        neighbours(e, &present, &mut stamp, &mut clock, &mut |g| {
            touched.push(g)
        });
        for g in touched {
            f[g] -= w[e];
            heap.push(Reverse((Ordered(f[g]), g)));
        }
    }
    let minor = minor_min_width(net, &in_graph, &w).unwrap_or(0.0);
    let line = degeneracy.max(minor);
    let line_graph = 2.0 * line / 3.0;
    let bound = WidthBound {
        width: largest_tensor.max(output).max(line_graph),
        largest_tensor,
        output,
        line_graph,
    };
    (bound, line)
}
