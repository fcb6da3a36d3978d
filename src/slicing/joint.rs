//! Slice-aware tree search: slice sets and trees searched together.
//!
//! # What it computes
//!
//! [`descend`] starts from a tree with nothing sliced and repeats, until the
//! process fits the budget (and a few rounds beyond, for the frontier):
//!
//! 1. **slice**: add the index that lowers the process's need most per unit
//!    of extra total ops (the greedy's rule, [`super::greedy::step`], which
//!    prices total ops with reuse of invariant work when that is on);
//! 2. **reconfigure**: re-optimise the tree for the network *as sliced*
//!    (sliced indices at dimension 1) by subtree reconfiguration
//!    ([`crate::search::refine_tree`]) for the least per-slice ops within
//!    the per-slice width just reached, and keep the new tree when the
//!    process needs less, or as much for fewer total ops.
//!
//! Once it fits, indices the budget no longer needs are dropped (latest
//! first), the tree is reconfigured once more for that set, and dropped
//! again. The objective is the command's: least total ops subject to the
//! process fitting the budget. [`search`] runs `descend` from several
//! starting trees (the caller's, typically the tree search's best, a
//! low-width tree and min-fill and min-degree elimination trees), splitting
//! the time left between them, and returns every point met, each with its
//! tree.
//!
//! # Budget
//!
//! No reconfiguration starts after the deadline, and reconfiguration takes
//! the deadline too. Past it, only the slicing steps (one pricing round
//! each) continue, up to the first fitting set, so that the reconfigured
//! tree is not lost for want of a few cheap steps. Reconfiguration is also
//! bounded by counts: at most `2 x (log2 of the needed reduction) + 8`
//! rounds per start, one pass per round.
//!
//! # Complexity
//!
//! Per round: the greedy's O(candidates x N log N) pricing plus one
//! reconfiguration pass, O(N 3^k) for windows of k = 6 leaves.
//!
//! # Reference
//!
//! Slicing interleaved with subtree reconfiguration of the sliced tree
//! follows Gray and Kourtis, "Hyper-optimized tensor network contraction",
//! Quantum 5, 410 (2021), and the dynamic slicing of Chen et al.,
//! arXiv:1805.01450 (2018); the rule, the acceptance test and the restarts
//! are our own.
//!
//! # Example
//!
//! ```
//! use sliceplan::formats::einsum::network_from_einsum;
//! use sliceplan::network::Dtype;
//! use sliceplan::slicing::{joint, SliceOptions};
//! use sliceplan::tree::Tree;
//! let net = network_from_einsum("ab,bc,cd,da->", Some(16), &[]).unwrap();
//! // Inputs 4 x 16^2 x 8 bytes, output 8 bytes, and 128 elements more.
//! let opts = SliceOptions::new(8192 + 8 + 128 * 8, Dtype::F64);
//! let found = joint::search(&net, &[Tree::left_deep(4)], &opts);
//! assert!(found.iter().any(|(p, _)| p.fits(&opts)));
//! ```

use std::time::Instant;

use super::greedy::{prune, step};
use super::{Point, SliceOptions};
use crate::cost::NodeSets;
use crate::network::{IndexId, Network};
use crate::search::{refine_tree, ExactGoal, Problem, RefineParams};
use crate::tree::Tree;

/// Leaves of a reconfigured window.
const WINDOW: usize = 6;

/// Runs [`descend`] from each tree in `starts` in turn, giving each an
/// equal share of the time left before `opts.deadline`; while time is
/// left (with a deadline), goes round the starts again with new seeds
/// (other reconfiguration windows), at most 16 times. Returns
/// every point met with its tree.
pub fn search(net: &Network, starts: &[Tree], opts: &SliceOptions) -> Vec<(Point, Tree)> {
    let mut out = Vec::new();
    let rounds = if opts.deadline.is_some() {
        MAX_ROUNDS
    } else {
        1
    };
    for round in 0..rounds {
        for (i, start) in starts.iter().enumerate() {
            if opts.out_of_time() {
                return out;
            }
            let mut o = opts.clone();
            if let Some(d) = opts.deadline {
                let left = d.saturating_duration_since(Instant::now());
                o.deadline = Some(Instant::now() + left / (starts.len() - i) as u32);
            }
            let seed = (round * starts.len() + i) as u64;
            out.extend(descend(net, start, &o, seed));
        }
    }
    out
}

/// Rounds of restarts [`search`] makes when time is left.
const MAX_ROUNDS: usize = 16;

/// Slices and reconfigures from `start` until the process fits (see the
/// module docs); `seed` varies the reconfiguration windows.
pub fn descend(net: &Network, start: &Tree, opts: &SliceOptions, seed: u64) -> Vec<(Point, Tree)> {
    let mut problem = Problem::from_network(net);
    let weights = problem.weight.clone();
    let mut tree = start.clone();
    let mut sets = NodeSets::new(net, &tree);
    let mut current = Point::evaluate(&sets, net, &[], opts);
    let mut out = vec![(current.clone(), tree.clone())];
    let needed = opts.needed_log2(net, &current).max(0.0);
    let max_rounds = 2 * needed.ceil() as usize + 8;
    let mut rounds = 0;
    // Past the deadline or the round cap no reconfiguration starts, but the
    // cheap slicing steps go on to the first fitting set.
    while !current.fits(opts) {
        let Some(mut next) = step(&sets, net, opts, &current) else {
            break;
        };
        if rounds >= max_rounds || opts.out_of_time() {
            out.push((next.clone(), tree.clone()));
            current = next;
            continue;
        }
        rounds += 1;
        set_weights(&mut problem, &weights, &next.sliced);
        if let Some((t, s, p)) = reconfigure(
            net,
            &problem,
            &tree,
            &next,
            opts,
            seed * 1000 + rounds as u64,
        ) {
            let lower = p.excess_log2() < next.excess_log2() - 1e-9;
            let same = p.excess_log2() <= next.excess_log2() + 1e-9;
            if lower || (same && p.total_ops.log2 < next.total_ops.log2 - 1e-9) {
                tree = t;
                sets = s;
                next = p;
            }
        }
        out.push((next.clone(), tree.clone()));
        current = next;
    }
    if !current.fits(opts) {
        return out;
    }
    // Drop what the budget does not need, polish the tree for that set,
    // drop again.
    let mut best = prune(&sets, net, opts, &current);
    out.push((best.clone(), tree.clone()));
    if !opts.out_of_time() {
        set_weights(&mut problem, &weights, &best.sliced);
        if let Some((t, s, p)) = reconfigure(net, &problem, &tree, &best, opts, seed * 1000 + 999) {
            if p.fits(opts) && p.total_ops.log2 < best.total_ops.log2 - 1e-9 {
                let p = prune(&s, net, opts, &p);
                tree = t;
                sets = s;
                best = p;
                out.push((best.clone(), tree.clone()));
            }
        }
    }
    // A few more slices past the fit, for the frontier.
    let mut current = best;
    for _ in 0..opts.frontier_extra {
        if opts.out_of_time() {
            break;
        }
        let Some(next) = step(&sets, net, opts, &current) else {
            break;
        };
        out.push((next.clone(), tree.clone()));
        current = next;
    }
    out
}

/// The problem's weights with the sliced indices at 0 (dimension 1).
fn set_weights(problem: &mut Problem, weights: &[f64], sliced: &[IndexId]) {
    problem.weight.copy_from_slice(weights);
    for &e in sliced {
        problem.weight[e] = 0.0;
    }
}

/// One reconfiguration pass of `tree` for the sliced problem, aiming at
/// the least per-slice ops within the width the slice has now; the new
/// tree priced for `at.sliced`, or `None` when nothing changed.
fn reconfigure(
    net: &Network,
    problem: &Problem,
    tree: &Tree,
    at: &Point,
    opts: &SliceOptions,
    seed: u64,
) -> Option<(Tree, NodeSets, Point)> {
    let cap = problem.evaluate(tree.merges()).width;
    let params = RefineParams {
        k: WINDOW,
        goal: ExactGoal::OpsWithin(cap),
        passes: 1,
        random_frontier: Some(seed),
    };
    let (merges, changed) = refine_tree(problem, tree.merges(), &params, opts.deadline);
    if !changed {
        return None;
    }
    let t = Tree::new(tree.leaves(), merges).ok()?;
    let s = NodeSets::new(net, &t);
    let p = Point::evaluate(&s, net, &at.sliced, opts);
    Some((t, s, p))
}
