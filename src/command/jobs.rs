//! `jobs`: a plan's chunks as a Slurm job array and a local runner; the
//! status of a job directory with the resubmission of what is missing.

use std::path::{Path, PathBuf};

use serde::Serialize;

use super::open_plan;
use crate::error::Result;
use crate::jobs::resources::process_need;
use crate::jobs::status::refresh_resubmit;
use crate::jobs::{
    job_status, write_jobs, JobOptions, JobStatus, Scheduler, TimeChoice, WrittenJobs, SUBMIT_FILE,
};

/// Options of `jobs` (writing a job directory).
#[derive(Debug, Clone)]
pub struct JobsOptions {
    /// The plan file.
    pub plan: PathBuf,
    /// The job directory to write.
    pub out: PathBuf,
    /// The network file, when it has moved since the plan was written.
    pub network: Option<PathBuf>,
    /// Chunks, task resources, the binary the tasks run.
    pub job: JobOptions,
    /// Submit the written array.
    pub submit: bool,
}

/// What `jobs` wrote (and submitted).
#[derive(Debug, Clone, Serialize)]
pub struct JobsOutcome {
    /// The files and settings written.
    #[serde(flatten)]
    pub written: WrittenJobs,
    /// The scheduler's job id, when submitted.
    pub submitted_job: Option<String>,
}

/// Writes the job directory for a plan (checking the plan's value files
/// first), and submits it when asked.
pub fn write(opts: &JobsOptions, scheduler: &mut dyn Scheduler) -> Result<JobsOutcome> {
    opts.job.check()?;
    let (mut plan, net) = open_plan(&opts.plan, opts.network.as_deref())?;
    // The tasks read the values on the cluster: check them here first.
    crate::network::values::check_value_files(&net)?;
    let need = process_need(&plan, &net)?;
    let mut note = None;
    if plan.estimate.is_none() && opts.job.time == TimeChoice::Auto {
        if let Some((machine, path)) = super::machines::this_host_profile() {
            plan.estimate = Some(estimate_with(&plan, &net, &machine)?);
            note = Some(format!(
                "the plan has no time estimate: --time comes from this host's calibrated profile '{}' ({}), measured {}; plan with --machine to use another node type's figures",
                machine.name,
                path.display(),
                machine.calibration.as_ref().map_or("", |c| c.date.as_str())
            ));
        }
    }
    let mut written = write_jobs(&opts.plan, &plan, &need, &opts.job, &opts.out)?;
    written.notes.extend(note);
    let submitted_job = if opts.submit {
        Some(scheduler.submit(&written.dir.join(SUBMIT_FILE))?)
    } else {
        None
    };
    Ok(JobsOutcome {
        written,
        submitted_job,
    })
}

/// The model estimate of `plan` on `machine`.
fn estimate_with(
    plan: &crate::plan::Plan,
    net: &crate::network::Network,
    machine: &crate::cost::machine::Machine,
) -> Result<crate::cost::machine::Estimate> {
    let tree = plan.tree()?;
    let sliced = plan.sliced_ids(net)?;
    let sets = crate::cost::NodeSets::new(net, &tree);
    let slices = plan.slice_count().map_or(f64::INFINITY, |s| s as f64);
    Ok(crate::cost::machine::estimate(
        &sets,
        &crate::cost::Dims::sliced(net, &sliced),
        slices,
        plan.dtype,
        machine,
    ))
}

/// What `jobs --status` found.
#[derive(Debug, Clone, Serialize)]
pub struct StatusOutcome {
    /// Which chunks are done, and what is known of the others.
    #[serde(flatten)]
    pub status: JobStatus,
    /// The resubmission script written, when chunks may be resubmitted.
    pub resubmit: Option<PathBuf>,
    /// The scheduler's job id, when the resubmission was submitted.
    pub submitted_job: Option<String>,
}

impl StatusOutcome {
    /// True when every chunk is done.
    pub fn complete(&self) -> bool {
        self.status.missing.is_empty()
    }
}

/// Reports which chunks of the job directory `dir` are done, writes
/// `resubmit.sbatch` for the ones that should run again, and submits it
/// when asked.
pub fn status(dir: &Path, submit: bool, scheduler: &mut dyn Scheduler) -> Result<StatusOutcome> {
    let status = job_status(dir, Some(&mut *scheduler))?;
    let resubmit = refresh_resubmit(dir, &status)?;
    let submitted_job = match (&resubmit, submit) {
        (Some(script), true) => Some(scheduler.submit(script)?),
        _ => None,
    };
    Ok(StatusOutcome {
        status,
        resubmit,
        submitted_job,
    })
}
