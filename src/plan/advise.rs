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
/// slices at once are replaced by each target's.
pub fn advise(
    net: &Network,
    tree: &crate::tree::Tree,
    base: &SliceOptions,
    targets: &[Target],
    mut refit: Option<&mut Refit<'_>>,
    rounds: usize,
) -> Vec<Advice> {
    targets
        .iter()
        .map(|target| {
            let mut opts = base.clone();
            opts.budget_bytes = target.budget_bytes;
            opts.slices_at_once = target.slices_at_once;
            let result = find_slices(net, tree, &opts, refit.as_deref_mut(), rounds);
            let estimate = target.machine.as_ref().map(|m| {
                let sets = NodeSets::new(net, &result.tree);
                let (sliced, slices) = match &result.chosen {
                    Some((p, _)) => (p.sliced.clone(), p.slices.to_f64()),
                    None => (Vec::new(), 1.0),
                };
                estimate(&sets, &Dims::sliced(net, &sliced), slices, base.dtype, m)
            });
            Advice {
                target: target.clone(),
                result,
                estimate,
            }
        })
        .collect()
}

impl Advice {
    /// Rebuilds the advice a plan was made from, without searching: the
    /// tree and slice set are priced again; the frontier, cover bound and
    /// estimate are the ones stored in the plan.
    pub fn from_plan(net: &Network, plan: &Plan) -> crate::Result<Advice> {
        plan.check_against(net)?;
        let tree = plan.tree()?;
        let sets = NodeSets::new(net, &tree);
        let sliced = plan.sliced_ids(net)?;
        let mut opts = SliceOptions::new(plan.budget_bytes, plan.dtype);
        opts.slices_at_once = plan.slices_at_once;
        let mut unsliced = Point::evaluate(&sets, net, &[], &opts);
        if plan.predicted.baseline_total_ops_log2 > 0.0
            && (plan.predicted.baseline_total_ops_log2 - unsliced.total_ops.log2).abs() > 1e-9
        {
            unsliced.total_ops =
                crate::num::Count::from_log2(plan.predicted.baseline_total_ops_log2);
        }
        let chosen = Point::evaluate(&sets, net, &sliced, &opts);
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
            },
            estimate: plan.estimate.clone(),
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
