//! Memory-budget slicing: choose indices to fix so every slice fits.
//!
//! # What it computes
//!
//! Given a network, a tree and a memory budget, [`find_slices`] returns a
//! slice set whose slices fit (see [`crate::cost::memory`] for what a process
//! needs), the slices-versus-ops frontier met on the way, and, for the final
//! tree, a proven lower bound on the number of slices from the cover
//! programme. These searches contribute candidates:
//!
//! * greedy ([`greedy`]): repeatedly slice the index that, among those live
//!   at the step where the peak is reached, gives the smallest total ops
//!   (slices x per-slice ops) while lowering the peak; then drop indices the
//!   budget no longer needs;
//! * the cover programme ([`cover`]): a 0/1 programme over indices that puts
//!   every tensor of the slice under a size cap, tightened until the true
//!   peak fits;
//! * when the tree may change (a caller-supplied tree finder): the greedy
//!   on the other trees of the search's width/ops front; the slice-aware
//!   search ([`joint`]), which interleaves slicing with reconfiguration of
//!   the sliced tree, from several starts; the cuts of balanced bisections,
//!   sliced whole on a tree re-planned for them; and the greedy that
//!   re-plans the whole tree after each index it adds;
//! * finally a swap search ([`greedy::swap_search`]) on the best sets.
//!
//! # Complexity
//!
//! Each greedy round prices up to [`SliceOptions::max_candidates`] slice
//! sets at O(n log n) each for n tensors; the number of rounds is about the
//! log2 of the needed peak reduction plus the frontier's extra rounds.

pub mod bound;
pub mod cover;
pub mod exhaustive;
pub mod frontier;
pub mod greedy;
pub mod joint;
pub mod reuse;

use serde::Serialize;

use crate::cost::memory::{inputs_bytes, output_bytes, MemoryNeed};
use crate::cost::NodeSets;
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
    /// Price slice sets with slice-invariant intermediates computed once
    /// per process and held ([`reuse`]); `false` repeats them in every
    /// slice.
    pub reuse: bool,
    /// No search step starts after this instant (the command's deadline).
    pub deadline: Option<std::time::Instant>,
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
            reuse: true,
            deadline: None,
        }
    }

    /// True once the deadline has passed.
    pub fn out_of_time(&self) -> bool {
        self.deadline
            .is_some_and(|d| std::time::Instant::now() >= d)
    }

    /// log2 of how far the process's need at `p` must come down to fit
    /// (negative when it fits with room to spare).
    pub fn needed_log2(&self, net: &Network, p: &Point) -> f64 {
        let target = self.avail_elements(net) * self.dtype.bytes() as f64;
        p.excess_log2() - target.max(1.0).log2()
    }

    /// Elements a process has for held intermediates and slices: the budget
    /// less inputs and output, over the element size.
    pub fn avail_elements(&self, net: &Network) -> f64 {
        let fixed = inputs_bytes(net, self.dtype) + output_bytes(net, self.dtype);
        (self.budget_bytes as f64 - fixed) / self.dtype.bytes() as f64
    }
}

/// One priced slice set on one tree.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    /// The sliced indices, in the order they were chosen.
    pub sliced: Vec<IndexId>,
    /// Product of their dimensions.
    pub slices: Count,
    /// Total ops of one slice (without the held intermediates' work).
    pub per_slice_total_ops: Count,
    /// Width of one slice (held intermediates count as its inputs).
    pub per_slice_width: f64,
    /// Peak elements of one slice (executor model).
    pub per_slice_peak: Count,
    /// Total ops of the plan: the held intermediates' work once plus
    /// slices x per-slice total ops (with reuse off, slices x per-slice).
    pub total_ops: Count,
    /// Total ops when every slice does all the work: slices x (per-slice
    /// total ops + the held intermediates' work).
    pub plain_total_ops: Count,
    /// Ops of the held intermediates (done once per process).
    pub invariant_ops: Count,
    /// The held intermediates (node ids), in the order they are computed.
    pub held: Vec<usize>,
    /// What a process needs.
    pub need: MemoryNeed,
    /// The traversal: the held intermediates' merges first (setup), then
    /// one slice's merges.
    pub order: Vec<usize>,
    /// Merges of the setup at the head of `order`.
    pub setup_merges: usize,
}

impl Point {
    /// Prices slice set `sliced` on the tree behind `sets`, with reuse of
    /// invariant intermediates when `opts.reuse` (held set chosen by
    /// [`reuse::choose_held`] for the budget).
    pub fn evaluate(
        sets: &NodeSets,
        net: &Network,
        sliced: &[IndexId],
        opts: &SliceOptions,
    ) -> Point {
        let priced = if opts.reuse {
            reuse::choose_held(
                sets,
                net,
                sliced,
                opts.avail_elements(net),
                opts.slices_at_once,
            )
        } else {
            reuse::price(sets, net, sliced, &[])
        };
        Point::from_priced(net, sliced, priced, opts)
    }

    /// Prices slice set `sliced` holding exactly `held` (as a plan records).
    pub fn evaluate_held(
        sets: &NodeSets,
        net: &Network,
        sliced: &[IndexId],
        held: &[usize],
        opts: &SliceOptions,
    ) -> Point {
        Point::from_priced(net, sliced, reuse::price(sets, net, sliced, held), opts)
    }

    fn from_priced(
        net: &Network,
        sliced: &[IndexId],
        p: reuse::Priced,
        opts: &SliceOptions,
    ) -> Point {
        let slices = Count {
            exact: crate::num::product(sliced.iter().map(|&e| net.indices[e].dim)),
            log2: sliced
                .iter()
                .map(|&e| (net.indices[e].dim as f64).log2())
                .sum(),
        };
        let bytes = opts.dtype.bytes() as f64;
        let per_slice = p.per_slice.total_ops;
        Point {
            sliced: sliced.to_vec(),
            slices,
            per_slice_total_ops: per_slice,
            per_slice_width: p.per_slice.width,
            per_slice_peak: p.per_slice.peak,
            total_ops: p.invariant_ops + per_slice * slices,
            plain_total_ops: (per_slice + p.invariant_ops) * slices,
            invariant_ops: p.invariant_ops,
            held: p.held,
            need: MemoryNeed {
                inputs_bytes: inputs_bytes(net, opts.dtype),
                output_bytes: output_bytes(net, opts.dtype),
                per_slice_peak_bytes: p.per_slice.peak.to_f64() * bytes,
                slices_at_once: opts.slices_at_once,
                reused_bytes: p.held_elements * bytes,
                setup_bytes: p.setup_elements * bytes,
            },
            order: p.per_slice.order,
            setup_merges: p.setup_merges,
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

    /// log2 of what slicing can still shrink: the process's need less
    /// inputs and output (held intermediates and the slices at once).
    pub fn excess_log2(&self) -> f64 {
        (self.need.total_bytes() - self.need.fixed_bytes())
            .max(1.0)
            .log2()
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
    /// The slice-aware search: slicing interleaved with reconfiguration
    /// of the sliced tree.
    SliceAware,
    /// Every slice set of a few indices (small networks).
    Exhaustive,
    /// The greedy on another tree of the search's width/ops front (a
    /// narrower tree than the cheapest).
    SearchFront,
    /// The greedy from the cut of a balanced bisection of the network, on
    /// a tree re-planned for the network so sliced.
    BisectionCut,
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
    /// The lower bound on total ops of every fitting slice set on the
    /// chosen tree (when slicing is needed).
    pub bound: Option<bound::OpsBound>,
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

/// The points met so far and the trees they are on.
struct Pool {
    trees: Vec<Tree>,
    seen: Vec<Seen>,
}

impl Pool {
    fn tree_id(&mut self, t: Tree) -> usize {
        match self.trees.iter().position(|x| *x == t) {
            Some(id) => id,
            None => {
                self.trees.push(t);
                self.trees.len() - 1
            }
        }
    }

    fn add(&mut self, points: impl IntoIterator<Item = Point>, origin: Origin, tree: usize) {
        self.seen.extend(points.into_iter().map(|point| Seen {
            point,
            origin,
            tree,
        }));
    }

    fn add_with_trees(&mut self, found: Vec<(Point, Tree)>, origin: Origin) {
        for (point, t) in found {
            let id = self.tree_id(t);
            self.add([point], origin, id);
        }
    }

    /// Swap search ([`greedy::swap_search`]) from the best fitting sets of
    /// the [`POLISHED_TREES`] trees whose best sets are cheapest.
    fn polish(&mut self, net: &Network, opts: &SliceOptions) {
        let mut best_per_tree: Vec<usize> = Vec::new();
        for (i, s) in self.seen.iter().enumerate() {
            if !s.point.fits(opts) {
                continue;
            }
            match best_per_tree
                .iter_mut()
                .find(|j| self.seen[**j].tree == s.tree)
            {
                Some(j) if by_ops_key(&s.point) < by_ops_key(&self.seen[*j].point) => *j = i,
                Some(_) => {}
                None => best_per_tree.push(i),
            }
        }
        best_per_tree.sort_by_key(|&i| by_ops_key(&self.seen[i].point));
        best_per_tree.truncate(POLISHED_TREES);
        for i in best_per_tree {
            if opts.out_of_time() {
                break;
            }
            let (tree, origin) = (self.seen[i].tree, self.seen[i].origin);
            let sets = NodeSets::new(net, &self.trees[tree]);
            let p = greedy::swap_search(&sets, net, opts, &self.seen[i].point, 3);
            if by_ops_key(&p) < by_ops_key(&self.seen[i].point) {
                self.add([p], origin, tree);
            }
        }
    }

    /// log2 total ops of the best fitting set seen on tree `id` (infinity
    /// when none fits).
    fn best_fitting(&self, id: usize, opts: &SliceOptions) -> f64 {
        self.seen
            .iter()
            .filter(|s| s.tree == id && s.point.fits(opts))
            .map(|s| s.point.total_ops.log2)
            .fold(f64::INFINITY, f64::min)
    }

    /// Slices a balanced cut of the network and slices on greedily: the
    /// indices shared by the two halves of a balanced bisection
    /// ([`crate::search::partition_tree`], `tries` seeds), with the tree
    /// re-planned by `refit` for the network so sliced (within `cap`), the
    /// greedy from that set, its first fitting set pruned. On lattices the
    /// cut splits the network into strips, each narrow; the greedy, adding
    /// one index where the peak is reached, does not find such a cut.
    fn bisection_cut(
        &mut self,
        net: &Network,
        opts: &SliceOptions,
        refit: &mut Refit<'_>,
        cap: f64,
        tries: i32,
    ) {
        use rand::SeedableRng;
        let problem = crate::search::Problem::from_network(net);
        let n = net.num_tensors();
        for seed in 1..=tries {
            if opts.out_of_time() {
                return;
            }
            let params = crate::search::PartitionParams {
                imbalance: 0.05,
                tries: 4,
                seed,
                ..Default::default()
            };
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed as u64);
            let merges = crate::search::partition_tree(&problem, &params, &mut rng);
            let Ok(halves) = Tree::new(n, merges) else {
                continue;
            };
            let sets = NodeSets::new(net, &halves);
            let [a, b] = sets.merge(n - 2);
            let cut: Vec<IndexId> = sets.indices[a]
                .iter()
                .copied()
                .filter(|e| sets.indices[b].contains(e) && net.indices[*e].dim > 1)
                .collect();
            let log2: f64 = cut
                .iter()
                .map(|&e| (net.indices[e].dim as f64).log2())
                .sum();
            if cut.is_empty() || log2 > opts.max_slices_log2 {
                continue;
            }
            let Some(t) = refit(net, &cut, cap) else {
                continue;
            };
            let id = self.tree_id(t);
            let sets = NodeSets::new(net, &self.trees[id]);
            let trail = greedy::greedy(&sets, net, opts, &cut);
            self.add(
                pruned_fit(&sets, net, opts, &trail),
                Origin::BisectionCut,
                id,
            );
        }
    }

    /// The greedy trail on tree `id` and its first fitting set, pruned.
    fn greedy_on(&mut self, net: &Network, id: usize, opts: &SliceOptions, origin: Origin) {
        let sets = NodeSets::new(net, &self.trees[id]);
        let trail = greedy::greedy(&sets, net, opts, &[]);
        let fit = pruned_fit(&sets, net, opts, &trail);
        self.add(trail, origin, id);
        self.add(fit, origin, id);
    }
}

/// The first fitting point of a greedy trail, pruned.
fn pruned_fit(
    sets: &NodeSets,
    net: &Network,
    opts: &SliceOptions,
    trail: &[Point],
) -> Option<Point> {
    trail
        .iter()
        .find(|p| p.fits(opts))
        .map(|p| greedy::prune(sets, net, opts, p))
}

/// Finds a slice set that fits the budget, starting from `tree`.
///
/// Searches, in turn (each step only while time is left before
/// `opts.deadline`; the shares are of the time left at the call):
///
/// 1. the greedy on `tree`, and every set of up to three indices when
///    there are few; with `refit`, the greedy on every tree of `front`
///    (other trees of the search's width/ops front);
/// 2. with `refit` (the tree may change): the slice-aware search
///    ([`joint::search`]) from `tree`, restarted with other
///    reconfiguration windows while time is left (until 35%);
/// 3. with `refit`: trees re-planned from the start for a smaller width
///    (the whole needed reduction, and half of it), sliced greedily;
/// 4. with `refit`: the slice-aware search from the front trees whose
///    greedy sets are cheapest, those re-planned trees, and min-fill and
///    min-degree elimination trees (until 75%); then the cuts of four
///    balanced bisections, each sliced whole on a tree re-planned for it,
///    then greedily (after the slice-aware search, whose time the four
///    re-plans would otherwise take: on a circuit that cost 6x to 30x);
/// 5. with `refit`: the greedy that re-plans the whole tree after each
///    index it adds, at most `rounds` times (until 92%);
/// 6. the swap search ([`greedy::swap_search`]) from the best sets of the
///    best few trees (until 95%);
/// 7. the cover programme on the tree of the best set so far, and the
///    lower bound on total ops for the chosen tree ([`bound`]).
pub fn find_slices(
    net: &Network,
    tree: &Tree,
    front: &[Tree],
    opts: &SliceOptions,
    mut refit: Option<&mut Refit<'_>>,
    rounds: usize,
) -> SliceResult {
    let began = std::time::Instant::now();
    let share = |f: f64| -> SliceOptions {
        let mut o = opts.clone();
        o.deadline = opts
            .deadline
            .map(|d| began + d.saturating_duration_since(began).mul_f64(f));
        o
    };
    let sets = NodeSets::new(net, tree);
    let unsliced = Point::evaluate(&sets, net, &[], opts);
    let mut pool = Pool {
        trees: vec![tree.clone()],
        seen: Vec::new(),
    };
    pool.add([unsliced.clone()], Origin::Unsliced, 0);
    pool.greedy_on(net, 0, opts, Origin::Greedy);
    pool.add(
        exhaustive::exhaustive(&sets, net, opts, 3),
        Origin::Exhaustive,
        0,
    );
    // Only with `refit` may the tree change: without it (a tree the user
    // gave) every set is priced on `tree`.
    if !unsliced.fits(opts) && refit.is_some() {
        // The search's narrower trees, sliced greedily (cheap): those that
        // do best become starts of the slice-aware search below.
        let mut front_ids = Vec::new();
        for t in front {
            if opts.out_of_time() {
                break;
            }
            let id = pool.tree_id(t.clone());
            if id != 0 && !front_ids.contains(&id) {
                pool.greedy_on(net, id, opts, Origin::SearchFront);
                front_ids.push(id);
            }
        }
        let o = share(0.35);
        if !o.out_of_time() {
            let found = joint::search(net, std::slice::from_ref(tree), &o);
            pool.add_with_trees(found, Origin::SliceAware);
        }
        // Trees planned from the start for a smaller width: the need must
        // come down by `needed` (log2); ask for a width lower by all of
        // it, and by half of it.
        let mut starts: Vec<Tree> = Vec::new();
        front_ids.sort_by(|&a, &b| {
            pool.best_fitting(a, opts)
                .total_cmp(&pool.best_fitting(b, opts))
        });
        for &id in front_ids.iter().take(FRONT_STARTS) {
            starts.push(pool.trees[id].clone());
        }
        if let Some(refit) = refit.as_mut() {
            let needed = opts.needed_log2(net, &unsliced);
            for share in [1.0, 0.5] {
                let cap = unsliced.per_slice_width - (needed * share).ceil();
                if cap < 1.0 || opts.out_of_time() {
                    continue;
                }
                let Some(t) = refit(net, &[], cap) else {
                    continue;
                };
                let id = pool.tree_id(t.clone());
                pool.greedy_on(net, id, opts, Origin::Cooptimised);
                starts.push(t);
            }
        }
        if net.num_tensors() <= ELIMINATION_START_MAX {
            for t in [
                crate::search::min_fill_tree(net),
                crate::search::min_degree_tree(net),
            ] {
                if !starts.contains(&t) && t != *tree {
                    starts.push(t);
                }
            }
        }
        let o = share(0.75);
        pool.add_with_trees(joint::search(net, &starts, &o), Origin::SliceAware);
        if let Some(refit) = refit.as_mut() {
            if n_tensors_for_cut(net) {
                let needed = opts.needed_log2(net, &unsliced);
                let cap = unsliced.per_slice_width - needed.ceil();
                pool.bisection_cut(net, opts, &mut **refit, cap.max(1.0), BISECTIONS);
            }
        }
        // Co-optimisation: slice one index at a time and re-plan the tree
        // for the sliced network after each.
        if let Some(refit) = refit.as_mut() {
            let o = share(0.92);
            if !o.out_of_time() {
                let found = greedy::interleaved(net, tree, &o, &mut **refit, rounds);
                pool.add_with_trees(found, Origin::Cooptimised);
            }
        }
    }
    pool.polish(net, &share(0.95));
    let seen = &pool.seen;
    // The cover programme runs on the tree of the best set so far.
    let final_tree = pick(seen, opts, by_ops_key)
        .map(|i| seen[i].tree)
        .unwrap_or(0);
    let final_sets = NodeSets::new(net, &pool.trees[final_tree]);
    let cover_opts = share(0.96);
    let cover = if opts.cover && !cover_opts.out_of_time() {
        let mut o = cover_opts;
        if let Some(d) = o.deadline {
            let left = d.saturating_duration_since(std::time::Instant::now());
            o.cover_seconds = o.cover_seconds.min(left.as_secs_f64());
        }
        let (report, candidate) = cover::cover(&final_sets, net, &o);
        pool.add(candidate, Origin::Cover, final_tree);
        report
    } else {
        None
    };
    let seen = &pool.seen;
    let by_ops = pick(seen, opts, by_ops_key);
    let by_slices = pick(seen, opts, |p| {
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
    let bound = if unsliced.fits(opts) {
        None
    } else {
        bound::ops_lower_bound(&NodeSets::new(net, &pool.trees[chosen_tree]), net, opts)
    };
    SliceResult {
        frontier: frontier(&points, unsliced.total_ops, limit, opts, chosen),
        tree: pool.trees[chosen_tree].clone(),
        chosen: by_ops.map(|i| (seen[i].point.clone(), seen[i].origin)),
        fewest_slices: by_slices.map(|i| seen[i].point.clone()),
        unsliced,
        smallest_need_bytes,
        cover,
        bound,
    }
}

/// Balanced bisections whose cuts [`Pool::bisection_cut`] tries (each
/// takes one tree re-plan).
const BISECTIONS: i32 = 4;

/// True when a balanced bisection is worth its time: networks of at least
/// 16 tensors (smaller ones are searched exhaustively or nearly so) and at
/// most [`ELIMINATION_START_MAX`].
fn n_tensors_for_cut(net: &Network) -> bool {
    (16..=ELIMINATION_START_MAX).contains(&net.num_tensors())
}

/// Trees of the search's front that the slice-aware search starts from
/// (those whose greedy sets are cheapest).
const FRONT_STARTS: usize = 3;

/// Trees whose best fitting sets the swap search polishes.
const POLISHED_TREES: usize = 4;

/// Networks above this many tensors get no elimination-tree restarts.
const ELIMINATION_START_MAX: usize = 20_000;

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
