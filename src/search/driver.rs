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

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::bandit::{Arm, Bandit};
use super::baseline::sweep_order;
use super::bound::{lower_bounds, WidthBound};
use super::dissect::{dissection_tree, DissectParams};
use super::exact::{exact_tree, ALL_SUBSETS_MAX};
use super::greedy::{greedy_tree_until, GreedyParams};
use super::objective::{Key, Measures};
use super::options::{CandidateScore, PhaseTimes, Progress, SearchOptions, SearchResult};
use super::order::{elimination_tree, OrderParams, OrderRule};
use super::price::tree_metrics;
use super::problem::left_deep;
use super::refine::{refine_tree, RefineParams};
use super::simplify::Simplified;
use super::trial::{arms, polish, run_arm, Effort};
use crate::error::{Error, Result};
use crate::network::{IndexId, Network};
use crate::num::log2_add;

/// Networks up to this many tensors (after simplification) get an exact
/// candidate.
pub const EXACT_AUTO: usize = 16;

/// Trials per bandit round.
const ROUND: usize = 8;

/// Distinct best trees kept for the final refinement.
const KEEP: usize = 3;

/// Trees whose nodes hold more index entries than this are not refined
/// (refinement keeps every node's list: about 12 bytes per entry).
const REFINE_MAX_ENTRIES: u64 = 200_000_000;

/// Estimated seconds of final pricing per index entry of the best tree
/// (merging counted lists and taking products), with a margin.
const PRICING_SECONDS_PER_ENTRY: f64 = 20e-9;

/// Share of a time budget after which the candidates still running are
/// dropped.
const CANDIDATE_SHARE: f64 = 0.4;

/// Share of a time budget kept for the final refinement.
const REFINE_SHARE: f64 = 0.15;

/// One priced tree.
#[derive(Debug, Clone)]
struct Found {
    key: Key,
    /// Order of pricing: candidates first, then trials (ties go to the
    /// lower number).
    seq: u64,
    problem: usize,
    merges: Vec<[usize; 2]>,
    measures: Measures,
    /// Index entries of all its nodes (what refinement would hold).
    entries: u64,
    /// Index entries its final pricing walks: `entries`, or the network's
    /// for a left-deep tree (priced by a running set).
    price_entries: u64,
    finder: String,
    at: Duration,
}

/// The best few distinct trees so far.
#[derive(Default)]
struct Pool {
    top: Vec<Found>,
}

impl Pool {
    fn insert(&mut self, f: Found) {
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

    fn best(&self) -> Option<&Found> {
        self.top.first()
    }
}

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
        found: Mutex::new(Pool::default()),
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
        best_trial: best.seq,
        finder: best.finder,
        seconds_to_best: best.at.as_secs_f64(),
        seconds: start.elapsed().as_secs_f64(),
        interrupted: stop.load(Ordering::SeqCst),
        op_width_lower_bound,
        phases,
        candidates,
    })
}

/// Everything a search shares between its phases and threads.
struct Ctx<'a> {
    net: &'a Network,
    opts: &'a SearchOptions,
    problems: &'a [Simplified],
    start: Instant,
    progress: &'a (dyn Fn(&Progress) + Sync),
    stop: &'a AtomicBool,
    trials_done: AtomicU64,
    found: Mutex<Pool>,
    /// The longest trial seen per arm.
    expected: Mutex<Vec<(Arm, Duration)>>,
    /// How long each candidate took (or ran before it was cut), by finder
    /// name.
    candidate_times: Mutex<Vec<(String, Duration)>>,
}

/// What one task of the parallel batch gives: the lower bounds, or a tree
/// and the time it took.
type BatchResult = (Option<(WidthBound, f64)>, Option<(Found, Duration)>);

/// A candidate finder run in the parallel batch.
#[derive(Debug, Clone, Copy)]
enum Batch {
    Bounds,
    Greedy,
    MinFill,
    MinDegree,
    Dissection,
}

impl Ctx<'_> {
    fn exact_is_optimal(&self) -> bool {
        self.opts.objective.solved_by_exact() && self.problems[0].problem.len() <= ALL_SUBSETS_MAX
    }

    /// How long the candidate `name` took, or ran before it was cut; for an
    /// unknown name, the slowest candidate.
    fn candidate_time(&self, name: &str) -> Duration {
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

    fn best_key(&self) -> Option<Key> {
        self.lock().best().map(|b| b.key)
    }

    fn lock(&self) -> std::sync::MutexGuard<'_, Pool> {
        self.found.lock().unwrap_or_else(|e| e.into_inner())
    }

    /// Seconds the final pricing of the best tree will take, estimated.
    fn pricing_reserve(&self) -> Duration {
        let entries = self.lock().best().map_or(0, |b| b.price_entries);
        Duration::from_secs_f64(
            (entries as f64 * PRICING_SECONDS_PER_ENTRY
                + self.net.num_tensors() as f64 * 200e-9
                + 0.002)
                .min(1e6),
        )
    }

    /// Records a priced tree and reports progress.
    fn offer(&self, f: Found) {
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
    fn found(&self, seq: u64, k: usize, merges: Vec<[usize; 2]>, finder: String) -> Found {
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
    fn measure(&self, k: usize, merges: &[[usize; 2]]) -> (Measures, u64) {
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

    /// Prices the exact tree, the file order and the sweep, then the
    /// parallel batch; returns the lower bounds (when computed), the
    /// candidates' scores, and whether the exact tree is provably optimal.
    fn candidates(
        &self,
        end: Option<Instant>,
    ) -> (Option<(WidthBound, f64)>, Vec<CandidateScore>, bool) {
        let mut scores = Vec::new();
        let mut seq = 0u64;
        let goal = self.opts.objective.exact_goal();
        let note = |f: &Found, took: Duration, scores: &mut Vec<CandidateScore>| {
            scores.push(CandidateScore {
                finder: f.finder.clone(),
                total_ops_log2: f.measures.total_ops_log2,
                width: f.measures.width,
                op_width: f.measures.op_width,
                seconds: took.as_secs_f64(),
            });
        };
        if self.opts.finders.exact {
            // The unabsorbed problem when it fits (optimal there), else
            // the absorbed one.
            for (k, s) in self.problems.iter().enumerate() {
                if s.problem.len() <= EXACT_AUTO {
                    let began = Instant::now();
                    if let Some(m) = exact_tree(&s.problem, goal) {
                        let f = self.found(seq, k, m, "exact".into());
                        seq += 1;
                        note(&f, began.elapsed(), &mut scores);
                        self.offer(f);
                        if k == 0 && self.exact_is_optimal() {
                            return (None, scores, true);
                        }
                        break;
                    }
                }
            }
        }
        let p = &self.problems[0].problem;
        let n = p.len();
        // The file order: always, as the tree of last resort.
        let began = Instant::now();
        let order: Vec<u32> = (0..n as u32).collect();
        let file = self.sequence(seq, &order, "file-order");
        seq += 1;
        note(&file, began.elapsed(), &mut scores);
        self.offer(file);
        if !self.opts.candidates {
            return (None, scores, false);
        }
        if !self.stop.load(Ordering::SeqCst) {
            let began = Instant::now();
            let order = sweep_order(p);
            let sweep = self.sequence(seq, &order, "sweep");
            note(&sweep, began.elapsed(), &mut scores);
            self.offer(sweep);
        }
        seq += 1;
        // The parallel batch, cut at 40% of the budget (a finder that is
        // cut is dropped; nested dissection, which cannot be stopped, only
        // starts with half the budget left).
        let deadline = end.map(|e| {
            let t = e.saturating_duration_since(self.start);
            self.start + t.mul_f64(CANDIDATE_SHARE)
        });
        // Highest priority first: on 10^5 tensors each takes seconds, and
        // dissection (strongest on large sparse networks) cannot be cut.
        let batch = [
            Batch::Dissection,
            Batch::Greedy,
            Batch::MinFill,
            Batch::MinDegree,
            Batch::Bounds,
        ];
        let run = |i: usize, b: Batch| -> BatchResult {
            if self.stop.load(Ordering::SeqCst) && !matches!(b, Batch::Bounds) {
                return (None, None);
            }
            if deadline.is_some_and(|d| Instant::now() >= d) && !matches!(b, Batch::Bounds) {
                return (None, None);
            }
            let began = Instant::now();
            let mut rng =
                ChaCha8Rng::seed_from_u64(trial_seed(self.opts.seed, u64::MAX - i as u64));
            let merges = match b {
                Batch::Bounds => return (Some(lower_bounds(self.net)), None),
                Batch::Greedy => greedy_tree_until(p, &GreedyParams::default(), &mut rng, deadline),
                Batch::MinFill => elimination_tree(
                    p,
                    &OrderParams::plain(OrderRule::MinFill),
                    &mut rng,
                    deadline,
                ),
                Batch::MinDegree => elimination_tree(
                    p,
                    &OrderParams::plain(OrderRule::MinDegree),
                    &mut rng,
                    deadline,
                ),
                Batch::Dissection => {
                    // METIS cannot be stopped: only when at least half
                    // the budget is left.
                    let late = end.is_some_and(|e| {
                        let left = e.saturating_duration_since(Instant::now());
                        left < e.saturating_duration_since(self.start) / 2
                    });
                    if late || p.weight.len() < 16 {
                        None
                    } else {
                        dissection_tree(p, &DissectParams::default())
                    }
                }
            };
            let name = match b {
                Batch::Greedy => "greedy",
                Batch::MinFill => "min-fill",
                Batch::MinDegree => "min-degree",
                Batch::Dissection => "dissection",
                Batch::Bounds => unreachable!("returned above"),
            };
            let f = merges.map(|m| self.found(seq + i as u64, 0, m, name.into()));
            (None, f.map(|f| (f, began.elapsed())))
        };
        let collected: Mutex<Vec<(usize, BatchResult)>> = Mutex::new(Vec::new());
        rayon::scope_fifo(|s| {
            for (i, &b) in batch.iter().enumerate() {
                let (run, collected) = (&run, &collected);
                s.spawn_fifo(move |_| {
                    let began = Instant::now();
                    let r = run(i, b);
                    let name = match b {
                        Batch::Greedy => "greedy",
                        Batch::MinFill => "min-fill",
                        Batch::MinDegree => "min-degree",
                        Batch::Dissection => "dissection",
                        Batch::Bounds => "bounds",
                    };
                    // A candidate skipped at once says nothing of its cost;
                    // one cut by the deadline needed more than it had.
                    let mut took = began.elapsed();
                    if r.1.is_none() && !matches!(b, Batch::Bounds) {
                        took *= 3;
                    }
                    if r.1.is_some() || took > Duration::from_millis(3) {
                        self.candidate_times
                            .lock()
                            .unwrap_or_else(|e| e.into_inner())
                            .push((name.to_string(), took));
                    }
                    collected
                        .lock()
                        .unwrap_or_else(|e| e.into_inner())
                        .push((i, r));
                });
            }
        });
        let mut results = collected.into_inner().unwrap_or_else(|e| e.into_inner());
        results.sort_by_key(|r| r.0);
        let results: Vec<BatchResult> = results.into_iter().map(|r| r.1).collect();
        let mut bounds = None;
        for (b, f) in results {
            if b.is_some() {
                bounds = b;
            }
            if let Some((f, took)) = f {
                note(&f, took, &mut scores);
                self.offer(f);
            }
        }
        (bounds, scores, false)
    }

    /// A priced left-deep tree over problem 0 in `order` (linear time).
    fn sequence(&self, seq: u64, order: &[u32], name: &str) -> Found {
        let s = &self.problems[0];
        let merges = left_deep(s.problem.len(), order);
        if self.opts.objective.needs_peak() {
            return self.found(seq, 0, merges, name.into());
        }
        let (e, entries) = s.problem.evaluate_sequence(order);
        let measures = Measures {
            total_ops_log2: log2_add(s.fixed_ops_log2, e.total_ops_log2),
            width: s.fixed_width.max(e.width),
            op_width: s.fixed_op_width.max(e.op_width),
            peak_log2: None,
        };
        Found {
            key: self.opts.objective.key(&measures),
            seq,
            problem: 0,
            merges,
            measures,
            entries,
            price_entries: s.problem.tensors.iter().map(|t| t.len() as u64).sum(),
            finder: name.into(),
            at: self.start.elapsed(),
        }
    }

    /// Runs rounds of trials from trial `first` until the trial budget or
    /// `trial_end`; returns the next trial number.
    fn trials(
        &self,
        bandit: &mut Bandit,
        first: u64,
        trial_end: Option<Instant>,
        hard_end: Option<Instant>,
    ) -> u64 {
        let goal = self.opts.objective.exact_goal();
        let base = 1_000u64;
        let mut next = first;
        // Expected duration per arm: the longest trial of that arm so far,
        // or before any, the candidate of the same finder (the slowest
        // candidate for partitioning, which bisects like dissection).
        // With a margin of half again: trials run beside each other.
        let expect = |arm: Arm| -> Duration {
            let e = self.expected.lock().unwrap_or_else(|e| e.into_inner());
            let d = e
                .iter()
                .find(|(a, _)| *a == arm)
                .map(|(_, d)| *d)
                .unwrap_or_else(|| {
                    let name = match arm {
                        Arm::PartitionSmall | Arm::PartitionLarge => "",
                        Arm::OrderSearch => "min-fill",
                        other => other.name(),
                    };
                    self.candidate_time(name)
                });
            d.mul_f64(1.5)
        };
        loop {
            let budget_left = self
                .opts
                .trials
                .map_or(u64::MAX, |t| t.saturating_sub(next));
            if budget_left == 0
                || self.stop.load(Ordering::SeqCst)
                || trial_end.is_some_and(|d| Instant::now() >= d)
            {
                return next;
            }
            let round = (ROUND as u64).min(budget_left);
            let chosen = bandit.choose(round as usize);
            let before = self.best_key();
            // The best tree at the round's start, where order searches begin.
            let seed_tree: Option<(usize, Vec<[usize; 2]>)> =
                self.lock().best().map(|b| (b.problem, b.merges.clone()));
            let results: Vec<Option<(Arm, Found)>> = (0..round)
                .into_par_iter()
                .map(|j| {
                    let i = next + j;
                    let arm = chosen[j as usize];
                    // A trial that would likely end past the budget is not
                    // started (on 10^6 tensors one takes tens of seconds).
                    let guess = expect(arm);
                    let now = Instant::now();
                    if self.stop.load(Ordering::SeqCst)
                        || trial_end.is_some_and(|d| now >= d)
                        || hard_end.is_some_and(|d| now + guess >= d)
                    {
                        return None;
                    }
                    let mut rng = ChaCha8Rng::seed_from_u64(trial_seed(self.opts.seed, i));
                    let mut k = if self.problems.len() > 1 && rng.random_bool(0.5) {
                        1
                    } else {
                        0
                    };
                    let mut start = None;
                    if arm == Arm::OrderSearch {
                        if let Some((sk, tree)) = &seed_tree {
                            k = *sk;
                            start = Some(tree.as_slice());
                        }
                    }
                    let effort = match self.opts.time {
                        Some(t) => Effort::Until(
                            now + (t / 50).clamp(Duration::from_millis(20), Duration::from_secs(2)),
                        ),
                        None => Effort::Moves(30),
                    };
                    // A trial that runs three times longer than expected is
                    // cut, so that one slow trial cannot eat the refinement.
                    let cut = match (hard_end, guess.is_zero()) {
                        (Some(h), false) => Some(h.min(now + guess * 2)),
                        (h, _) => h,
                    };
                    let p = &self.problems[k].problem;
                    let (merges, mut name) = run_arm(p, arm, goal, &mut rng, cut, start, effort)?;
                    let merges = if self.opts.finders.refine {
                        polish(p, merges, &mut name, goal, &mut rng, cut)
                    } else {
                        merges
                    };
                    let f = self.found(base + i, k, merges, name);
                    let took = now.elapsed();
                    {
                        let mut e = self.expected.lock().unwrap_or_else(|e| e.into_inner());
                        match e.iter_mut().find(|(a, _)| *a == arm) {
                            Some((_, d)) => *d = (*d).max(took),
                            None => e.push((arm, took)),
                        }
                    }
                    self.trials_done.fetch_add(1, Ordering::SeqCst);
                    self.offer(f.clone());
                    Some((arm, f))
                })
                .collect();
            for (arm, f) in results.into_iter().flatten() {
                let gap = match before {
                    Some(b) => {
                        let d0 = f.key.0 .0 - b.0 .0;
                        if d0 == 0.0 {
                            // Same primary value: judged by the second.
                            (f.key.1 .0 - b.1 .0).min(0.5)
                        } else {
                            d0
                        }
                    }
                    None => -1.0,
                };
                bandit.reward(arm, gap);
            }
            next += round;
        }
    }

    /// Subtree reconfiguration of the best trees with growing windows until
    /// `deadline` or until a whole sweep of window sizes changes nothing.
    fn refine_until(&self, deadline: Instant) {
        if self.exact_best() {
            return;
        }
        let goal = self.opts.objective.exact_goal();
        let top: Vec<Found> = self.lock().top.clone();
        let mut seed = self.opts.seed;
        for mut f in top {
            if f.entries > REFINE_MAX_ENTRIES {
                continue;
            }
            let p = &self.problems[f.problem].problem;
            let small = p.len() <= 64;
            let mut k = if small { 6 } else { 5 };
            let mut quiet = 0;
            // Each pass first builds every node's list and ends by pricing
            // the tree: about 60 ns per index entry, stopped or not.
            let setup = Duration::from_secs_f64(f.entries as f64 * 60e-9);
            let Some(deadline) = deadline.checked_sub(setup) else {
                continue;
            };
            while Instant::now() + setup < deadline && k <= if small { 10 } else { 9 } {
                let mut changed_any = false;
                for random in [false, true] {
                    if Instant::now() + setup >= deadline {
                        break;
                    }
                    seed = seed.wrapping_add(1);
                    let params = RefineParams {
                        k,
                        goal,
                        passes: 1,
                        random_frontier: random.then(|| trial_seed(seed, k as u64)),
                    };
                    let (merges, changed) = refine_tree(p, &f.merges, &params, Some(deadline));
                    if !changed {
                        continue;
                    }
                    let (measures, entries) = self.measure(f.problem, &merges);
                    let key = self.opts.objective.key(&measures);
                    if key < f.key {
                        f.key = key;
                        f.merges = merges;
                        f.measures = measures;
                        f.entries = entries;
                        f.price_entries = entries;
                        f.at = self.start.elapsed();
                        if !f.finder.ends_with("+refine") {
                            f.finder.push_str("+refine");
                        }
                        changed_any = true;
                    }
                }
                if changed_any {
                    quiet = 0;
                } else {
                    quiet += 1;
                    k += 1;
                }
                if quiet > 5 {
                    break;
                }
            }
            self.lock().insert(f);
            if Instant::now() >= deadline {
                break;
            }
        }
    }

    /// With a trial budget only: refines the best tree with larger subtrees
    /// (k = 8, or 6 above 2,000 tensors; three passes); deterministic.
    fn final_refine(&self) {
        if self.exact_best() {
            return;
        }
        let Some(mut best) = self.lock().best().cloned() else {
            return;
        };
        if best.entries > REFINE_MAX_ENTRIES {
            return;
        }
        let p = &self.problems[best.problem].problem;
        let params = RefineParams {
            k: if p.len() <= 2000 { 8 } else { 6 },
            goal: self.opts.objective.exact_goal(),
            passes: 3,
            random_frontier: None,
        };
        let (merges, changed) = refine_tree(p, &best.merges, &params, None);
        if !changed {
            return;
        }
        let (measures, entries) = self.measure(best.problem, &merges);
        let key = self.opts.objective.key(&measures);
        if key < best.key {
            best.key = key;
            best.merges = merges;
            best.measures = measures;
            best.entries = entries;
            best.price_entries = entries;
            best.finder.push_str("+final-refine");
            self.lock().insert(best);
        }
    }

    /// True when the best tree is the exact optimum.
    fn exact_best(&self) -> bool {
        self.lock().best().is_some_and(|b| b.finder == "exact") && self.exact_is_optimal()
    }

    /// The best tree found (the file order at least, priced first).
    fn take_best(&self) -> Found {
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
fn trial_seed(seed: u64, i: u64) -> u64 {
    let mut z = seed ^ i.wrapping_mul(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}
