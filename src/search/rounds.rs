//! The randomised trials (rounds of bandit-chosen finders) and the
//! refinement of the best trees. See the driver's module docs for the
//! budget rules.

use std::sync::atomic::Ordering;
use std::time::{Duration, Instant};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;

use super::bandit::{Arm, Bandit};
use super::driver::{trial_seed, Ctx, Found, REFINE_MAX_ENTRIES, ROUND, TRIAL_SEQ_BASE};
use super::refine::{refine_tree, RefineParams};
use super::trial::{polish, run_arm, Effort};

impl Ctx<'_> {
    /// Runs rounds of trials from trial `first` until the trial budget or
    /// `trial_end`; returns the next trial number.
    pub(super) fn trials(
        &self,
        bandit: &mut Bandit,
        first: u64,
        trial_end: Option<Instant>,
        hard_end: Option<Instant>,
    ) -> u64 {
        let goal = self.opts.objective.exact_goal();
        let base = TRIAL_SEQ_BASE;
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
                        None => Effort::Moves(2000),
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
    pub(super) fn refine_until(&self, deadline: Instant) {
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
    pub(super) fn final_refine(&self) {
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
}
