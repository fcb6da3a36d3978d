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

use super::{Point, SliceOptions};
use crate::cost::{Dims, Inputs, NodeSets, PeakModel, Workspace};
use crate::network::{IndexId, Network};

/// The greedy trail: the priced start, then one point per round.
pub fn greedy(
    sets: &NodeSets,
    net: &Network,
    opts: &SliceOptions,
    start: &[IndexId],
) -> Vec<Point> {
    let mut trail = vec![Point::evaluate(sets, net, start, opts)];
    let mut extra = 0;
    loop {
        let current = trail.last().expect("trail starts non-empty");
        if current.fits(opts) {
            extra += 1;
            if extra > opts.frontier_extra {
                break;
            }
        }
        if current.slices.log2 >= opts.max_slices_log2 {
            break;
        }
        let dims = Dims::sliced(net, &current.sliced);
        let mut candidates = binding_indices(sets, &dims, &current.order);
        candidates.retain(|e| !current.sliced.contains(e) && dims.dim[*e] > 1);
        if candidates.is_empty() {
            break;
        }
        // Price the candidates on the largest dimensions first.
        candidates.sort_by(|&a, &b| dims.log2[b].total_cmp(&dims.log2[a]).then(a.cmp(&b)));
        candidates.truncate(opts.max_candidates);
        let peak_now = current.per_slice_peak.log2;
        let mut best: Option<Point> = None;
        for &e in &candidates {
            let mut sliced = current.sliced.clone();
            sliced.push(e);
            let p = Point::evaluate(sets, net, &sliced, opts);
            if p.slices.log2 > opts.max_slices_log2 {
                continue;
            }
            let better = match &best {
                None => true,
                Some(b) => rank(&p, peak_now) < rank(b, peak_now),
            };
            if better {
                best = Some(p);
            }
        }
        match best {
            Some(p) => trail.push(p),
            None => break,
        }
    }
    trail
}

/// Orders candidates: those that lower the peak first, then by total ops,
/// then by peak.
fn rank(p: &Point, peak_now: f64) -> (bool, i64, i64) {
    let lowers = p.per_slice_peak.log2 < peak_now - 1e-12;
    // Quantise so that near-equal floats compare equal and ties fall to peak.
    let q = |x: f64| (x * 1e9).round() as i64;
    (!lowers, q(p.total_ops.log2), q(p.per_slice_peak.log2))
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
/// reached, running the merges in `order`.
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
    let mut out: Vec<IndexId> = live
        .iter()
        .enumerate()
        .filter(|&(_, &l)| l)
        .map(|(v, _)| v)
        .chain(at)
        .flat_map(|v| sets.indices[v].iter().copied())
        .collect();
    out.sort_unstable();
    out.dedup();
    out
}
