//! Slice numbering and chunks: which slices each scheduler task runs.
//!
//! Slices are numbered `0..S` (see [`crate::plan::Plan::slice_assignment`]).
//! Chunk `i` of `n` is a contiguous range; the first `S mod n` chunks get one
//! slice more, so sizes differ by at most one.

use std::ops::Range;

/// The slices of chunk `i` of `n` over `total` slices.
///
/// ```
/// use sliceplan::jobs::chunk_range;
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
}
