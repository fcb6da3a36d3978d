//! Greedy slicing: slice, one index at a time, where the peak is reached.
//!
//! # What it computes
//!
//! Starting from a slice set, each round finds the step of the best
//! traversal where the per-slice peak is reached (the binding step), takes
//! the indices of every tensor live there, prices slicing each of them, and
//! keeps the one with the smallest total ops (slices x per-slice ops) among
//! those that lower the peak (if none lowers it, the one that lowers it
//! least badly). Rounds continue past the first set that fits for
//! [`SliceOptions::frontier_extra`] more rounds, so the frontier sees beyond
//! the chosen count. [`prune`] then drops indices the budget does not need.
//!
//! # Complexity
//!
//! O(rounds x candidates x n log n) for n tensors.
//!
//! # Reference
//!
//! Slicing as "variable projection" for contraction under a memory limit is
//! common practice in tensor-network simulation of circuits (e.g. Chen et al.,
//! "Classical simulation of intermediate-size quantum circuits", 2018); the
//! choice among live indices at the binding step is our own rule.

use super::{Point, Refit, SliceOptions};
use crate::cost::{Dims, Inputs, NodeSets, PeakModel, Workspace};
use crate::network::{IndexId, Network};
use crate::tree::Tree;

/// The greedy trail: the priced start, then one point per round.
pub fn greedy(
    sets: &NodeSets,
    net: &Network,
    opts: &SliceOptions,
    start: &[IndexId],
) -> Vec<Point> {
    let mut trail = vec![Point::evaluate(sets, net, start, opts)];
    let mut extra = 0;
    while !opts.out_of_time() {
        let current = trail.last().expect("trail starts non-empty");
        if current.fits(opts) {
            extra += 1;
            if extra > opts.frontier_extra {
                break;
            }
        }
        match step(sets, net, opts, current) {
            Some(p) => trail.push(p),
            None => break,
        }
    }
    trail
}

/// One greedy round from `current`: the best index to add, priced; `None`
/// when no index can be added.
///
/// The candidates are the indices live where one plain slice reaches its
/// peak and, with reuse, the indices of the largest held intermediates
/// (slicing one makes it vary, so it is no longer held whole).
pub fn step(sets: &NodeSets, net: &Network, opts: &SliceOptions, current: &Point) -> Option<Point> {
    if current.slices.log2 >= opts.max_slices_log2 {
        return None;
    }
    let dims = Dims::sliced(net, &current.sliced);
    let plain_order = if current.held.is_empty() {
        current.order.clone()
    } else {
        sets.evaluate(&dims, PeakModel::EXECUTOR).order
    };
    let mut candidates = binding_indices(sets, &dims, &plain_order);
    if !current.held.is_empty() {
        let mut held = current.held.clone();
        let size = |v: usize| sets.indices[v].iter().map(|&e| dims.log2[e]).sum::<f64>();
        held.sort_by(|&a, &b| size(b).total_cmp(&size(a)));
        for &h in held.iter().take(4) {
            for &e in &sets.indices[h] {
                if !candidates.contains(&e) {
                    candidates.push(e);
                }
            }
        }
    }
    candidates.retain(|e| !current.sliced.contains(e) && dims.dim[*e] > 1);
    // Price the candidates touching the most live elements first.
    candidates.truncate(opts.max_candidates);
    let now = (current.excess_log2(), current.total_ops.log2);
    let mut best: Option<Point> = None;
    for &e in &candidates {
        let mut sliced = current.sliced.clone();
        sliced.push(e);
        let p = Point::evaluate(sets, net, &sliced, opts);
        if p.slices.log2 > opts.max_slices_log2 {
            continue;
        }
        if best
            .as_ref()
            .is_none_or(|b| rank(&p, now, opts.rule) < rank(b, now, opts.rule))
        {
            best = Some(p);
        }
    }
    best
}

/// Greedy slicing that re-plans the tree after every index it adds (at most
/// `max_refits` times), keeping the new tree when it lowers the per-slice
/// peak, or keeps it and lowers the total ops. Returns every point with the
/// tree it was priced on, the last one pruned.
pub fn interleaved(
    net: &Network,
    tree: &Tree,
    opts: &SliceOptions,
    refit: &mut Refit<'_>,
    max_refits: usize,
) -> Vec<(Point, Tree)> {
    let mut tree = tree.clone();
    let mut sets = NodeSets::new(net, &tree);
    let mut current = Point::evaluate(&sets, net, &[], opts);
    let mut out = Vec::new();
    let mut refits = 0;
    // Past the deadline no re-planning starts, but the cheap greedy steps
    // go on to the first fitting set: stopping short would throw away the
    // re-planned tree (and every set on it) for lack of a few steps.
    while !current.fits(opts) {
        let Some(mut next) = step(&sets, net, opts, &current) else {
            break;
        };
        if refits < max_refits && !opts.out_of_time() {
            refits += 1;
            // Ask for the fewest ops at no more than the width just reached.
            if let Some(other) = refit(net, &next.sliced, next.per_slice_width) {
                let other_sets = NodeSets::new(net, &other);
                let p = Point::evaluate(&other_sets, net, &next.sliced, opts);
                let lower_peak = p.excess_log2() < next.excess_log2() - 1e-9;
                let same_peak = p.excess_log2() <= next.excess_log2() + 1e-9;
                if lower_peak || (same_peak && p.total_ops.log2 < next.total_ops.log2 - 1e-9) {
                    tree = other;
                    sets = other_sets;
                    next = p;
                }
            }
        }
        out.push((next.clone(), tree.clone()));
        current = next;
    }
    if current.fits(opts) {
        out.push((prune(&sets, net, opts, &current), tree));
    }
    out
}

/// Orders candidates (smaller is better): those that lower the process's
/// need (less inputs and output) first; among them, by the rule; then by
/// that need.
fn rank(p: &Point, (peak_now, ops_now): (f64, f64), rule: GreedyRule) -> (bool, i64, i64) {
    let lowered = peak_now - p.excess_log2();
    let lowers = lowered > 1e-12;
    // Quantise so that near-equal floats compare equal and ties fall to peak.
    let q = |x: f64| (x * 1e9).round() as i64;
    let score = match rule {
        GreedyRule::LeastOps => p.total_ops.log2,
        // Extra ops (log2) paid per halving of the peak; a small constant
        // keeps free reductions ordered by how much they lower the peak.
        GreedyRule::OpsPerHalving if lowers => (p.total_ops.log2 - ops_now + 1e-3) / lowered,
        GreedyRule::OpsPerHalving => p.total_ops.log2,
    };
    (!lowers, q(score), q(p.excess_log2()))
}

/// How the greedy picks among the indices live at the binding step.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum GreedyRule {
    /// The index whose slicing costs the fewest extra ops per halving of the
    /// per-slice peak.
    #[default]
    OpsPerHalving,
    /// The index that gives the smallest total ops after slicing (among
    /// those that lower the peak).
    LeastOps,
}

/// Drops indices, latest first, while the slice set still fits.
pub fn prune(sets: &NodeSets, net: &Network, opts: &SliceOptions, point: &Point) -> Point {
    let mut best = point.clone();
    for e in point.sliced.iter().rev() {
        let without: Vec<IndexId> = best.sliced.iter().copied().filter(|x| x != e).collect();
        let p = Point::evaluate(sets, net, &without, opts);
        if p.fits(opts) {
            best = p;
        }
    }
    best
}

/// The indices of every tensor live when the executor's per-slice peak is
/// reached, running the merges in `order`, those touching the most live
/// elements first.
pub fn binding_indices(sets: &NodeSets, dims: &Dims, order: &[usize]) -> Vec<IndexId> {
    let model = PeakModel::EXECUTOR;
    debug_assert_eq!(
        (model.inputs, model.workspace),
        (Inputs::OnFirstUse, Workspace::PermuteCopies)
    );
    let n = sets.leaves();
    let size = |v: usize| -> f64 {
        sets.indices[v]
            .iter()
            .map(|&e| dims.log2[e])
            .sum::<f64>()
            .exp2()
    };
    // First pass: where is the maximum reached? Moments are numbered.
    let mut level = 0.0;
    let (mut best, mut best_moment, mut moment) = (f64::NEG_INFINITY, 0usize, 0usize);
    let mut note = |value: f64, moment: usize| {
        if value > best {
            best = value;
            best_moment = moment;
        }
    };
    for &k in order {
        let [a, b] = sets.merge(k);
        for c in [a, b].into_iter().filter(|&c| c < n) {
            level += size(c);
            note(level, moment);
            moment += 1;
        }
        note(level + size(a).max(size(b)).max(size(n + k)), moment);
        moment += 1;
        level += size(n + k) - size(a) - size(b);
    }
    let root = sets.indices.len() - 1;
    note(level + size(root), moment);
    // Second pass: the live nodes at that moment.
    let mut live = vec![false; sets.indices.len()];
    let mut moment = 0usize;
    let mut at: Vec<usize> = vec![root];
    'walk: for &k in order {
        let [a, b] = sets.merge(k);
        for c in [a, b].into_iter().filter(|&c| c < n) {
            live[c] = true;
            if moment == best_moment {
                at = Vec::new();
                break 'walk;
            }
            moment += 1;
        }
        if moment == best_moment {
            at = vec![n + k];
            break;
        }
        moment += 1;
        live[a] = false;
        live[b] = false;
        live[n + k] = true;
    }
    // Weight each index by the elements of the live tensors it touches:
    // slicing it shrinks exactly those.
    let mut weight: std::collections::HashMap<IndexId, f64> = std::collections::HashMap::new();
    let nodes = live
        .iter()
        .enumerate()
        .filter(|&(_, &l)| l)
        .map(|(v, _)| v)
        .chain(at);
    for v in nodes {
        let s = size(v);
        for &e in &sets.indices[v] {
            *weight.entry(e).or_insert(0.0) += s;
        }
    }
    let mut out: Vec<(IndexId, f64)> = weight.into_iter().collect();
    out.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    out.into_iter().map(|(e, _)| e).collect()
}

/// Local search over slice sets on a fixed tree, from a fitting `point`:
/// tries to drop each sliced index, or to swap it for one of the indices
/// live where the set without it reaches its peak, and moves to the first
/// fitting set with fewer total ops; repeats until a whole pass finds no
/// move or `max_passes` passes are done. Returns the best set found (the
/// start when nothing beats it).
///
/// The greedy builds a set one index at a time and never takes back an
/// early choice that later ones made needless or costly; the swaps do.
///
/// # Complexity
///
/// Per pass: |set| x (1 + `SWAP_CANDIDATES`) pricings of O(n log n).
pub fn swap_search(
    sets: &NodeSets,
    net: &Network,
    opts: &SliceOptions,
    point: &Point,
    max_passes: usize,
) -> Point {
    let mut best = point.clone();
    if !best.fits(opts) {
        return best;
    }
    let better = |p: &Point, b: &Point| {
        p.fits(opts)
            && (p.total_ops.log2 < b.total_ops.log2 - 1e-9
                || (p.total_ops.log2 <= b.total_ops.log2 + 1e-9
                    && p.slices.log2 < b.slices.log2 - 1e-9))
    };
    for _ in 0..max_passes {
        let mut moved = false;
        let mut i = 0;
        while i < best.sliced.len() {
            if opts.out_of_time() {
                return best;
            }
            let out = best.sliced[i];
            let rest: Vec<IndexId> = best.sliced.iter().copied().filter(|&e| e != out).collect();
            let without = Point::evaluate(sets, net, &rest, opts);
            if better(&without, &best) {
                best = without;
                moved = true;
                continue;
            }
            let dims = Dims::sliced(net, &rest);
            let mut found: Option<Point> = None;
            for e in binding_indices(sets, &dims, &without.order)
                .into_iter()
                .filter(|&e| e != out && !rest.contains(&e) && dims.dim[e] > 1)
                .take(SWAP_CANDIDATES)
            {
                let mut sliced = rest.clone();
                sliced.push(e);
                let p = Point::evaluate(sets, net, &sliced, opts);
                if p.slices.log2 <= opts.max_slices_log2
                    && better(&p, found.as_ref().unwrap_or(&best))
                {
                    found = Some(p);
                }
            }
            if let Some(p) = found {
                best = p;
                moved = true;
            }
            i += 1;
        }
        if !moved {
            break;
        }
    }
    best
}

/// Replacement indices priced per swap in [`swap_search`].
const SWAP_CANDIDATES: usize = 16;
