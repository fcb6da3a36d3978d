//! Choosing slices: one chunk, an explicit range, or every chunk of a
//! split, each becoming a job with the partial file it writes.

use std::ops::Range;
use std::path::{Path, PathBuf};

use crate::chunk::{chunk_file_name, chunk_range, range_file_name, ChunkId};
use crate::error::{Error, Result};

/// Which slices to run.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Selection {
    /// One chunk.
    Chunk(ChunkId),
    /// An explicit slice range.
    Slices(Range<u64>),
    /// Every chunk of a split into `of` chunks.
    AllChunks {
        /// The number of chunks.
        of: u64,
    },
}

/// One unit of work: a slice range and the partial it writes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ChunkJob {
    /// The chunk, when chosen by chunk.
    pub chunk: Option<ChunkId>,
    /// The slices.
    pub slices: Range<u64>,
    /// Where the partial goes.
    pub path: PathBuf,
}

/// The jobs of a selection over `total` slices, writing into `dir`.
pub fn chunk_jobs(total: u64, selection: &Selection, dir: &Path) -> Result<Vec<ChunkJob>> {
    let job = |chunk: ChunkId| ChunkJob {
        chunk: Some(chunk),
        slices: chunk_range(total, chunk.index, chunk.of),
        path: dir.join(chunk_file_name(chunk)),
    };
    match selection {
        Selection::Chunk(c) => {
            if c.of == 0 || c.index >= c.of {
                return Err(Error::usage(format!(
                    "--chunk {} --of {}: the chunk number must be below the chunk count (0..{})",
                    c.index, c.of, c.of
                )));
            }
            Ok(vec![job(*c)])
        }
        Selection::Slices(r) => {
            if r.start >= r.end || r.end > total {
                return Err(Error::usage(format!(
                    "--slices {}..{}: give a non-empty range A..B with B at most the plan's {total} slices",
                    r.start, r.end
                )));
            }
            Ok(vec![ChunkJob {
                chunk: None,
                slices: r.clone(),
                path: dir.join(range_file_name(r)),
            }])
        }
        Selection::AllChunks { of } => {
            if *of == 0 || *of > total.max(1) {
                return Err(Error::usage(format!(
                    "--of {of}: the chunk count must be from 1 to the plan's {total} slices"
                )));
            }
            Ok((0..*of)
                .map(|index| job(ChunkId { index, of: *of }))
                .collect())
        }
    }
}
