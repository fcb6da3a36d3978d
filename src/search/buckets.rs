//! Bucket elimination on a problem's tensors: an elimination order of the
//! indices becomes a contraction tree, and the approximate (quotient-graph)
//! minimum-degree and minimum-fill orders that scale to 10^6 indices.
//!
//! # What it computes
//!
//! [`Buckets`] holds the current tensors (the problem's, then the results of
//! merges) and, for every index, the tensors that hold it. Eliminating an
//! index v contracts the tensors holding v pairwise, cheapest first (least
//! ops; among ten or more, the two smallest first), into one tensor; v is
//! summed at the last of these merges because no other tensor holds it.
//! (An index on a single tensor stays on it and is summed at that tensor's
//! first merge, as the cost model says: so a tree of a graph with a
//! vertex of degree one has op width at least 3 even when the graph's
//! treewidth is 1.)
//! When every closed index is eliminated, what remains (tensors holding
//! only open indices, or none) is joined smallest first. This is bucket
//! elimination (Dechter, "Bucket elimination: a unifying framework for
//! reasoning", Artificial Intelligence 113, 1999) read as a contraction
//! tree, as in Markov and Shi, "Simulating quantum computation by
//! contracting tensor networks", SIAM J. Comput. 38(3), 2008: the tree's
//! largest contraction is the largest clique of the elimination (the
//! treewidth of the order, plus one, with unit weights).
//!
//! [`quotient_tree`] chooses the order while it eliminates: the index of
//! least approximate degree (weight of the indices it shares a tensor with,
//! itself included) or least approximate fill. The current tensors are the
//! elements of the quotient graph, so nothing quadratic is ever stored;
//! degrees are refreshed only for the indices of the tensor a bucket made,
//! by the bound of approximate minimum degree (Amestoy, Davis and Duff, "An
//! approximate minimum degree ordering algorithm", SIAM J. Matrix Anal.
//! Appl. 17(4), 1996): |new tensor| plus, for each other tensor holding the
//! index, the part of it outside the new tensor; a tensor entirely inside
//! the new one is merged into it at once (element absorption). The fill
//! score is the approximate deficiency of Rothberg and Eisenstat, "Node
//! selection strategies for bottom-up sparse matrix ordering", SIAM J.
//! Matrix Anal. Appl. 19(3), 1998: d(d-1)/2 - c(c-1)/2 with d the
//! approximate degree and c the new tensor's size, in index counts.
//!
//! # Complexity
//!
//! Turning an order into a tree costs the sum of the merged lists' lengths
//! (plus k^3 unions for a bucket of k <= 9 tensors). Each elimination of
//! the quotient orders costs the summed holder counts of the new tensor's
//! indices, plus a heap operation per updated index: near linear in the
//! network for bounded fill, with no quadratic fill bookkeeping. Memory:
//! the current tensors' lists and the holder lists.

use std::cmp::Reverse;
use std::collections::BinaryHeap;
use std::time::Instant;

use rand::Rng;

use super::order::{OrderParams, OrderRule};
use super::problem::Problem;
use crate::num::Ordered;

/// Buckets of up to this many tensors are paired by least ops over all
/// pairs; larger ones merge their two smallest tensors first.
const PAIR_ALL_MAX: usize = 9;

/// The current tensors of a bucket elimination and the merges so far.
pub(super) struct Buckets<'a> {
    p: &'a Problem,
    /// Live indices of every node (problem tensors, then merges); emptied
    /// when the node is merged.
    pub lists: Vec<Vec<u32>>,
    alive: Vec<bool>,
    /// Nodes that held each index (dead ones are dropped lazily).
    holders: Vec<Vec<u32>>,
    /// Alive nodes holding each index.
    count: Vec<u32>,
    /// Indices summed away (or on no tensor).
    pub gone: Vec<bool>,
    /// The merges made, in single-assignment form.
    pub merges: Vec<[usize; 2]>,
}

impl<'a> Buckets<'a> {
    pub(super) fn new(p: &'a Problem) -> Buckets<'a> {
        let count: Vec<u32> = p.incidence.iter().map(|h| h.len() as u32).collect();
        let n = p.len();
        let mut lists = Vec::with_capacity(2 * n);
        lists.extend(p.tensors.iter().cloned());
        let mut alive = Vec::with_capacity(2 * n);
        alive.resize(n, true);
        Buckets {
            p,
            lists,
            alive,
            holders: p.incidence.clone(),
            gone: count.iter().map(|&c| c == 0).collect(),
            count,
            merges: Vec::with_capacity(n.saturating_sub(1)),
        }
    }

    /// The alive nodes holding index `e` (the list is cleaned in place).
    pub(super) fn holders_of(&mut self, e: u32) -> &[u32] {
        let alive = &self.alive;
        let h = &mut self.holders[e as usize];
        h.retain(|&x| alive[x as usize]);
        h
    }

    /// Weight of a node's live indices.
    pub(super) fn weight(&self, node: usize) -> f64 {
        self.p.weight_of(&self.lists[node])
    }

    /// Merges two alive nodes; returns the new node.
    pub(super) fn merge(&mut self, a: usize, b: usize) -> usize {
        let c = self.lists.len();
        let la = std::mem::take(&mut self.lists[a]);
        let lb = std::mem::take(&mut self.lists[b]);
        self.alive[a] = false;
        self.alive[b] = false;
        let mut kept = Vec::with_capacity(la.len().max(lb.len()));
        let (mut i, mut j) = (0, 0);
        while i < la.len() || j < lb.len() {
            let (e, both) = if j >= lb.len() || (i < la.len() && la[i] < lb[j]) {
                i += 1;
                (la[i - 1], false)
            } else if i >= la.len() || lb[j] < la[i] {
                j += 1;
                (lb[j - 1], false)
            } else {
                i += 1;
                j += 1;
                (la[i - 1], true)
            };
            let k = e as usize;
            self.count[k] -= if both { 2 } else { 1 };
            if self.p.open[k] || self.count[k] > 0 {
                self.count[k] += 1;
                self.holders[k].push(c as u32);
                kept.push(e);
            } else {
                self.gone[k] = true;
            }
        }
        self.lists.push(kept);
        self.alive.push(true);
        self.merges.push([a, b]);
        c
    }

    /// Eliminates index `v`: merges the tensors holding it (cheapest pair
    /// first) and returns the node that holds the result, `None` when no
    /// tensor held `v`. An index on one tensor only stays on it (the tree
    /// sums it at the tensor's first merge).
    pub(super) fn eliminate(&mut self, v: u32) -> Option<usize> {
        if self.gone[v as usize] {
            return None;
        }
        let mut hs: Vec<usize> = self.holders_of(v).iter().map(|&x| x as usize).collect();
        match hs.len() {
            0 => {
                self.gone[v as usize] = true;
                None
            }
            1 => {
                // Nothing to contract: the tensor keeps v (a leaf keeps
                // every index; v is summed at its first merge, and the
                // pairing below sees it there).
                if !self.p.open[v as usize] {
                    self.gone[v as usize] = true;
                }
                Some(hs[0])
            }
            _ => Some(self.merge_all(&mut hs)),
        }
    }

    /// Merges a set of alive nodes pairwise into one; returns it.
    pub(super) fn merge_all(&mut self, hs: &mut Vec<usize>) -> usize {
        while hs.len() > PAIR_ALL_MAX {
            // The two smallest first.
            let mut idx: Vec<(Ordered, usize)> = hs
                .iter()
                .enumerate()
                .map(|(i, &x)| (Ordered(self.weight(x)), i))
                .collect();
            idx.select_nth_unstable(1);
            let (i, j) = (idx[0].1.min(idx[1].1), idx[0].1.max(idx[1].1));
            let (a, b) = (hs[i], hs[j]);
            hs.swap_remove(j);
            hs.swap_remove(i);
            let c = self.merge(a, b);
            hs.push(c);
        }
        while hs.len() > 1 {
            let mut best = (Ordered(f64::INFINITY), Ordered(f64::INFINITY), 0, 1);
            for i in 0..hs.len() {
                for j in i + 1..hs.len() {
                    let (a, b) = (&self.lists[hs[i]], &self.lists[hs[j]]);
                    let ops = self.p.union_weight(a, b);
                    let both = self.p.weight_of(a) + self.p.weight_of(b);
                    let key = (Ordered(ops), Ordered(both), i, j);
                    if key < best {
                        best = key;
                    }
                }
            }
            let (_, _, i, j) = best;
            let (a, b) = (hs[i], hs[j]);
            hs.swap_remove(j);
            hs.swap_remove(i);
            let c = self.merge(a, b);
            hs.push(c);
        }
        hs[0]
    }

    /// Joins the nodes still alive, two smallest first, and returns the
    /// merge list of the whole tree.
    pub(super) fn finish(mut self) -> Vec<[usize; 2]> {
        let mut left: BinaryHeap<Reverse<(Ordered, usize)>> = (0..self.lists.len())
            .filter(|&v| self.alive[v])
            .map(|v| Reverse((Ordered(self.weight(v)), v)))
            .collect();
        while left.len() > 1 {
            let Reverse((_, a)) = left.pop().expect("len > 1");
            let Reverse((_, b)) = left.pop().expect("len > 1");
            let c = self.merge(a, b);
            left.push(Reverse((Ordered(self.weight(c)), c)));
        }
        self.merges
    }
}

/// The tree of an elimination order by bucket elimination (see the module
/// docs). `order` lists indices; indices it leaves out (open ones, say) are
/// never eliminated, and what holds them is joined at the end.
pub fn order_tree(p: &Problem, order: &[u32]) -> Vec<[usize; 2]> {
    let mut b = Buckets::new(p);
    for &v in order {
        if !p.open[v as usize] {
            b.eliminate(v);
        }
    }
    b.finish()
}

type Heap = BinaryHeap<Reverse<(Ordered, Ordered, u64, u32, u32)>>;

/// Approximate minimum-degree or minimum-fill elimination as a tree (see the
/// module docs); `None` when `deadline` passes first.
pub fn quotient_tree<R: Rng>(
    p: &Problem,
    params: &OrderParams,
    rng: &mut R,
    deadline: Option<Instant>,
) -> Option<Vec<[usize; 2]>> {
    let m = p.weight.len();
    let mut b = Buckets::new(p);
    let max_nodes = 2 * p.len() + 1;
    // Approximate weighted degree (the index itself included), neighbour
    // count, and size of the largest known clique through the index.
    let mut dw = vec![0.0f64; m];
    let mut dc = vec![0u64; m];
    let mut clique = vec![0u64; m];
    let mut version = vec![0u32; m];
    let mut mark = vec![u32::MAX; m];
    for u in 0..m {
        if b.gone[u] || p.open[u] {
            continue;
        }
        let (mut w, mut c) = (0.0, 0u64);
        for &t in &p.incidence[u] {
            let list = &p.tensors[t as usize];
            clique[u] = clique[u].max(list.len() as u64 - 1);
            for &e in list {
                if mark[e as usize] != u as u32 {
                    mark[e as usize] = u as u32;
                    w += p.weight[e as usize];
                    c += 1;
                }
            }
        }
        dw[u] = w;
        dc[u] = c - 1;
    }
    let score = |rule: OrderRule, dw: f64, dc: u64, clique: u64| -> (f64, f64) {
        match rule {
            OrderRule::MinDegree => (dw, 0.0),
            OrderRule::MinFill => {
                let d = dc as f64;
                let c = clique.min(dc) as f64;
                ((d * (d - 1.0) - c * (c - 1.0)) / 2.0, dw)
            }
        }
    };
    let push = |heap: &mut Heap, rng: &mut R, u: usize, s: (f64, f64), version: u32| {
        let noise = if params.noise > 0.0 {
            params.noise * rng.random::<f64>()
        } else {
            0.0
        };
        let tie = if params.random_ties {
            rng.random::<u64>()
        } else {
            u as u64
        };
        heap.push(Reverse((
            Ordered(s.0 + noise),
            Ordered(s.1),
            tie,
            u as u32,
            version,
        )));
    };
    let mut heap: Heap = BinaryHeap::with_capacity(m);
    for u in 0..m {
        if !b.gone[u] && !p.open[u] {
            push(
                &mut heap,
                rng,
                u,
                score(params.rule, dw[u], dc[u], clique[u]),
                0,
            );
        }
    }
    // Scratch per node: weight and count of its indices outside the new
    // tensor, valid when `seen` equals the current step.
    let mut ext_w = vec![0.0f64; max_nodes];
    let mut ext_c = vec![0u64; max_nodes];
    let mut seen = vec![u32::MAX; max_nodes];
    let mut step: u32 = 0;
    let mut popped: u64 = 0;
    while let Some(Reverse((_, _, _, u, queued))) = heap.pop() {
        let ui = u as usize;
        if b.gone[ui] || queued != version[ui] {
            continue;
        }
        popped += 1;
        if popped % 16 == 0 && deadline.is_some_and(|d| Instant::now() >= d) {
            return None;
        }
        let Some(mut pn) = b.eliminate(u) else {
            continue;
        };
        step = step.wrapping_add(1);
        if step == u32::MAX {
            seen.iter_mut().for_each(|s| *s = u32::MAX - 1);
            step = 0;
        }
        // Pass 1: for every other tensor touching the new one, the part of
        // it outside the new tensor.
        let lp: Vec<u32> = b.lists[pn].clone();
        let mut touching: Vec<usize> = Vec::new();
        let mut scratch: Vec<u32> = Vec::new();
        for &e in &lp {
            scratch.clear();
            scratch.extend_from_slice(b.holders_of(e));
            for &x in &scratch {
                let x = x as usize;
                if x == pn {
                    continue;
                }
                if seen[x] != step {
                    seen[x] = step;
                    ext_w[x] = b.weight(x);
                    ext_c[x] = b.lists[x].len() as u64;
                    touching.push(x);
                }
                ext_w[x] -= p.weight[e as usize];
                ext_c[x] -= 1;
            }
        }
        // Element absorption: a tensor inside the new one joins it now.
        for &x in &touching {
            if ext_c[x] == 0 {
                pn = b.merge(pn, x);
            }
        }
        if pn >= seen.len() {
            // Cannot happen: nodes never exceed 2n - 1.
            return None;
        }
        let lp: Vec<u32> = b.lists[pn].clone();
        let (wp, cp) = (p.weight_of(&lp), lp.len() as u64);
        for &e in &lp {
            let ei = e as usize;
            if p.open[ei] || b.gone[ei] {
                continue;
            }
            let (mut sw, mut sc) = (0.0, 0u64);
            for &x in b.holders_of(e) {
                let x = x as usize;
                if x != pn && seen[x] == step {
                    sw += ext_w[x];
                    sc += ext_c[x];
                }
            }
            dw[ei] = (wp + sw).min(dw[ei] + wp).max(wp);
            dc[ei] = (cp - 1 + sc).min(dc[ei] + cp - 1);
            clique[ei] = cp - 1;
            version[ei] = version[ei].wrapping_add(1);
            push(
                &mut heap,
                rng,
                ei,
                score(params.rule, dw[ei], dc[ei], clique[ei]),
                version[ei],
            );
        }
    }
    Some(b.finish())
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    fn grid(l: usize) -> Problem {
        // Vertices are indices (dimension 2), edges are tensors.
        let id = |x: usize, y: usize| (x * l + y) as u32;
        let mut tensors = Vec::new();
        for x in 0..l {
            for y in 0..l {
                if x + 1 < l {
                    tensors.push(vec![id(x, y), id(x + 1, y)]);
                }
                if y + 1 < l {
                    tensors.push(vec![id(x, y), id(x, y + 1)]);
                }
            }
        }
        Problem::new(tensors, vec![1.0; l * l], vec![false; l * l])
    }

    #[test]
    fn a_cycle_in_order_has_op_width_three() {
        // A cycle has treewidth 2 (closed form: every cycle is a minimal
        // graph of treewidth 2); eliminating around it makes cliques of
        // three vertices, so the tree's largest contraction has 3 indices.
        let tensors = (0..10u32).map(|k| vec![k, (k + 1) % 10]).collect();
        let p = Problem::new(tensors, vec![1.0; 10], vec![false; 10]);
        let merges = order_tree(&p, &(0..10).collect::<Vec<_>>());
        assert!(crate::tree::Tree::new(10, merges.clone()).is_ok());
        assert_eq!(p.evaluate(&merges).op_width, 3.0);
    }

    #[test]
    fn quotient_orders_give_valid_trees() {
        let p = grid(12);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        for rule in [OrderRule::MinDegree, OrderRule::MinFill] {
            for random_ties in [false, true] {
                let params = OrderParams {
                    rule,
                    random_ties,
                    noise: 0.0,
                };
                let merges = quotient_tree(&p, &params, &mut rng, None).unwrap();
                assert!(crate::tree::Tree::new(p.len(), merges.clone()).is_ok());
                // A 12 x 12 grid has treewidth 12 (closed form for grids,
                // see tests/search_elimination.rs); no tree beats 13.
                let e = p.evaluate(&merges);
                assert!(e.op_width >= 13.0, "{rule:?}: {}", e.op_width);
                assert!(e.op_width <= 30.0, "{rule:?}: {}", e.op_width);
            }
        }
    }
}
