//! The balanced-partitioning finder: recursive bisection of the tensor
//! graph, small parts finished by the exact or greedy finder.
//!
//! # What it computes
//!
//! [`partition_tree`] splits the tensors into two parts of nearly equal
//! count with few (log2-weighted) indices between them, recursively, until a
//! part has at most `leaf_size` tensors. Each small part is contracted by
//! the exact finder (when it has at most `exact_size` tensors) or by the
//! greedy finder; then the two parts of every split are merged. The tree
//! thus follows the bisection hierarchy top-down.
//!
//! # Arguments and result
//!
//! The problem, [`PartitionParams`] (imbalance, stopping size, seed of the
//! partitioner, greedy parameters for the small parts) and a random
//! generator for the greedy parts. Returns a merge list in single-assignment
//! form over the problem's tensors.
//!
//! # Method and complexity
//!
//! Bisection by METIS (Karypis and Kumar, "A fast and high quality
//! multilevel scheme for partitioning irregular graphs", SIAM J. Sci.
//! Comput. 20(1), 1998) on the graph whose vertices are tensors and whose
//! edge weights are the summed log2 dimensions of the indices two tensors
//! share (scaled by ten and rounded; an index on d tensors of the part gives
//! each of its pairs 1/(d-1) of its weight, and indices on more than 16
//! tensors of the part join consecutive holders only).
//!
//! The size of a part's node is the weight of the indices leaving the part,
//! so a child's size is its share of the parent's boundary plus the cut.
//! Parts of 64 tensors or more are therefore bisected `tries` times,
//! alternating a plain bisection with a two-constraint one that also
//! balances the boundary weight (METIS multi-constraint partitioning), and
//! the split whose larger child is smallest is kept. Contracting along a
//! recursive min-cut bisection is the approach of Gray and Kourtis,
//! "Hyper-optimized tensor network contraction", Quantum 5, 410 (2021).
//! Time: O(E log n) for the bisections (each level is linear in the edges)
//! plus the finishers; memory O(n + E).
//!
//! # Example
//!
//! ```
//! use rand::SeedableRng;
//! use sliceplan::search::{partition_tree, PartitionParams, Problem};
//! // An open chain of 40 matrices with bond dimension 2.
//! let tensors = (0..40).map(|k| vec![k as u32, k as u32 + 1]).collect();
//! let mut open = vec![false; 41];
//! open[0] = true;
//! open[40] = true;
//! let p = Problem::new(tensors, vec![1.0; 41], open);
//! let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
//! let merges = partition_tree(&p, &PartitionParams::default(), &mut rng);
//! assert_eq!(merges.len(), 39);
//! // Every intermediate of a 2x2 matrix chain is 2x2 (log2 size 2).
//! assert_eq!(p.evaluate(&merges).width, 2.0);
//! ```

use rand::Rng;

use super::exact::{exact_tree, ExactGoal};
use super::greedy::{greedy_tree, GreedyParams};
use super::problem::{splice, Problem};

/// Allowed imbalance of the boundary weight between the two parts when a
/// bisection balances it (1.2: within 20%).
const BOUNDARY_TOLERANCE: metis::Real = 1.2;

/// Serialises calls into METIS (see [`bisect`]).
pub(super) static METIS_LOCK: std::sync::Mutex<()> = std::sync::Mutex::new(());

/// Parameters of one partitioning run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PartitionParams {
    /// Allowed imbalance of a bisection, e.g. 0.1 for parts within 10%.
    pub imbalance: f64,
    /// Parts of at most this many tensors are not split further.
    pub leaf_size: usize,
    /// Parts of at most this many tensors are finished exactly.
    pub exact_size: usize,
    /// What the exact finisher optimises.
    pub goal: ExactGoal,
    /// Greedy parameters for larger parts.
    pub greedy: GreedyParams,
    /// Bisections tried per large part (alternately balancing the part's
    /// boundary too); the one whose larger child is smallest is kept.
    pub tries: usize,
    /// Seed of the partitioner.
    pub seed: i32,
    /// Give up (see [`partition_tree_until`]) once this moment passes.
    pub deadline: Option<std::time::Instant>,
}

impl Default for PartitionParams {
    fn default() -> Self {
        PartitionParams {
            imbalance: 0.1,
            leaf_size: 8,
            exact_size: 8,
            goal: ExactGoal::TotalOps,
            greedy: GreedyParams::default(),
            tries: 1,
            seed: 1,
            deadline: None,
        }
    }
}

impl PartitionParams {
    /// Draws parameters for one trial of the driver.
    pub fn sample<R: Rng>(rng: &mut R, goal: ExactGoal) -> PartitionParams {
        PartitionParams {
            imbalance: rng.random_range(0.01..0.6),
            leaf_size: rng.random_range(2..=16),
            exact_size: 9,
            goal,
            greedy: GreedyParams::sample(rng),
            tries: rng.random_range(1..=4),
            seed: rng.random_range(0..i32::MAX),
            deadline: None,
        }
    }
}

/// A tree by recursive bisection (see the module docs).
pub fn partition_tree<R: Rng>(
    p: &Problem,
    params: &PartitionParams,
    rng: &mut R,
) -> Vec<[usize; 2]> {
    let params = PartitionParams {
        deadline: None,
        ..*params
    };
    partition_tree_until(p, &params, rng).expect("no deadline, so no early stop")
}

/// [`partition_tree`] that gives up, returning `None`, when
/// `params.deadline` passes before the tree is done (a bisection of a
/// 10^6-tensor network takes seconds, so a search with a time budget must
/// be able to stop one).
pub fn partition_tree_until<R: Rng>(
    p: &Problem,
    params: &PartitionParams,
    rng: &mut R,
) -> Option<Vec<[usize; 2]>> {
    let mut merges = Vec::with_capacity(p.len().saturating_sub(1));
    let all: Vec<u32> = (0..p.len() as u32).collect();
    let mut seed = params.seed;
    build(p, params, rng, &all, &mut merges, &mut seed)?;
    Some(merges)
}

/// Contracts the tensors of `set`; returns the node id of the part's root.
fn build<R: Rng>(
    p: &Problem,
    params: &PartitionParams,
    rng: &mut R,
    set: &[u32],
    merges: &mut Vec<[usize; 2]>,
    seed: &mut i32,
) -> Option<usize> {
    let n = p.len();
    if set.len() == 1 {
        return Some(set[0] as usize);
    }
    if params
        .deadline
        .is_some_and(|d| std::time::Instant::now() >= d)
    {
        return None;
    }
    if set.len() <= params.leaf_size.max(2) {
        let (sub, _) = p.subset(set);
        let local = (set.len() <= params.exact_size)
            .then(|| {
                exact_tree(&sub, params.goal).or_else(|| exact_tree(&sub, ExactGoal::TotalOps))
            })
            .flatten()
            .unwrap_or_else(|| greedy_tree(&sub, &params.greedy, rng));
        let leaves: Vec<usize> = set.iter().map(|&t| t as usize).collect();
        return Some(splice(&local, &leaves, n, merges));
    }
    let tries = if set.len() >= 64 {
        params.tries.max(1)
    } else {
        1
    };
    let mut best: Option<(f64, Vec<u32>, Vec<u32>)> = None;
    for k in 0..tries {
        *seed = seed.wrapping_mul(1_103_515_245).wrapping_add(12_345) & i32::MAX;
        let (l, r) = bisect(p, set, params.imbalance, *seed, k % 2 == 1);
        let worst = boundary_weight(p, &l).max(boundary_weight(p, &r));
        if best.as_ref().is_none_or(|b| worst < b.0) {
            best = Some((worst, l, r));
        }
    }
    let (_, left, right) = best.expect("at least one try");
    let a = build(p, params, rng, &left, merges, seed)?;
    let b = build(p, params, rng, &right, merges, seed)?;
    merges.push([a, b]);
    Some(n + merges.len() - 1)
}

/// Splits `set` in two non-empty parts.
/// Weight of the indices leaving a sorted set of tensors (its node's size).
fn boundary_weight(p: &Problem, part: &[u32]) -> f64 {
    let mut seen = std::collections::HashSet::new();
    let mut w = 0.0;
    for &t in part {
        for &e in &p.tensors[t as usize] {
            let i = e as usize;
            if seen.insert(e)
                && (p.open[i]
                    || p.incidence[i]
                        .iter()
                        .any(|h| part.binary_search(h).is_err()))
            {
                w += p.weight[i];
            }
        }
    }
    w
}

/// Splits `set` in two non-empty parts; with `by_boundary`, also balances
/// the weight of the indices leaving the set.
fn bisect(
    p: &Problem,
    set: &[u32],
    imbalance: f64,
    seed: i32,
    by_boundary: bool,
) -> (Vec<u32>, Vec<u32>) {
    let (xadj, adjncy, adjwgt) = graph_of(p, set);
    let mut part = vec![0 as metis::Idx; set.len()];
    let ufactor = ((imbalance * 1000.0).round() as metis::Idx).clamp(1, 1000);
    // Second balance constraint: the weight of each tensor's indices that
    // leave the part. A child's size is its share of the part's boundary
    // plus the cut, so splitting the boundary evenly keeps both small.
    let boundary: Vec<metis::Idx> = set
        .iter()
        .map(|&t| {
            let w: f64 = p.tensors[t as usize]
                .iter()
                .filter(|&&e| {
                    let e = e as usize;
                    p.open[e] || p.incidence[e].iter().any(|h| set.binary_search(h).is_err())
                })
                .map(|&e| p.weight[e as usize])
                .sum();
            (w * 10.0).round() as metis::Idx
        })
        .collect();
    let with_boundary = by_boundary && boundary.iter().filter(|&&b| b > 0).count() >= 2;
    let vwgt: Vec<metis::Idx> = if with_boundary {
        boundary.iter().flat_map(|&b| [1, b]).collect()
    } else {
        Vec::new()
    };
    let ubvec = [1.0 + imbalance as metis::Real, BOUNDARY_TOLERANCE];
    let ncon = if with_boundary { 2 } else { 1 };
    // METIS keeps its random-number state in a C global: two threads
    // partitioning at once interleave it, and the result then depends on
    // timing even with a fixed seed. One partition at a time keeps trials
    // reproducible.
    let _one_at_a_time = METIS_LOCK.lock().unwrap_or_else(|e| e.into_inner());
    let ok = !adjncy.is_empty()
        && metis::Graph::new(ncon, 2, &xadj, &adjncy)
            .ok()
            .map(|g| {
                let g = g.set_adjwgt(&adjwgt).set_option(metis::option::Seed(seed));
                let g = if with_boundary {
                    g.set_vwgt(&vwgt).set_ubvec(&ubvec)
                } else {
                    g.set_option(metis::option::UFactor(ufactor))
                };
                g.part_recursive(&mut part).is_ok()
            })
            .unwrap_or(false);
    let (mut left, mut right) = (Vec::new(), Vec::new());
    for (k, &t) in set.iter().enumerate() {
        if part[k] == 0 {
            left.push(t);
        } else {
            right.push(t);
        }
    }
    if !ok || left.is_empty() || right.is_empty() {
        // No edges, or the partitioner declined: halve the set in order.
        let half = set.len() / 2;
        return (set[..half].to_vec(), set[half..].to_vec());
    }
    (left, right)
}

/// The weighted graph of a part in METIS's compressed form.
fn graph_of(p: &Problem, set: &[u32]) -> (Vec<metis::Idx>, Vec<metis::Idx>, Vec<metis::Idx>) {
    let mut local = std::collections::HashMap::with_capacity(set.len());
    for (k, &t) in set.iter().enumerate() {
        local.insert(t, k as u32);
    }
    let mut seen = std::collections::HashSet::new();
    let mut edges: Vec<(u32, u32, f64)> = Vec::new();
    for &t in set {
        for &e in &p.tensors[t as usize] {
            if !seen.insert(e) {
                continue;
            }
            let holders: Vec<u32> = p.incidence[e as usize]
                .iter()
                .filter_map(|h| local.get(h).copied())
                .collect();
            let d = holders.len();
            if d < 2 {
                continue;
            }
            let w = p.weight[e as usize];
            if d > 16 {
                for pair in holders.windows(2) {
                    edges.push((pair[0], pair[1], w));
                }
            } else {
                let share = w / (d - 1) as f64;
                for i in 0..d {
                    for j in i + 1..d {
                        edges.push((holders[i], holders[j], share));
                    }
                }
            }
        }
    }
    let mut both: Vec<(u32, u32, f64)> = Vec::with_capacity(2 * edges.len());
    for (a, b, w) in edges {
        both.push((a, b, w));
        both.push((b, a, w));
    }
    both.sort_by_key(|x| (x.0, x.1));
    let mut xadj = vec![0 as metis::Idx; set.len() + 1];
    let mut adjncy = Vec::new();
    let mut adjwgt = Vec::new();
    let mut i = 0;
    while i < both.len() {
        let (a, b) = (both[i].0, both[i].1);
        let mut w = 0.0;
        while i < both.len() && both[i].0 == a && both[i].1 == b {
            w += both[i].2;
            i += 1;
        }
        adjncy.push(b as metis::Idx);
        adjwgt.push(((w * 10.0).round() as metis::Idx).max(1));
        xadj[a as usize + 1] += 1;
    }
    for k in 0..set.len() {
        xadj[k + 1] += xadj[k];
    }
    (xadj, adjncy, adjwgt)
}
