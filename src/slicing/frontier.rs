//! The slices-versus-ops frontier: for slice counts 1, 2, 4, ..., the best
//! slice set found with at most that many slices. "Best" is one rule for
//! every screen: among the sets that fit the budget, the one with the
//! fewest total ops (so the chosen plan is always a row, and total ops
//! never increase down the fitting rows); while none fits, the one with
//! the smallest per-slice peak (how close slicing gets). Total ops and
//! fitting are those in force (with reuse of slice-invariant work unless
//! it is off); each row also carries the plain total ops of the same set.

use serde::{Deserialize, Serialize};

use super::{Point, SliceOptions};
use crate::num::Count;

/// One row of the frontier.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FrontierRow {
    /// The bucket: slice sets with at most this many slices (a power of two).
    pub slices_at_most: String,
    /// The slice count of the best set in the bucket, decimal.
    pub slices: String,
    /// log2 of that slice count.
    pub slices_log2: f64,
    /// Its per-slice peak, bytes (executor model).
    pub per_slice_peak_bytes: f64,
    /// Its total ops over all slices, log2.
    pub total_ops_log2: f64,
    /// Its total ops over the unsliced total ops.
    pub overhead: f64,
    /// Its total ops when every slice repeats the slice-invariant work,
    /// log2 (the same as `total_ops_log2` without reuse).
    #[serde(default)]
    pub plain_total_ops_log2: f64,
    /// Those over the unsliced total ops.
    #[serde(default)]
    pub plain_overhead: f64,
    /// Bytes of slice-invariant intermediates a process holds.
    #[serde(default)]
    pub reused_bytes: f64,
    /// Bytes a process running it needs in all.
    pub process_bytes: f64,
    /// True when it fits the budget.
    #[serde(default)]
    pub fits: bool,
    /// True for the row of the chosen slice set.
    #[serde(default)]
    pub chosen: bool,
}

/// Builds the frontier from every point seen, up to 2^`limit_log2` slices.
///
/// Row k holds, among points with at most 2^k slices, the fitting point
/// with the fewest total ops (ties to fewer slices); without a fitting
/// point, the point with the smallest per-slice peak (ties to fewer total
/// ops). Rows repeating the row above are left out. The row equal to
/// `chosen` (same slice set and total ops) is marked.
pub fn frontier(
    points: &[Point],
    unsliced_ops: Count,
    limit_log2: f64,
    opts: &SliceOptions,
    chosen: Option<&Point>,
) -> Vec<FrontierRow> {
    let mut rows: Vec<FrontierRow> = Vec::new();
    let top = limit_log2.clamp(0.0, 126.0).ceil() as u32;
    let mut last: Option<&Point> = None;
    for k in 0..=top {
        let bucket = || {
            points
                .iter()
                .filter(move |p| p.slices.log2 <= k as f64 + 1e-9)
        };
        let cheapest_fit = bucket().filter(|p| p.fits(opts)).min_by(|a, b| {
            a.total_ops
                .log2
                .total_cmp(&b.total_ops.log2)
                .then(a.slices.log2.total_cmp(&b.slices.log2))
        });
        let best = cheapest_fit.or_else(|| {
            bucket().min_by(|a, b| {
                a.per_slice_peak
                    .log2
                    .total_cmp(&b.per_slice_peak.log2)
                    .then(a.total_ops.log2.total_cmp(&b.total_ops.log2))
            })
        });
        let Some(p) = best else { continue };
        if last.is_some_and(|l| same(l, p)) {
            continue;
        }
        last = Some(p);
        rows.push(FrontierRow {
            slices_at_most: (1u128 << k).to_string(),
            slices: p.slices.to_json_string(),
            slices_log2: p.slices.log2,
            per_slice_peak_bytes: p.per_slice_peak_bytes(),
            total_ops_log2: p.total_ops.log2,
            overhead: crate::num::overhead(p.total_ops.log2, unsliced_ops.log2),
            plain_total_ops_log2: p.plain_total_ops.log2,
            plain_overhead: crate::num::overhead(p.plain_total_ops.log2, unsliced_ops.log2),
            reused_bytes: p.need.reused_bytes,
            process_bytes: p.need.total_bytes(),
            fits: p.fits(opts),
            chosen: chosen.is_some_and(|c| same(c, p)),
        });
    }
    rows
}

/// The same slice set at the same total ops (the same tree, in effect).
fn same(a: &Point, b: &Point) -> bool {
    a.sliced == b.sliced && a.total_ops == b.total_ops
}
