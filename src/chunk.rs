//! Slice numbering in chunks and the names of the partial files chunks
//! write: the one definition that `jobs` (scripts, status) and the executor
//! (`run`, gather) share.
//!
//! Slices are numbered `0..S` (see [`crate::plan::Plan::slice_assignment`]).
//! Chunk `i` of `n` is a contiguous range; the first `S mod n` chunks get one
//! slice more, so sizes differ by at most one. Chunk `i` of `n` writes the
//! partial file [`partial_file_name`]`(i, n)`.

use std::ops::Range;

use serde::{Deserialize, Serialize};

/// File extension of partials.
pub const PARTIAL_EXTENSION: &str = "partial";

/// Chunk `index` of `of` (see [`chunk_range`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct ChunkId {
    /// The chunk's number, from 0.
    pub index: u64,
    /// How many chunks the slices were split into.
    pub of: u64,
}

/// The slices of chunk `i` of `n` over `total` slices.
///
/// ```
/// use sliceplan::chunk::chunk_range;
/// assert_eq!(chunk_range(10, 0, 3), 0..4);
/// assert_eq!(chunk_range(10, 1, 3), 4..7);
/// assert_eq!(chunk_range(10, 2, 3), 7..10);
/// ```
pub fn chunk_range(total: u64, i: u64, n: u64) -> Range<u64> {
    assert!(n > 0 && i < n, "chunk {i} of {n}");
    let base = total / n;
    let extra = total % n;
    let start = i * base + i.min(extra);
    let len = base + u64::from(i < extra);
    start..start + len
}

/// The name of the partial file chunk `i` of `n` writes: the one place this
/// naming lives (`run` writes it, `gather` and `jobs --status` look for it).
///
/// ```
/// assert_eq!(sliceplan::chunk::partial_file_name(3, 12), "chunk-3-of-12.partial");
/// ```
pub fn partial_file_name(i: u64, n: u64) -> String {
    format!("chunk-{i}-of-{n}.{PARTIAL_EXTENSION}")
}

/// The file name of a chunk's partial, e.g. `chunk-3-of-10.partial`: the
/// one naming rule the job scripts and `jobs --status` share.
pub fn chunk_file_name(chunk: ChunkId) -> String {
    partial_file_name(chunk.index, chunk.of)
}

/// The file name of a partial for an explicit slice range, e.g. `slices-20-30.partial`.
pub fn range_file_name(slices: &Range<u64>) -> String {
    format!("slices-{}-{}.{PARTIAL_EXTENSION}", slices.start, slices.end)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chunks_cover_every_slice_once() {
        for total in 0..40u64 {
            for n in 1..12u64 {
                let mut next = 0;
                for i in 0..n {
                    let r = chunk_range(total, i, n);
                    assert_eq!(r.start, next);
                    next = r.end;
                }
                assert_eq!(next, total);
            }
        }
    }

    #[test]
    fn partial_names_carry_chunk_and_count() {
        assert_eq!(partial_file_name(0, 1), "chunk-0-of-1.partial");
        assert_ne!(partial_file_name(1, 12), partial_file_name(1, 13));
    }

    #[test]
    fn chunk_and_range_names() {
        assert_eq!(
            chunk_file_name(ChunkId { index: 3, of: 10 }),
            "chunk-3-of-10.partial"
        );
        assert_eq!(range_file_name(&(20..30)), "slices-20-30.partial");
    }
}
