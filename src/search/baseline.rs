//! Simple orders every search must match: the file order and a
//! breadth-first sweep, each merged left to right into a running result.
//!
//! # What it computes
//!
//! * [`file_order_tree`]: the tensors merged in file order,
//!   ((((t0, t1), t2), t3), ...), the tree `inspect` prices when no tree is
//!   given; [`baseline_tree`] is that tree unless its intermediates would
//!   hold more than [`BASELINE_MAX_ENTRIES`] index entries (then one plain
//!   greedy trial, which is linear).
//! * [`sweep_order`]: the tensors in breadth-first order from a
//!   pseudo-peripheral tensor of the tensor graph (tensors adjacent when
//!   they share an index), component after component; [`sweep_tree`]
//!   merges them in that order. On a lattice or a circuit this is a sweep
//!   of a front across the network.
//!
//! # Method and complexity
//!
//! The breadth-first order with a start of greatest eccentricity found by
//! repeated searches from the last vertex reached is the first step of the
//! Cuthill-McKee ordering, with the pseudo-peripheral start of Gibbs, Poole
//! and Stockmeyer (SIAM J. Numer. Anal. 13(2), 1976). The graph and the
//! searches are petgraph's. An index on more than two tensors joins its
//! consecutive holders only (a path, not a clique), so the graph has at
//! most as many edges as index entries: O(n + entries) time and memory.
//! Trees built here are priced without their node lists by
//! [`Problem::evaluate_sequence`] (O(entries)).
//!
//! # Example
//!
//! ```
//! use sliceplan::search::{file_order_tree, sweep_tree};
//! let net = sliceplan::generate::lattice(&[4, 4], 2, false).unwrap();
//! assert_eq!(file_order_tree(&net).merges()[0], [0, 1]);
//! let sweep = sweep_tree(&net);
//! assert_eq!(sweep.leaves(), 16);
//! ```

use petgraph::graph::{NodeIndex, UnGraph};
use petgraph::visit::{Bfs, VisitMap};

use super::greedy::{greedy_tree, GreedyParams};
use super::problem::{left_deep, Problem};
use super::simplify::Simplified;
use crate::error::Result;
use crate::network::Network;
use crate::tree::Tree;

/// Index entries the per-node sets of the baseline may hold before it is
/// replaced by one greedy trial (about 800 MB of node lists).
pub const BASELINE_MAX_ENTRIES: u64 = 100_000_000;

/// Which tree [`baseline_tree`] gave.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BaselineKind {
    /// The tensors merged in file order.
    FileOrder,
    /// One plain greedy trial, because the file-order tree's intermediates
    /// would hold this many index entries.
    Greedy {
        /// Index entries of the file-order tree's nodes.
        file_order_entries: u64,
    },
}

impl BaselineKind {
    /// One line saying what the baseline is.
    pub fn describe(&self) -> String {
        match self {
            BaselineKind::FileOrder => "baseline: tensors merged in file order (run `sliceplan plan` to search for a good tree)".to_string(),
            BaselineKind::Greedy { file_order_entries } => format!(
                "baseline: one greedy trial (the file-order tree would hold {file_order_entries} index entries; run `sliceplan plan` to search for a good tree)"
            ),
        }
    }
}

/// The tensors merged in file order, left to right.
pub fn file_order_tree(net: &Network) -> Tree {
    Tree::left_deep(net.num_tensors())
}

/// Index entries of the intermediates of the file-order (left-deep) tree:
/// the sum over merges of the indices alive in the running result. O(index
/// entries of the network).
pub fn file_order_entries(net: &Network) -> u64 {
    let mut remaining: Vec<u32> = vec![0; net.num_indices()];
    for t in &net.tensors {
        for &e in &t.indices {
            remaining[e] += 1;
        }
    }
    let open = net.open_mask();
    let mut seen = vec![false; net.num_indices()];
    let (mut live, mut total) = (0u64, 0u64);
    for t in &net.tensors {
        for &e in &t.indices {
            if !std::mem::replace(&mut seen[e], true) {
                live += 1;
            }
            remaining[e] -= 1;
            if remaining[e] == 0 && !open[e] {
                live -= 1;
            }
        }
        total = total.saturating_add(live);
    }
    total
}

/// The tree `inspect` prices when none is given: the file order, unless its
/// nodes would hold more than [`BASELINE_MAX_ENTRIES`] index entries (a
/// circuit's input states come first in the file, so a 60,000-qubit
/// circuit's file-order tree holds about 2 x 10^9); then one plain greedy
/// trial.
pub fn baseline_tree(net: &Network) -> Result<(Tree, BaselineKind)> {
    let entries = file_order_entries(net);
    if entries <= BASELINE_MAX_ENTRIES {
        return Ok((file_order_tree(net), BaselineKind::FileOrder));
    }
    let s = Simplified::new(net, false);
    // The plain greedy rule draws nothing; the generator is a parameter.
    let mut rng = <rand_chacha::ChaCha8Rng as rand::SeedableRng>::seed_from_u64(0);
    let merges = greedy_tree(&s.problem, &GreedyParams::default(), &mut rng);
    Ok((
        s.expand(&merges),
        BaselineKind::Greedy {
            file_order_entries: entries,
        },
    ))
}

/// The file order, component after component (components in the order of
/// their first tensor, tensors in file order within each): contracting
/// one component at a time keeps one front alive, where the plain file
/// order keeps the fronts of every component it is inside. `None` when the
/// tensors form one component (the order would be the file order). A
/// network with sliced indices (dimension 1, dropped by simplification)
/// often falls apart this way. O(n + index entries).
///
/// ```
/// use sliceplan::search::{component_file_order, Problem};
/// // Tensors 0 and 2 share index 0, tensors 1 and 3 index 1.
/// let p = Problem::new(vec![vec![0], vec![1], vec![0], vec![1]], vec![1.0; 2], vec![false; 2]);
/// assert_eq!(component_file_order(&p), Some(vec![0, 2, 1, 3]));
/// ```
pub fn component_file_order(p: &Problem) -> Option<Vec<u32>> {
    let n = p.len();
    let mut uf = petgraph::unionfind::UnionFind::<u32>::new(n);
    for holders in &p.incidence {
        for pair in holders.windows(2) {
            uf.union(pair[0], pair[1]);
        }
    }
    let mut rank: std::collections::HashMap<u32, usize> = std::collections::HashMap::new();
    let mut keyed: Vec<(usize, u32)> = (0..n as u32)
        .map(|t| {
            let next = rank.len();
            (*rank.entry(uf.find(t)).or_insert(next), t)
        })
        .collect();
    if rank.len() <= 1 {
        return None;
    }
    keyed.sort_unstable();
    Some(keyed.into_iter().map(|(_, t)| t).collect())
}

/// The tensors of a problem in breadth-first order from pseudo-peripheral
/// starts, component by component (see the module docs).
pub fn sweep_order(p: &Problem) -> Vec<u32> {
    let n = p.len();
    let mut g: UnGraph<(), ()> = UnGraph::with_capacity(n, 0);
    for _ in 0..n {
        g.add_node(());
    }
    for holders in &p.incidence {
        for pair in holders.windows(2) {
            g.add_edge(
                NodeIndex::new(pair[0] as usize),
                NodeIndex::new(pair[1] as usize),
                (),
            );
        }
    }
    // One search marks what is placed across components; a probe search
    // finds the starts and is reset by clearing only what it visited, so
    // many small components cost no more than one large one.
    if n == 0 {
        return Vec::new();
    }
    let fresh = || {
        // `Bfs::new` marks its start; clear it to begin with nothing marked.
        let mut b = Bfs::new(&g, NodeIndex::new(0));
        b.stack.clear();
        b.discovered.unvisit(NodeIndex::<u32>::new(0));
        b
    };
    let mut placed = fresh();
    let mut probe = fresh();
    let mut dist = vec![usize::MAX; n];
    let mut order = Vec::with_capacity(n);
    for s in 0..n {
        if placed.discovered.is_visited(&NodeIndex::<u32>::new(s)) {
            continue;
        }
        // Pseudo-peripheral start: search again from the last vertex
        // reached while that makes the search deeper (at most 4 rounds).
        let mut start = NodeIndex::new(s);
        let mut depth = 0usize;
        for _ in 0..4 {
            let (last, d) = farthest(&g, start, &mut probe, &mut dist);
            if d <= depth {
                break;
            }
            depth = d;
            start = last;
        }
        restart(&mut placed, start);
        while let Some(v) = placed.next(&g) {
            order.push(v.index() as u32);
        }
    }
    order
}

/// Points a search at a new start, keeping what it has marked.
fn restart<M: VisitMap<NodeIndex>>(search: &mut Bfs<NodeIndex, M>, start: NodeIndex) {
    search.stack.clear();
    search.discovered.visit(start);
    search.stack.push_back(start);
}

/// The last vertex a breadth-first search from `start` reaches, and its
/// distance; leaves `probe` and `dist` (all `usize::MAX`) cleared for the
/// next call.
fn farthest<M: VisitMap<NodeIndex>>(
    g: &UnGraph<(), ()>,
    start: NodeIndex,
    probe: &mut Bfs<NodeIndex, M>,
    dist: &mut [usize],
) -> (NodeIndex, usize) {
    restart(probe, start);
    dist[start.index()] = 0;
    let mut seen = Vec::new();
    let mut last = (start, 0);
    while let Some(v) = probe.next(g) {
        seen.push(v.index());
        let d = dist[v.index()];
        last = (v, d);
        // Breadth-first order pops vertices by distance, so the first
        // popped neighbour sets the distance.
        for u in g.neighbors(v) {
            if dist[u.index()] == usize::MAX {
                dist[u.index()] = d + 1;
            }
        }
    }
    for v in seen {
        probe.discovered.unvisit(NodeIndex::new(v));
        dist[v] = usize::MAX;
    }
    last
}

/// The breadth-first sweep tree of a network: its tensors (after the
/// search's simplification, which keeps one tensor per network tensor)
/// merged in [`sweep_order`].
pub fn sweep_tree(net: &Network) -> Tree {
    let s = Simplified::new(net, false);
    let order = sweep_order(&s.problem);
    s.expand(&left_deep(s.problem.len(), &order))
}
