//! `gather`: check the partials of a plan, sum them, and write the result;
//! or say what is missing (and refresh the job directory's resubmission).

use std::path::{Path, PathBuf};

use serde::Serialize;

use super::{check_optional_output, open_plan};
use crate::error::Result;
use crate::exec::report::{IncompleteReport, ResultReport};
use crate::jobs::Scheduler;

/// Options of `gather`.
#[derive(Debug, Clone, Default)]
pub struct GatherOptions {
    /// The plan file the partials were run from.
    pub plan: PathBuf,
    /// The directory holding the partials.
    pub dir: PathBuf,
    /// Write the result as `.npy` here.
    pub output: Option<PathBuf>,
    /// The network file, when it has moved since the plan was written.
    pub network: Option<PathBuf>,
}

/// A gathered result, or what is missing.
#[derive(Debug, Clone, Serialize)]
#[serde(untagged)]
pub enum GatherOutcome {
    /// Every slice is covered exactly once.
    Complete {
        /// The result for people and scripts.
        #[serde(flatten)]
        report: ResultReport,
        /// The gathered values (lanes, exponent, exact digits).
        #[serde(skip)]
        gathered: Box<crate::exec::Gathered>,
    },
    /// Some slices are missing (or partials were rejected).
    Incomplete(IncompleteReport),
}

impl GatherOutcome {
    /// True when the result is complete.
    pub fn complete(&self) -> bool {
        matches!(self, GatherOutcome::Complete { .. })
    }
}

/// Runs `gather`. When the partials belong to a job directory, the
/// scheduler is asked which of the missing chunks it still holds, so the
/// resubmission leaves those out.
pub fn gather(opts: &GatherOptions, scheduler: &mut dyn Scheduler) -> Result<GatherOutcome> {
    check_optional_output(opts.output.as_deref(), "output")?;
    let (plan, net) = open_plan(&opts.plan, opts.network.as_deref())?;
    let gathered = crate::exec::gather(&plan, &net, &opts.dir)?;
    finish(
        gathered,
        opts.output.as_deref(),
        &opts.plan,
        &opts.dir,
        Some(scheduler),
    )
}

/// Writes the `.npy` of a complete result, or refreshes the job
/// directory's resubmission script for an incomplete one, and builds the
/// report.
pub(super) fn finish(
    gathered: crate::exec::GatherOutcome,
    output: Option<&Path>,
    plan_path: &Path,
    dir: &Path,
    scheduler: Option<&mut dyn Scheduler>,
) -> Result<GatherOutcome> {
    match gathered {
        crate::exec::GatherOutcome::Complete(g) => {
            if let Some(path) = output {
                g.write_npy(path)?;
            }
            Ok(GatherOutcome::Complete {
                report: ResultReport::new(&g, output.map(Path::to_path_buf)),
                gathered: Box::new(g),
            })
        }
        crate::exec::GatherOutcome::Incomplete(i) => {
            let mut r = IncompleteReport::new(
                &i,
                &plan_path.display().to_string(),
                &dir.display().to_string(),
            );
            r.resubmit_script = resubmission(dir, scheduler)?;
            Ok(GatherOutcome::Incomplete(r))
        }
    }
}

/// When `dir` is the `partials` folder of a job directory written by
/// `jobs`, refreshes that directory's `resubmit.sbatch` with exactly the
/// missing chunks and returns its path.
fn resubmission(dir: &Path, scheduler: Option<&mut dyn Scheduler>) -> Result<Option<PathBuf>> {
    let Some(job_dir) = dir.parent() else {
        return Ok(None);
    };
    if !job_dir.join(crate::jobs::MANIFEST_FILE).is_file() {
        return Ok(None);
    }
    let status = crate::jobs::job_status(job_dir, scheduler)?;
    crate::jobs::refresh_resubmit(job_dir, &status)
}
