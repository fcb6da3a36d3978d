//! `sliceplan report`: re-render a plan without searching again.

use std::path::PathBuf;

use clap::Args;

use super::plan_files::open_plan;
use super::{to_json, Outcome};
use crate::error::Result;
use crate::plan::advise::Advice;
use crate::report::fit::FitReport;
use crate::report::inspect::TreeReport;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan report job.plan.toml
  sliceplan report job.plan.toml --json
  sliceplan report job.plan.toml --csv frontier.csv --svg frontier.svg
  sliceplan report job.plan.toml --steps steps.json";

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
}

pub(super) fn run(args: ReportArgs) -> Result<Outcome> {
    let (plan, net) = open_plan(&args.plan, args.network.as_deref())?;
    let advice = Advice::from_plan(&net, &plan)?;
    let metrics = crate::cost::NodeSets::new(&net, &advice.result.tree)
        .evaluate_unsliced(&net, crate::cost::PeakModel::default());
    let source = if plan.predicted.tree_source.is_empty() {
        "from the plan".to_string()
    } else {
        plan.predicted.tree_source.clone()
    };
    let tree = TreeReport::new(source, &metrics, plan.dtype);
    let lower_bound = plan
        .lower_bound_width
        .map(|_| crate::search::width_lower_bound(&net));
    let report = FitReport::new(
        &net,
        tree,
        lower_bound,
        None,
        plan.dtype,
        std::slice::from_ref(&advice),
    );
    super::fit::write_extras(&report, &args.csv, &args.svg, &advice)?;
    if let Some(path) = &args.steps {
        let steps = crate::report::steps::steps(&net, &plan)?;
        crate::io::write_atomic(path, to_json(&steps).as_bytes())?;
    }
    Ok(Outcome::ok(if args.json {
        to_json(&report)
    } else {
        report.to_text()
    }))
}
