//! The slices-versus-ops frontier: for slice counts 1, 2, 4, ..., the best
//! per-slice peak found with at most that many slices, and its total ops.

use serde::{Deserialize, Serialize};

use super::Point;
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
    /// Bytes a process running it needs in all.
    pub process_bytes: f64,
}

/// Builds the frontier from every point seen, up to 2^`limit_log2` slices.
///
/// Row k holds the point with the smallest per-slice peak among points with
/// at most 2^k slices (ties to fewer total ops), so the peak never increases
/// down the table. Rows repeating the row above are left out.
pub fn frontier(points: &[Point], unsliced_ops: Count, limit_log2: f64) -> Vec<FrontierRow> {
    let mut rows: Vec<FrontierRow> = Vec::new();
    let top = limit_log2.clamp(0.0, 126.0).ceil() as u32;
    let mut last: Option<&Point> = None;
    for k in 0..=top {
        let best = points
            .iter()
            .filter(|p| p.slices.log2 <= k as f64 + 1e-9)
            .min_by(|a, b| {
                a.per_slice_peak
                    .log2
                    .total_cmp(&b.per_slice_peak.log2)
                    .then(a.total_ops.log2.total_cmp(&b.total_ops.log2))
            });
        let Some(p) = best else { continue };
        if last.is_some_and(|l| l.sliced == p.sliced && l.total_ops == p.total_ops) {
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
            process_bytes: p.need.total_bytes(),
        });
    }
    rows
}
