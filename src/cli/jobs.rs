//! `sliceplan jobs`: a plan's chunks as a Slurm job array and a local
//! runner; `--status` lists what is missing and writes the resubmission.

use std::path::{Path, PathBuf};

use clap::Args;
use serde::Serialize;

use super::{to_json, Outcome};
use crate::error::{Error, Result};

use super::plan_files::open_plan;
use crate::jobs::array::array_spec;
use crate::jobs::quote::shell_word;
use crate::jobs::resources::{format_duration, process_need};
use crate::jobs::status::{refresh_resubmit, ChunkState, JobStatus};
use crate::jobs::{
    job_status, write_jobs, ChunkChoice, JobOptions, MemChoice, Scheduler, Slurm, TimeChoice,
    WrittenJobs, LOCAL_FILE, SUBMIT_FILE,
};

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan jobs job.plan.toml --out runs/job --chunks 64 --max-running 16 --partition compute
  sliceplan jobs job.plan.toml --out runs/job --slices-per-task 8 --time-per-task 02:00:00 --mem 48GiB
  sliceplan jobs job.plan.toml --out runs/job --submit
  sliceplan jobs --status runs/job
  sliceplan jobs --status runs/job --submit

Writes DIR/manifest.toml, DIR/submit.sbatch (one job array) and DIR/run-local.sh.
--status exits 0 when every chunk is done, 1 when some are missing (and then
writes DIR/resubmit.sbatch for exactly those).";

/// Arguments of `jobs`.
#[derive(Debug, Args)]
pub struct JobsArgs {
    /// The plan file.
    #[arg(value_name = "PLAN", required_unless_present = "status")]
    plan: Option<PathBuf>,

    /// The job directory to write (created when missing).
    #[arg(long, value_name = "DIR", required_unless_present = "status")]
    out: Option<PathBuf>,

    /// Number of chunks (array tasks); default one per slice, at most 1000.
    #[arg(long, value_name = "N", conflicts_with = "slices_per_task")]
    chunks: Option<u64>,

    /// Slices per task instead of a chunk count.
    #[arg(long, value_name = "K")]
    slices_per_task: Option<u64>,

    /// Tasks running at once at most (the array's %M).
    #[arg(long, value_name = "M")]
    max_running: Option<u64>,

    /// Slurm partition.
    #[arg(long, value_name = "P")]
    partition: Option<String>,

    /// Slurm account.
    #[arg(long, value_name = "A")]
    account: Option<String>,

    /// Time limit per task: auto (the plan's estimate x2 + 2 min) or HH:MM:SS / D-HH:MM:SS.
    #[arg(long, value_name = "auto|HH:MM:SS", default_value = "auto")]
    time_per_task: String,

    /// Memory per task: auto (the process's predicted need +10% +128 MiB) or a size such as 48GiB.
    #[arg(long, value_name = "auto|SIZE", default_value = "auto")]
    mem: String,

    /// CPUs per task, also the threads of each run (default: the plan's slices at once).
    #[arg(long, value_name = "C")]
    cpus_per_task: Option<u64>,

    /// The sliceplan binary the tasks run (default: this one).
    #[arg(long, value_name = "PATH")]
    binary: Option<PathBuf>,

    /// The network file, when it has moved since the plan was written.
    #[arg(long, value_name = "NET")]
    network: Option<PathBuf>,

    /// Report the chunks of a job directory that are not done and write DIR/resubmit.sbatch.
    #[arg(long, value_name = "DIR", conflicts_with_all = [
        "plan", "out", "chunks", "slices_per_task", "max_running", "partition", "account",
        "cpus_per_task", "binary", "network",
    ])]
    status: Option<PathBuf>,

    /// Replace the jobs of another plan in --out (its partials are moved
    /// aside to partials.replaced-<fingerprint>/, never deleted).
    #[arg(long, conflicts_with = "status")]
    force: bool,

    /// Submit the written script with sbatch (submit.sbatch, or resubmit.sbatch with --status).
    #[arg(long)]
    submit: bool,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

impl JobsArgs {
    /// The library options, checked without touching any file.
    fn options(&self) -> Result<JobOptions> {
        let chunks = match (self.chunks, self.slices_per_task) {
            (Some(n), _) => ChunkChoice::Count(n),
            (None, Some(k)) => ChunkChoice::SlicesPerTask(k),
            (None, None) => ChunkChoice::Default,
        };
        let binary = match &self.binary {
            Some(b) => b.clone(),
            None => std::env::current_exe().map_err(|e| {
                Error::usage(format!(
                    "cannot tell where this sliceplan binary is ({e}); give --binary PATH"
                ))
            })?,
        };
        let opts = JobOptions {
            chunks,
            max_running: self.max_running,
            partition: self.partition.clone(),
            account: self.account.clone(),
            time: TimeChoice::parse(&self.time_per_task)?,
            mem: MemChoice::parse(&self.mem)?,
            cpus_per_task: self.cpus_per_task,
            binary,
            force: self.force,
        };
        opts.check()?;
        Ok(opts)
    }
}

pub(super) fn run(args: JobsArgs) -> Result<Outcome> {
    if let Some(dir) = &args.status {
        return status(dir, args.submit, args.json);
    }
    let opts = args.options()?;
    let (plan_path, out) = match (&args.plan, &args.out) {
        (Some(p), Some(o)) => (p, o),
        _ => return Err(Error::usage("give PLAN and --out DIR, or --status DIR")),
    };
    let (plan, net) = open_plan(plan_path, args.network.as_deref())?;
    let need = process_need(&plan, &net)?;
    let written = write_jobs(plan_path, &plan, &need, &opts, out)?;
    let submitted = if args.submit {
        Some(Slurm::default().submit(&written.dir.join(SUBMIT_FILE))?)
    } else {
        None
    };
    if args.json {
        #[derive(Serialize)]
        struct Json<'a> {
            #[serde(flatten)]
            written: &'a WrittenJobs,
            submitted_job: Option<String>,
        }
        return Ok(Outcome::ok(to_json(&Json {
            written: &written,
            submitted_job: submitted,
        })));
    }
    Ok(Outcome::ok(written_text(&written, submitted.as_deref())))
}

fn written_text(w: &WrittenJobs, submitted: Option<&str>) -> String {
    let m = &w.manifest;
    let t = &m.task;
    let sizes: Vec<u64> = m
        .chunk_list
        .iter()
        .map(|c| c.end_slice - c.first_slice)
        .collect();
    let (lo, hi) = (
        sizes.iter().min().copied().unwrap_or(0),
        sizes.iter().max().copied().unwrap_or(0),
    );
    let size = if lo == hi {
        format!("{hi}")
    } else {
        format!("{lo} or {hi}")
    };
    let dir = w.dir.display().to_string();
    let mut s = format!(
        "jobs for plan {} (fingerprint {})\n  {} slices in {} chunks of {size} slice{}; array {}\n",
        m.plan,
        m.plan_fingerprint,
        m.slices,
        m.chunks,
        if hi == 1 { "" } else { "s" },
        w.array
    );
    s.push_str(&format!(
        "  --mem={}M      {}\n  --time={}   {}\n  --cpus-per-task={} (each run uses {} thread(s))\n",
        t.mem.mib,
        t.mem.basis,
        format_duration(t.time.seconds),
        t.time.basis,
        t.cpus_per_task,
        t.cpus_per_task
    ));
    s.push_str("wrote\n");
    for f in &w.files {
        s.push_str(&format!("  {}\n", f.display()));
    }
    for n in &w.notes {
        s.push_str(&format!("note: {n}\n"));
    }
    let partials = format!("{dir}/{}", m.partials_dir);
    match submitted {
        Some(job) => s.push_str(&format!("submitted job {job}\nnext\n")),
        None => s.push_str(&format!(
            "next\n  submit:       sbatch {}\n  or run here:  {} -j 2\n",
            shell_word(&format!("{dir}/{SUBMIT_FILE}")),
            shell_word(&format!("{dir}/{LOCAL_FILE}"))
        )),
    }
    s.push_str(&format!(
        "  progress:     sliceplan jobs --status {}\n  result:       sliceplan gather {} {}\n",
        shell_word(&dir),
        shell_word(&m.plan),
        shell_word(&partials)
    ));
    s
}

fn status(dir: &Path, submit: bool, json: bool) -> Result<Outcome> {
    let st = job_status(dir)?;
    let resubmit = refresh_resubmit(dir, &st)?;
    let submitted = match (&resubmit, submit) {
        (Some(script), true) => Some(Slurm::default().submit(script)?),
        _ => None,
    };
    let code = if st.missing.is_empty() { 0 } else { 1 };
    if json {
        #[derive(Serialize)]
        struct Json<'a> {
            #[serde(flatten)]
            status: &'a JobStatus,
            resubmit: Option<&'a PathBuf>,
            submitted_job: Option<String>,
        }
        let stdout = to_json(&Json {
            status: &st,
            resubmit: resubmit.as_ref(),
            submitted_job: submitted,
        });
        return Ok(Outcome { stdout, code });
    }
    Ok(Outcome {
        stdout: status_text(&st, resubmit.as_deref(), submitted.as_deref()),
        code,
    })
}

/// Lines of detail shown before "... and N more".
const DETAIL_LINES: usize = 20;

fn status_text(st: &JobStatus, resubmit: Option<&Path>, submitted: Option<&str>) -> String {
    let mut s = format!(
        "job directory {}: plan {} (fingerprint {})\n",
        st.dir.display(),
        st.plan,
        st.plan_fingerprint
    );
    if st.missing.is_empty() {
        s.push_str(&format!(
            "  all {} chunks done\n  result: sliceplan gather {} {}\n",
            st.chunks,
            shell_word(&st.plan),
            shell_word(&format!("{}/partials", st.dir.display()))
        ));
        return s;
    }
    s.push_str(&format!(
        "  {} of {} chunks done; missing {}: {}\n",
        st.done,
        st.chunks,
        st.missing.len(),
        array_spec(&st.missing, None)
    ));
    for c in st.missing_detail.iter().take(DETAIL_LINES) {
        let what = match c.state {
            ChunkState::Done => "done".to_string(),
            ChunkState::Failed { exit_code } => {
                format!("failed with exit code {exit_code} (see logs/chunk-{}.err)", c.id)
            }
            ChunkState::Lost => "ran (exit code 0) but its partial is gone".into(),
            ChunkState::Started => {
                "started, no exit code yet: still running, or killed by the scheduler (time or memory limit; see logs)".into()
            }
            ChunkState::NotStarted => "not started".into(),
        };
        s.push_str(&format!(
            "    chunk {} (slices {}..{}): {what}\n",
            c.id, c.first_slice, c.end_slice
        ));
    }
    if st.missing_detail.len() > DETAIL_LINES {
        s.push_str(&format!(
            "    ... and {} more (--json lists all)\n",
            st.missing_detail.len() - DETAIL_LINES
        ));
    }
    if let Some(r) = resubmit {
        s.push_str(&format!("  wrote {}\n", r.display()));
        match submitted {
            Some(job) => s.push_str(&format!("  submitted job {job}\n")),
            None => s.push_str(&format!(
                "  resubmit with: sbatch {}\n",
                shell_word(&r.display().to_string())
            )),
        }
    }
    s
}
