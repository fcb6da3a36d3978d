//! Subtree refinement: cut out small subtrees and replace each by its exact
//! optimum.
//!
//! # What it computes
//!
//! [`refine_tree`] walks a tree bottom-up. At every internal node v it cuts
//! out a subtree of at most `k` leaves rooted at v (growing it from v by
//! repeatedly opening the largest intermediate on its frontier), treats the
//! frontier nodes as tensors and v's indices as open, and asks the exact
//! finder for the best way to contract them. The replacement is kept only
//! when it is strictly better for the goal. Passes repeat until one changes
//! nothing (or `passes` is reached, or the deadline passes).
//!
//! The rest of the tree does not see a replacement: v's indices and the
//! frontier nodes are unchanged, so the ops and sizes of every other node
//! stay the same. Hence the total ops (goal `TotalOps`, `OpsWithin`) or the
//! width (goal `Width`) of the whole tree never gets worse.
//!
//! # Arguments and result
//!
//! The problem, a merge list over it, [`RefineParams`] and an optional
//! deadline. Returns the refined merge list (same leaves, single-assignment
//! form) and whether anything changed.
//!
//! # Method and complexity
//!
//! Local re-optimisation of contraction subtrees by dynamic programming, as
//! in the subtree reconfiguration of Kalachev, Panteleev and Yung,
//! "Recursive multi-tensor contraction for XEB verification of quantum
//! circuits" (2021), and Gray and Kourtis, Quantum 5, 410 (2021). Each pass
//! costs O(n 3^k) in the worst case (one exact solve of k tensors per
//! node), memory O(n + total index-list length).
//!
//! # Example
//!
//! ```
//! use sliceplan::search::{refine_tree, ExactGoal, Problem, RefineParams};
//! // The matrix chain of Cormen et al. §15.2, merged left to right first.
//! let d = [30f64, 35., 15., 5., 10., 20., 25.];
//! let tensors = (0..6).map(|k| vec![k as u32, k as u32 + 1]).collect();
//! let mut open = vec![false; 7];
//! open[0] = true;
//! open[6] = true;
//! let p = Problem::new(tensors, d.iter().map(|x| x.log2()).collect(), open);
//! let left_deep = vec![[0, 1], [6, 2], [7, 3], [8, 4], [9, 5]];
//! let params = RefineParams { k: 6, goal: ExactGoal::TotalOps, passes: 4, random_frontier: None };
//! let (better, changed) = refine_tree(&p, &left_deep, &params, None);
//! assert!(changed);
//! assert!((p.evaluate(&better).total_ops_log2.exp2() - 15125.0).abs() < 1e-6);
//! ```

use std::time::Instant;

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use super::exact::{exact_tree, ExactGoal};
use super::problem::{Eval, Problem};

/// Parameters of refinement.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RefineParams {
    /// Largest number of leaves of a cut-out subtree (3..=12 is sensible).
    pub k: usize,
    /// What the replacements optimise.
    pub goal: ExactGoal,
    /// Most passes over the tree.
    pub passes: usize,
    /// How a cut-out subtree grows: `None` opens the largest intermediate
    /// on the frontier; `Some(seed)` opens a random one (seeded), so
    /// repeated refinements explore different subtrees.
    pub random_frontier: Option<u64>,
}

/// Lexicographic key of a local evaluation for a goal (smaller is better).
pub(crate) fn goal_key(goal: ExactGoal, e: &Eval) -> (f64, f64) {
    match goal {
        ExactGoal::TotalOps => (e.total_ops_log2, e.width),
        ExactGoal::Width => (e.width, e.total_ops_log2),
        ExactGoal::OpWidth => (e.op_width, e.total_ops_log2),
        ExactGoal::OpsWithin(cap) => ((e.width - cap).max(0.0), e.total_ops_log2),
    }
}

/// True when key `a` is better than `b` beyond float noise.
fn better(a: (f64, f64), b: (f64, f64)) -> bool {
    let tol = |x: f64| 1e-10 * (1.0 + x.abs());
    if a.0 < b.0 - tol(b.0) {
        return true;
    }
    a.0 <= b.0 + tol(b.0) && a.1 < b.1 - tol(b.1)
}

/// Refines a tree (see the module docs).
pub fn refine_tree(
    p: &Problem,
    merges: &[[usize; 2]],
    params: &RefineParams,
    deadline: Option<Instant>,
) -> (Vec<[usize; 2]>, bool) {
    let n = p.len();
    if merges.len() < 2 || params.k < 3 {
        return (merges.to_vec(), false);
    }
    let mut nodes = p.node_indices(merges);
    let mut children: Vec<[usize; 2]> = merges.to_vec();
    let root = n + merges.len() - 1;
    let mut changed = false;
    let mut rng = params.random_frontier.map(ChaCha8Rng::seed_from_u64);
    'passes: for _ in 0..params.passes.max(1) {
        let mut improved = false;
        for v in post_order(n, &children, root) {
            if deadline.is_some_and(|d| Instant::now() >= d) {
                break 'passes;
            }
            improved |= improve_at(p, v, params, &mut nodes, &mut children, rng.as_mut());
        }
        changed |= improved;
        if !improved {
            break;
        }
    }
    (linearise(n, &children, root), changed)
}

/// Tries to replace the subtree cut out at internal node `v`.
fn improve_at(
    p: &Problem,
    v: usize,
    params: &RefineParams,
    nodes: &mut [Vec<u32>],
    children: &mut [[usize; 2]],
    mut rng: Option<&mut ChaCha8Rng>,
) -> bool {
    let n = p.len();
    let size = |x: usize, nodes: &[Vec<u32>]| p.weight_of(&nodes[x]);
    let mut frontier: Vec<usize> = children[v - n].to_vec();
    let mut inner = vec![v];
    while frontier.len() < params.k {
        if let Some(r) = rng.as_deref_mut() {
            let open: Vec<usize> = (0..frontier.len()).filter(|&i| frontier[i] >= n).collect();
            if open.is_empty() {
                break;
            }
            let x = frontier.swap_remove(open[r.random_range(0..open.len())]);
            inner.push(x);
            frontier.extend_from_slice(&children[x - n]);
            continue;
        }
        let pick = frontier
            .iter()
            .enumerate()
            .filter(|&(_, &x)| x >= n)
            .max_by(|a, b| {
                size(*a.1, nodes)
                    .total_cmp(&size(*b.1, nodes))
                    .then(b.1.cmp(a.1))
            })
            .map(|(i, _)| i);
        let Some(i) = pick else { break };
        let x = frontier.swap_remove(i);
        inner.push(x);
        frontier.extend_from_slice(&children[x - n]);
    }
    if frontier.len() < 3 {
        return false;
    }
    let lists: Vec<&[u32]> = frontier.iter().map(|&x| nodes[x].as_slice()).collect();
    let kept = &nodes[v];
    let (sub, map) = p.induced(&lists, |e, _| kept.binary_search(&e).is_ok());
    let Some(new_local) = exact_tree(&sub, params.goal) else {
        return false;
    };
    let old_local = local_merges(n, &frontier, v, children);
    let (old, new) = (sub.evaluate(&old_local), sub.evaluate(&new_local));
    if !better(goal_key(params.goal, &new), goal_key(params.goal, &old)) {
        return false;
    }
    // Reuse the cut-out ids; the local root keeps id v.
    let local_nodes = sub.node_indices(&new_local);
    let k = frontier.len();
    let mut spare: Vec<usize> = inner.iter().copied().filter(|&x| x != v).collect();
    let mut id: Vec<usize> = frontier.clone();
    for (j, &[a, b]) in new_local.iter().enumerate() {
        let node = if j + 1 == new_local.len() {
            v
        } else {
            spare.pop().expect("k - 1 internal ids for k - 1 merges")
        };
        children[node - n] = [id[a], id[b]];
        let mut list: Vec<u32> = local_nodes[k + j]
            .iter()
            .map(|&e| map[e as usize])
            .collect();
        list.sort_unstable();
        nodes[node] = list;
        id.push(node);
    }
    true
}

/// The merges of the subtree between `v` and `frontier`, over local leaf
/// numbers (position in `frontier`).
fn local_merges(
    n: usize,
    frontier: &[usize],
    v: usize,
    children: &[[usize; 2]],
) -> Vec<[usize; 2]> {
    let k = frontier.len();
    let mut out = Vec::with_capacity(k - 1);
    // Iterative post-order from v, stopping at frontier nodes.
    let mut stack = vec![(v, false)];
    let mut result: Vec<usize> = Vec::new();
    let mut local_of = std::collections::HashMap::new();
    for (i, &f) in frontier.iter().enumerate() {
        local_of.insert(f, i);
    }
    while let Some((x, expanded)) = stack.pop() {
        if let Some(&i) = local_of.get(&x) {
            result.push(i);
            continue;
        }
        if expanded {
            let b = result.pop().expect("two operands");
            let a = result.pop().expect("two operands");
            out.push([a, b]);
            result.push(k + out.len() - 1);
        } else {
            let [a, b] = children[x - n];
            stack.push((x, true));
            stack.push((b, false));
            stack.push((a, false));
        }
    }
    out
}

/// Internal nodes in post-order (children before parents).
fn post_order(n: usize, children: &[[usize; 2]], root: usize) -> Vec<usize> {
    let mut out = Vec::with_capacity(children.len());
    let mut stack = vec![(root, false)];
    while let Some((x, expanded)) = stack.pop() {
        if x < n {
            continue;
        }
        if expanded {
            out.push(x);
        } else {
            let [a, b] = children[x - n];
            stack.push((x, true));
            stack.push((b, false));
            stack.push((a, false));
        }
    }
    out
}

/// Renumbers the tree in post-order into single-assignment merges.
pub(super) fn linearise(n: usize, children: &[[usize; 2]], root: usize) -> Vec<[usize; 2]> {
    let order = post_order(n, children, root);
    let mut new_id = vec![usize::MAX; n + children.len()];
    for (t, slot) in new_id.iter_mut().enumerate().take(n) {
        *slot = t;
    }
    let mut out = Vec::with_capacity(order.len());
    for x in order {
        let [a, b] = children[x - n];
        out.push([new_id[a], new_id[b]]);
        new_id[x] = n + out.len() - 1;
    }
    out
}
