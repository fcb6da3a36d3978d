//! From a network and a tree to a fit verdict per target (a budget or a
//! machine profile), and from a verdict to a plan.

use serde::Serialize;

use super::Plan;
use crate::cost::machine::{estimate, Estimate, Machine};
use crate::cost::{Dims, NodeSets};
use crate::network::{Dtype, Network};
use crate::slicing::{find_slices, Origin, Point, Refit, SliceOptions, SliceResult};

/// Where slices will run: a memory budget per process, or a machine type.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Target {
    /// A label for reports (the machine's name, or "budget").
    pub label: String,
    /// Bytes one process may use.
    pub budget_bytes: u64,
    /// Slices one process runs at once.
    pub slices_at_once: u64,
    /// The machine, when the target is one.
    #[serde(skip)]
    pub machine: Option<Machine>,
}

impl Target {
    /// A plain budget.
    pub fn budget(budget_bytes: u64, slices_at_once: u64) -> Target {
        Target {
            label: "budget".into(),
            budget_bytes,
            slices_at_once,
            machine: None,
        }
    }

    /// A machine: its usable memory per node, its slices per node.
    pub fn machine(m: Machine) -> Target {
        Target {
            label: m.name.clone(),
            budget_bytes: (m.memory_bytes as f64 * m.usable_fraction).floor() as u64,
            slices_at_once: m.slices_per_node,
            machine: Some(m),
        }
    }
}

/// The verdict for one target.
#[derive(Debug, Clone)]
pub struct Advice {
    /// The target.
    pub target: Target,
    /// The slicing search's result.
    pub result: SliceResult,
    /// The time estimate, when the target is a machine.
    pub estimate: Option<Estimate>,
    /// Whether the figures count slice-invariant work once (reuse).
    pub reuse: bool,
}

impl Advice {
    /// True when the unsliced contraction fits.
    pub fn fits_without_slicing(&self) -> bool {
        self.result.unsliced.need.total_bytes() <= self.target.budget_bytes as f64
    }

    /// The chosen point, when one fits.
    pub fn chosen(&self) -> Option<&(Point, Origin)> {
        self.result.chosen.as_ref()
    }
}

/// Runs the slicing search for every target and estimates times on the
/// machine targets. `base` carries the search settings; its budget and
/// slices at once are replaced by each target's, and the time left before
/// its deadline is shared equally by the targets still to do. `front`:
/// other trees slicing may start from (see [`find_slices`]).
pub fn advise(
    net: &Network,
    tree: &crate::tree::Tree,
    front: &[crate::tree::Tree],
    base: &SliceOptions,
    targets: &[Target],
    mut refit: Option<&mut Refit<'_>>,
    rounds: usize,
) -> Vec<Advice> {
    let mut out = Vec::with_capacity(targets.len());
    for (i, target) in targets.iter().enumerate() {
        let mut opts = base.clone();
        opts.budget_bytes = target.budget_bytes;
        opts.slices_at_once = target.slices_at_once;
        if let Some(d) = base.deadline {
            let now = std::time::Instant::now();
            let left = d.saturating_duration_since(now);
            opts.deadline = Some(now + left / (targets.len() - i) as u32);
        }
        let result = find_slices(net, tree, front, &opts, refit.as_deref_mut(), rounds);
        let estimate = target.machine.as_ref().map(|m| {
            let sets = NodeSets::new(net, &result.tree);
            match &result.chosen {
                Some((p, _)) => estimate_point(&sets, net, p, base.dtype, m),
                None => estimate(&sets, &Dims::of(net), 1.0, base.dtype, m),
            }
        });
        out.push(Advice {
            target: target.clone(),
            result,
            estimate,
            reuse: base.reuse,
        });
    }
    out
}

/// The time estimate of a priced slice set: the machine model per slice;
/// with held intermediates, their work once per node and the rest per
/// slice.
pub fn estimate_point(
    sets: &NodeSets,
    net: &Network,
    p: &Point,
    dtype: Dtype,
    m: &Machine,
) -> Estimate {
    let dims = Dims::sliced(net, &p.sliced);
    let slices = p.slices.to_f64();
    let whole = estimate(sets, &dims, slices, dtype, m);
    if p.held.is_empty() {
        return whole;
    }
    let cut = crate::slicing::reuse::collapse(sets, &p.held);
    let part = estimate(&cut.sets, &dims, slices, dtype, m);
    let once = (whole.seconds_per_slice - part.seconds_per_slice).max(0.0);
    let wall = once + part.wall_seconds;
    Estimate {
        wall_seconds: wall,
        node_hours: wall * part.nodes_used as f64 / 3600.0,
        method: format!("{}; {REUSE_METHOD}", part.method),
        ..part
    }
}

/// What the estimate says about reuse.
pub const REUSE_METHOD: &str =
    "with reuse, the slice-invariant work once per node before its slices, the rest per slice";

impl Advice {
    /// Rebuilds the advice a plan was made from, without searching: the
    /// tree, slice set and held intermediates are priced again; the
    /// frontier, cover bound and estimate are the ones stored in the plan.
    pub fn from_plan(net: &Network, plan: &Plan) -> crate::Result<Advice> {
        plan.check_against(net)?;
        let tree = plan.tree()?;
        let sets = NodeSets::new(net, &tree);
        let sliced = plan.sliced_ids(net)?;
        let mut opts = SliceOptions::new(plan.budget_bytes, plan.dtype);
        opts.slices_at_once = plan.slices_at_once;
        opts.reuse = plan.reuse;
        let mut unsliced = Point::evaluate_held(&sets, net, &[], &[], &opts);
        if plan.predicted.baseline_total_ops_log2 > 0.0
            && (plan.predicted.baseline_total_ops_log2 - unsliced.total_ops.log2).abs() > 1e-9
        {
            unsliced.total_ops =
                crate::num::Count::from_log2(plan.predicted.baseline_total_ops_log2);
            unsliced.plain_total_ops = unsliced.total_ops;
        }
        let chosen = Point::evaluate_held(&sets, net, &sliced, &plan.held, &opts);
        let origin: Origin =
            serde_json::from_value(serde_json::Value::String(plan.predicted.found_by.clone()))
                .unwrap_or(Origin::Greedy);
        let label = plan
            .estimate
            .as_ref()
            .map(|e| e.machine.clone())
            .unwrap_or_else(|| "budget".into());
        Ok(Advice {
            target: Target {
                label,
                budget_bytes: plan.budget_bytes,
                slices_at_once: plan.slices_at_once,
                machine: None,
            },
            result: SliceResult {
                tree,
                smallest_need_bytes: chosen.need.total_bytes(),
                fewest_slices: None,
                chosen: Some((chosen, origin)),
                unsliced,
                frontier: plan.frontier.clone(),
                cover: plan.cover.clone(),
                bound: plan.ops_bound.clone(),
            },
            estimate: plan.estimate.clone(),
            reuse: plan.reuse,
        })
    }
}

/// The plan for the chosen slice set of an advice (unsliced when nothing
/// fits is not a plan: the caller checks `chosen` first).
pub fn make_plan(
    net: &Network,
    network_path: &str,
    tree_source: &str,
    advice: &Advice,
    dtype: Dtype,
    seed: u64,
) -> Option<Plan> {
    let (point, origin) = advice.result.chosen.as_ref()?;
    let mut plan = Plan::for_tree(
        net,
        network_path,
        &advice.result.tree,
        &point.sliced,
        dtype,
        advice.target.budget_bytes,
    );
    plan.slices_at_once = advice.target.slices_at_once;
    plan.seed = seed;
    // The slice set as priced: with reuse, the held intermediates, the
    // order that computes them first, and the per-slice figures of the rest.
    let bytes = crate::num::Count::from_u128(dtype.bytes() as u128);
    plan.reuse = advice.reuse;
    plan.held = point.held.clone();
    plan.order = point.order.clone();
    plan.predicted.per_slice_total_ops_log2 = point.per_slice_total_ops.log2;
    plan.predicted.per_slice_width = point.per_slice_width;
    plan.predicted.per_slice_peak_bytes = (point.per_slice_peak * bytes).to_json_string();
    plan.predicted.total_ops_log2 = point.total_ops.log2;
    plan.predicted.plain_total_ops_log2 = point.plain_total_ops.log2;
    plan.predicted.reused_bytes = format!("{:.0}", point.need.reused_bytes);
    plan.predicted.setup_bytes = format!("{:.0}", point.need.setup_bytes);
    plan.ops_bound = advice.result.bound.clone();
    // The overhead is against the starting tree's unsliced ops (the search's
    // best), which co-optimisation may have replaced.
    let baseline = advice.result.unsliced.total_ops.log2;
    plan.predicted.overhead = crate::num::overhead(point.total_ops.log2, baseline);
    plan.predicted.baseline_total_ops_log2 = baseline;
    plan.predicted.found_by = serde_json::to_value(origin)
        .ok()
        .and_then(|v| v.as_str().map(String::from))
        .unwrap_or_default();
    plan.predicted.tree_source = tree_source.to_string();
    plan.frontier = advice.result.frontier.clone();
    plan.cover = advice.result.cover.clone();
    plan.estimate = advice.estimate.clone();
    Some(plan)
}
