//! `report`: re-render a plan (text, JSON, CSV, SVG, steps) without
//! searching again.

use std::path::PathBuf;

use super::fit::write_extras;
use super::{check_optional_output, open_plan};
use crate::cost::trace::live_trace;
use crate::cost::{Dims, NodeSets, PeakModel};
use crate::error::{Error, Result};
use crate::plan::advise::Advice;
use crate::report::fit::FitReport;
use crate::report::inspect::TreeReport;
use crate::report::memory_chart::MemoryProfile;
use crate::report::steps_chart::StepCosts;

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
    /// Write the memory-over-the-contraction chart of one slice (SVG) here.
    pub svg_memory: Option<PathBuf>,
    /// Write the same figures as CSV here.
    pub csv_memory: Option<PathBuf>,
    /// Write the cost-per-step chart of one slice (SVG) here.
    pub svg_steps: Option<PathBuf>,
    /// Write the same figures as CSV here.
    pub csv_steps: Option<PathBuf>,
}

/// Runs `report`: the plan's fit report, and the files asked for.
pub fn report(opts: &ReportOptions) -> Result<FitReport> {
    check_optional_output(opts.csv.as_deref(), "csv")?;
    check_optional_output(opts.svg.as_deref(), "svg")?;
    check_optional_output(opts.steps.as_deref(), "steps")?;
    check_optional_output(opts.svg_memory.as_deref(), "svg_memory")?;
    check_optional_output(opts.csv_memory.as_deref(), "csv_memory")?;
    check_optional_output(opts.svg_steps.as_deref(), "svg_steps")?;
    check_optional_output(opts.csv_steps.as_deref(), "csv_steps")?;
    let (plan, net) = open_plan(&opts.plan, opts.network.as_deref())?;
    let advice = Advice::from_plan(&net, &plan)?;
    let metrics =
        NodeSets::new(&net, &advice.result.tree).evaluate_unsliced(&net, PeakModel::default());
    let baseline = plan.predicted.baseline_total_ops_log2;
    let source = if baseline > 0.0 && (metrics.total_ops.log2 - baseline).abs() > 1e-9 {
        // The search's tree was the baseline; slicing re-planned this one.
        "the plan's tree, re-planned for slicing".to_string()
    } else if plan.predicted.tree_source.is_empty() {
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
    write_step_charts(opts, &plan, &net, &report)?;
    Ok(report)
}

/// The memory profile of one slice of `plan`: the cost model's live
/// memory at each step of the plan's traversal under the executor's rule,
/// with the per-slice share of the plan's budget.
pub fn memory_profile(
    plan: &crate::plan::Plan,
    net: &crate::network::Network,
) -> Result<MemoryProfile> {
    let tree = plan.tree()?;
    let sliced = plan.sliced_ids(net)?;
    let sets = NodeSets::new(net, &tree);
    let dims = Dims::sliced(net, &sliced);
    let steps = live_trace(&sets, &dims, &plan.order, PeakModel::EXECUTOR);
    let fixed = crate::cost::memory::inputs_bytes(net, plan.dtype)
        + crate::cost::memory::output_bytes(net, plan.dtype);
    let budget = (plan.budget_bytes > 0)
        .then(|| (plan.budget_bytes as f64 - fixed) / plan.slices_at_once.max(1) as f64);
    Ok(MemoryProfile::new(
        &steps,
        plan.dtype.bytes() as f64,
        budget,
    ))
}

/// The multiply-adds of every step of one slice of `plan`, in its
/// traversal order (without the merges of held intermediates, which a
/// process runs once before its first slice).
pub fn step_costs(plan: &crate::plan::Plan, net: &crate::network::Network) -> Result<StepCosts> {
    let tree = plan.tree()?;
    let sliced = plan.sliced_ids(net)?;
    let sets = NodeSets::new(net, &tree);
    let by_merge = crate::cost::time::steps(&sets, &Dims::sliced(net, &sliced));
    // The merges of held intermediates run once per process, not per slice.
    let split = crate::exec::reuse::Split::new(net, &tree, &plan.order, &sliced, &plan.held)?;
    Ok(StepCosts::new(&by_merge, &split.slice))
}

fn write_step_charts(
    opts: &ReportOptions,
    plan: &crate::plan::Plan,
    net: &crate::network::Network,
    report: &FitReport,
) -> Result<()> {
    let write = |path: &std::path::Path, text: &str| crate::io::write_atomic(path, text.as_bytes());
    if opts.svg_memory.is_some() || opts.csv_memory.is_some() {
        let m = memory_profile(plan, net)?;
        if let Some(p) = &opts.csv_memory {
            write(p, &m.csv())?;
        }
        if let Some(p) = &opts.svg_memory {
            let title = format!("{}: memory of one slice, step by step", report.network.name);
            write(p, &m.svg(&title).map_err(Error::Cannot)?)?;
        }
    }
    if opts.svg_steps.is_some() || opts.csv_steps.is_some() {
        let c = step_costs(plan, net)?;
        if let Some(p) = &opts.csv_steps {
            write(p, &c.csv())?;
        }
        if let Some(p) = &opts.svg_steps {
            let title = format!(
                "{}: multiply-adds of each contraction of one slice",
                report.network.name
            );
            write(p, &c.svg(&title).map_err(Error::Cannot)?)?;
        }
    }
    Ok(())
}
