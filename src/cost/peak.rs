//! Minimum-peak traversal: the order of jobs under tree precedence that
//! minimises the largest cumulative memory.
//!
//! # What it computes
//!
//! Each job has a *transient* cost `peak` (memory above the level before the
//! job, reached while it runs) and a *net* change `net` (memory after it,
//! minus memory before; negative when it frees more than it keeps). Jobs form
//! an in-forest: a job may run only after all its predecessors, and every job
//! has at most one successor. [`min_peak_schedule`] returns an order that
//! minimises `max over jobs of (sum of net before it + its peak)`, and that
//! value.
//!
//! # Method
//!
//! Abdel-Wahab and Kameda, "Scheduling to minimize maximum cumulative cost
//! subject to series-parallel precedence constraints", Operations Research
//! 26(1), 1978 (Liu, "An application of generalized tree pebbling to sparse
//! matrix factorization", SIAM J. Algebraic Discrete Methods 8(3), 1987,
//! treats the case without negative changes). Work bottom-up; each subtree
//! yields a chain of segments sorted by rank:
//!
//! * segments with `net < 0` come first, by increasing `peak`;
//! * segments with `net >= 0` come after, by decreasing `peak - net`.
//!
//! A node merges its predecessors' chains by rank (they are independent),
//! appends its own job, and while the last segment ranks ahead of the one
//! before it, fuses the two into one composite segment with
//! `peak = max(p1, n1 + p2)` and `net = n1 + n2` (the job cannot move before
//! its predecessors, so they travel together).
//!
//! # Complexity
//!
//! O(n log n) comparisons for balanced trees, O(n^2) in the worst case of
//! long chains with many fusions; O(n) memory.
//!
//! # Example
//!
//! ```
//! use sliceplan::cost::peak::{min_peak_schedule, Job};
//! // Two independent jobs feeding a third. The job that frees memory
//! // (net -5) goes first: its peak 8 is reached, then job 0 peaks at
//! // -5 + 10 = 5, job 2 at -1 + 3 = 2. The other order would reach 10.
//! let jobs = [
//!     Job { peak: 10.0, net: 4.0 },
//!     Job { peak: 8.0, net: -5.0 },
//!     Job { peak: 3.0, net: 1.0 },
//! ];
//! let preds = [vec![], vec![], vec![0, 1]];
//! let (order, peak) = min_peak_schedule(&jobs, &preds);
//! assert_eq!(order, vec![1, 0, 2]);
//! assert_eq!(peak, 8.0);
//! ```

use std::cmp::Ordering;

/// One job: its transient peak and its net memory change.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Job {
    /// Memory above the level before the job, at the job's worst moment.
    pub peak: f64,
    /// Memory after the job minus memory before it.
    pub net: f64,
}

#[derive(Debug)]
struct Segment {
    peak: f64,
    net: f64,
    jobs: Vec<u32>,
}

impl Segment {
    /// Rank order: `Less` when `self` should run before `other`.
    fn rank_cmp(&self, other: &Segment) -> Ordering {
        match (self.net < 0.0, other.net < 0.0) {
            (true, false) => Ordering::Less,
            (false, true) => Ordering::Greater,
            (true, true) => self.peak.total_cmp(&other.peak),
            (false, false) => (other.peak - other.net).total_cmp(&(self.peak - self.net)),
        }
    }

    fn fuse(mut self, next: Segment) -> Segment {
        self.peak = self.peak.max(self.net + next.peak);
        self.net += next.net;
        self.jobs.extend(next.jobs);
        self
    }
}

/// Orders `jobs` to minimise the maximum cumulative memory.
///
/// `preds[j]` lists the jobs that must finish before job `j`; every job may
/// appear in at most one `preds` list, and predecessors must have smaller
/// numbers than their successor (jobs are given in a topological order).
/// Returns the order (a permutation of `0..jobs.len()`) and its peak relative
/// to the memory level before the first job.
pub fn min_peak_schedule(jobs: &[Job], preds: &[Vec<usize>]) -> (Vec<usize>, f64) {
    assert_eq!(jobs.len(), preds.len(), "one predecessor list per job");
    let mut chains: Vec<Option<Vec<Segment>>> = (0..jobs.len()).map(|_| None).collect();
    let mut is_pred = vec![false; jobs.len()];
    for (j, job) in jobs.iter().enumerate() {
        let mut chain: Vec<Segment> = Vec::new();
        for &p in &preds[j] {
            assert!(p < j, "predecessors come before their successor");
            is_pred[p] = true;
            let other = chains[p].take().expect("each job has one successor");
            chain = merge_by_rank(chain, other);
        }
        chain.push(Segment {
            peak: job.peak,
            net: job.net,
            jobs: vec![j as u32],
        });
        while chain.len() >= 2
            && chain[chain.len() - 1].rank_cmp(&chain[chain.len() - 2]) == Ordering::Less
        {
            let last = chain.pop().expect("len >= 2");
            let prev = chain.pop().expect("len >= 2");
            chain.push(prev.fuse(last));
        }
        chains[j] = Some(chain);
    }
    // Roots of the forest are independent: merge their chains too.
    let mut all: Vec<Segment> = Vec::new();
    for (j, chain) in chains.into_iter().enumerate() {
        if !is_pred[j] {
            all = merge_by_rank(all, chain.expect("roots keep their chain"));
        }
    }
    let order: Vec<usize> = all
        .iter()
        .flat_map(|s| s.jobs.iter().map(|&j| j as usize))
        .collect();
    let peak = cumulative_peak(jobs, &order);
    (order, peak)
}

/// The maximum cumulative memory of running `jobs` in `order`.
pub fn cumulative_peak(jobs: &[Job], order: &[usize]) -> f64 {
    let mut level = 0.0f64;
    let mut peak = f64::NEG_INFINITY;
    for &j in order {
        peak = peak.max(level + jobs[j].peak);
        level += jobs[j].net;
    }
    peak.max(0.0)
}

fn merge_by_rank(a: Vec<Segment>, b: Vec<Segment>) -> Vec<Segment> {
    if a.is_empty() {
        return b;
    }
    if b.is_empty() {
        return a;
    }
    let mut out = Vec::with_capacity(a.len() + b.len());
    let mut a = a.into_iter().peekable();
    let mut b = b.into_iter().peekable();
    loop {
        let take_b = match (a.peek(), b.peek()) {
            (Some(x), Some(y)) => y.rank_cmp(x) == Ordering::Less,
            (Some(_), None) => false,
            (None, Some(_)) => true,
            (None, None) => break,
        };
        let next = if take_b { b.next() } else { a.next() };
        out.push(next.expect("peeked"));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// All topological orders of a small job forest, by brute force.
    fn best_by_enumeration(jobs: &[Job], preds: &[Vec<usize>]) -> f64 {
        fn go(
            jobs: &[Job],
            preds: &[Vec<usize>],
            done: &mut Vec<bool>,
            level: f64,
            peak: f64,
            best: &mut f64,
        ) {
            if done.iter().all(|&d| d) {
                *best = best.min(peak);
                return;
            }
            for j in 0..jobs.len() {
                if !done[j] && preds[j].iter().all(|&p| done[p]) {
                    done[j] = true;
                    let p = peak.max(level + jobs[j].peak);
                    go(jobs, preds, done, level + jobs[j].net, p, best);
                    done[j] = false;
                }
            }
        }
        let mut best = f64::INFINITY;
        go(
            jobs,
            preds,
            &mut vec![false; jobs.len()],
            0.0,
            0.0,
            &mut best,
        );
        best
    }

    #[test]
    fn matches_enumeration_on_a_hand_forest() {
        // Independent brute force over all orders of this 6-job in-tree.
        let jobs = [
            Job {
                peak: 4.0,
                net: 4.0,
            },
            Job {
                peak: 9.0,
                net: -2.0,
            },
            Job {
                peak: 3.0,
                net: 3.0,
            },
            Job {
                peak: 7.0,
                net: -6.0,
            },
            Job {
                peak: 2.0,
                net: 1.0,
            },
            Job {
                peak: 5.0,
                net: -1.0,
            },
        ];
        let preds = [vec![], vec![0], vec![], vec![2], vec![1, 3], vec![4]];
        let (order, peak) = min_peak_schedule(&jobs, &preds);
        assert_eq!(peak, best_by_enumeration(&jobs, &preds));
        assert_eq!(cumulative_peak(&jobs, &order), peak);
    }
}
