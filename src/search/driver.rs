//! The driver: price the simple orders, run randomised trials chosen by a
//! bandit, refine the best trees, price the result; within a budget of
//! trials, of wall time, or both.
//!
//! # What it computes
//!
//! [`find_tree`] searches for a tree minimising an [`Objective`]:
//!
//! 1. **Simplify**: drop unit indices, merge parallel ones (and, in a second
//!    problem, absorb small tensors into a neighbour).
//! 2. **Candidates**: the exact finder when the network has at most
//!    [`EXACT_AUTO`] tensors (when that is the unabsorbed network with at
//!    most 12 tensors and the objective is one the exact finder optimises,
//!    the search ends there); then the file order and a breadth-first
//!    sweep (linear time, so a valid tree exists within milliseconds even
//!    at 10^6 tensors); then, in parallel and cut off at 40% of the time
//!    budget, a plain greedy tree, min-fill, min-degree and a nested
//!    dissection (with the lower bounds computed alongside). The answer is
//!    never worse than any of these that finished, for the objective.
//! 3. **Trials**, in rounds of 8: each draws an arm of a [`Bandit`] over
//!    finders and parameter ranges (greedy, partitioning, min-fill,
//!    min-degree, nested dissection, local search on the elimination order
//!    of the best tree so far), runs it on the unabsorbed or absorbed
//!    problem (a coin toss), and polishes the tree (see `trial.rs`). A
//!    trial is not started when the time its finder took before (with a
//!    margin of half again) would end it past the refinement's end, and is
//!    cut at three times that.
//! 4. **Refine**: the best three distinct trees get subtree reconfiguration
//!    in linear passes, with windows of k = 5 (6 for trees of at most 64
//!    tensors), 6, ... up to 9 (10) leaves: k grows while time is left and
//!    a pass changes nothing; random windows alternate with largest-first
//!    ones. A tree whose nodes hold more than 2 x 10^8 index entries, or
//!    whose pass would not fit in the time left (about 60 ns per entry to
//!    set up), is not refined. With a trial budget only, the best tree gets
//!    three passes with k = 8 (6 above 2,000 tensors). When refinement ends
//!    with more than 5% of the time left, trials resume (leaving 5% for a
//!    last refinement).
//! 5. **Pricing**: the tree over the network's tensors and its metrics by
//!    the cost model ([`super::price::tree_metrics`], which never holds all
//!    node lists at once).
//!
//! # The budget
//!
//! `time` is wall time from the call to the result, simplification and
//! pricing included. The final pricing is reserved from the start of the
//! trials by an estimate (the index entries its pricing walks at 20 ns
//! each, plus 200 ns per tensor); the refinement gets the 15% before it.
//! Finders take the end of the refinement as a deadline (greedy, the
//! elimination orders and partitioning check it as they go; nested
//! dissection cannot be stopped, so it only starts when its expected time
//! fits), so searches end within a few percent of the budget, earlier only
//! when the exact finder proves the optimum, a trial budget runs out, or
//! `stop` is set. With `trials` and `time` both, the search stops at
//! whichever comes first. Measured on a 2-core machine: 9.2 to 10.0 s for
//! 10 s on the treewidth benchmark, 10.2 to 10.7 s on a 3-regular graph of
//! 10^5 vertices, 122.9 s for 120 s on a 10^6-tensor lattice (where
//! simplification alone takes 18 s).
//!
//! # Determinism
//!
//! Candidates are deterministic; trial i draws everything from a ChaCha8
//! generator seeded from (seed, i), its arm from the bandit's state after
//! the earlier rounds (rewards taken in trial order), and the best is the
//! least (score, sequence number). So with a trial budget and no time limit
//! the result is the same tree whatever the number of threads.
//!
//! # Complexity
//!
//! The sum of the finders' costs (see each), spread over the threads.
//!
//! # Example
//!
//! ```
//! use sliceplan::formats::einsum::network_from_einsum;
//! use sliceplan::search::{find_tree, SearchOptions};
//! let dims = [("a", 30), ("b", 35), ("c", 15), ("d", 5), ("e", 10), ("f", 20), ("g", 25)]
//!     .map(|(n, d)| (n.to_string(), d));
//! let net = network_from_einsum("ab,bc,cd,de,ef,fg->ag", None, &dims).unwrap();
//! let result = find_tree(&net, &SearchOptions::trials(20, 1)).unwrap();
//! assert_eq!(result.metrics.total_ops.exact, Some(15125));
//! ```

use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Mutex;
use std::time::{Duration, Instant};

use super::bandit::{Arm, Bandit};
use super::bound::lower_bounds;
use super::exact::ALL_SUBSETS_MAX;
use super::objective::{Key, Measures};
use super::options::{PhaseTimes, Progress, SearchOptions, SearchResult};
use super::price::tree_metrics;
use super::simplify::Simplified;
use super::trial::arms;
use crate::error::{Error, Result};
use crate::network::{IndexId, Network};
use crate::num::log2_add;
use crate::tree::Tree;

/// Networks up to this many tensors (after simplification) get an exact
/// candidate.
pub const EXACT_AUTO: usize = 16;

/// Sequence number of trial 0 (candidates are numbered below it).
pub(super) const TRIAL_SEQ_BASE: u64 = 1_000;

/// Trials per bandit round.
pub(super) const ROUND: usize = 8;

/// Distinct best trees kept for the final refinement.
const KEEP: usize = 3;

/// Trees whose nodes hold more index entries than this are not refined
/// (refinement keeps every node's list: about 12 bytes per entry).
pub(super) const REFINE_MAX_ENTRIES: u64 = 200_000_000;

/// Estimated seconds of final pricing per index entry of the best tree
/// (merging counted lists and taking products), with a margin.
const PRICING_SECONDS_PER_ENTRY: f64 = 20e-9;

/// Share of a time budget after which the candidates still running are
/// dropped.
pub(super) const CANDIDATE_SHARE: f64 = 0.4;

/// Share of a time budget kept for the final refinement.
const REFINE_SHARE: f64 = 0.15;

/// One priced tree.
#[derive(Debug, Clone)]
pub(super) struct Found {
    pub(super) key: Key,
    /// Order of pricing: candidates first, then trials (ties go to the
    /// lower number).
    pub(super) seq: u64,
    pub(super) problem: usize,
    pub(super) merges: Vec<[usize; 2]>,
    pub(super) measures: Measures,
    /// Index entries of all its nodes (what refinement would hold).
    pub(super) entries: u64,
    /// Index entries its final pricing walks: `entries`, or the network's
    /// for a left-deep tree (priced by a running set).
    pub(super) price_entries: u64,
    pub(super) finder: String,
    pub(super) at: Duration,
}

/// The best few distinct trees so far, and the width/ops front.
#[derive(Default)]
pub(super) struct Pool {
    pub(super) top: Vec<Found>,
    /// Trees no other tree beats on both width and total ops, at most one
    /// per whole width, when kept at all (`keep_front`).
    pub(super) front: Vec<Found>,
    pub(super) keep_front: bool,
}

impl Pool {
    pub(super) fn insert(&mut self, f: Found) {
        if self.keep_front {
            self.offer_front(&f);
        }
        if let Some(old) = self.top.iter_mut().find(|o| o.key == f.key) {
            if f.seq < old.seq {
                *old = f;
            }
        } else {
            self.top.push(f);
        }
        self.top.sort_by_key(|a| (a.key, a.seq));
        self.top.truncate(KEEP);
    }

    pub(super) fn best(&self) -> Option<&Found> {
        self.top.first()
    }

    /// Keeps `f` on the front when no kept tree is as narrow and as cheap
    /// (within the same whole width, the cheaper one stays), at most
    /// [`FRONT_KEEP`] trees (the costliest go first).
    fn offer_front(&mut self, f: &Found) {
        let (w, o) = (f.measures.width, f.measures.total_ops_log2);
        let bucket = |x: f64| (x + 1e-9).floor() as i64;
        let beaten = |g: &Found| {
            let (gw, go) = (g.measures.width, g.measures.total_ops_log2);
            go <= o + 1e-9 && (gw <= w + 1e-9 || bucket(gw) == bucket(w))
        };
        if self.front.iter().any(beaten) {
            return;
        }
        self.front.retain(|g| {
            let (gw, go) = (g.measures.width, g.measures.total_ops_log2);
            !(o <= go + 1e-9 && (w <= gw + 1e-9 || bucket(gw) == bucket(w)))
        });
        self.front.push(f.clone());
        if self.front.len() > FRONT_KEEP {
            self.front.sort_by(|a, b| {
                a.measures
                    .total_ops_log2
                    .total_cmp(&b.measures.total_ops_log2)
            });
            self.front.truncate(FRONT_KEEP);
        }
    }
}

/// Trees kept on the width/ops front (see [`SearchResult::front`]).
const FRONT_KEEP: usize = 10;

/// Networks above this many tensors keep no front (each tree on it holds
/// a merge list as long as the network).
const FRONT_MAX_TENSORS: usize = 20_000;

/// Searches with the options; see the module docs.
pub fn find_tree(net: &Network, opts: &SearchOptions) -> Result<SearchResult> {
    find_tree_with(net, opts, &|_| {}, &AtomicBool::new(false))
}

/// Searches as if the indices in `sliced` had dimension 1 (one slice), as
/// the slicing stage re-plans a tree for a slice set. The tree is over the
/// same tensors; the metrics and lower bound are per slice.
pub fn find_tree_sliced(
    net: &Network,
    sliced: &[IndexId],
    opts: &SearchOptions,
) -> Result<SearchResult> {
    let mut one_slice = net.clone();
    for &e in sliced {
        let index = one_slice.indices.get_mut(e).ok_or_else(|| {
            Error::usage(format!(
                "sliced index id {e} is out of range (the network has {} indices)",
                net.num_indices()
            ))
        })?;
        index.dim = 1;
    }
    find_tree(&one_slice, opts)
}

/// Like [`find_tree`], calling `progress` after each candidate and trial
/// (from worker threads) and stopping early, keeping the best so far, once
/// `stop` is set.
pub fn find_tree_with(
    net: &Network,
    opts: &SearchOptions,
    progress: &(dyn Fn(&Progress) + Sync),
    stop: &AtomicBool,
) -> Result<SearchResult> {
    opts.validate()?;
    check_search_memory(net, opts.threads, opts.available_memory)?;
    let start = Instant::now();
    let end = opts.time.map(|t| start + t);
    let mut phases = PhaseTimes::default();
    let plain = Simplified::new(net, false);
    let mut problems = vec![plain];
    if opts.simplify {
        let absorbed = Simplified::new(net, true);
        if absorbed.problem.len() < problems[0].problem.len() {
            problems.push(absorbed);
        }
    }
    phases.simplify = start.elapsed().as_secs_f64();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(opts.threads)
        .build()
        .map_err(|e| Error::Cannot(format!("cannot start worker threads: {e}")))?;
    let ctx = Ctx {
        net,
        opts,
        problems: &problems,
        start,
        progress,
        stop,
        trials_done: AtomicU64::new(0),
        found: Mutex::new(Pool {
            keep_front: net.num_tensors() <= FRONT_MAX_TENSORS,
            ..Pool::default()
        }),
        expected: Mutex::new(Vec::new()),
        candidate_times: Mutex::new(Vec::new()),
    };

    // Candidates.
    let began = Instant::now();
    let (bounds, candidates, exact_done) = pool.install(|| ctx.candidates(end));
    phases.candidates = began.elapsed().as_secs_f64();

    // Trials and refinement, alternating while time is left.
    let mut bandit = Bandit::new({
        let p = &problems[0].problem;
        let a = arms(p, opts.finders.greedy, opts.finders.partition, opts.orders);
        if a.is_empty() {
            vec![Arm::GreedyCold]
        } else {
            a
        }
    });
    let has_arms = opts.finders.greedy || opts.finders.partition || opts.orders;
    let mut next_trial = 0u64;
    let mut refined_key: Option<Key> = None;
    if !exact_done {
        let mut first = true;
        loop {
            let reserve = ctx.pricing_reserve();
            let refine_end = end.map(|e| e.checked_sub(reserve).unwrap_or(start));
            // The first trials leave 15% of the budget to refinement; later
            // ones (when refinement ended early) leave 5%.
            let refine_len =
                opts.time
                    .map_or(Duration::ZERO, |t| match (opts.finders.refine, first) {
                        (false, _) => Duration::ZERO,
                        (true, true) => t.mul_f64(REFINE_SHARE),
                        (true, false) => t / 20,
                    });
            let trial_end = refine_end.map(|e| e.checked_sub(refine_len).unwrap_or(start));
            let began = Instant::now();
            let before = next_trial;
            if has_arms {
                next_trial =
                    pool.install(|| ctx.trials(&mut bandit, next_trial, trial_end, refine_end));
            }
            phases.trials += began.elapsed().as_secs_f64();
            let began = Instant::now();
            if opts.finders.refine && !stop.load(Ordering::SeqCst) {
                match refine_end {
                    None => ctx.final_refine(),
                    Some(deadline) => {
                        let key = ctx.best_key();
                        if refined_key != key {
                            ctx.refine_until(deadline);
                            refined_key = ctx.best_key();
                        }
                    }
                }
            }
            phases.refine += began.elapsed().as_secs_f64();
            // Time left (more than 5% of the budget) goes back to trials.
            let again = match (end, opts.time) {
                (Some(e), Some(t)) => {
                    has_arms
                        && (first || next_trial > before)
                        && e.saturating_duration_since(Instant::now())
                            > t / 20 + ctx.pricing_reserve()
                        && opts.trials.is_none_or(|n| next_trial < n)
                }
                _ => false,
            };
            first = false;
            if !again || stop.load(Ordering::SeqCst) {
                break;
            }
        }
    }

    // Pricing.
    let began = Instant::now();
    let best = ctx.take_best();
    let tree = problems[best.problem].expand(&best.merges);
    let metrics = tree_metrics(net, &tree);
    let mut front: Vec<Tree> = {
        let mut pool = ctx.lock();
        pool.front
            .sort_by(|a, b| a.measures.width.total_cmp(&b.measures.width));
        pool.front
            .iter()
            .map(|f| problems[f.problem].expand(&f.merges))
            .collect()
    };
    // Only trees narrower than the best are of use (ties of the best tree
    // on ops and width are dropped too).
    front.retain(|t| *t != tree && tree_metrics(net, t).width < metrics.width - 1e-9);
    let (lower_bound, op_width_lower_bound) = match bounds {
        Some(b) => b,
        None => lower_bounds(net),
    };
    phases.pricing = began.elapsed().as_secs_f64();
    Ok(SearchResult {
        tree,
        metrics,
        lower_bound,
        trials: ctx.trials_done.load(Ordering::SeqCst),
        best_trial: best.seq.checked_sub(TRIAL_SEQ_BASE).map_or(0, |i| i + 1),
        finder: best.finder,
        seconds_to_best: best.at.as_secs_f64(),
        seconds: start.elapsed().as_secs_f64(),
        interrupted: stop.load(Ordering::SeqCst),
        op_width_lower_bound,
        phases,
        candidates,
        front,
    })
}

/// Everything a search shares between its phases and threads.
pub(super) struct Ctx<'a> {
    pub(super) net: &'a Network,
    pub(super) opts: &'a SearchOptions,
    pub(super) problems: &'a [Simplified],
    pub(super) start: Instant,
    pub(super) progress: &'a (dyn Fn(&Progress) + Sync),
    pub(super) stop: &'a AtomicBool,
    pub(super) trials_done: AtomicU64,
    pub(super) found: Mutex<Pool>,
    /// The longest trial seen per arm.
    pub(super) expected: Mutex<Vec<(Arm, Duration)>>,
    /// How long each candidate took (or ran before it was cut), by finder
    /// name.
    pub(super) candidate_times: Mutex<Vec<(String, Duration)>>,
}

impl Ctx<'_> {
    pub(super) fn exact_is_optimal(&self) -> bool {
        self.opts.objective.solved_by_exact() && self.problems[0].problem.len() <= ALL_SUBSETS_MAX
    }

    /// How long the candidate `name` took, or ran before it was cut; for an
    /// unknown name, the slowest candidate.
    pub(super) fn candidate_time(&self, name: &str) -> Duration {
        let times = self
            .candidate_times
            .lock()
            .unwrap_or_else(|e| e.into_inner());
        times
            .iter()
            .find(|(n, _)| n == name)
            .map(|(_, d)| *d)
            .unwrap_or_else(|| times.iter().map(|(_, d)| *d).max().unwrap_or_default())
    }

    pub(super) fn best_key(&self) -> Option<Key> {
        self.lock().best().map(|b| b.key)
    }

    pub(super) fn lock(&self) -> std::sync::MutexGuard<'_, Pool> {
        self.found.lock().unwrap_or_else(|e| e.into_inner())
    }

    /// Seconds the final pricing of the best tree will take, estimated.
    pub(super) fn pricing_reserve(&self) -> Duration {
        let entries = self.lock().best().map_or(0, |b| b.price_entries);
        Duration::from_secs_f64(
            (entries as f64 * PRICING_SECONDS_PER_ENTRY
                + self.net.num_tensors() as f64 * 200e-9
                + 0.002)
                .min(1e6),
        )
    }

    /// Records a priced tree and reports progress.
    pub(super) fn offer(&self, f: Found) {
        let best = {
            let mut pool = self.lock();
            pool.insert(f);
            pool.best().map(|b| b.measures)
        };
        (self.progress)(&Progress {
            trials_done: self.trials_done.load(Ordering::SeqCst),
            trials_total: self.opts.trials,
            elapsed: self.start.elapsed(),
            best,
        });
    }

    /// A priced tree of problem `k`.
    pub(super) fn found(
        &self,
        seq: u64,
        k: usize,
        merges: Vec<[usize; 2]>,
        finder: String,
    ) -> Found {
        let (measures, entries) = self.measure(k, &merges);
        Found {
            key: self.opts.objective.key(&measures),
            seq,
            problem: k,
            merges,
            measures,
            entries,
            price_entries: entries,
            finder,
            at: self.start.elapsed(),
        }
    }

    /// The measures of a merge list over problem `k`, on the network's own
    /// tensors (the peak by the cost model, only when the objective needs
    /// it), and its index entries.
    pub(super) fn measure(&self, k: usize, merges: &[[usize; 2]]) -> (Measures, u64) {
        let s = &self.problems[k];
        let (e, entries) = s.problem.evaluate_counted(merges);
        let mut m = Measures {
            total_ops_log2: log2_add(s.fixed_ops_log2, e.total_ops_log2),
            width: s.fixed_width.max(e.width),
            op_width: s.fixed_op_width.max(e.op_width),
            peak_log2: None,
        };
        if self.opts.objective.needs_peak() {
            let metrics = tree_metrics(self.net, &s.expand(merges));
            m.peak_log2 = Some(metrics.peak.log2);
        }
        (m, entries)
    }

    /// True when the best tree is the exact optimum.
    pub(super) fn exact_best(&self) -> bool {
        self.lock().best().is_some_and(|b| b.finder == "exact") && self.exact_is_optimal()
    }

    /// The best tree found (the file order at least, priced first).
    pub(super) fn take_best(&self) -> Found {
        let mut pool = self.lock();
        if pool.top.is_empty() {
            // Unreachable in practice (the file order is always priced);
            // kept so that no path can return without a tree.
            drop(pool);
            let order: Vec<u32> = (0..self.problems[0].problem.len() as u32).collect();
            return self.sequence(0, &order, "file-order");
        }
        pool.top.swap_remove(0)
    }
}

/// Memory the search takes per tensor, with the network itself: 4.4 KB
/// measured at peak (maximum resident size) on a 1000x1000 lattice with one
/// thread, 1.7 KB on a 3-regular graph of 10^5 vertices; rounded up.
const SEARCH_BYTES_PER_TENSOR: u64 = 5 << 10;

/// Refuses a search that would not fit in the memory available now, with
/// a message, rather than be killed by the kernel part way. Each extra
/// thread holds its own trial's working copy (about half the figure).
fn check_search_memory(net: &Network, threads: usize, available: Option<u64>) -> Result<()> {
    let Some(available) = available else {
        return Ok(());
    };
    let tensors = net.num_tensors() as u64;
    let workers = match threads {
        0 => std::thread::available_parallelism().map_or(1, |n| n.get()),
        t => t,
    } as u64;
    let need = tensors.saturating_mul(SEARCH_BYTES_PER_TENSOR / 2 * (workers + 1));
    if need <= available {
        return Ok(());
    }
    Err(Error::Cannot(format!(
        "searching a network of {tensors} tensors with {workers} thread(s) needs about {} (an estimate: {:.1} KiB per tensor per thread, measured on large lattices), but only {} is available; use fewer threads, run on a larger machine, or give a tree file",
        crate::cost::bytes::bytes_human(need as f64),
        SEARCH_BYTES_PER_TENSOR as f64 / 2.0 / 1024.0,
        crate::cost::bytes::bytes_human(available as f64),
    )))
}

/// The seed of trial `i`: a SplitMix64 step over the seed and trial number,
/// so neighbouring trials get unrelated generators.
pub(super) fn trial_seed(seed: u64, i: u64) -> u64 {
    let mut z = seed ^ i.wrapping_mul(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}
