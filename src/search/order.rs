//! Elimination-order finders on the index graph: exact min-fill and
//! min-degree with randomised tie-breaking, and the trees they give.
//!
//! # What it computes
//!
//! The index graph of a problem has a vertex per index (weight log2 of its
//! dimension) and an edge between two indices on a common tensor, so each
//! tensor is a clique (a hyperedge simply joins the cliques of all its
//! tensors). Eliminating a vertex joins its neighbours into a clique and
//! removes it. [`elimination_order`] eliminates, one at a time, the closed
//! index with the least score:
//!
//! * [`OrderRule::MinFill`]: the number of new edges the elimination adds
//!   (Kjaerulff, "Triangulation of graphs: algorithms giving small total
//!   state space", Aalborg University report R-90-09, 1990), then the
//!   weighted degree;
//! * [`OrderRule::MinDegree`]: the weighted degree (the weight of the
//!   vertex and its neighbours, i.e. the clique its elimination makes),
//!   then the fill.
//!
//! Ties go to the lowest index, or to a random one; noise can be added to
//! the scores. Open indices are never eliminated (they stay to the root).
//! [`elimination_tree`] turns the order into a tree by bucket elimination
//! ([`super::buckets`]): its largest contraction is the order's largest
//! clique, so on a graph read as a network (vertices as indices of
//! dimension 2, edges as tensors) the op width is the order's width + 1
//! (Markov and Shi, SIAM J. Comput. 38(3), 2008). Problems with more than
//! [`DENSE_MAX`] indices use the approximate quotient-graph orders of
//! [`super::buckets::quotient_tree`] instead.
//!
//! # Arguments and result
//!
//! The problem, [`OrderParams`], a seeded generator and an optional
//! deadline. [`elimination_order`] returns an [`Order`] (`None` past the
//! deadline or above [`DENSE_MAX`] indices); [`elimination_tree`] a merge
//! list (`None` past the deadline).
//!
//! # Method and complexity
//!
//! Adjacency is kept as bit rows (m^2/8 bytes for m indices) and the fill of
//! every vertex is updated incrementally: adding the edge ab lowers the
//! fill of every common neighbour of a and b by one and raises the fill of
//! a by the neighbours of a not adjacent to b (and symmetrically);
//! removing v lowers the fill of each neighbour u by the neighbours of u
//! not adjacent to v. Each new edge costs O(m/64 + common neighbours), so
//! an order costs O((m + fill edges) m/64) time beyond a heap operation
//! per changed score.
//!
//! # Example
//!
//! ```
//! use rand::SeedableRng;
//! use sliceplan::search::{elimination_tree, OrderParams, OrderRule, Problem};
//! // A 4-cycle of vertices a b c d read as a network: edges are tensors,
//! // vertices indices of dimension 2. A cycle has treewidth 2, so the best
//! // op width is 3; min-fill finds it.
//! let tensors = vec![vec![0, 1], vec![1, 2], vec![2, 3], vec![3, 0]];
//! let p = Problem::new(tensors, vec![1.0; 4], vec![false; 4]);
//! let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
//! let params = OrderParams::plain(OrderRule::MinFill);
//! let merges = elimination_tree(&p, &params, &mut rng, None).unwrap();
//! assert_eq!(p.evaluate(&merges).op_width, 3.0);
//! ```

use std::cmp::Reverse;
use std::collections::BinaryHeap;
use std::time::Instant;

use rand::Rng;

use super::buckets::{order_tree, quotient_tree};
use super::problem::Problem;
use crate::num::{log2_add, Ordered};

/// Problems with more indices than this use the quotient-graph orders
/// (bit rows would take m^2/8 bytes: 8 MiB at this size).
pub const DENSE_MAX: usize = 8192;

/// Which quantity an elimination order minimises at each step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OrderRule {
    /// Fewest new adjacencies (Kjaerulff's min-fill).
    MinFill,
    /// Least weighted degree: the smallest clique (contraction).
    MinDegree,
}

/// How an elimination order breaks ties and explores.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OrderParams {
    /// The rule.
    pub rule: OrderRule,
    /// Ties broken at random (otherwise the lowest index first).
    pub random_ties: bool,
    /// Uniform noise in [0, noise) added to every score, in the score's
    /// units (fill counts or log2 weights); 0 for none. Below 1 with
    /// min-fill it only breaks ties; larger values explore.
    pub noise: f64,
}

impl OrderParams {
    /// The deterministic order of a rule (ties to the lowest index).
    pub fn plain(rule: OrderRule) -> OrderParams {
        OrderParams {
            rule,
            random_ties: false,
            noise: 0.0,
        }
    }
}

/// An elimination order and what it costs.
#[derive(Debug, Clone, PartialEq)]
pub struct Order {
    /// The closed indices in elimination order.
    pub order: Vec<u32>,
    /// The largest clique weight met (a vertex with its neighbours when
    /// eliminated): the op width of the order's tree, before the final
    /// joins.
    pub width: f64,
    /// log2 of the sum over eliminations of 2^(clique weight): about the
    /// total ops of the order's tree.
    pub cost_log2: f64,
}

/// The index graph as bit rows, with weighted degree and fill per vertex.
#[derive(Clone)]
pub(super) struct Dense {
    pub(super) words: usize,
    pub(super) rows: Vec<u64>,
    pub(super) weight: Vec<f64>,
    /// Weight of the vertex and its neighbours.
    pub(super) degree: Vec<f64>,
    /// Missing edges among the neighbours.
    pub(super) fill: Vec<i64>,
}

impl Dense {
    /// The index graph of a problem (`None` above [`DENSE_MAX`] indices).
    pub(super) fn new(p: &Problem) -> Option<Dense> {
        let m = p.weight.len();
        if m > DENSE_MAX {
            return None;
        }
        let words = m.div_ceil(64).max(1);
        let mut g = Dense {
            words,
            rows: vec![0; m * words],
            weight: p.weight.clone(),
            degree: vec![0.0; m],
            fill: vec![0; m],
        };
        for list in &p.tensors {
            for &a in list {
                for &b in list {
                    if a != b {
                        g.set(a as usize, b as usize);
                    }
                }
            }
        }
        for u in 0..m {
            let mut w = p.weight[u];
            let mut pairs = 0i64;
            for x in g.neighbours(u) {
                w += p.weight[x];
                pairs += g.count_and_not(u, x) as i64 - 1;
            }
            g.degree[u] = w;
            g.fill[u] = pairs / 2;
        }
        Some(g)
    }

    pub(super) fn row(&self, u: usize) -> &[u64] {
        &self.rows[u * self.words..(u + 1) * self.words]
    }

    fn set(&mut self, a: usize, b: usize) {
        self.rows[a * self.words + b / 64] |= 1 << (b % 64);
    }

    fn clear(&mut self, a: usize, b: usize) {
        self.rows[a * self.words + b / 64] &= !(1 << (b % 64));
    }

    pub(super) fn adjacent(&self, a: usize, b: usize) -> bool {
        self.rows[a * self.words + b / 64] & (1 << (b % 64)) != 0
    }

    /// The neighbours of `u`, in increasing order.
    pub(super) fn neighbours(&self, u: usize) -> Vec<usize> {
        bits(self.row(u))
    }

    /// |N(a) \ N(b)|.
    fn count_and_not(&self, a: usize, b: usize) -> u32 {
        self.row(a)
            .iter()
            .zip(self.row(b))
            .map(|(x, y)| (x & !y).count_ones())
            .sum()
    }

    /// Adds the edge ab (not present), updating fills and degrees; every
    /// vertex whose fill changed is passed to `touched`.
    fn add_edge(&mut self, a: usize, b: usize, touched: &mut impl FnMut(usize)) {
        let common: Vec<usize> = {
            let (ra, rb) = (self.row(a), self.row(b));
            let and: Vec<u64> = ra.iter().zip(rb).map(|(x, y)| x & y).collect();
            bits(&and)
        };
        for w in common {
            self.fill[w] -= 1;
            touched(w);
        }
        self.fill[a] += self.count_and_not(a, b) as i64;
        self.fill[b] += self.count_and_not(b, a) as i64;
        self.set(a, b);
        self.set(b, a);
        self.degree[a] += self.weight[b];
        self.degree[b] += self.weight[a];
        touched(a);
        touched(b);
    }

    /// Eliminates `v`: its neighbours become a clique, then `v` goes.
    /// Returns the clique weight (v with its neighbours).
    pub(super) fn eliminate(&mut self, v: usize, touched: &mut impl FnMut(usize)) -> f64 {
        let clique = self.degree[v];
        let nb = self.neighbours(v);
        for i in 0..nb.len() {
            for j in i + 1..nb.len() {
                if !self.adjacent(nb[i], nb[j]) {
                    self.add_edge(nb[i], nb[j], touched);
                }
            }
        }
        for &u in &nb {
            // Pairs (v, x) with x a neighbour of u not adjacent to v (v
            // itself is counted by the difference, hence the 1).
            self.fill[u] -= self.count_and_not(u, v) as i64 - 1;
            self.clear(u, v);
            self.degree[u] -= self.weight[v];
            touched(u);
        }
        for w in &mut self.rows[v * self.words..(v + 1) * self.words] {
            *w = 0;
        }
        clique
    }
}

/// Positions of the set bits.
fn bits(row: &[u64]) -> Vec<usize> {
    let mut out = Vec::new();
    for (k, &word) in row.iter().enumerate() {
        let mut w = word;
        while w != 0 {
            out.push(64 * k + w.trailing_zeros() as usize);
            w &= w - 1;
        }
    }
    out
}

/// Score, second score, tie-break.
type OrderKey = (Ordered, Ordered, u64);

/// An exact min-fill or min-degree order (see the module docs); `None`
/// above [`DENSE_MAX`] indices or past the deadline.
pub fn elimination_order<R: Rng>(
    p: &Problem,
    params: &OrderParams,
    rng: &mut R,
    deadline: Option<Instant>,
) -> Option<Order> {
    let mut g = Dense::new(p)?;
    let eligible: Vec<bool> = (0..p.weight.len())
        .map(|u| !p.open[u] && !p.incidence[u].is_empty())
        .collect();
    greedy_order(&mut g, &eligible, params, rng, deadline)
}

/// Eliminates every vertex of `g` flagged in `eligible` by the rule of
/// `params`, from the graph's present state; `None` past the deadline.
fn greedy_order<R: Rng>(
    g: &mut Dense,
    eligible: &[bool],
    params: &OrderParams,
    rng: &mut R,
    deadline: Option<Instant>,
) -> Option<Order> {
    let m = eligible.len();
    let key = |g: &Dense, u: usize, rng: &mut R| {
        let (a, b) = match params.rule {
            OrderRule::MinFill => (g.fill[u] as f64, g.degree[u]),
            OrderRule::MinDegree => (g.degree[u], g.fill[u] as f64),
        };
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
        (Ordered(a + noise), Ordered(b), tie)
    };
    let mut version = vec![0u32; m];
    let mut heap: BinaryHeap<Reverse<(OrderKey, u32, u32)>> = BinaryHeap::with_capacity(m);
    for u in (0..m).filter(|&u| eligible[u]) {
        heap.push(Reverse((key(g, u, rng), u as u32, 0)));
    }
    let mut done = vec![false; m];
    let mut dirty: Vec<usize> = Vec::new();
    let mut is_dirty = vec![false; m];
    let mut out = Order {
        order: Vec::new(),
        width: 0.0,
        cost_log2: f64::NEG_INFINITY,
    };
    while let Some(Reverse((_, v, ver))) = heap.pop() {
        let v = v as usize;
        if done[v] || ver != version[v] {
            continue;
        }
        if out.order.len() % 16 == 15 && deadline.is_some_and(|d| Instant::now() >= d) {
            return None;
        }
        done[v] = true;
        let clique = g.eliminate(v, &mut |u| {
            if !is_dirty[u] {
                is_dirty[u] = true;
                dirty.push(u);
            }
        });
        out.order.push(v as u32);
        out.width = out.width.max(clique);
        out.cost_log2 = log2_add(out.cost_log2, clique);
        for u in dirty.drain(..) {
            is_dirty[u] = false;
            if !done[u] && eligible[u] {
                version[u] = version[u].wrapping_add(1);
                heap.push(Reverse((key(g, u, rng), u as u32, version[u])));
            }
        }
    }
    Some(out)
}

/// The tree of an elimination order found by `params` (exact below
/// [`DENSE_MAX`] indices, approximate above); `None` past the deadline.
pub fn elimination_tree<R: Rng>(
    p: &Problem,
    params: &OrderParams,
    rng: &mut R,
    deadline: Option<Instant>,
) -> Option<Vec<[usize; 2]>> {
    if p.weight.len() <= DENSE_MAX {
        let order = elimination_order(p, params, rng, deadline)?;
        return Some(order_tree(p, &order.order));
    }
    quotient_tree(p, params, rng, deadline)
}

/// The deterministic min-fill tree of a network (ties to the lowest index),
/// on the search's unabsorbed simplification: the candidate every search
/// prices.
pub fn min_fill_tree(net: &crate::network::Network) -> crate::tree::Tree {
    plain_tree(net, OrderRule::MinFill)
}

/// The deterministic min-degree tree of a network, like [`min_fill_tree`].
pub fn min_degree_tree(net: &crate::network::Network) -> crate::tree::Tree {
    plain_tree(net, OrderRule::MinDegree)
}

fn plain_tree(net: &crate::network::Network, rule: OrderRule) -> crate::tree::Tree {
    let s = super::simplify::Simplified::new(net, false);
    // The plain order draws nothing; the generator is only a parameter.
    let mut rng = <rand_chacha::ChaCha8Rng as rand::SeedableRng>::seed_from_u64(0);
    let merges = elimination_tree(&s.problem, &OrderParams::plain(rule), &mut rng, None)
        .expect("no deadline, so an order");
    s.expand(&merges)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    #[test]
    fn incremental_fill_matches_a_recount() {
        // After every elimination on a random graph, the kept fill and
        // degree of every vertex equal a count from scratch.
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        let m = 40;
        let mut tensors = Vec::new();
        for _ in 0..90 {
            let a = rng.random_range(0..m as u32);
            let b = rng.random_range(0..m as u32);
            if a != b {
                tensors.push(vec![a, b]);
            }
        }
        let p = Problem::new(tensors, vec![1.0; m], vec![false; m]);
        let mut g = Dense::new(&p).unwrap();
        for v in 0..m {
            g.eliminate(v, &mut |_| {});
            for u in v + 1..m {
                let nb = g.neighbours(u);
                let mut missing = 0;
                for (i, &a) in nb.iter().enumerate() {
                    for &b in &nb[i + 1..] {
                        missing += i64::from(!g.adjacent(a, b));
                    }
                }
                assert_eq!(g.fill[u], missing, "vertex {u} after eliminating {v}");
                assert_eq!(g.degree[u], 1.0 + nb.len() as f64);
            }
        }
    }
}
