//! Slice numbering, chunks, and the scheduler files that run them.
//!
//! Slices are numbered `0..S` (see [`crate::plan::Plan::slice_assignment`]).
//! Chunk `i` of `n` is a contiguous range; the first `S mod n` chunks get one
//! slice more, so sizes differ by at most one. Chunk `i` of `n` writes the
//! partial file [`partial_file_name`]`(i, n)`.
//!
//! `sliceplan jobs` turns a plan into a directory (the *job directory*):
//!
//! ```text
//! DIR/manifest.toml     chunk id -> slice range, plan fingerprint, partial names
//! DIR/submit.sbatch     one Slurm job array, one task per chunk
//! DIR/run-local.sh      the same chunks on a machine without a scheduler
//! DIR/resubmit.sbatch   only the chunks still missing (written by --status)
//! DIR/partials/         chunk-<I>-of-<N>.partial, written by `sliceplan run`
//! DIR/logs/             chunk-<I>.out, .err and .exit (the task's exit code)
//! ```
//!
//! [`write_jobs`] writes the first three, [`job_status`] says which chunks
//! are missing, [`write_resubmit`] writes the fourth, and [`Scheduler`]
//! submits scripts (to Slurm, or to a deterministic stand-in in tests).

pub mod array;
pub mod directives;
pub mod manifest;
pub mod quote;
pub mod resources;
pub mod scheduler;
pub mod scripts;
pub mod status;
pub mod write;

use std::ops::Range;

pub use manifest::{read_manifest, ChunkEntry, Manifest, TaskSettings};
pub use resources::{MemChoice, TimeChoice};
pub use scheduler::{wait_until_done, Scheduler, Slurm, StandIn};
pub use status::{job_status, refresh_resubmit, write_resubmit, ChunkState, JobStatus};
pub use write::{write_jobs, ChunkChoice, JobOptions, WrittenJobs};

/// File name of the manifest in a job directory.
pub const MANIFEST_FILE: &str = "manifest.toml";
/// File name of the job-array script in a job directory.
pub const SUBMIT_FILE: &str = "submit.sbatch";
/// File name of the resubmission script in a job directory.
pub const RESUBMIT_FILE: &str = "resubmit.sbatch";
/// File name of the script that runs the chunks without a scheduler.
pub const LOCAL_FILE: &str = "run-local.sh";
/// Directory (inside the job directory) the partial files go to.
pub const PARTIALS_DIR: &str = "partials";
/// Directory (inside the job directory) of the per-task logs.
pub const LOGS_DIR: &str = "logs";

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

/// The name of the partial file chunk `i` of `n` writes: the one place this
/// naming lives (`run` writes it, `gather` and `jobs --status` look for it).
///
/// ```
/// assert_eq!(sliceplan::jobs::partial_file_name(3, 12), "chunk-3-of-12.partial");
/// ```
pub fn partial_file_name(i: u64, n: u64) -> String {
    format!("chunk-{i}-of-{n}.partial")
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
}
