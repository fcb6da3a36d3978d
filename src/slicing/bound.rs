//! A proven lower bound on the total ops of every slice set that fits, for
//! a fixed tree: how far the chosen slice set could still be from the best
//! one on that tree.
//!
//! # What it computes
//!
//! Fix the tree. For slice set K (x_e = 1 when index e is sliced, w_e =
//! log2 d_e), merge m contributes to the total ops at least
//! ops(m) x (product of d_e over the sliced indices summed below m): it is
//! repeated for every value of those indices (they vary its operands), with
//! reuse of invariant work or without (an invariant merge has none below
//! it, and a plain one is repeated for every slice). So
//!
//! total ops >= max over m of 2^(log2 ops(m) + sum over e summed below m of
//! x_e w_e) + (the other merges' ops, at least once each).
//!
//! A process fits only when every node of the tree, as one slice holds it,
//! has at most C elements (C: the budget less inputs and output, over the
//! element size; a held intermediate counts whole, so C and not C divided
//! by the slices at once). Under the executor's rule every node is held
//! whole at the merge that makes it and every operand may be copied once,
//! so each node's sliced size is at most the per-slice peak (or the setup
//! peak, for held ones), which a fitting process keeps under C. In logs:
//! sum over e on node v of x_e w_e >= log2 size(v) minus log2 C.
//!
//! The least t with t >= log2 ops(m) + sum x_e w_e for every m, under those
//! covering constraints and 0 <= x <= 1, is a linear programme. Every
//! fitting K is a 0/1 point of it whose largest merge term is at least its
//! objective, so the optimum t* is at most that term for every fitting K,
//! and (the largest term's merge plus every other merge at least once)
//!
//! total ops >= 2^t* + (sum of ops(m)) - (largest ops(m)).
//!
//! Dropping rows (merge rows past [`MAX_MERGE_ROWS`], or slices at once
//! above 1 that would tighten C) only weakens the bound; it stays valid.
//!
//! It bounds slice sets **on this tree**: another tree may do better (the
//! overhead is measured against the search's best unsliced tree, so the
//! bound can be below 1x when the slicing search found a cheaper tree).
//!
//! Solved with the pure-Rust `microlp` solver through `good_lp` within a
//! time limit; the merge rows are the [`MAX_MERGE_ROWS`] of the largest
//! ops (fewer rows keep the bound valid, only weaker).
//!
//! # Complexity
//!
//! O(N x depth) to collect the indices summed below each merge, then one
//! linear programme of at most [`MAX_MERGE_ROWS`] + the covering rows.
//!
//! # Example
//!
//! ```
//! use sliceplan::cost::NodeSets;
//! use sliceplan::formats::einsum::network_from_einsum;
//! use sliceplan::network::Dtype;
//! use sliceplan::slicing::{bound::ops_lower_bound, SliceOptions};
//! use sliceplan::tree::Tree;
//! let net = network_from_einsum("ab,bc,cd,da->", Some(16), &[]).unwrap();
//! let tree = Tree::left_deep(4);
//! let sets = NodeSets::new(&net, &tree);
//! // Inputs 4 x 16^2 x 8 bytes, output 8 bytes, and 64 elements more:
//! // every node of a slice must come down from 256 elements to 64.
//! let opts = SliceOptions::new(8192 + 8 + 64 * 8, Dtype::F64);
//! let b = ops_lower_bound(&sets, &net, &opts).unwrap();
//! assert!(b.solved);
//! // Never below the tree's own unsliced ops.
//! assert!(b.total_ops_log2 >= sets.evaluate_unsliced(&net, Default::default()).total_ops.log2 - 1e-9);
//! // Worked by hand: the merges cost 2^12 (AB), 2^12 (ABC) and 2^8 (the
//! // trace); slicing a and c (256 slices) divides each by exactly 256, so
//! // no overhead is forced and the bound is the unsliced 8448 ops.
//! assert!((b.total_ops_log2 - 8448f64.log2()).abs() < 1e-5);
//! ```

use good_lp::{variable, variables, Expression, Solution, SolverModel, WithTimeLimit};
use serde::{Deserialize, Serialize};

use super::SliceOptions;
use crate::cost::{Dims, NodeSets};
use crate::network::{IndexId, Network};
use crate::num::log2_add;

/// Merge rows of the programme: the merges of the largest ops.
pub const MAX_MERGE_ROWS: usize = 200;
/// Covering rows beyond which the programme is not attempted.
pub const MAX_COVER_ROWS: usize = 3000;
/// Seconds the solver may take (less when `deadline` is nearer).
pub const SECONDS: f64 = 3.0;

/// The bound and what it rests on.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OpsBound {
    /// Every fitting slice set on the tree has at least 2^this total ops.
    pub total_ops_log2: f64,
    /// The largest node a slice may hold (elements) in the programme.
    pub cap_elements: f64,
    /// Whether the programme ran to its optimum (else only the tree's own
    /// unsliced ops are claimed).
    pub solved: bool,
}

/// The lower bound for the tree behind `sets` (see the module docs);
/// `None` when the budget cannot hold one element beside inputs and
/// output.
pub fn ops_lower_bound(sets: &NodeSets, net: &Network, opts: &SliceOptions) -> Option<OpsBound> {
    let cap = opts.avail_elements(net).floor();
    if cap < 1.0 {
        return None;
    }
    let seconds = match opts.deadline {
        Some(d) => SECONDS.min(
            d.saturating_duration_since(std::time::Instant::now())
                .as_secs_f64(),
        ),
        None => SECONDS,
    };
    let log_cap = cap.log2();
    let dims = Dims::of(net);
    let n = sets.leaves();
    let merges = sets.num_merges();
    let node_log2: Vec<f64> = sets
        .indices
        .iter()
        .map(|idx| idx.iter().map(|&e| dims.log2[e]).sum())
        .collect();
    let ops_log2: Vec<f64> = sets
        .unions
        .iter()
        .map(|u| u.iter().map(|&e| dims.log2[e]).sum())
        .collect();
    let unsliced = ops_log2
        .iter()
        .fold(f64::NEG_INFINITY, |a, &b| log2_add(a, b));
    let plain = OpsBound {
        total_ops_log2: unsliced,
        cap_elements: cap,
        solved: false,
    };
    if merges == 0 {
        return Some(plain);
    }
    let cover_rows: Vec<(usize, f64)> = node_log2
        .iter()
        .enumerate()
        .filter(|&(_, &s)| s > log_cap + 1e-9)
        .map(|(v, &s)| (v, s - log_cap))
        .collect();
    if cover_rows.is_empty() {
        // No node alone is over the cap: x = 0 is feasible and optimal, so
        // the programme's optimum is the unsliced ops (solved without the
        // solver). The budget binds through the sum of live nodes, which
        // this bound does not model.
        return Some(OpsBound {
            solved: true,
            ..plain
        });
    }
    if cover_rows.len() > MAX_COVER_ROWS || seconds < 0.05 {
        return Some(plain);
    }
    let mut columns: Vec<IndexId> = cover_rows
        .iter()
        .flat_map(|&(v, _)| sets.indices[v].iter().copied())
        .filter(|&e| dims.log2[e] > 0.0)
        .collect();
    columns.sort_unstable();
    columns.dedup();
    let column_of = |e: IndexId| columns.binary_search(&e).ok();
    // Per merge: the columns summed strictly below it.
    let mut below: Vec<Vec<usize>> = Vec::with_capacity(merges);
    for k in 0..merges {
        let mut set: Vec<usize> = Vec::new();
        for c in sets.merge(k) {
            if c >= n {
                let child = c - n;
                set.extend(below[child].iter().copied());
                let kept = &sets.indices[c];
                set.extend(
                    sets.unions[child]
                        .iter()
                        .filter(|e| kept.binary_search(e).is_err())
                        .filter_map(|&e| column_of(e)),
                );
            }
        }
        set.sort_unstable();
        set.dedup();
        below.push(set);
    }
    let mut rows: Vec<usize> = (0..merges).filter(|&k| !below[k].is_empty()).collect();
    rows.sort_by(|&a, &b| ops_log2[b].total_cmp(&ops_log2[a]).then(a.cmp(&b)));
    rows.truncate(MAX_MERGE_ROWS);
    let largest = ops_log2.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut vars = variables!();
    let xs: Vec<good_lp::Variable> = columns
        .iter()
        .map(|_| vars.add(variable().min(0.0).max(1.0)))
        .collect();
    let t = vars.add(variable().min(0.0));
    let mut model = vars
        .minimise(Expression::from(t))
        .using(good_lp::microlp)
        .with_time_limit(seconds);
    for &k in &rows {
        let sum: Expression = below[k]
            .iter()
            .map(|&c| dims.log2[columns[c]] * xs[c])
            .sum();
        model = model.with((Expression::from(t) - sum).geq(ops_log2[k]));
    }
    // Every merge is at least its own ops: t >= the largest.
    model = model.with(Expression::from(t).geq(largest));
    for &(v, need) in &cover_rows {
        let lhs: Expression = sets.indices[v]
            .iter()
            .filter_map(|&e| column_of(e).map(|c| dims.log2[e] * xs[c]))
            .sum();
        model = model.with(lhs.geq(need - 1e-9));
    }
    let Ok(solution) = model.solve() else {
        return Some(plain);
    };
    if !matches!(solution.status(), good_lp::SolutionStatus::Optimal) {
        return Some(plain);
    }
    // Only what the solver proves: round its optimum down a little.
    let t_star = solution.value(t) - 1e-6;
    // The other merges: log2(2^unsliced - 2^largest), in log space.
    let rest_log2 = if unsliced > largest + 1e-12 {
        unsliced + (1.0 - (largest - unsliced).exp2()).log2()
    } else {
        f64::NEG_INFINITY
    };
    let total = log2_add(t_star, rest_log2).max(unsliced);
    Some(OpsBound {
        total_ops_log2: total,
        cap_elements: cap,
        solved: true,
    })
}
