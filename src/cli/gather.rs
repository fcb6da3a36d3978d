//! `sliceplan gather`: check and sum the partials of a plan.

use std::path::PathBuf;

use clap::Args;

use super::plan_files::open_plan;
use super::{to_json, Outcome};
use crate::error::{Result, EXIT_CANNOT};
use crate::exec::report::{IncompleteReport, ResultReport};
use crate::exec::{gather, GatherOutcome};

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan gather grid.plan.toml grid.partials
  sliceplan gather grid.plan.toml parts/ -o grid.npy --json";

/// Arguments of `gather`.
#[derive(Debug, Args)]
pub struct GatherArgs {
    /// Plan file the partials were run from.
    #[arg(value_name = "PLAN")]
    plan: PathBuf,

    /// Directory holding the partials.
    #[arg(value_name = "DIR")]
    dir: PathBuf,

    /// Write the result as a .npy file.
    #[arg(short = 'o', long = "output", value_name = "RESULT.npy")]
    output: Option<PathBuf>,

    /// The network file, when it has moved since the plan was written.
    #[arg(long, value_name = "NET")]
    network: Option<PathBuf>,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

/// When `dir` is the `partials` folder of a job directory written by
/// `sliceplan jobs`, refreshes that directory's `resubmit.sbatch` with
/// exactly the missing chunks and returns its path.
fn resubmission(dir: &std::path::Path) -> Result<Option<PathBuf>> {
    let Some(job_dir) = dir.parent() else {
        return Ok(None);
    };
    if !job_dir.join(crate::jobs::MANIFEST_FILE).is_file() {
        return Ok(None);
    }
    let status = crate::jobs::job_status(job_dir)?;
    crate::jobs::refresh_resubmit(job_dir, &status)
}

pub(super) fn run(args: GatherArgs) -> Result<Outcome> {
    let (plan, net) = open_plan(&args.plan, args.network.as_deref())?;
    match gather(&plan, &net, &args.dir)? {
        GatherOutcome::Complete(g) => {
            if let Some(path) = &args.output {
                g.write_npy(path)?;
            }
            let r = ResultReport::new(&g, args.output.clone());
            Ok(Outcome::ok(if args.json {
                to_json(&r)
            } else {
                r.to_text()
            }))
        }
        GatherOutcome::Incomplete(i) => {
            let mut r = IncompleteReport::new(
                &i,
                &args.plan.display().to_string(),
                &args.dir.display().to_string(),
            );
            r.resubmit_script = resubmission(&args.dir)?;
            Ok(Outcome {
                stdout: if args.json { to_json(&r) } else { r.to_text() },
                code: EXIT_CANNOT,
            })
        }
    }
}
