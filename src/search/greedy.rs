//! The randomised greedy finder: repeatedly merge the pair of tensors with
//! the best score.
//!
//! # What it computes
//!
//! [`greedy_tree`] builds a tree bottom-up. Among all pairs of current
//! tensors that share an index it merges the pair with the smallest score
//!
//! ```text
//! size(result) - alpha * (size(a) + size(b))
//! ```
//!
//! (sizes in elements; the score is compared on a signed log scale so that
//! huge sizes stay finite), minus `temperature` times a standard Gumbel
//! variable drawn when the pair is scored (from a table of 1,024 quantiles). With temperature 0 the choice is
//! deterministic (ties go to the pair scored first); with temperature T the
//! choice among scored pairs is a Boltzmann draw at temperature T on that log
//! scale (the Gumbel-max trick). When no two tensors share an index the
//! remaining ones (disconnected parts) are joined by outer products, the two
//! smallest first.
//!
//! # Arguments and result
//!
//! The problem, [`GreedyParams`] and a seeded random generator. Returns a
//! merge list in single-assignment form over the problem's tensors.
//!
//! # Method and complexity
//!
//! The greedy heuristic for contraction ordering goes back to the
//! matrix-chain literature (Chin, "An O(n) algorithm for determining a
//! near-optimal computation order of matrix chain products", CACM 21(7),
//! 1978) and is the usual baseline for tensor networks; randomising it with
//! a Boltzmann choice and restarting many times is described by Gray and
//! Kourtis, "Hyper-optimized tensor network contraction", Quantum 5, 410
//! (2021). Pairs wait in a binary heap with lazy deletion; each index keeps
//! the list of current tensors carrying it, so a merge rescores only the
//! new tensor's neighbours. Time O(P log P) where P is the number of scored
//! pairs (about the sum over merges of the new tensor's neighbour count;
//! O(n d) on a network of bounded degree d), memory O(P + total index-list
//! length).
//!
//! # Example
//!
//! ```
//! use rand::SeedableRng;
//! use sliceplan::search::{greedy_tree, GreedyParams, Problem};
//! // A ring of four matrices with bond dimension 2, closed (scalar result).
//! let tensors = vec![vec![0, 1], vec![1, 2], vec![2, 3], vec![3, 0]];
//! let p = Problem::new(tensors, vec![1.0; 4], vec![false; 4]);
//! let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
//! let merges = greedy_tree(&p, &GreedyParams::default(), &mut rng);
//! assert_eq!(merges.len(), 3);
//! // Three merges of 2x2 matrices around a ring: 8 + 8 + 4 = 20 ops.
//! assert!((p.evaluate(&merges).total_ops_log2.exp2() - 20.0).abs() < 1e-9);
//! ```

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use rand::Rng;

use super::problem::Problem;
use crate::num::Ordered;

/// Tunable weights of the greedy score.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GreedyParams {
    /// Weight of the operands' sizes against the result's size (0: smallest
    /// result first; 1: largest shrinkage first).
    pub alpha: f64,
    /// Scale of the random perturbation (0: none).
    pub temperature: f64,
}

impl Default for GreedyParams {
    fn default() -> Self {
        GreedyParams {
            alpha: 1.0,
            temperature: 0.0,
        }
    }
}

impl GreedyParams {
    /// Draws parameters for one trial of the driver.
    pub fn sample<R: Rng>(rng: &mut R) -> GreedyParams {
        let temperature = if rng.random_bool(0.15) {
            0.0
        } else {
            rng.random_range(0.01f64..1.0).powi(2)
        };
        GreedyParams {
            alpha: rng.random_range(0.0..1.5),
            temperature,
        }
    }
}

struct State<'a> {
    p: &'a Problem,
    /// Index list of every node (leaves, then merges); emptied when merged.
    nodes: Vec<Vec<u32>>,
    size: Vec<f64>,
    /// 2^size of every node (elements).
    pow: Vec<f64>,
    /// Weight of the indices only this node carries and that are not open
    /// (possible at leaves only: a merged node keeps no such index).
    lone: Vec<f64>,
    alive: Vec<bool>,
    /// Alive nodes carrying each index.
    holders: Vec<Vec<u32>>,
    /// Scratch mark per node for neighbour collection.
    stamp: Vec<u32>,
    clock: u32,
}

impl State<'_> {
    /// log2 size of the result of merging alive nodes `a` and `b`:
    /// w(a) + w(b), less each shared index once (twice when a and b are its
    /// last holders and it is not open, so it is summed), less the indices
    /// only a leaf carries. Walks the shorter list, searching the longer.
    fn result_size(&self, a: usize, b: usize) -> f64 {
        let (la, lb) = (&self.nodes[a], &self.nodes[b]);
        let (short, long) = if la.len() <= lb.len() {
            (la, lb)
        } else {
            (lb, la)
        };
        let mut w = self.size[a] + self.size[b] - self.lone[a] - self.lone[b];
        for &e in short.iter() {
            if long.binary_search(&e).is_ok() {
                let e = e as usize;
                let summed = !self.p.open[e] && self.holders[e].len() == 2;
                w -= self.p.weight[e] * if summed { 2.0 } else { 1.0 };
            }
        }
        w
    }

    fn merge(&mut self, a: usize, b: usize) -> usize {
        let c = self.nodes.len();
        let (la, lb) = (
            std::mem::take(&mut self.nodes[a]),
            std::mem::take(&mut self.nodes[b]),
        );
        for (list, node) in [(&la, a), (&lb, b)] {
            for &e in list {
                let h = &mut self.holders[e as usize];
                if let Some(pos) = h.iter().position(|&x| x as usize == node) {
                    h.swap_remove(pos);
                }
            }
        }
        let mut kept = Vec::with_capacity(la.len() + lb.len());
        let (mut i, mut j) = (0, 0);
        while i < la.len() || j < lb.len() {
            let e = if j >= lb.len() || (i < la.len() && la[i] < lb[j]) {
                i += 1;
                la[i - 1]
            } else if i >= la.len() || lb[j] < la[i] {
                j += 1;
                lb[j - 1]
            } else {
                i += 1;
                j += 1;
                la[i - 1]
            };
            if self.p.open[e as usize] || !self.holders[e as usize].is_empty() {
                kept.push(e);
                self.holders[e as usize].push(c as u32);
            }
        }
        self.size.push(self.p.weight_of(&kept));
        self.pow.push(self.size[c].exp2());
        self.lone.push(0.0);
        self.nodes.push(kept);
        self.alive[a] = false;
        self.alive[b] = false;
        self.alive.push(true);
        self.stamp.push(0);
        c
    }

    /// Alive nodes sharing an index with `v` (each once, in a fixed order).
    fn neighbours(&mut self, v: usize) -> Vec<usize> {
        self.clock += 1;
        self.stamp[v] = self.clock;
        let mut out = Vec::new();
        for &e in &self.nodes[v] {
            for &u in &self.holders[e as usize] {
                let u = u as usize;
                if self.stamp[u] != self.clock {
                    self.stamp[u] = self.clock;
                    out.push(u);
                }
            }
        }
        out
    }
}

/// Signed log scale: keeps the order of the linear score but stays finite.
/// ln(1 + |x|) is approximated from the float's exponent and mantissa
/// (piecewise linear between powers of two, within 0.09 of log2 and
/// increasing, which is all the ordering needs).
fn signed_log(x: f64) -> f64 {
    let y = 1.0 + x.abs();
    let bits = y.to_bits();
    let exponent = ((bits >> 52) & 0x7ff) as f64 - 1023.0;
    let mantissa = (bits & ((1u64 << 52) - 1)) as f64 / (1u64 << 52) as f64;
    x.signum() * (exponent + mantissa) * std::f64::consts::LN_2
}

/// Quantiles of the standard Gumbel distribution at (k + 0.5) / 1024: a
/// random entry is a Gumbel variable rounded to 1/1024 in probability.
fn gumbel_table() -> Vec<f64> {
    (0..1024)
        .map(|k| {
            let u = (k as f64 + 0.5) / 1024.0;
            -(-(u.ln())).ln()
        })
        .collect()
}

/// A tree built by the randomised greedy rule (see the module docs).
pub fn greedy_tree<R: Rng>(p: &Problem, params: &GreedyParams, rng: &mut R) -> Vec<[usize; 2]> {
    greedy_tree_until(p, params, rng, None).expect("no deadline, so no early stop")
}

/// [`greedy_tree`] that gives up, returning `None`, once `deadline` passes
/// (on dense networks a merge rescores thousands of pairs, so one greedy
/// tree of 10^4 tensors can take seconds).
pub fn greedy_tree_until<R: Rng>(
    p: &Problem,
    params: &GreedyParams,
    rng: &mut R,
    deadline: Option<std::time::Instant>,
) -> Option<Vec<[usize; 2]>> {
    let n = p.len();
    let mut st = State {
        p,
        nodes: p.tensors.clone(),
        size: p.tensors.iter().map(|t| p.weight_of(t)).collect(),
        pow: p.tensors.iter().map(|t| p.weight_of(t).exp2()).collect(),
        lone: p
            .tensors
            .iter()
            .map(|t| {
                t.iter()
                    .filter(|&&e| !p.open[e as usize] && p.incidence[e as usize].len() == 1)
                    .map(|&e| p.weight[e as usize])
                    .sum()
            })
            .collect(),
        alive: vec![true; n],
        holders: p.incidence.clone(),
        stamp: vec![0; n],
        clock: 0,
    };
    let mut heap: BinaryHeap<Reverse<(Ordered, u32, u32)>> = BinaryHeap::new();
    let gumbel = if params.temperature > 0.0 {
        gumbel_table()
    } else {
        Vec::new()
    };
    let score = |st: &State, a: usize, b: usize, rng: &mut R| -> Ordered {
        let c = st.result_size(a, b);
        let lin = c.exp2() - params.alpha * (st.pow[a] + st.pow[b]);
        // Beyond f64 range fall back to comparing log sizes.
        let base = if lin.is_finite() {
            signed_log(lin)
        } else {
            c * std::f64::consts::LN_2
        };
        let noise = if params.temperature > 0.0 {
            params.temperature * gumbel[(rng.next_u32() >> 22) as usize]
        } else {
            0.0
        };
        Ordered(base + noise)
    };
    for a in 0..n {
        for b in st.neighbours(a) {
            if b > a {
                let s = score(&st, a, b, rng);
                heap.push(Reverse((s, a as u32, b as u32)));
            }
        }
    }
    let mut merges = Vec::with_capacity(n.saturating_sub(1));
    while let Some(Reverse((_, a, b))) = heap.pop() {
        let (a, b) = (a as usize, b as usize);
        if !st.alive[a] || !st.alive[b] {
            continue;
        }
        let c = st.merge(a, b);
        merges.push([a, b]);
        if merges.len() % 16 == 0 && deadline.is_some_and(|d| std::time::Instant::now() >= d) {
            return None;
        }
        for u in st.neighbours(c) {
            let s = score(&st, u, c, rng);
            heap.push(Reverse((s, u as u32, c as u32)));
        }
    }
    join_components(&mut st, &mut merges);
    Some(merges)
}

/// Joins what is left (no shared indices) by outer products, smallest first.
fn join_components(st: &mut State, merges: &mut Vec<[usize; 2]>) {
    let mut left: BinaryHeap<Reverse<(Ordered, u32)>> = (0..st.nodes.len())
        .filter(|&v| st.alive[v])
        .map(|v| Reverse((Ordered(st.size[v]), v as u32)))
        .collect();
    while left.len() > 1 {
        let Reverse((_, a)) = left.pop().expect("len > 1");
        let Reverse((_, b)) = left.pop().expect("len > 1");
        let c = st.merge(a as usize, b as usize);
        merges.push([a as usize, b as usize]);
        left.push(Reverse((Ordered(st.size[c]), c as u32)));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    #[test]
    fn disconnected_parts_are_joined() {
        // Two separate matrix pairs and a lone vector: 5 tensors, 4 merges.
        let tensors = vec![vec![0, 1], vec![1, 2], vec![3, 4], vec![4, 5], vec![6]];
        let p = Problem::new(tensors, vec![1.0; 7], vec![false; 7]);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        let merges = greedy_tree(&p, &GreedyParams::default(), &mut rng);
        assert!(crate::tree::Tree::new(5, merges).is_ok());
    }
}
