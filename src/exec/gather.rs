//! Gather: check every partial of a plan, check that every slice is covered
//! exactly once, and sum the partials into the final output.
//!
//! A partial that belongs to another plan is refused outright (an input
//! error: the directory mixes plans). A partial that fails its checksum or
//! does not match the plan's output is *rejected*: its slices count as
//! missing, so the answer is "re-run these chunks", not a wrong sum.

use std::ops::Range;
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::accumulate::Accumulator;
use super::output::OutputLayout;
use super::scalar::lanes_per_element;
use crate::chunk::chunk_range;
use crate::error::{Error, Result};
use crate::network::{Dtype, Network};
use crate::partial::{list_partials, read_partial, Partial, PartialHeader};
use crate::plan::Plan;

/// The summed output of a plan.
#[derive(Debug, Clone, PartialEq)]
pub struct Gathered {
    /// Element type.
    pub dtype: Dtype,
    /// Output shape (open indices in order; empty for a scalar).
    pub shape: Vec<u64>,
    /// The values as lanes, row-major (re, im pairs for complex dtypes).
    pub lanes: Vec<f64>,
    /// Number of partials summed.
    pub partials: usize,
    /// Number of slices they cover.
    pub slices: u64,
}

/// A partial that could not be used.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Rejected {
    /// The file.
    pub file: PathBuf,
    /// Why.
    pub reason: String,
}

/// Why a gather could not produce the value.
#[derive(Debug, Clone, PartialEq, Eq, Default, Serialize)]
pub struct Incomplete {
    /// Slice ranges no accepted partial covers.
    pub missing: Vec<Range<u64>>,
    /// Slice ranges covered by more than one partial.
    pub duplicated: Vec<Range<u64>>,
    /// The chunking the partials were written with, when they agree on one.
    pub chunks_of: Option<u64>,
    /// Chunks (of `chunks_of`) that overlap a missing range: re-run these.
    pub missing_chunks: Vec<u64>,
    /// Partials that failed their checks.
    pub rejected: Vec<Rejected>,
}

/// What gather found.
#[derive(Debug, Clone, PartialEq)]
pub enum GatherOutcome {
    /// Every slice covered once: the value.
    Complete(Gathered),
    /// Something is missing, duplicated or damaged.
    Incomplete(Incomplete),
}

/// Gathers the partials of `plan` (for network `net`) found in `dir`.
///
/// Every `*.partial` file in `dir` is read and checked: checksum, format,
/// plan fingerprint, dtype and output shape. Coverage of slices
/// `0..slice count` is checked next; only then are the partials summed, in
/// slice order, with compensated summation.
pub fn gather(plan: &Plan, net: &Network, dir: &Path) -> Result<GatherOutcome> {
    let total = plan
        .slice_count()
        .ok_or_else(|| Error::Cannot("the plan has more than 2^64 slices".into()))?;
    let sliced = plan.sliced_ids(net)?;
    let layout = OutputLayout::new(net, &sliced);
    let fingerprint = plan.fingerprint();
    let mut accepted: Vec<(PathBuf, PartialHeader)> = Vec::new();
    let mut report = Incomplete::default();
    let mut chunkings: Vec<u64> = Vec::new();
    for path in list_partials(dir)? {
        let partial = match read_partial(&path) {
            Ok(p) => p,
            Err(reason) => {
                report.rejected.push(Rejected { file: path, reason });
                continue;
            }
        };
        let h = &partial.header;
        if h.plan_fingerprint != fingerprint {
            return Err(Error::in_source(
                path.display().to_string(),
                format!(
                    "this partial belongs to plan {}, not to this plan ({fingerprint}); move it out of {} or gather it with its own plan",
                    h.plan_fingerprint,
                    dir.display()
                ),
            ));
        }
        if let Some(c) = h.chunk {
            chunkings.push(c.of);
        }
        if let Err(reason) = check_matches(h, plan, &layout, total) {
            report.rejected.push(Rejected { file: path, reason });
            continue;
        }
        accepted.push((path, partial.header));
    }
    accepted.sort_by_key(|(_, h)| (h.first_slice, h.end_slice));
    let (missing, duplicated) = coverage(accepted.iter().map(|(_, h)| h.slices()), total);
    report.missing = missing;
    report.duplicated = duplicated;
    chunkings.sort_unstable();
    chunkings.dedup();
    if let [of] = chunkings[..] {
        report.chunks_of = Some(of);
        report.missing_chunks = (0..of)
            .filter(|&i| {
                let r = chunk_range(total, i, of);
                report
                    .missing
                    .iter()
                    .any(|m| m.start < r.end && r.start < m.end)
            })
            .collect();
    }
    if !report.missing.is_empty() || !report.duplicated.is_empty() || !report.rejected.is_empty() {
        return Ok(GatherOutcome::Incomplete(report));
    }
    let w = lanes_per_element(plan.dtype);
    if layout.len().checked_mul(16 * w).is_none() {
        return Err(Error::Cannot(format!(
            "the output of shape {:?} is too large to hold in memory",
            layout.shape
        )));
    }
    let mut acc = Accumulator::new(layout.len(), w);
    for (path, _) in &accepted {
        // Read again: holding every partial at once could exceed memory.
        let partial: Partial = read_partial(path).map_err(|reason| {
            Error::in_source(
                path.display().to_string(),
                format!("changed while gathering: {reason}"),
            )
        })?;
        for (i, &key) in partial.header.blocks.iter().enumerate() {
            layout.add_block(key, partial.block(i), w, &mut acc);
        }
    }
    Ok(GatherOutcome::Complete(Gathered {
        dtype: plan.dtype,
        shape: layout.shape.clone(),
        lanes: acc.finish(),
        partials: accepted.len(),
        slices: total,
    }))
}

fn check_matches(
    h: &PartialHeader,
    plan: &Plan,
    layout: &OutputLayout,
    total: u64,
) -> std::result::Result<(), String> {
    if h.dtype != plan.dtype {
        return Err(format!(
            "dtype {} differs from the plan's {}",
            h.dtype, plan.dtype
        ));
    }
    if h.shape != layout.shape || h.block_shape != layout.block_shape {
        return Err(format!(
            "output shape {:?} (blocks {:?}) differs from the plan's {:?} (blocks {:?})",
            h.shape, h.block_shape, layout.shape, layout.block_shape
        ));
    }
    if h.first_slice > h.end_slice || h.end_slice > total {
        return Err(format!(
            "slice range {}..{} is outside the plan's 0..{total}",
            h.first_slice, h.end_slice
        ));
    }
    if h.blocks.iter().any(|&b| b >= layout.blocks()) {
        return Err(format!(
            "a block number is not below the plan's {} blocks",
            layout.blocks()
        ));
    }
    let dims: Vec<u64> = plan.sliced.iter().map(|s| s.dim).collect();
    let expected = layout.blocks_of_slices(&dims, h.slices());
    if h.blocks != expected {
        return Err(format!(
            "it lists output blocks {} but slices {}..{} fill blocks {}",
            short_list(&h.blocks),
            h.first_slice,
            h.end_slice,
            short_list(&expected)
        ));
    }
    Ok(())
}

/// A list for a message: all of it when short, else its ends.
fn short_list(v: &[u64]) -> String {
    if v.len() <= 8 {
        format!("{v:?}")
    } else {
        format!(
            "[{}, {}, ..., {}] ({} in all)",
            v[0],
            v[1],
            v[v.len() - 1],
            v.len()
        )
    }
}

/// The gaps and overlaps of `ranges` (sorted by start) over `0..total`.
pub fn coverage(
    ranges: impl Iterator<Item = Range<u64>>,
    total: u64,
) -> (Vec<Range<u64>>, Vec<Range<u64>>) {
    let (mut missing, mut duplicated) = (Vec::new(), Vec::new());
    let mut covered = 0u64;
    for r in ranges.filter(|r| r.start < r.end) {
        if r.start > covered {
            missing.push(covered..r.start);
        }
        if r.start < covered {
            push_merged(&mut duplicated, r.start..r.end.min(covered));
        }
        covered = covered.max(r.end);
    }
    if covered < total {
        missing.push(covered..total);
    }
    (missing, duplicated)
}

fn push_merged(list: &mut Vec<Range<u64>>, r: Range<u64>) {
    match list.last_mut() {
        Some(last) if r.start <= last.end => last.end = last.end.max(r.end),
        _ => list.push(r),
    }
}

#[cfg(test)]
mod tests {
    use super::coverage;

    #[test]
    fn coverage_finds_gaps_and_overlaps() {
        let ranges = vec![0..4, 4..7, 9..12, 10..11, 11..14];
        let (missing, dup) = coverage(ranges.into_iter(), 16);
        assert_eq!(missing, vec![7..9, 14..16]);
        assert_eq!(dup, vec![10..12]);
        let (missing, dup) = coverage(std::iter::empty(), 5);
        assert_eq!(missing.len(), 1);
        assert_eq!((missing[0].clone(), dup.len()), (0..5, 0));
    }
}
