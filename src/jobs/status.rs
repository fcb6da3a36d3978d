//! Which chunks of a job directory are done, and a script for the rest.
//!
//! A chunk is done when its partial file exists and is not empty. Checking
//! the partial's fingerprint and checksum is `gather`'s work (the partial
//! reader lives with the executor); here a partial that is present counts.
//! For a chunk that is not done, the task's log files tell what happened:
//! an exit-code file means the task ended (with that code), an output log
//! without one means it started and is still running or was killed by the
//! scheduler (time or memory limit), no log means it never started.

use std::path::{Path, PathBuf};

use serde::Serialize;

use super::array::array_spec;
use super::manifest::{read_manifest, ChunkEntry, Manifest};
use super::quote::{pattern_dir, script_path};
use super::scheduler::Scheduler;
use super::scripts::{sbatch_script, ScriptPaths};
use super::write::write_script;
use super::RESUBMIT_FILE;
use crate::error::{Error, Result};

/// What is known about one chunk.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(tag = "state", rename_all = "snake_case")]
pub enum ChunkState {
    /// Its partial file is present.
    Done,
    /// The task ended with a non-zero exit code.
    Failed {
        /// The exit code `sliceplan run` returned.
        exit_code: i64,
    },
    /// The task ended with exit code 0, but its partial is gone.
    Lost,
    /// The task started and has not ended: still running, or killed by the
    /// scheduler before it could record an exit code.
    Started,
    /// No task for it has started.
    NotStarted,
    /// The scheduler holds its task, waiting to start.
    Queued,
    /// The scheduler runs its task now.
    Running,
}

impl ChunkState {
    /// True when the scheduler holds the chunk's task: it must not be
    /// submitted again.
    pub fn active(self) -> bool {
        matches!(self, ChunkState::Queued | ChunkState::Running)
    }
}

/// What the scheduler was asked.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(tag = "asked", rename_all = "snake_case")]
pub enum SchedulerAnswer {
    /// The scheduler answered: these many tasks of the job are queued or
    /// running.
    Asked {
        /// Tasks it holds.
        held: usize,
    },
    /// It could not be asked, so chunks shown as not started or started
    /// may still be queued or running.
    Unknown {
        /// Why.
        reason: String,
    },
}

/// One chunk that is not done.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct MissingChunk {
    /// Chunk id.
    pub id: u64,
    /// Its slices (half-open).
    pub first_slice: u64,
    /// One past its last slice.
    pub end_slice: u64,
    /// What is known.
    #[serde(flatten)]
    pub state: ChunkState,
}

/// The state of a job directory.
#[derive(Debug, Clone, Serialize)]
pub struct JobStatus {
    /// The job directory.
    pub dir: PathBuf,
    /// The plan file.
    pub plan: String,
    /// The plan's fingerprint.
    pub plan_fingerprint: String,
    /// Number of chunks.
    pub chunks: u64,
    /// Number of chunks done.
    pub done: u64,
    /// Ids of the chunks not done, ascending.
    pub missing: Vec<u64>,
    /// Ids of the chunks not done whose task the scheduler does not hold:
    /// the ones to submit again.
    pub resubmit: Vec<u64>,
    /// What is known about each missing chunk.
    pub missing_detail: Vec<MissingChunk>,
    /// What the scheduler said.
    pub scheduler: SchedulerAnswer,
}

/// True when a chunk's partial is done: it reads back with a good
/// checksum, carries the manifest's plan fingerprint and covers exactly the
/// chunk's slices. Anything else (absent, damaged, another plan's) is
/// missing and goes into the resubmission.
pub fn partial_done(path: &Path, fingerprint: &str, chunk: &ChunkEntry) -> bool {
    match crate::partial::read_partial(path) {
        Ok(p) => {
            p.header.plan_fingerprint == fingerprint
                && p.header.slices() == (chunk.first_slice..chunk.end_slice)
        }
        Err(_) => false,
    }
}

/// Reads the state of the job directory `dir`, asking `scheduler` (when
/// given) which tasks it still holds. The plan must still be the one the
/// jobs were written for.
pub fn job_status(dir: &Path, scheduler: Option<&mut dyn Scheduler>) -> Result<JobStatus> {
    let m = read_manifest(dir)?;
    check_plan_unchanged(&m)?;
    let (held, answer) = match scheduler.map(|s| s.tasks(&m.task.job_name)) {
        Some(Ok(tasks)) => (tasks, SchedulerAnswer::Asked { held: 0 }),
        Some(Err(reason)) => (Vec::new(), SchedulerAnswer::Unknown { reason }),
        None => (
            Vec::new(),
            SchedulerAnswer::Unknown {
                reason: "the scheduler was not asked".into(),
            },
        ),
    };
    let answer = match answer {
        SchedulerAnswer::Asked { .. } => SchedulerAnswer::Asked { held: held.len() },
        other => other,
    };
    let logs = dir.join(&m.logs_dir);
    let mut missing_detail = Vec::new();
    for c in &m.chunk_list {
        if partial_done(&m.partial_path(dir, c), &m.plan_fingerprint, c) {
            continue;
        }
        let exit = std::fs::read_to_string(logs.join(format!("chunk-{}.exit", c.id)))
            .ok()
            .and_then(|t| t.trim().parse::<i64>().ok());
        let held_task = held.iter().find(|t| t.task == c.id);
        let state = match (held_task, exit) {
            (Some(t), _) if t.running => ChunkState::Running,
            (Some(_), _) => ChunkState::Queued,
            (None, Some(0)) => ChunkState::Lost,
            (None, Some(code)) => ChunkState::Failed { exit_code: code },
            (None, None) if logs.join(format!("chunk-{}.out", c.id)).exists() => {
                ChunkState::Started
            }
            (None, None) => ChunkState::NotStarted,
        };
        missing_detail.push(MissingChunk {
            id: c.id,
            first_slice: c.first_slice,
            end_slice: c.end_slice,
            state,
        });
    }
    let missing: Vec<u64> = missing_detail.iter().map(|c| c.id).collect();
    let resubmit: Vec<u64> = missing_detail
        .iter()
        .filter(|c| !c.state.active())
        .map(|c| c.id)
        .collect();
    Ok(JobStatus {
        dir: dir.to_path_buf(),
        plan: m.plan.clone(),
        plan_fingerprint: m.plan_fingerprint.clone(),
        chunks: m.chunks,
        done: m.chunks - missing.len() as u64,
        missing,
        resubmit,
        missing_detail,
        scheduler: answer,
    })
}

fn check_plan_unchanged(m: &Manifest) -> Result<()> {
    let plan = crate::plan::read_plan(Path::new(&m.plan))?;
    let fp = plan.fingerprint();
    if fp != m.plan_fingerprint {
        return Err(Error::in_source(
            &m.plan,
            format!(
                "the plan's fingerprint is now {fp}, but the jobs were written for {}; partials of the two cannot be mixed: write the jobs again into a new directory",
                m.plan_fingerprint
            ),
        ));
    }
    Ok(())
}

/// Writes `DIR/resubmit.sbatch`: the job array of `DIR/submit.sbatch`
/// restricted to the chunk ids in `ids` (`--array=3,17,42`), and returns
/// its path. The ids must be chunks of the manifest; at least one.
pub fn write_resubmit(dir: &Path, ids: &[u64]) -> Result<PathBuf> {
    let m = read_manifest(dir)?;
    if ids.is_empty() {
        return Err(Error::usage(
            "nothing to resubmit: give at least one chunk id",
        ));
    }
    if let Some(bad) = ids.iter().find(|&&i| i >= m.chunks) {
        return Err(Error::usage(format!(
            "chunk {bad} is not in {}: its chunks are 0 to {}",
            dir.join(super::MANIFEST_FILE).display(),
            m.chunks - 1
        )));
    }
    let abs = std::fs::canonicalize(dir).map_err(|e| Error::read(dir, e))?;
    let paths = ScriptPaths {
        dir: pattern_dir("status", &abs)?,
        plan: script_path("plan", Path::new(&m.plan))?,
        binary: script_path("binary", Path::new(&m.task.binary))?,
    };
    let array = array_spec(ids, m.task.max_running);
    let mut unique = ids.to_vec();
    unique.sort_unstable();
    unique.dedup();
    let what = format!("resubmission of {} chunk(s)", unique.len());
    let text = sbatch_script(&m, &paths, &array, &what, RESUBMIT_FILE);
    write_script(&abs.join(RESUBMIT_FILE), &text)
}

/// Brings `DIR/resubmit.sbatch` in line with `status`: written for the
/// missing chunks the scheduler does not hold, or removed when there are
/// none. Returns the script when one was written.
pub fn refresh_resubmit(dir: &Path, status: &JobStatus) -> Result<Option<PathBuf>> {
    if status.resubmit.is_empty() {
        let stale = dir.join(RESUBMIT_FILE);
        match std::fs::remove_file(&stale) {
            Ok(()) => {}
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(e) => return Err(Error::write(&stale, e)),
        }
        return Ok(None);
    }
    write_resubmit(dir, &status.resubmit).map(Some)
}
