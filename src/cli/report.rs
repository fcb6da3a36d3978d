//! `sliceplan report`: re-render a plan without searching again.

use std::path::PathBuf;

use clap::Args;

use super::fit::exit_code;
use super::Outcome;
use sliceplan::command::report::{report, ReportOptions};
use sliceplan::error::Result;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan report ising.plan.toml
  sliceplan report ising.plan.toml --json
  sliceplan report ising.plan.toml --csv frontier.csv --svg frontier.svg
  sliceplan report ising.plan.toml --steps steps.json
  sliceplan report ising.plan.toml --svg-memory memory.svg --svg-steps steps.svg
  sliceplan report ising.plan.toml --csv-memory memory.csv --csv-steps steps.csv";

/// Arguments of `report`.
#[derive(Debug, Args)]
pub struct ReportArgs {
    /// The plan file.
    #[arg(value_name = "PLAN")]
    plan: PathBuf,

    /// The network file, when it has moved since the plan was written.
    #[arg(long, value_name = "NET")]
    network: Option<PathBuf>,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,

    /// Write the frontier as CSV to this file.
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,

    /// Write the frontier chart as SVG to this file.
    #[arg(long, value_name = "FILE")]
    svg: Option<PathBuf>,

    /// Write the per-slice contraction steps (operand positions and einsum
    /// equations) as JSON to this file, for running the plan elsewhere.
    #[arg(long, value_name = "FILE")]
    steps: Option<PathBuf>,

    /// Write the memory of one slice step by step (inputs, intermediates,
    /// workspace; budget and peak marked) as an SVG chart to this file.
    #[arg(long, value_name = "FILE")]
    svg_memory: Option<PathBuf>,

    /// Write the same memory figures as CSV to this file.
    #[arg(long, value_name = "FILE")]
    csv_memory: Option<PathBuf>,

    /// Write the multiply-adds of each contraction of one slice (log scale,
    /// dominant steps labelled) as an SVG chart to this file.
    #[arg(long, value_name = "FILE")]
    svg_steps: Option<PathBuf>,

    /// Write the same step costs as CSV to this file.
    #[arg(long, value_name = "FILE")]
    csv_steps: Option<PathBuf>,
}

pub(super) fn run(args: ReportArgs) -> Result<Outcome> {
    let opts = ReportOptions {
        plan: args.plan,
        network: args.network,
        csv: args.csv,
        svg: args.svg,
        steps: args.steps,
        svg_memory: args.svg_memory,
        csv_memory: args.csv_memory,
        svg_steps: args.svg_steps,
        csv_steps: args.csv_steps,
    };
    let r = report(&opts)?;
    Ok(Outcome::render(args.json, &r, r.to_text(), exit_code(&r)))
}
