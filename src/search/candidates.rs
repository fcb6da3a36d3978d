//! The candidates a search prices before any trial: the exact tree on
//! small networks, the file order, the breadth-first sweep, and in
//! parallel (highest priority first) nested dissection, plain greedy,
//! min-fill, min-degree and the lower bounds. See the driver's module docs
//! for the budget rules.

use std::sync::atomic::Ordering;
use std::sync::Mutex;
use std::time::{Duration, Instant};

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

use super::baseline::{component_file_order, sweep_order};
use super::bound::{lower_bounds, WidthBound};
use super::dissect::{dissection_tree, DissectParams};
use super::driver::{trial_seed, Ctx, Found, CANDIDATE_SHARE, EXACT_AUTO};
use super::exact::exact_tree;
use super::greedy::{greedy_tree_until, GreedyParams};
use super::objective::Measures;
use super::options::CandidateScore;
use super::order::{elimination_tree, OrderParams, OrderRule};
use super::problem::left_deep;
use crate::num::log2_add;

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
    /// Prices the exact tree, the file order and the sweep, then the
    /// parallel batch; returns the lower bounds (when computed), the
    /// candidates' scores, and whether the exact tree is provably optimal.
    pub(super) fn candidates(
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
        if !self.stop.load(Ordering::SeqCst) {
            let began = Instant::now();
            if let Some(order) = component_file_order(p) {
                let f = self.sequence(seq, &order, "file-order-by-component");
                note(&f, began.elapsed(), &mut scores);
                self.offer(f);
            }
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
    pub(super) fn sequence(&self, seq: u64, order: &[u32], name: &str) -> Found {
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
}
