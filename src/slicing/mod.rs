//! Memory-budget slicing: choose indices to fix so every slice fits.
//!
//! # What it computes
//!
//! Given a network, a tree and a memory budget, [`find_slices`] returns a
//! slice set whose slices fit (see [`crate::cost::memory`] for what a process
//! needs), the slices-versus-ops frontier met on the way, and, for the final
//! tree, a proven lower bound on the number of slices from the cover
//! programme. Three searches contribute candidates:
//!
//! * greedy ([`greedy`]): repeatedly slice the index that, among those live
//!   at the step where the peak is reached, gives the smallest total ops
//!   (slices x per-slice ops) while lowering the peak; then drop indices the
//!   budget no longer needs;
//! * the cover programme ([`cover`]): a 0/1 programme over indices that puts
//!   every tensor of the slice under a size cap, tightened until the true
//!   peak fits;
//! * co-optimisation: a caller-supplied tree finder re-plans the tree for
//!   the sliced network and the greedy continues on the better tree.
//!
//! # Complexity
//!
//! Each greedy round prices up to [`SliceOptions::max_candidates`] slice
//! sets at O(n log n) each for n tensors; the number of rounds is about the
//! log2 of the needed peak reduction plus the frontier's extra rounds.

pub mod cover;
pub mod exhaustive;
pub mod frontier;
pub mod greedy;

use serde::Serialize;

use crate::cost::memory::{inputs_bytes, output_bytes, MemoryNeed};
use crate::cost::{NodeSets, PeakModel};
use crate::network::{Dtype, IndexId, Network};
use crate::num::Count;
use crate::tree::Tree;

pub use frontier::{frontier, FrontierRow};

/// What the slicing search must respect.
#[derive(Debug, Clone, PartialEq)]
pub struct SliceOptions {
    /// Bytes one process may use.
    pub budget_bytes: u64,
    /// Element type.
    pub dtype: Dtype,
    /// Slices running at once in one process (each needs its own peak).
    pub slices_at_once: u64,
    /// Greedy rounds to continue past the first fitting set, for the frontier.
    pub frontier_extra: usize,
    /// Never go beyond this many slices (log2); slice numbers must fit a u64.
    pub max_slices_log2: f64,
    /// Candidates priced per greedy round (the largest live indices first).
    pub max_candidates: usize,
    /// Run the cover programme.
    pub cover: bool,
    /// Seconds the cover programme may take in all.
    pub cover_seconds: f64,
    /// How the greedy picks the next index.
    pub rule: greedy::GreedyRule,
}

impl SliceOptions {
    /// Defaults for a budget and dtype.
    pub fn new(budget_bytes: u64, dtype: Dtype) -> SliceOptions {
        SliceOptions {
            budget_bytes,
            dtype,
            slices_at_once: 1,
            frontier_extra: 3,
            max_slices_log2: 62.0,
            max_candidates: 48,
            cover: true,
            cover_seconds: 5.0,
            rule: greedy::GreedyRule::default(),
        }
    }
}

/// One priced slice set on one tree.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    /// The sliced indices, in the order they were chosen.
    pub sliced: Vec<IndexId>,
    /// Product of their dimensions.
    pub slices: Count,
    /// Total ops of one slice.
    pub per_slice_total_ops: Count,
    /// Width of one slice.
    pub per_slice_width: f64,
    /// Peak elements of one slice (executor model).
    pub per_slice_peak: Count,
    /// Slices x per-slice total ops.
    pub total_ops: Count,
    /// What a process needs.
    pub need: MemoryNeed,
    /// The traversal order for one slice.
    pub order: Vec<usize>,
}

impl Point {
    /// Prices slice set `sliced` on the tree behind `sets`.
    pub fn evaluate(
        sets: &NodeSets,
        net: &Network,
        sliced: &[IndexId],
        opts: &SliceOptions,
    ) -> Point {
        let s = sets.evaluate_sliced(net, sliced, PeakModel::EXECUTOR);
        Point {
            sliced: sliced.to_vec(),
            slices: s.slices,
            per_slice_total_ops: s.per_slice.total_ops,
            per_slice_width: s.per_slice.width,
            per_slice_peak: s.per_slice.peak,
            total_ops: s.total_ops,
            need: MemoryNeed {
                inputs_bytes: inputs_bytes(net, opts.dtype),
                output_bytes: output_bytes(net, opts.dtype),
                per_slice_peak_bytes: s.per_slice.peak.to_f64() * opts.dtype.bytes() as f64,
                slices_at_once: opts.slices_at_once,
            },
            order: s.per_slice.order,
        }
    }

    /// True when a process running these slices stays within the budget.
    pub fn fits(&self, opts: &SliceOptions) -> bool {
        self.need.total_bytes() <= opts.budget_bytes as f64
    }

    /// Per-slice peak in bytes.
    pub fn per_slice_peak_bytes(&self) -> f64 {
        self.need.per_slice_peak_bytes
    }
}

/// Where a candidate slice set came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Origin {
    /// No slicing.
    Unsliced,
    /// The greedy search.
    Greedy,
    /// The cover programme.
    Cover,
    /// Greedy on a tree re-planned for the sliced network.
    Cooptimised,
    /// Every slice set of a few indices (small networks).
    Exhaustive,
}

/// What the cover programme proved and proposed.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize)]
pub struct CoverReport {
    /// Largest tensor (elements) a slice may hold under the budget.
    pub cap_elements: f64,
    /// Proven: for this tree, every slice set that keeps every tensor of a
    /// slice under the cap has at least 2^this slices.
    pub min_slices_log2: f64,
    /// Whether the bound is the programme's proven optimum (else the
    /// relaxation's bound).
    pub optimal: bool,
    /// log2 of the slices of the programme's own slice set that fits, when
    /// one was found.
    pub candidate_slices_log2: Option<f64>,
}

/// The outcome of the slicing search.
#[derive(Debug, Clone)]
pub struct SliceResult {
    /// The tree of the chosen slice set (co-optimisation may change it).
    pub tree: Tree,
    /// The network priced unsliced on the starting tree: the baseline for
    /// overheads and the "fits without slicing" answer.
    pub unsliced: Point,
    /// The fitting slice set with the fewest total ops (ties: fewer slices).
    pub chosen: Option<(Point, Origin)>,
    /// The fitting slice set with the fewest slices found (ties: fewer ops),
    /// on the starting tree or the re-planned one.
    pub fewest_slices: Option<Point>,
    /// The smallest process memory any slice set found needs (for "cannot
    /// fit" answers).
    pub smallest_need_bytes: f64,
    /// Best points by slice count.
    pub frontier: Vec<FrontierRow>,
    /// The cover programme's report for the final tree.
    pub cover: Option<CoverReport>,
}

/// Re-plans a tree for the network with the given indices sliced, for the
/// least total ops among trees of at most the given width; returns `None`
/// when it finds nothing.
pub type Refit<'a> = dyn FnMut(&Network, &[IndexId], f64) -> Option<Tree> + 'a;

/// A priced slice set, where it came from, and which tree it is on.
struct Seen {
    point: Point,
    origin: Origin,
    tree: usize,
}

/// Finds a slice set that fits the budget, starting from `tree`.
///
/// With `refit`, also runs the greedy that re-plans the tree after each
/// index it adds (at most `rounds` re-plans).
pub fn find_slices(
    net: &Network,
    tree: &Tree,
    opts: &SliceOptions,
    mut refit: Option<&mut Refit<'_>>,
    rounds: usize,
) -> SliceResult {
    let mut trees = vec![tree.clone()];
    let sets = NodeSets::new(net, tree);
    let unsliced = Point::evaluate(&sets, net, &[], opts);
    let mut seen: Vec<Seen> = vec![Seen {
        point: unsliced.clone(),
        origin: Origin::Unsliced,
        tree: 0,
    }];
    let add = |seen: &mut Vec<Seen>, points: Vec<Point>, origin: Origin, tree: usize| {
        seen.extend(points.into_iter().map(|point| Seen {
            point,
            origin,
            tree,
        }));
    };
    let trail = greedy::greedy(&sets, net, opts, &[]);
    let first_fit = trail
        .iter()
        .find(|p| p.fits(opts))
        .map(|p| greedy::prune(&sets, net, opts, p));
    add(&mut seen, trail, Origin::Greedy, 0);
    add(
        &mut seen,
        first_fit.clone().into_iter().collect(),
        Origin::Greedy,
        0,
    );
    add(
        &mut seen,
        exhaustive::exhaustive(&sets, net, opts, 3)
            .into_iter()
            .collect(),
        Origin::Exhaustive,
        0,
    );
    // Co-optimisation: slice one index at a time and re-plan the tree for
    // the sliced network after each.
    if let Some(refit) = refit.as_mut() {
        if !unsliced.fits(opts) {
            let tree_id = |t: Tree, trees: &mut Vec<Tree>| match trees.iter().position(|x| *x == t)
            {
                Some(id) => id,
                None => {
                    trees.push(t);
                    trees.len() - 1
                }
            };
            for (point, t) in greedy::interleaved(net, tree, opts, &mut **refit, rounds) {
                let id = tree_id(t, &mut trees);
                add(&mut seen, vec![point], Origin::Cooptimised, id);
            }
            // Trees planned from the start for a smaller width: the peak
            // must come down by `needed` (log2); ask for a width lower by
            // all of it, and by half of it, then slice those trees greedily.
            let target = (opts.budget_bytes as f64 - unsliced.need.fixed_bytes())
                / opts.slices_at_once as f64;
            let needed = unsliced.need.per_slice_peak_bytes.log2() - target.max(1.0).log2();
            for share in [1.0, 0.5] {
                let cap = unsliced.per_slice_width - (needed * share).ceil();
                if cap < 1.0 {
                    continue;
                }
                let Some(t) = refit(net, &[], cap) else {
                    continue;
                };
                let t_sets = NodeSets::new(net, &t);
                let trail = greedy::greedy(&t_sets, net, opts, &[]);
                let fit = trail
                    .iter()
                    .find(|p| p.fits(opts))
                    .map(|p| greedy::prune(&t_sets, net, opts, p));
                let id = tree_id(t, &mut trees);
                add(&mut seen, trail, Origin::Cooptimised, id);
                add(
                    &mut seen,
                    fit.into_iter().collect(),
                    Origin::Cooptimised,
                    id,
                );
            }
        }
    }
    // The cover programme runs on the tree of the best set so far.
    let final_tree = pick(&seen, opts, by_ops_key)
        .map(|i| seen[i].tree)
        .unwrap_or(0);
    let sets = NodeSets::new(net, &trees[final_tree]);
    let cover = if opts.cover {
        let (report, candidate) = cover::cover(&sets, net, opts);
        add(
            &mut seen,
            candidate.into_iter().collect(),
            Origin::Cover,
            final_tree,
        );
        report
    } else {
        None
    };
    let by_ops = pick(&seen, opts, by_ops_key);
    let by_slices = pick(&seen, opts, |p| {
        (quantise(p.slices.log2), quantise(p.total_ops.log2))
    });
    let smallest_need_bytes = seen
        .iter()
        .map(|s| s.point.need.total_bytes())
        .fold(f64::INFINITY, f64::min);
    let chosen_tree = by_ops.map(|i| seen[i].tree).unwrap_or(0);
    let limit = by_ops
        .map(|i| seen[i].point.slices.log2)
        .unwrap_or(opts.max_slices_log2)
        + opts.frontier_extra as f64;
    let points: Vec<Point> = seen.iter().map(|s| s.point.clone()).collect();
    let chosen = by_ops.map(|i| &seen[i].point);
    SliceResult {
        frontier: frontier(&points, unsliced.total_ops, limit, opts, chosen),
        tree: trees[chosen_tree].clone(),
        chosen: by_ops.map(|i| (seen[i].point.clone(), seen[i].origin)),
        fewest_slices: by_slices.map(|i| seen[i].point.clone()),
        unsliced,
        smallest_need_bytes,
        cover,
    }
}

fn quantise(x: f64) -> i64 {
    (x * 1e6).round() as i64
}

fn by_ops_key(p: &Point) -> (i64, i64) {
    (quantise(p.total_ops.log2), quantise(p.slices.log2))
}

/// The fitting point with the smallest key.
fn pick(seen: &[Seen], opts: &SliceOptions, key: fn(&Point) -> (i64, i64)) -> Option<usize> {
    seen.iter()
        .enumerate()
        .filter(|(_, s)| s.point.fits(opts))
        .min_by_key(|(_, s)| key(&s.point))
        .map(|(i, _)| i)
}
