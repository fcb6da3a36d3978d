//! One randomised trial of the driver: the finder of a bandit arm with
//! parameters drawn from its range, then refinement and annealing.
//!
//! The finders are those of the sibling modules; see each for what it
//! computes. Here only the parameter ranges live: greedy cold (temperature
//! up to 0.05) or hot (up to 1); partitioning into parts of 2..=8 or 9..=16
//! tensors; min-fill and min-degree with random ties, or with noise (up to
//! 3 fill edges, or 2 log2 units of degree); nested dissection with one or
//! 2..=4 separators per level. Small trees are refined every time (subtrees
//! of 5..=9 leaves), trees of up to 5,000 tensors in a quarter of the
//! trials, and a fifth are annealed when the goal is total ops.

use std::time::Instant;

use rand::Rng;

use super::anneal::{anneal_tree, AnnealParams};
use super::bandit::Arm;
use super::buckets::order_tree;
use super::dissect::{dissection_tree, DissectParams};
use super::exact::ExactGoal;
use super::greedy::{greedy_tree_until, GreedyParams};
use super::improve::{improve_order, order_of_tree};
use super::order::{elimination_order, elimination_tree, OrderParams, OrderRule, DENSE_MAX};
use super::partition::{partition_tree_until, PartitionParams};
use super::problem::Problem;
use super::refine::{refine_tree, RefineParams};

/// The arms available for a problem with these finders enabled.
pub(super) fn arms(p: &Problem, greedy: bool, partition: bool, orders: bool) -> Vec<Arm> {
    let mut out = Vec::new();
    if orders {
        out.extend([Arm::MinFillTies, Arm::MinDegreeTies]);
        if p.weight.len() >= 16 {
            out.extend([Arm::Dissection, Arm::DissectionWide]);
        }
        out.extend([Arm::MinFillNoisy, Arm::MinDegreeNoisy]);
        if p.weight.len() <= DENSE_MAX {
            out.push(Arm::OrderSearch);
        }
    }
    if greedy {
        out.extend([Arm::GreedyCold, Arm::GreedyHot]);
    }
    if partition && p.len() >= 24 {
        out.extend([Arm::PartitionSmall, Arm::PartitionLarge]);
    }
    out
}

/// How long a local search on orders may run.
#[derive(Debug, Clone, Copy)]
pub(super) enum Effort {
    /// Until this moment.
    Until(Instant),
    /// This many moves per index (searches without a time budget).
    Moves(usize),
}

/// Runs the finder of `arm` on `p`; `None` when it declined or the deadline
/// passed. `start` is a tree over `p` a local search may start from.
/// Returns the merges and the finder's name.
pub(super) fn run_arm<R: Rng>(
    p: &Problem,
    arm: Arm,
    goal: ExactGoal,
    rng: &mut R,
    deadline: Option<Instant>,
    start: Option<&[[usize; 2]]>,
    effort: Effort,
) -> Option<(Vec<[usize; 2]>, String)> {
    let merges = match arm {
        Arm::OrderSearch => {
            let order = match start {
                Some(tree) if rng.random_bool(0.7) => order_of_tree(p, tree),
                _ => {
                    let params = OrderParams {
                        rule: OrderRule::MinFill,
                        random_ties: true,
                        noise: 0.0,
                    };
                    elimination_order(p, &params, rng, deadline)?.order
                }
            };
            let (steps, until) = match effort {
                Effort::Until(t) => (usize::MAX, Some(deadline.map_or(t, |d| d.min(t)))),
                Effort::Moves(k) => (k.saturating_mul(order.len().max(1)), deadline),
            };
            let better = improve_order(p, &order, goal, steps, until, rng)?;
            order_tree(p, &better.order)
        }
        Arm::GreedyCold | Arm::GreedyHot => {
            let mut params = GreedyParams::sample(rng);
            if arm == Arm::GreedyCold {
                params.temperature = rng.random_range(0.0..0.05);
            }
            greedy_tree_until(p, &params, rng, deadline)?
        }
        Arm::PartitionSmall | Arm::PartitionLarge => {
            let mut params = PartitionParams {
                deadline,
                ..PartitionParams::sample(rng, goal)
            };
            params.leaf_size = if arm == Arm::PartitionSmall {
                rng.random_range(2..=8)
            } else {
                rng.random_range(9..=16)
            };
            partition_tree_until(p, &params, rng)?
        }
        Arm::MinFillTies | Arm::MinFillNoisy | Arm::MinDegreeTies | Arm::MinDegreeNoisy => {
            let rule = match arm {
                Arm::MinFillTies | Arm::MinFillNoisy => OrderRule::MinFill,
                _ => OrderRule::MinDegree,
            };
            let noise = match arm {
                Arm::MinFillNoisy => rng.random_range(0.5..3.0),
                Arm::MinDegreeNoisy => rng.random_range(0.1..2.0),
                _ => 0.0,
            };
            let params = OrderParams {
                rule,
                random_ties: true,
                noise,
            };
            elimination_tree(p, &params, rng, deadline)?
        }
        Arm::Dissection | Arm::DissectionWide => {
            let mut params = DissectParams::sample(rng);
            if arm == Arm::Dissection {
                params.separators = 1;
            }
            dissection_tree(p, &params)?
        }
    };
    Some((merges, arm.name().to_string()))
}

/// Refines and anneals a trial's tree as the module docs say; appends what
/// was done to `name`.
pub(super) fn polish<R: Rng>(
    p: &Problem,
    merges: Vec<[usize; 2]>,
    name: &mut String,
    goal: ExactGoal,
    rng: &mut R,
    deadline: Option<Instant>,
) -> Vec<[usize; 2]> {
    let mut merges = merges;
    let small = p.len() <= 64;
    if small || (p.len() <= 5000 && rng.random_bool(0.25)) {
        let params = RefineParams {
            k: if small {
                rng.random_range(5..=9)
            } else {
                rng.random_range(4..=7)
            },
            goal,
            passes: if small { 3 } else { 1 },
            random_frontier: rng.random_bool(0.5).then(|| rng.random()),
        };
        let (refined, changed) = refine_tree(p, &merges, &params, deadline);
        if changed {
            merges = refined;
            name.push_str("+refine");
        }
    }
    let cap = match goal {
        ExactGoal::TotalOps => Some(f64::INFINITY),
        ExactGoal::OpsWithin(cap) => Some(cap),
        ExactGoal::Width | ExactGoal::OpWidth => None,
    };
    if let (true, Some(cap)) = (rng.random_bool(0.2), cap) {
        let params = AnnealParams {
            steps: merges.len() * rng.random_range(5..=30),
            t_start: rng.random_range(0.005..0.1),
            t_end: 0.0005,
            max_width: cap,
            deadline,
        };
        let (annealed, changed) = anneal_tree(p, &merges, &params, rng);
        if changed {
            merges = annealed;
            name.push_str("+anneal");
        }
    }
    merges
}
