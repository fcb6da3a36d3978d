//! `sliceplan jobs`: a plan's chunks as a Slurm job array and a local
//! runner; `--status` lists what is missing and writes the resubmission.

use std::path::PathBuf;

use clap::Args;

use super::{Outcome, EXIT_CANNOT};
use sliceplan::command::jobs::{status, write, JobsOptions};
use sliceplan::error::{Error, Result};
use sliceplan::jobs::{ChunkChoice, JobOptions, MemChoice, Slurm, TimeChoice};
use sliceplan::report::jobs::{status_text, written_text};

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan jobs ising.plan.toml --out runs/ising --chunks 4 --max-running 2 --partition compute --time-per-task 00:10:00
  sliceplan jobs ising.plan.toml --out runs/ising --slices-per-task 2 --time-per-task 02:00:00 --mem 1GiB --max-time 2-00:00:00
  sliceplan jobs ising.plan.toml --out runs/ising --time-per-task 00:10:00 --submit
  sliceplan jobs --status runs/ising
  sliceplan jobs --status runs/ising --submit

Writes DIR/manifest.toml, DIR/submit.sbatch (one job array) and DIR/run-local.sh.
--status asks the scheduler (squeue) which chunks it still holds; it exits 0
when every chunk is done, 1 when some are not (and then writes
DIR/resubmit.sbatch for exactly the ones the scheduler does not hold).";

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

    /// Time limit per task: auto (the plan's estimate for the threads each
    /// slice of a task gets, x2 + 2 min; without an estimate, this host's
    /// calibrated profile) or HH:MM:SS / D-HH:MM:SS.
    #[arg(long, value_name = "auto|HH:MM:SS", default_value = "auto")]
    time_per_task: String,

    /// Memory per task: auto (the process's predicted need +10% +128 MiB) or a size such as 48GiB.
    #[arg(long, value_name = "auto|SIZE", default_value = "auto")]
    mem: String,

    /// CPUs per task, also the threads of each run (default: the plan's slices at once).
    #[arg(long, value_name = "C")]
    cpus_per_task: Option<u64>,

    /// The partition's time limit per task (HH:MM:SS or D-HH:MM:SS): a
    /// longer --time gets a warning with the chunk count that would fit.
    #[arg(long, value_name = "HH:MM:SS")]
    max_time: Option<String>,

    /// The sliceplan binary the tasks run (default: this one).
    #[arg(long, value_name = "PATH")]
    binary: Option<PathBuf>,

    /// The network file, when it has moved since the plan was written.
    #[arg(long, value_name = "NET")]
    network: Option<PathBuf>,

    /// Report the chunks of a job directory that are not done and write DIR/resubmit.sbatch.
    #[arg(long, value_name = "DIR", conflicts_with_all = [
        "plan", "out", "chunks", "slices_per_task", "max_running", "partition", "account",
        "cpus_per_task", "binary", "network", "max_time",
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
                Error::invalid(
                    "binary",
                    format!("cannot tell where this sliceplan binary is ({e}); give its path"),
                )
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
            max_time: self
                .max_time
                .as_deref()
                .map(sliceplan::jobs::resources::parse_duration)
                .transpose()
                .map_err(|e| match e {
                    Error::Invalid { message, .. } => Error::invalid("max_time", message),
                    other => other,
                })?,
            binary,
            force: self.force,
        };
        opts.check()?;
        Ok(opts)
    }
}

pub(super) fn run(args: JobsArgs) -> Result<Outcome> {
    let mut slurm = Slurm::default();
    if let Some(dir) = &args.status {
        let st = status(dir, args.submit, &mut slurm)?;
        let text = status_text(
            &st.status,
            st.resubmit.as_deref(),
            st.submitted_job.as_deref(),
        );
        let code = if st.complete() { 0 } else { EXIT_CANNOT };
        return Ok(Outcome::render(args.json, &st, text, code));
    }
    let job = args.options()?;
    let (plan, out) = match (args.plan, args.out) {
        (Some(p), Some(o)) => (p, o),
        _ => return Err(Error::usage("give PLAN and --out DIR, or --status DIR")),
    };
    let opts = JobsOptions {
        plan,
        out,
        network: args.network,
        job,
        submit: args.submit,
    };
    let outcome = write(&opts, &mut slurm)?;
    let text = written_text(&outcome.written, outcome.submitted_job.as_deref());
    Ok(Outcome::render(args.json, &outcome, text, 0))
}
