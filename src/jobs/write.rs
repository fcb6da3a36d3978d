//! From a plan to a job directory: choose the chunks, size the tasks, and
//! write the manifest, the job-array script and the local runner.

use std::path::{Path, PathBuf};

use serde::Serialize;

use super::array::array_spec;
use super::manifest::{read_manifest, write_manifest, ChunkEntry, Manifest, TaskSettings};
use super::manifest::{MANIFEST_FORMAT, MANIFEST_VERSION};
use super::quote::{pattern_dir, plain_value, script_path};
use super::resources::{mem_request, slice_seconds_for_task, time_request, MemChoice, TimeChoice};
use super::scripts::{local_script, sbatch_script, ScriptPaths};
use super::{chunk_range, partial_file_name, LOCAL_FILE, LOGS_DIR, PARTIALS_DIR, SUBMIT_FILE};
use crate::cost::memory::MemoryNeed;
use crate::error::{Error, Result};
use crate::plan::Plan;

/// Chunks made when neither a count nor a size is given (at most one slice
/// each): 1000 keeps array ids within Slurm's default `MaxArraySize` (1001).
pub const DEFAULT_MAX_CHUNKS: u64 = 1000;
/// The most chunks one job directory may hold.
pub const MAX_CHUNKS: u64 = 1_000_000;
/// Largest array index a Slurm cluster accepts with its default
/// `MaxArraySize` of 1001.
pub const SLURM_DEFAULT_MAX_ARRAY_INDEX: u64 = 1000;

/// How the slices are cut into chunks.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChunkChoice {
    /// One slice per chunk, up to [`DEFAULT_MAX_CHUNKS`] chunks.
    Default,
    /// Exactly this many chunks.
    Count(u64),
    /// Chunks of at most this many slices.
    SlicesPerTask(u64),
}

/// What `sliceplan jobs` was asked for.
#[derive(Debug, Clone, PartialEq)]
pub struct JobOptions {
    /// How to cut the slices.
    pub chunks: ChunkChoice,
    /// Tasks running at once at most (`%M`).
    pub max_running: Option<u64>,
    /// Slurm partition.
    pub partition: Option<String>,
    /// Slurm account.
    pub account: Option<String>,
    /// Time per task.
    pub time: TimeChoice,
    /// Memory per task.
    pub mem: MemChoice,
    /// CPUs per task (default: the plan's slices at once).
    pub cpus_per_task: Option<u64>,
    /// The partition's time limit per task, seconds, when known: a task
    /// asking for more gets a warning.
    pub max_time: Option<u64>,
    /// The `sliceplan` binary the tasks run.
    pub binary: PathBuf,
    /// Overwrite a directory holding another plan's jobs.
    pub force: bool,
}

impl JobOptions {
    /// Checks the values that need no file.
    pub fn check(&self) -> Result<()> {
        match self.chunks {
            ChunkChoice::Count(0) => return Err(Error::invalid("chunks", "must be at least 1")),
            ChunkChoice::SlicesPerTask(0) => {
                return Err(Error::invalid("slices_per_task", "must be at least 1"))
            }
            _ => {}
        }
        if self.max_running == Some(0) {
            return Err(Error::invalid("max_running", "must be at least 1"));
        }
        if self.cpus_per_task == Some(0) {
            return Err(Error::invalid("cpus_per_task", "must be at least 1"));
        }
        if let Some(p) = &self.partition {
            plain_value("partition", p)?;
        }
        if let Some(a) = &self.account {
            plain_value("account", a)?;
        }
        script_path("binary", &self.binary)?;
        Ok(())
    }
}

/// What [`write_jobs`] wrote.
#[derive(Debug, Clone, Serialize)]
pub struct WrittenJobs {
    /// The job directory (absolute).
    pub dir: PathBuf,
    /// The manifest written there.
    pub manifest: Manifest,
    /// The `--array` value of `submit.sbatch`.
    pub array: String,
    /// The files written, in order: manifest, job array, local runner.
    pub files: Vec<PathBuf>,
    /// Things the user should know (e.g. array size limits).
    pub notes: Vec<String>,
}

/// The number of chunks for `slices` slices.
pub fn chunk_count(slices: u64, choice: ChunkChoice) -> Result<u64> {
    let n = match choice {
        ChunkChoice::Default => slices.min(DEFAULT_MAX_CHUNKS),
        ChunkChoice::Count(n) if n > slices => {
            return Err(Error::invalid(
                "chunks",
                format!("{n}: the plan has only {slices} slice(s); give 1 to {slices}"),
            ))
        }
        ChunkChoice::Count(n) => n,
        ChunkChoice::SlicesPerTask(k) => slices.div_ceil(k),
    };
    if n > MAX_CHUNKS {
        return Err(Error::invalid(
            "chunks",
            format!(
                "{n} chunks is more than the {MAX_CHUNKS} one job directory holds; give fewer chunks or more slices per task"
            ),
        ));
    }
    Ok(n.max(1))
}

/// Writes `out/manifest.toml`, `out/submit.sbatch` and `out/run-local.sh`
/// for `plan` (read from `plan_path`), whose process needs `need`, and
/// creates `out/partials` and `out/logs`.
pub fn write_jobs(
    plan_path: &Path,
    plan: &Plan,
    need: &MemoryNeed,
    opts: &JobOptions,
    out: &Path,
) -> Result<WrittenJobs> {
    opts.check()?;
    let slices = plan
        .slice_count()
        .filter(|&s| s <= i64::MAX as u64)
        .ok_or_else(|| {
            Error::Cannot("the plan has more than 2^63 slices; no job array can number them".into())
        })?;
    let chunks = chunk_count(slices, opts.chunks)?;
    let cpus = opts.cpus_per_task.unwrap_or(plan.slices_at_once.max(1));
    let mem = mem_request(need, opts.mem)?;
    let longest = chunk_range(slices, 0, chunks);
    let parallel = plan.slices_at_once.max(1).min(cpus);
    let per_slice = slice_seconds_for_task(plan, cpus, parallel);
    let time = time_request(
        opts.time,
        per_slice.as_ref(),
        longest.end - longest.start,
        parallel,
    )?;
    let mut notes = Vec::new();
    time_notes(time.seconds, opts.max_time, chunks, &mut notes);
    let binary = resolve_binary(&opts.binary, &mut notes)?;
    let plan_abs = std::fs::canonicalize(plan_path).map_err(|e| Error::read(plan_path, e))?;
    std::fs::create_dir_all(out).map_err(|e| Error::write(out, e))?;
    let dir = std::fs::canonicalize(out).map_err(|e| Error::write(out, e))?;
    let paths = ScriptPaths {
        dir: pattern_dir("out", &dir)?,
        plan: script_path("plan", &plan_abs)?,
        binary,
    };
    let fingerprint = plan.fingerprint();
    guard_existing(&dir, &fingerprint, opts.force, &mut notes)?;
    if chunks - 1 > SLURM_DEFAULT_MAX_ARRAY_INDEX {
        notes.push(format!(
            "array ids run to {}; Slurm's default MaxArraySize (1001) allows ids up to {SLURM_DEFAULT_MAX_ARRAY_INDEX}, so check `scontrol show config | grep MaxArraySize` or use fewer chunks",
            chunks - 1
        ));
    }
    let manifest = Manifest {
        format: MANIFEST_FORMAT.into(),
        version: MANIFEST_VERSION,
        tool_version: env!("CARGO_PKG_VERSION").into(),
        plan: paths.plan.clone(),
        plan_fingerprint: fingerprint.clone(),
        slices,
        chunks,
        partials_dir: PARTIALS_DIR.into(),
        logs_dir: LOGS_DIR.into(),
        task: TaskSettings {
            binary: paths.binary.clone(),
            job_name: format!("sliceplan-{}", &fingerprint[..fingerprint.len().min(8)]),
            cpus_per_task: cpus,
            max_running: opts.max_running,
            partition: opts.partition.clone(),
            account: opts.account.clone(),
            mem,
            time,
        },
        chunk_list: (0..chunks)
            .map(|i| {
                let r = chunk_range(slices, i, chunks);
                ChunkEntry {
                    id: i,
                    first_slice: r.start,
                    end_slice: r.end,
                    partial: format!("{PARTIALS_DIR}/{}", partial_file_name(i, chunks)),
                }
            })
            .collect(),
    };
    for sub in [PARTIALS_DIR, LOGS_DIR] {
        let d = dir.join(sub);
        std::fs::create_dir_all(&d).map_err(|e| Error::write(&d, e))?;
    }
    let array = array_spec(&(0..chunks).collect::<Vec<_>>(), opts.max_running);
    let mut files = vec![write_manifest(&dir, &manifest)?];
    let submit = sbatch_script(&manifest, &paths, &array, "all chunks", SUBMIT_FILE);
    files.push(write_script(&dir.join(SUBMIT_FILE), &submit)?);
    files.push(write_script(
        &dir.join(LOCAL_FILE),
        &local_script(&manifest, &paths),
    )?);
    Ok(WrittenJobs {
        dir,
        manifest,
        array,
        files,
        notes,
    })
}

/// Task time limits longer than this get a warning when the partition's
/// limit is not given: a week is beyond what most partitions allow
/// (common practice, no source).
pub const LONG_TASK_SECONDS: u64 = 7 * 86_400;

/// Warns when a task's time limit exceeds the partition's (`max_time`), or
/// a week when that is not known.
fn time_notes(seconds: u64, max_time: Option<u64>, chunks: u64, notes: &mut Vec<String>) {
    let fmt = super::resources::format_duration;
    match max_time {
        Some(max) if seconds > max => notes.push(format!(
            "WARNING: each task asks for {}, more than the partition's limit of {}; the scheduler will refuse or kill the tasks. Use about {} chunks (or more) so each task fits",
            fmt(seconds),
            fmt(max),
            (chunks as f64 * seconds as f64 / max as f64).ceil()
        )),
        None if seconds > LONG_TASK_SECONDS => notes.push(format!(
            "WARNING: each task asks for {}, longer than a week; most partitions refuse that. Check your partition's limit (`sinfo -o \"%P %l\"`), give it as the `max_time` option, and use more chunks",
            fmt(seconds)
        )),
        _ => {}
    }
}

/// The binary as an absolute path the scripts can carry.
fn resolve_binary(binary: &Path, notes: &mut Vec<String>) -> Result<String> {
    match std::fs::canonicalize(binary) {
        Ok(abs) => script_path("binary", &abs),
        Err(_) if binary.is_absolute() => {
            notes.push(format!(
                "the binary {} does not exist on this machine; the tasks will need it where they run",
                binary.display()
            ));
            script_path("binary", binary)
        }
        Err(e) => Err(Error::invalid(
            "binary",
            format!(
                "{}: {e}; give the path of a sliceplan binary",
                binary.display()
            ),
        )),
    }
}

/// Writes a script atomically and makes it executable.
pub(crate) fn write_script(path: &Path, text: &str) -> Result<PathBuf> {
    crate::io::write_atomic(path, text.as_bytes())?;
    #[cfg(unix)]
    {
        // Executable by whoever may read it (the umask already shaped the
        // read bits), as `chmod +x` would do.
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(path)
            .map_err(|e| Error::write(path, e))?
            .permissions()
            .mode();
        std::fs::set_permissions(
            path,
            std::fs::Permissions::from_mode(mode | ((mode & 0o444) >> 2)),
        )
        .map_err(|e| Error::write(path, e))?;
    }
    Ok(path.to_path_buf())
}

/// A directory that already holds another plan's jobs, or a
/// `manifest.toml` that is not ours, is not overwritten unless `force`.
/// With `force`, another plan's partials are moved aside to
/// `partials.replaced-<fingerprint>/` (never deleted), so the two plans'
/// results cannot mix and nothing computed is lost.
fn guard_existing(
    dir: &Path,
    fingerprint: &str,
    force: bool,
    notes: &mut Vec<String>,
) -> Result<()> {
    let manifest_path = dir.join(super::MANIFEST_FILE);
    if !manifest_path.exists() {
        return Ok(());
    }
    let old = match read_manifest(dir) {
        Ok(old) => old,
        Err(e) if force => {
            notes.push(format!("forced: replaced {} ({e})", manifest_path.display()));
            return Ok(());
        }
        Err(e) => {
            return Err(Error::Cannot(format!(
                "{} exists and is not a job manifest this build can read ({e}); choose another job directory, or overwrite it with the `force` option",
                manifest_path.display()
            )))
        }
    };
    if old.plan_fingerprint == fingerprint {
        return Ok(());
    }
    let partials = dir.join(&old.partials_dir);
    let old_partials: Vec<PathBuf> = std::fs::read_dir(&partials)
        .map(|entries| {
            entries
                .filter_map(|e| e.ok())
                .map(|e| e.path())
                .filter(|p| p.extension().is_some_and(|x| x == "partial"))
                .collect()
        })
        .unwrap_or_default();
    if !force {
        let held = if old_partials.is_empty() {
            String::new()
        } else {
            format!(" and {} of its partials", old_partials.len())
        };
        return Err(Error::Cannot(format!(
            "{} holds the jobs of plan {}{held} (this plan is {fingerprint}); choose another job directory, or replace them with the `force` option (partials are moved aside, not deleted)",
            dir.display(),
            old.plan_fingerprint,
        )));
    }
    if !old_partials.is_empty() {
        let aside = dir.join(format!(
            "{}.replaced-{}",
            old.partials_dir, old.plan_fingerprint
        ));
        std::fs::create_dir_all(&aside).map_err(|e| Error::write(&aside, e))?;
        for p in &old_partials {
            let to = aside.join(p.file_name().expect("read_dir entries have names"));
            std::fs::rename(p, &to).map_err(|e| Error::write(&to, e))?;
        }
        notes.push(format!(
            "forced: moved {} partial(s) of plan {} to {}",
            old_partials.len(),
            old.plan_fingerprint,
            aside.display()
        ));
    }
    Ok(())
}
