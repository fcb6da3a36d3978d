//! The trial driver: run many randomised finder trials in parallel, keep the
//! best tree, refine it, and report progress.
//!
//! # What it computes
//!
//! [`find_tree`] searches for a tree minimising an [`Objective`] within a
//! budget of trials or time (when both are given, whichever ends first).
//!
//! * Trial 0 is the exact finder when the network, simplified without or
//!   with absorption, has at most [`EXACT_AUTO`] tensors. When that is the
//!   unabsorbed network with at most 12 tensors (outer products included,
//!   so the optimum over all trees) and the objective is one the exact
//!   finder optimises, the search ends there.
//! * Every other trial works on the unabsorbed or the absorbed problem (a
//!   coin toss) and draws a finder: partitioning (half the trials, from 24
//!   tensors up) or greedy, with parameters drawn too. Its tree is refined
//!   with random subtree sizes (always on problems of at most 64 tensors,
//!   a quarter of the trials up to 5,000 tensors), and in a fifth of the
//!   trials annealed by rotations (objectives on total ops only).
//! * Trials are scored by the objective on the network's own tensors (the
//!   absorbed merges included), the peak by the cost model when needed.
//! * The best tree gets a final refinement with larger subtrees (kept only
//!   if the objective does not get worse), and is priced by the cost model.
//!
//! With a time budget, new trials start during the first 85% of it and the
//! final refinement stops at its end; a trial already running finishes (so
//! a single slow trial, e.g. greedy on 100,000 tensors, may overrun).
//!
//! # Determinism
//!
//! Trial i draws everything from a ChaCha8 generator seeded from
//! (seed, i), and the best is the least (score, trial number). So with a
//! trial budget (and no time limit) the result is the same tree whatever the
//! number of threads and whichever thread ran which trial.
//!
//! # Complexity
//!
//! The sum of the trials' costs (see each finder), spread over the threads.
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

use super::anneal::{anneal_tree, AnnealParams};
use super::bound::width_lower_bound;
use super::exact::{exact_tree, ExactGoal, ALL_SUBSETS_MAX};
use super::greedy::{greedy_tree, GreedyParams};
use super::objective::{Key, Measures};
use super::options::{Progress, SearchOptions, SearchResult};
use super::partition::{partition_tree_until, PartitionParams};
use super::refine::{refine_tree, RefineParams};
use super::simplify::Simplified;
use crate::cost::{NodeSets, PeakModel};
use crate::error::{Error, Result};
use crate::network::{IndexId, Network};
use crate::num::log2_add;

/// Networks up to this many tensors (after simplification) get an exact
/// trial.
pub const EXACT_AUTO: usize = 16;

/// One trial's tree and score.
struct Found {
    key: Key,
    trial: u64,
    problem: usize,
    merges: Vec<[usize; 2]>,
    measures: Measures,
    finder: String,
    at: Duration,
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

/// Like [`find_tree`], calling `progress` after each trial (from worker
/// threads) and stopping early, keeping the best so far, once `stop` is set.
pub fn find_tree_with(
    net: &Network,
    opts: &SearchOptions,
    progress: &(dyn Fn(&Progress) + Sync),
    stop: &AtomicBool,
) -> Result<SearchResult> {
    opts.validate()?;
    check_search_memory(net, opts.threads, opts.available_memory)?;
    let start = Instant::now();
    let plain = Simplified::new(net, false);
    let mut problems = vec![plain];
    if opts.simplify {
        let absorbed = Simplified::new(net, true);
        if absorbed.problem.len() < problems[0].problem.len() {
            problems.push(absorbed);
        }
    }
    // After the trials, the tree's metrics and the lower bound take about
    // as long as the simplification just did (linear passes over the
    // network: seconds at 10^6 tensors); that time is kept back from the
    // trials so the whole search ends near its budget.
    let reserve = start.elapsed();
    let budget = |share: f64| {
        opts.time
            .map(|t| start + t.mul_f64(share).saturating_sub(reserve.min(t / 2)))
    };
    let deadline = budget(0.85);
    let hard_deadline = budget(1.0);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(opts.threads)
        .build()
        .map_err(|e| Error::Cannot(format!("cannot start worker threads: {e}")))?;
    let workers = pool.current_num_threads();
    let next = AtomicU64::new(0);
    let done = AtomicU64::new(0);
    let best: Mutex<Option<Found>> = Mutex::new(None);
    let finished_exactly = AtomicBool::new(false);
    let slowest_ms = AtomicU64::new(0);
    let ctx = Ctx {
        net,
        opts,
        problems: &problems,
        deadline: hard_deadline,
    };
    pool.scope(|s| {
        for _ in 0..workers {
            s.spawn(|_| loop {
                let i = next.fetch_add(1, Ordering::SeqCst);
                // A trial that would likely end past the budget is not
                // started: on 10^6 tensors one takes tens of seconds. The
                // guess is twice the slowest trial so far.
                let slowest = Duration::from_millis(slowest_ms.load(Ordering::SeqCst));
                let out_of_time = deadline.is_some_and(|d| Instant::now() >= d)
                    || hard_deadline.is_some_and(|d| Instant::now() + slowest * 2 >= d);
                if opts.trials.is_some_and(|t| i >= t)
                    || (i > 0
                        && (stop.load(Ordering::SeqCst)
                            || out_of_time
                            || finished_exactly.load(Ordering::SeqCst)))
                {
                    break;
                }
                let began = Instant::now();
                let Some(found) = ctx.trial(i, start) else {
                    continue;
                };
                let took = began.elapsed().as_millis().min(u64::MAX as u128) as u64;
                slowest_ms.fetch_max(took, Ordering::SeqCst);
                if found.finder == "exact" && ctx.exact_is_optimal() {
                    finished_exactly.store(true, Ordering::SeqCst);
                }
                let measures = {
                    let mut guard = best.lock().expect("no trial panics");
                    let replace = guard
                        .as_ref()
                        .is_none_or(|b| (found.key, found.trial) < (b.key, b.trial));
                    if replace {
                        *guard = Some(found);
                    }
                    guard.as_ref().map(|b| b.measures)
                };
                let count = done.fetch_add(1, Ordering::SeqCst) + 1;
                progress(&Progress {
                    trials_done: count,
                    trials_total: opts.trials,
                    elapsed: start.elapsed(),
                    best: measures,
                });
            });
        }
    });
    let mut best = best.into_inner().expect("no trial panics").ok_or_else(|| {
        Error::Cannot(
            "the search found no tree: every enabled finder declined this network; enable greedy"
                .into(),
        )
    })?;
    let interrupted = stop.load(Ordering::SeqCst);
    if opts.finders.refine && !interrupted {
        ctx.final_refine(&mut best, hard_deadline);
    }
    let tree = problems[best.problem].expand(&best.merges);
    let metrics = NodeSets::new(net, &tree).evaluate_unsliced(net, PeakModel::default());
    Ok(SearchResult {
        tree,
        metrics,
        lower_bound: width_lower_bound(net),
        trials: done.load(Ordering::SeqCst),
        best_trial: best.trial,
        finder: best.finder,
        seconds_to_best: best.at.as_secs_f64(),
        seconds: start.elapsed().as_secs_f64(),
        interrupted,
    })
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

/// Problems with more tensors than this start with a plain greedy trial.
const LARGE_PROBLEM: usize = 50_000;

struct Ctx<'a> {
    net: &'a Network,
    opts: &'a SearchOptions,
    problems: &'a [Simplified],
    /// The end of the time budget, which long phases of a trial respect.
    deadline: Option<Instant>,
}

impl Ctx<'_> {
    fn exact_is_optimal(&self) -> bool {
        self.opts.objective.solved_by_exact() && self.problems[0].problem.len() <= ALL_SUBSETS_MAX
    }

    /// Runs trial `i`; `None` when its finder declined (e.g. too large).
    fn trial(&self, i: u64, start: Instant) -> Option<Found> {
        let f = &self.opts.finders;
        let goal = self.opts.objective.exact_goal();
        if i == 0 && f.exact {
            // The exact finder on the unabsorbed problem when it fits
            // (optimal there), else on the absorbed one.
            for (k, s) in self.problems.iter().enumerate() {
                if s.problem.len() <= EXACT_AUTO {
                    if let Some(m) = exact_tree(&s.problem, goal) {
                        return Some(self.found(i, k, m, "exact".into(), start));
                    }
                }
            }
        }
        let mut rng = ChaCha8Rng::seed_from_u64(trial_seed(self.opts.seed, i));
        let k = if self.problems.len() > 1 && rng.random_bool(0.5) {
            1
        } else {
            0
        };
        let p = &self.problems[k].problem;
        // On very large problems the first trial is the plain greedy alone:
        // the fastest way to a valid tree (2.6 s for 10^5 tensors), so a
        // time budget yields a tree whatever the size.
        let first_of_large = i == 0 && p.len() > LARGE_PROBLEM && f.greedy;
        let use_partition =
            f.partition && p.len() >= 24 && !first_of_large && (!f.greedy || rng.random_bool(0.5));
        let partitioned = if use_partition {
            let params = PartitionParams {
                deadline: self.deadline,
                ..PartitionParams::sample(&mut rng, goal)
            };
            // Past the deadline the trial is dropped, not finished; trial 0
            // must yield a tree, so it falls back to greedy below.
            match partition_tree_until(p, &params, &mut rng) {
                Some(m) => Some(m),
                None if i > 0 => return None,
                None => None,
            }
        } else {
            None
        };
        let (mut merges, mut name) = if let Some(m) = partitioned {
            (m, "partition".to_string())
        } else if f.greedy || f.partition {
            let params = if i == 0 {
                GreedyParams::default()
            } else {
                GreedyParams::sample(&mut rng)
            };
            (greedy_tree(p, &params, &mut rng), "greedy".to_string())
        } else {
            return None;
        };
        // Small problems are always refined (cheap); larger ones sometimes.
        let refine_now = p.len() <= 64 || (p.len() <= 5000 && rng.random_bool(0.25));
        if first_of_large {
            return Some(self.found(i, k, merges, name, start));
        }
        if f.refine && refine_now {
            let small = p.len() <= 64;
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
            let (refined, changed) = refine_tree(p, &merges, &params, None);
            if changed {
                merges = refined;
                name.push_str("+refine");
            }
        }
        if let (true, Some(cap)) = (f.refine && rng.random_bool(0.2), ops_cap(goal)) {
            let params = AnnealParams {
                steps: merges.len() * rng.random_range(5..=30),
                t_start: rng.random_range(0.005..0.1),
                t_end: 0.0005,
                max_width: cap,
                deadline: self.deadline,
            };
            let (annealed, changed) = anneal_tree(p, &merges, &params, &mut rng);
            if changed {
                merges = annealed;
                name.push_str("+anneal");
            }
        }
        Some(self.found(i, k, merges, name, start))
    }

    fn found(
        &self,
        trial: u64,
        problem: usize,
        merges: Vec<[usize; 2]>,
        finder: String,
        start: Instant,
    ) -> Found {
        let measures = self.measure(problem, &merges);
        Found {
            key: self.opts.objective.key(&measures),
            trial,
            problem,
            merges,
            measures,
            finder,
            at: start.elapsed(),
        }
    }

    /// The measures of a merge list over problem `k`, on the network's own
    /// tensors (the peak by the cost model, only when the objective needs it).
    fn measure(&self, k: usize, merges: &[[usize; 2]]) -> Measures {
        let s = &self.problems[k];
        if self.opts.objective.needs_peak() {
            let tree = s.expand(merges);
            let m =
                NodeSets::new(self.net, &tree).evaluate_unsliced(self.net, PeakModel::default());
            return Measures {
                total_ops_log2: m.total_ops.log2,
                width: m.width,
                peak_log2: Some(m.peak.log2),
            };
        }
        let e = s.problem.evaluate(merges);
        Measures {
            total_ops_log2: log2_add(s.fixed_ops_log2, e.total_ops_log2),
            width: s.fixed_width.max(e.width),
            peak_log2: None,
        }
    }

    /// Refines the best tree with larger subtrees; keeps the result only if
    /// the objective does not get worse.
    fn final_refine(&self, best: &mut Found, deadline: Option<Instant>) {
        let p = &self.problems[best.problem].problem;
        if best.finder == "exact" && self.exact_is_optimal() {
            return;
        }
        let params = RefineParams {
            k: if p.len() <= 2000 { 8 } else { 6 },
            goal: self.opts.objective.exact_goal(),
            passes: 3,
            random_frontier: None,
        };
        let (merges, changed) = refine_tree(p, &best.merges, &params, deadline);
        if !changed {
            return;
        }
        let measures = self.measure(best.problem, &merges);
        let key = self.opts.objective.key(&measures);
        if key <= best.key {
            best.key = key;
            best.merges = merges;
            best.measures = measures;
            best.finder.push_str("+final-refine");
        }
    }
}

/// The width cap rotations must respect when annealing serves `goal`
/// (`None`: annealing on total ops does not serve a width goal).
fn ops_cap(goal: ExactGoal) -> Option<f64> {
    match goal {
        ExactGoal::TotalOps => Some(f64::INFINITY),
        ExactGoal::OpsWithin(cap) => Some(cap),
        ExactGoal::Width => None,
    }
}

/// The seed of trial `i`: a SplitMix64 step over the seed and trial number,
/// so neighbouring trials get unrelated generators.
fn trial_seed(seed: u64, i: u64) -> u64 {
    let mut z = seed ^ i.wrapping_mul(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}
