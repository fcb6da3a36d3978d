//! The job manifest (`DIR/manifest.toml`): which slices each chunk runs,
//! which partial file it writes, the plan it belongs to, and the task
//! settings the scheduler scripts were written with.
//!
//! It is our own versioned TOML. Partial and log paths in it are relative to
//! the job directory (the manifest's own directory); the plan and binary
//! paths are absolute. Resubmission scripts are rendered from it, so they
//! always match the first submission.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::resources::{MemRequest, TimeRequest};
use crate::error::{Error, Result};

/// The `format` value of a manifest.
pub const MANIFEST_FORMAT: &str = "sliceplan-jobs";
/// The manifest version this build reads and writes.
pub const MANIFEST_VERSION: u32 = 1;

/// What every task of the job runs with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TaskSettings {
    /// Absolute path of the `sliceplan` binary the tasks run.
    pub binary: String,
    /// Slurm job name.
    pub job_name: String,
    /// CPUs per task; also the `--threads` given to `run`.
    pub cpus_per_task: u64,
    /// Tasks running at once at most (`%M`), when limited.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_running: Option<u64>,
    /// Slurm partition, when given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub partition: Option<String>,
    /// Slurm account, when given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub account: Option<String>,
    /// The memory request and its basis.
    pub mem: MemRequest,
    /// The time request and its basis.
    pub time: TimeRequest,
}

/// One chunk: a contiguous range of slices and the partial it writes.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ChunkEntry {
    /// Chunk id, 0-based; the array task id that runs it.
    pub id: u64,
    /// First slice number of the chunk.
    pub first_slice: u64,
    /// One past the last slice number (half-open, like `chunk_range`).
    pub end_slice: u64,
    /// The partial file, relative to the job directory.
    pub partial: String,
}

/// A job manifest.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Manifest {
    /// Always [`MANIFEST_FORMAT`].
    pub format: String,
    /// File version.
    pub version: u32,
    /// The sliceplan version that wrote it.
    pub tool_version: String,
    /// Absolute path of the plan file.
    pub plan: String,
    /// The plan's fingerprint ([`crate::plan::Plan::fingerprint`]).
    pub plan_fingerprint: String,
    /// Number of slices in the plan.
    pub slices: u64,
    /// Number of chunks (array tasks).
    pub chunks: u64,
    /// Directory of the partial files, relative to the job directory.
    pub partials_dir: String,
    /// Directory of the task logs, relative to the job directory.
    pub logs_dir: String,
    /// Settings of every task.
    pub task: TaskSettings,
    /// The chunks, by id.
    #[serde(rename = "chunk")]
    pub chunk_list: Vec<ChunkEntry>,
}

impl Manifest {
    /// The absolute path of a chunk's partial, given the job directory.
    pub fn partial_path(&self, dir: &Path, chunk: &ChunkEntry) -> PathBuf {
        dir.join(&chunk.partial)
    }
}

/// Reads `DIR/manifest.toml`; errors name the file and line.
pub fn read_manifest(dir: &Path) -> Result<Manifest> {
    let path = dir.join(super::MANIFEST_FILE);
    let text = crate::io::read_text(&path)?;
    let source = path.display().to_string();
    let m: Manifest = crate::io::parse_toml(&text, &source, "job manifest")?;
    crate::io::check_header(
        &source,
        "manifest",
        &m.format,
        MANIFEST_FORMAT,
        m.version,
        MANIFEST_VERSION,
    )?;
    let ids_in_order = m
        .chunk_list
        .iter()
        .enumerate()
        .all(|(k, c)| c.id == k as u64);
    if m.chunks == 0 || m.chunk_list.len() as u64 != m.chunks || !ids_in_order {
        return Err(Error::in_source(
            &source,
            format!(
                "chunks = {} but the file lists {} chunk entries; each id 0..{} must appear once, in order (rewrite it with `sliceplan jobs`)",
                m.chunks,
                m.chunk_list.len(),
                m.chunks
            ),
        ));
    }
    Ok(m)
}

/// Writes `DIR/manifest.toml` atomically.
pub fn write_manifest(dir: &Path, m: &Manifest) -> Result<PathBuf> {
    let path = dir.join(super::MANIFEST_FILE);
    let body = toml::to_string(m)
        .map_err(|e| Error::Cannot(format!("cannot serialise the job manifest: {e}")))?;
    let text = format!(
        "# sliceplan job manifest (our own format, version {MANIFEST_VERSION}), written by `sliceplan jobs`.\n\
         # Chunk k runs slices first_slice..end_slice (end excluded) and writes its partial;\n\
         # partial and log paths are relative to this file's directory.\n{body}"
    );
    crate::io::write_atomic(&path, text.as_bytes())?;
    Ok(path)
}
