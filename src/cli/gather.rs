//! `sliceplan gather`: check and sum the partials of a plan.

use std::path::PathBuf;

use clap::Args;

use super::{Outcome, EXIT_CANNOT};
use sliceplan::command::gather::{gather, GatherOptions, GatherOutcome};
use sliceplan::error::Result;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan gather ising.plan.toml ising.partials
  sliceplan gather ising.plan.toml parts/ -o ising.npy --json";

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

/// The text of a gathered result or of what is missing.
pub(super) fn gathered_text(g: &GatherOutcome) -> String {
    match g {
        GatherOutcome::Complete { report, .. } => report.to_text(),
        GatherOutcome::Incomplete(r) => r.to_text(),
    }
}

pub(super) fn run(args: GatherArgs) -> Result<Outcome> {
    let opts = GatherOptions {
        plan: args.plan,
        dir: args.dir,
        output: args.output,
        network: args.network,
    };
    let g = gather(&opts, &mut sliceplan::jobs::Slurm::default())?;
    let code = if g.complete() { 0 } else { EXIT_CANNOT };
    Ok(Outcome::render(args.json, &g, gathered_text(&g), code))
}
