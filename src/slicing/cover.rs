//! The cover programme: a 0/1 programme for the fewest slices that keep
//! every tensor of a slice under a size cap, for a fixed tree.
//!
//! # What it computes
//!
//! With binary x_e per index (1 = sliced) and w_e = log2 d_e:
//!
//! minimise sum x_e w_e (the log2 of the slice count)
//! subject to, for every node v of the tree (inputs and intermediates) whose
//! log2 size exceeds log2 cap: sum over v's indices of x_e w_e >= log2 size(v)
//! - log2 cap.
//!
//! With the cap set to the largest tensor the budget allows in one slice,
//! every slice set that fits satisfies the constraints (a slice's peak is at
//! least each of its tensors), so the optimum is a proven lower bound on the
//! log2 slice count *for this tree*. The true peak is a sum over the live
//! set, not linear in x, so the solution is then checked and the cap halved
//! until the solution fits; that solution is a candidate slice set.
//!
//! Solved with the pure-Rust `microlp` solver through `good_lp`, with a time
//! limit; when the limit stops it, the bound reported is that of the linear
//! relaxation (still proven, weaker).
//!
//! # Complexity
//!
//! Branch and bound: exponential in the worst case; the programme is skipped
//! above [`MAX_VARIABLES`] indices or [`MAX_CONSTRAINTS`] constraints.

use good_lp::{
    variable, variables, Expression, Solution, SolutionStatus, SolverModel, WithTimeLimit,
};

use super::{CoverReport, Point, SliceOptions};
use crate::cost::memory::{inputs_bytes, output_bytes};
use crate::cost::{Dims, NodeSets};
use crate::network::{IndexId, Network};

/// Largest programme attempted: indices.
pub const MAX_VARIABLES: usize = 400;
/// Largest programme attempted: constraints.
pub const MAX_CONSTRAINTS: usize = 4000;

/// Runs the programme; returns the bound (when it ran) and a fitting
/// candidate (when one was found).
pub fn cover(
    sets: &NodeSets,
    net: &Network,
    opts: &SliceOptions,
) -> (Option<CoverReport>, Option<Point>) {
    let bytes = opts.dtype.bytes() as f64;
    let fixed = inputs_bytes(net, opts.dtype) + output_bytes(net, opts.dtype);
    let per_slice = (opts.budget_bytes as f64 - fixed) / opts.slices_at_once as f64;
    if per_slice < bytes {
        return (None, None);
    }
    let cap_elements = (per_slice / bytes).floor();
    let dims = Dims::of(net);
    let node_log2: Vec<f64> = sets
        .indices
        .iter()
        .map(|idx| idx.iter().map(|&e| dims.log2[e]).sum())
        .collect();
    let mut log_cap = cap_elements.log2();
    let mut report: Option<CoverReport> = None;
    let mut candidate = None;
    let start = std::time::Instant::now();
    let left = || (opts.cover_seconds - start.elapsed().as_secs_f64()).max(0.0);
    for _ in 0..40 {
        if left() <= 0.0 {
            break;
        }
        let Some(solved) = solve(sets, &dims, &node_log2, log_cap, left(), false) else {
            break;
        };
        if report.is_none() {
            let (bound, optimal) = if solved.optimal {
                (solved.objective, true)
            } else {
                // The relaxation is fast; give it a fixed allowance.
                let relaxed = solve(sets, &dims, &node_log2, log_cap, 2.0, true);
                (relaxed.map(|r| r.objective).unwrap_or(0.0), false)
            };
            report = Some(CoverReport {
                cap_elements,
                min_slices_log2: bound,
                optimal,
                candidate_slices_log2: None,
            });
        }
        let p = Point::evaluate(sets, net, &solved.picked, opts);
        if p.slices.log2 > opts.max_slices_log2 {
            break;
        }
        if p.fits(opts) {
            if let Some(r) = report.as_mut() {
                r.candidate_slices_log2 = Some(p.slices.log2);
            }
            candidate = Some(p);
            break;
        }
        log_cap -= 1.0;
    }
    (report, candidate)
}

/// A solved programme.
struct Solved {
    /// Indices with x_e > 1/2.
    picked: Vec<IndexId>,
    /// The objective value (log2 slices; fractional when relaxed).
    objective: f64,
    /// Whether the solver proved optimality.
    optimal: bool,
}

/// Solves the programme at one cap (`relaxed`: x_e in [0, 1] instead of
/// {0, 1}). `None` when it is too large or the solver fails.
fn solve(
    sets: &NodeSets,
    dims: &Dims,
    node_log2: &[f64],
    log_cap: f64,
    seconds: f64,
    relaxed: bool,
) -> Option<Solved> {
    let rows: Vec<(usize, f64)> = node_log2
        .iter()
        .enumerate()
        .filter(|&(_, &s)| s > log_cap + 1e-9)
        .map(|(v, &s)| (v, s - log_cap))
        .collect();
    if rows.is_empty() {
        return Some(Solved {
            picked: Vec::new(),
            objective: 0.0,
            optimal: true,
        });
    }
    let mut columns: Vec<IndexId> = rows
        .iter()
        .flat_map(|&(v, _)| sets.indices[v].iter().copied())
        .filter(|&e| dims.log2[e] > 0.0)
        .collect();
    columns.sort_unstable();
    columns.dedup();
    if columns.len() > MAX_VARIABLES || rows.len() > MAX_CONSTRAINTS {
        return None;
    }
    let mut vars = variables!();
    let xs: Vec<good_lp::Variable> = columns
        .iter()
        .map(|_| {
            vars.add(if relaxed {
                variable().min(0.0).max(1.0)
            } else {
                variable().binary()
            })
        })
        .collect();
    let column_of = |e: IndexId| columns.binary_search(&e).ok();
    let objective: Expression = columns
        .iter()
        .zip(&xs)
        .map(|(&e, &x)| dims.log2[e] * x)
        .sum();
    let mut model = vars
        .minimise(objective)
        .using(good_lp::microlp)
        .with_time_limit(seconds);
    for &(v, need) in &rows {
        let lhs: Expression = sets.indices[v]
            .iter()
            .filter_map(|&e| column_of(e).map(|c| dims.log2[e] * xs[c]))
            .sum();
        model = model.with(lhs.geq(need - 1e-9));
    }
    let solution = match model.solve() {
        Ok(s) => s,
        Err(_) => return None,
    };
    let optimal = matches!(solution.status(), SolutionStatus::Optimal);
    let objective = columns
        .iter()
        .zip(&xs)
        .map(|(&e, &x)| solution.value(x) * dims.log2[e])
        .sum();
    let picked: Vec<IndexId> = columns
        .iter()
        .zip(&xs)
        .filter(|&(_, &x)| solution.value(x) > 0.5)
        .map(|(&e, _)| e)
        .collect();
    Some(Solved {
        picked,
        objective,
        optimal,
    })
}
