//! Tree rotations accepted by simulated annealing, for total ops.
//!
//! # What it computes
//!
//! [`anneal_tree`] repeatedly picks an internal node v with an internal
//! child c = (x, y) and sibling s, and proposes the rotation that swaps s
//! with x or y: v = ((s, y), x) or v = ((x, s), y). Only c and v change: v's
//! indices and every other node stay as they were, so the change in total
//! ops is priced from four index lists. A proposal that lowers the total
//! ops is taken; one that raises it by a factor r is taken with probability
//! r^(-1/T) (the Metropolis rule on log2 total ops), with the temperature T
//! falling geometrically from `t_start` to `t_end`. With a width cap, a
//! rotation that makes c larger than the cap is refused. The best tree seen
//! is returned, so the result is never worse than the input.
//!
//! # Arguments and result
//!
//! The problem, a merge list, [`AnnealParams`] and a random generator.
//! Returns the best merge list seen and whether it differs from the input.
//!
//! # Method and complexity
//!
//! Simulated annealing (Kirkpatrick, Gelatt and Vecchi, "Optimization by
//! simulated annealing", Science 220, 1983) over tree rotations, the local
//! moves used for contraction trees by Kalachev, Panteleev and Yung (2021).
//! Each step costs O(d log d) for index lists of length d; a new best tree
//! is copied in O(n). Memory O(n + total index-list length).
//!
//! # Example
//!
//! ```
//! use rand::SeedableRng;
//! use sliceplan::search::{anneal_tree, AnnealParams, Problem};
//! // The matrix chain of Cormen et al. §15.2, merged left to right first
//! // (40,500 ops); rotations reach the optimum 15,125.
//! let d = [30f64, 35., 15., 5., 10., 20., 25.];
//! let tensors = (0..6).map(|k| vec![k as u32, k as u32 + 1]).collect();
//! let mut open = vec![false; 7];
//! open[0] = true;
//! open[6] = true;
//! let p = Problem::new(tensors, d.iter().map(|x| x.log2()).collect(), open);
//! let left_deep = vec![[0, 1], [6, 2], [7, 3], [8, 4], [9, 5]];
//! let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
//! let params = AnnealParams { steps: 2000, ..AnnealParams::default() };
//! let (better, _) = anneal_tree(&p, &left_deep, &params, &mut rng);
//! assert!((p.evaluate(&better).total_ops_log2.exp2() - 15125.0).abs() < 1e-6);
//! ```

use rand::Rng;

use super::problem::Problem;

/// Parameters of an annealing run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnnealParams {
    /// Proposed rotations.
    pub steps: usize,
    /// Starting temperature (in log2 total ops).
    pub t_start: f64,
    /// Final temperature.
    pub t_end: f64,
    /// Refuse rotations that create a node above this log2 size.
    pub max_width: f64,
    /// Stop early, keeping the best tree so far, once this moment passes.
    pub deadline: Option<std::time::Instant>,
}

impl Default for AnnealParams {
    fn default() -> Self {
        AnnealParams {
            steps: 1000,
            t_start: 0.05,
            t_end: 0.001,
            max_width: f64::INFINITY,
            deadline: None,
        }
    }
}

/// Anneals a tree by rotations (see the module docs).
pub fn anneal_tree<R: Rng>(
    p: &Problem,
    merges: &[[usize; 2]],
    params: &AnnealParams,
    rng: &mut R,
) -> (Vec<[usize; 2]>, bool) {
    let n = p.len();
    let m = merges.len();
    if m < 2 || params.steps == 0 {
        return (merges.to_vec(), false);
    }
    let mut nodes = p.node_indices(merges);
    let mut children: Vec<[usize; 2]> = merges.to_vec();
    // Ops per merge, in log2, and the total in units of 2^scale.
    let mut ops: Vec<f64> = (0..m)
        .map(|k| p.union_weight(&nodes[children[k][0]], &nodes[children[k][1]]))
        .collect();
    let scale = ops.iter().fold(0.0f64, |a, &b| a.max(b));
    let mut total: f64 = ops.iter().map(|&o| (o - scale).exp2()).sum();
    let mut best_total = total;
    let mut best = children.clone();
    let mut changed = false;
    let ratio = (params.t_end / params.t_start).powf(1.0 / params.steps as f64);
    let mut temp = params.t_start;
    for step in 0..params.steps {
        if step % 1024 == 0
            && params
                .deadline
                .is_some_and(|d| std::time::Instant::now() >= d)
        {
            break;
        }
        temp *= ratio;
        let v = n + rng.random_range(0..m);
        let [l, r] = children[v - n];
        let (c, s) = match (l >= n, r >= n) {
            (true, true) if rng.random_bool(0.5) => (r, l),
            (true, _) => (l, r),
            (_, true) => (r, l),
            _ => continue,
        };
        let [x, y] = children[c - n];
        // Swap s with `up` (x or y); `stay` remains under c.
        let (up, stay) = if rng.random_bool(0.5) { (x, y) } else { (y, x) };
        let kept = kept_after(p, &nodes[s], &nodes[stay], &nodes[up], &nodes[v]);
        if p.weight_of(&kept) > params.max_width {
            continue;
        }
        let new_c = p.union_weight(&nodes[s], &nodes[stay]);
        let new_v = p.union_weight(&kept, &nodes[up]);
        let (old_c, old_v) = (ops[c - n], ops[v - n]);
        let delta = (new_c - scale).exp2() + (new_v - scale).exp2()
            - (old_c - scale).exp2()
            - (old_v - scale).exp2();
        let after = total + delta;
        let worse_log2 = (after.max(f64::MIN_POSITIVE) / total).log2();
        if delta > 0.0 && rng.random::<f64>() >= (-worse_log2 / temp).exp() {
            continue;
        }
        children[c - n] = [s, stay];
        children[v - n] = [c, up];
        nodes[c] = kept;
        ops[c - n] = new_c;
        ops[v - n] = new_v;
        total = after;
        if total < best_total * (1.0 - 1e-12) {
            best_total = total;
            best.clone_from(&children);
            changed = true;
        }
    }
    if !changed {
        return (merges.to_vec(), false);
    }
    (super::refine::linearise(n, &best, n + m - 1), true)
}

/// The indices the node over `s` and `stay` keeps, inside a parent whose
/// other operand is `up` and whose own indices are `v`: an index stays when
/// it is open or seen by `up` or by `v` (that is, outside the new node).
fn kept_after(p: &Problem, s: &[u32], stay: &[u32], up: &[u32], v: &[u32]) -> Vec<u32> {
    let mut union: Vec<u32> = s.iter().chain(stay.iter()).copied().collect();
    union.sort_unstable();
    union.dedup();
    union.retain(|e| {
        p.open[*e as usize] || up.binary_search(e).is_ok() || v.binary_search(e).is_ok()
    });
    union
}
