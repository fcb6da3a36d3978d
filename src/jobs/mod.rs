//! Slice numbering, chunks, and the scheduler files that run them.
//!
//! Slices are numbered `0..S` (see [`crate::plan::Plan::slice_assignment`]).
//! Chunks and partial names are defined in [`crate::chunk`], below both
//! this module and the executor.
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
pub(crate) mod scripts;
pub mod status;
pub mod write;

pub use crate::chunk::{chunk_range, partial_file_name};
pub use manifest::{read_manifest, ChunkEntry, Manifest, TaskSettings};
pub use resources::{MemChoice, TimeChoice};
pub use scheduler::{wait_until_done, QueuedTask, Scheduler, Slurm, StandIn};
pub use status::{
    job_status, refresh_resubmit, write_resubmit, ChunkState, JobStatus, SchedulerAnswer,
};
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
