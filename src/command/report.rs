//! `report`: re-render a plan (text, JSON, CSV, SVG, steps) without
//! searching again.

use std::path::PathBuf;

use super::fit::write_extras;
use super::{check_optional_output, open_plan};
use crate::cost::{NodeSets, PeakModel};
use crate::error::Result;
use crate::plan::advise::Advice;
use crate::report::fit::FitReport;
use crate::report::inspect::TreeReport;

/// Options of `report`.
#[derive(Debug, Clone, Default)]
pub struct ReportOptions {
    /// The plan file.
    pub plan: PathBuf,
    /// The network file, when it has moved since the plan was written.
    pub network: Option<PathBuf>,
    /// Write the frontier as CSV here.
    pub csv: Option<PathBuf>,
    /// Write the frontier chart as SVG here.
    pub svg: Option<PathBuf>,
    /// Write the per-slice contraction steps as JSON here.
    pub steps: Option<PathBuf>,
}

/// Runs `report`: the plan's fit report, and the files asked for.
pub fn report(opts: &ReportOptions) -> Result<FitReport> {
    check_optional_output(opts.csv.as_deref(), "csv")?;
    check_optional_output(opts.svg.as_deref(), "svg")?;
    check_optional_output(opts.steps.as_deref(), "steps")?;
    let (plan, net) = open_plan(&opts.plan, opts.network.as_deref())?;
    let advice = Advice::from_plan(&net, &plan)?;
    let metrics =
        NodeSets::new(&net, &advice.result.tree).evaluate_unsliced(&net, PeakModel::default());
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
    write_extras(&report, opts.csv.as_deref(), opts.svg.as_deref(), &advice)?;
    if let Some(path) = &opts.steps {
        let steps = crate::report::steps::steps(&net, &plan)?;
        crate::io::write_atomic(path, crate::report::to_json(&steps).as_bytes())?;
    }
    Ok(report)
}
