//! Reuse of slice-invariant work: intermediates that are the same in every
//! slice, computed once per process and held while its slices run.
//!
//! # What it computes
//!
//! With slice set K, a node of the tree is *variant* when some tensor below
//! it carries an index of K (its value then changes with the slice), else
//! *invariant*. An invariant intermediate is the same in every slice: a
//! process can compute it once and hand it to every slice it runs. The
//! *held* intermediates are invariant merges whose parent is variant (the
//! largest invariant pieces), or a subset of them when holding all of them
//! would not fit the budget ([`choose_held`]).
//!
//! [`price`] prices a slice set with a held set:
//!
//! * total ops = ops of every merge inside a held subtree, once, plus the
//!   slice count x the ops of one slice of the rest (plain pricing repeats
//!   the invariant merges in every slice: slices x (both parts));
//! * per-slice peak: the executor's rule ([`PeakModel::EXECUTOR`]) on the
//!   tree with the held subtrees cut off, their roots read like inputs;
//! * memory: the held intermediates for the process's life, and the most
//!   held while computing them, one subtree after the other, before the
//!   first slice (the rule of [`crate::cost::memory`]).
//!
//! The count "once" is per process: a job array of P tasks computes the
//! invariant work P times (the node-hours estimate counts it per node).
//!
//! # Complexity
//!
//! O(N log N) per pricing for N nodes (one min-peak traversal of the cut
//! tree, one per held subtree); [`choose_held`] prices at most three held
//! sets.
//!
//! # Reference
//!
//! Reusing the parts of a sliced contraction that do not depend on the
//! sliced indices is how slicing overhead is kept low in circuit simulation
//! (Chen et al., "Classical simulation of intermediate-size quantum
//! circuits", arXiv:1805.01450, 2018, compute the shared part once); the
//! held-set choice under a memory budget is our own.
//!
//! # Example
//!
//! ```
//! use sliceplan::cost::NodeSets;
//! use sliceplan::formats::einsum::network_from_einsum;
//! use sliceplan::slicing::reuse::{price, variant_nodes, maximal_invariant};
//! use sliceplan::tree::Tree;
//! // ((A B) C) D with index d (between C and D) sliced: A B is the same
//! // in every slice.
//! let net = network_from_einsum("ab,bc,cd,de->ae", Some(2), &[]).unwrap();
//! let tree = Tree::left_deep(4);
//! let sets = NodeSets::new(&net, &tree);
//! let d = net.index_id("d").unwrap();
//! let variant = variant_nodes(&sets, &net, &[d]);
//! assert_eq!(maximal_invariant(&sets, &variant), vec![4]);
//! let p = price(&sets, &net, &[d], &[4]);
//! // Merge (A B) costs 2^3 once; per slice (AB)C and ((AB)C)D cost 2^2 each.
//! assert_eq!(p.invariant_ops.exact, Some(8));
//! assert_eq!(p.per_slice.total_ops.exact, Some(8));
//! ```

use crate::cost::peak::{min_peak_schedule, Job};
use crate::cost::{Dims, Metrics, NodeSets, PeakModel};
use crate::network::{IndexId, Network};
use crate::num::Count;

/// For every node of the tree behind `sets`: true when some tensor below it
/// carries an index of `sliced`.
pub fn variant_nodes(sets: &NodeSets, net: &Network, sliced: &[IndexId]) -> Vec<bool> {
    let n = sets.leaves();
    let mut is_sliced = vec![false; net.num_indices()];
    for &e in sliced {
        is_sliced[e] = true;
    }
    let mut variant: Vec<bool> = (0..n)
        .map(|t| net.tensors[t].indices.iter().any(|&e| is_sliced[e]))
        .collect();
    for k in 0..sets.num_merges() {
        let [a, b] = sets.merge(k);
        variant.push(variant[a] || variant[b]);
    }
    variant
}

/// The invariant merges whose parent is variant (the root has none), in
/// node order.
pub fn maximal_invariant(sets: &NodeSets, variant: &[bool]) -> Vec<usize> {
    let n = sets.leaves();
    let mut out = Vec::new();
    for k in 0..sets.num_merges() {
        if !variant[n + k] {
            continue;
        }
        for c in sets.merge(k) {
            if c >= n && !variant[c] {
                out.push(c);
            }
        }
    }
    out.sort_unstable();
    out
}

/// The tree with the subtrees of `held` cut off, their roots as leaves.
#[derive(Debug, Clone)]
pub struct Collapsed {
    /// The cut tree.
    pub sets: NodeSets,
    /// Cut-tree merge k is merge `merge_of[k]` of the original tree.
    pub merge_of: Vec<usize>,
    /// Per original node: true when it lies strictly below a held node.
    pub inside: Vec<bool>,
}

/// Cuts the subtrees below the `held` nodes (internal, none below another).
pub fn collapse(sets: &NodeSets, held: &[usize]) -> Collapsed {
    let n = sets.leaves();
    let total = sets.indices.len();
    let mut is_held = vec![false; total];
    for &h in held {
        is_held[h] = true;
    }
    // Top-down: a node is inside when its parent is held or inside.
    let mut inside = vec![false; total];
    for k in (0..sets.num_merges()).rev() {
        let v = n + k;
        if is_held[v] || inside[v] {
            for c in sets.merge(k) {
                inside[c] = true;
            }
        }
    }
    let mut new_id = vec![usize::MAX; total];
    let mut indices = Vec::new();
    let mut leaves = 0;
    for v in (0..n).chain(held.iter().copied()) {
        if !inside[v] {
            new_id[v] = leaves;
            leaves += 1;
            indices.push(sets.indices[v].clone());
        }
    }
    let mut merges = Vec::new();
    let mut unions = Vec::new();
    let mut merge_of = Vec::new();
    for k in 0..sets.num_merges() {
        let v = n + k;
        if inside[v] || is_held[v] {
            continue;
        }
        let [a, b] = sets.merge(k);
        new_id[v] = leaves + merges.len();
        merges.push([new_id[a], new_id[b]]);
        unions.push(sets.unions[k].clone());
        indices.push(sets.indices[v].clone());
        merge_of.push(k);
    }
    Collapsed {
        sets: NodeSets::from_parts(leaves, merges, indices, unions),
        merge_of,
        inside,
    }
}

/// A slice set priced with reuse of a held set.
#[derive(Debug, Clone, PartialEq)]
pub struct Priced {
    /// The held intermediates (node ids), in the order they are computed.
    pub held: Vec<usize>,
    /// Elements of all held intermediates.
    pub held_elements: f64,
    /// The most elements held (above the inputs) while they are computed.
    pub setup_elements: f64,
    /// Ops of every merge inside the held subtrees (done once).
    pub invariant_ops: Count,
    /// Metrics of one slice of the rest; `order` is the whole traversal:
    /// the held subtrees' merges (setup), then one slice's.
    pub per_slice: Metrics,
    /// The largest node of the plain slice (held subtrees included).
    pub plain_width: f64,
    /// Merges of the setup part at the head of `per_slice.order`.
    pub setup_merges: usize,
}

/// Prices slice set `sliced` with the intermediates `held` computed once
/// (see the module docs); `held` must be invariant internal nodes, none
/// below another. With no held node this is the plain pricing.
pub fn price(sets: &NodeSets, net: &Network, sliced: &[IndexId], held: &[usize]) -> Priced {
    let dims = Dims::sliced(net, sliced);
    if held.is_empty() {
        let m = sets.evaluate(&dims, PeakModel::EXECUTOR);
        return Priced {
            held: Vec::new(),
            held_elements: 0.0,
            setup_elements: 0.0,
            invariant_ops: Count::ZERO,
            plain_width: m.width,
            per_slice: m,
            setup_merges: 0,
        };
    }
    let n = sets.leaves();
    let cut = collapse(sets, held);
    let mut m = cut.sets.evaluate(&dims, PeakModel::EXECUTOR);
    let size = |v: usize| -> f64 {
        sets.indices[v]
            .iter()
            .map(|&e| dims.log2[e])
            .sum::<f64>()
            .exp2()
    };
    // The held subtrees: their merges, ops, widths and peaks.
    let mut invariant_ops = Count::ZERO;
    let mut plain_width = m.width;
    let mut subtrees: Vec<(usize, f64, f64, Vec<usize>)> = Vec::with_capacity(held.len());
    for &h in held {
        let merges = subtree_merges(sets, h);
        for &k in &merges {
            let union = &sets.unions[k];
            invariant_ops = invariant_ops
                + Count {
                    exact: crate::num::product(union.iter().map(|&e| dims.dim[e])),
                    log2: union.iter().map(|&e| dims.log2[e]).sum(),
                };
            plain_width = plain_width.max(size(n + k).log2());
        }
        let (order, peak) = subtree_peak(sets, &merges, &size);
        subtrees.push((h, size(h), peak, order));
    }
    // Compute first the subtrees that leave the most room behind: by
    // decreasing (peak - size), which minimises the largest
    // (sizes held before + peak) over the sequence (an exchange argument).
    subtrees.sort_by(|a, b| (b.2 - b.1).total_cmp(&(a.2 - a.1)).then(a.0.cmp(&b.0)));
    let mut held_so_far = 0.0f64;
    let mut setup = 0.0f64;
    let mut order = Vec::with_capacity(sets.num_merges());
    for (_, s, peak, sub_order) in &subtrees {
        setup = setup.max(held_so_far + peak);
        held_so_far += s;
        order.extend(sub_order.iter().copied());
    }
    let setup_merges = order.len();
    order.extend(m.order.iter().map(|&k| cut.merge_of[k]));
    m.order = order;
    Priced {
        held: subtrees.iter().map(|s| s.0).collect(),
        held_elements: held_so_far,
        setup_elements: setup,
        invariant_ops,
        per_slice: m,
        plain_width,
        setup_merges,
    }
}

/// The merges of the subtree rooted at internal node `h`, in merge order.
fn subtree_merges(sets: &NodeSets, h: usize) -> Vec<usize> {
    let n = sets.leaves();
    let mut out = Vec::new();
    let mut stack = vec![h];
    while let Some(v) = stack.pop() {
        if v >= n {
            out.push(v - n);
            stack.extend(sets.merge(v - n));
        }
    }
    out.sort_unstable();
    out
}

/// The best order of a held subtree's merges alone under the executor's
/// rule (inputs counted from first use, permute copies, no final permute:
/// the held result stays as the multiply leaves it), and its peak in
/// elements. `merges` are in merge order (children before parents).
fn subtree_peak(
    sets: &NodeSets,
    merges: &[usize],
    size: &dyn Fn(usize) -> f64,
) -> (Vec<usize>, f64) {
    let n = sets.leaves();
    let mut jobs = Vec::with_capacity(2 * merges.len() + 1);
    let mut preds: Vec<Vec<usize>> = Vec::with_capacity(jobs.capacity());
    let mut job_of = std::collections::HashMap::with_capacity(2 * merges.len() + 1);
    let mut merge_job = Vec::with_capacity(merges.len());
    for &k in merges {
        let [a, b] = sets.merge(k);
        let mut p = Vec::with_capacity(2);
        for c in [a, b] {
            if c < n {
                let s = size(c);
                job_of.insert(c, jobs.len());
                p.push(jobs.len());
                jobs.push(Job { peak: s, net: s });
                preds.push(Vec::new());
            } else {
                p.push(job_of[&c]);
            }
        }
        let (sa, sb, sv) = (size(a), size(b), size(n + k));
        job_of.insert(n + k, jobs.len());
        merge_job.push((jobs.len(), k));
        jobs.push(Job {
            peak: sa.max(sb).max(sv),
            net: sv - sa - sb,
        });
        preds.push(p);
    }
    let (job_order, peak) = min_peak_schedule(&jobs, &preds);
    let mut k_of_job = vec![usize::MAX; jobs.len()];
    for (j, k) in merge_job {
        k_of_job[j] = k;
    }
    let order = job_order
        .into_iter()
        .map(|j| k_of_job[j])
        .filter(|&k| k != usize::MAX)
        .collect();
    (order, peak)
}

/// Which invariant intermediates to hold for slice set `sliced` in a
/// process with `avail_elements` elements for held intermediates and
/// slices (the budget less inputs and output, over the element size) and
/// `at_once` slices at a time: every maximal invariant intermediate when
/// that fits; else, when the plain slice fits, the maximal ones with the
/// most ops saved per element held that keep it fitting; else whichever of
/// all or none needs less. Returns the pricing.
pub fn choose_held(
    sets: &NodeSets,
    net: &Network,
    sliced: &[IndexId],
    avail_elements: f64,
    at_once: u64,
) -> Priced {
    let k = at_once.max(1) as f64;
    let need = |p: &Priced| (p.held_elements + k * p.per_slice.peak.to_f64()).max(p.setup_elements);
    if sliced.is_empty() {
        return price(sets, net, sliced, &[]);
    }
    let variant = variant_nodes(sets, net, sliced);
    let maximal = maximal_invariant(sets, &variant);
    if maximal.is_empty() {
        return price(sets, net, sliced, &[]);
    }
    let all = price(sets, net, sliced, &maximal);
    if need(&all) <= avail_elements {
        return all;
    }
    let none = price(sets, net, sliced, &[]);
    let none_need = need(&none);
    if none_need > avail_elements {
        return if need(&all) <= none_need { all } else { none };
    }
    // The plain slice fits: hold the best few. With per-slice peak at most
    // the plain one (holding never raises it), holding H fits when
    // size(H) + k x plain peak does, and the setup fits too.
    let dims = Dims::sliced(net, sliced);
    let mut scored: Vec<(f64, usize, f64)> = maximal
        .iter()
        .map(|&h| {
            let s: f64 = sets.indices[h]
                .iter()
                .map(|&e| dims.log2[e])
                .sum::<f64>()
                .exp2();
            let ops: f64 = subtree_merges(sets, h)
                .iter()
                .map(|&m| {
                    sets.unions[m]
                        .iter()
                        .map(|&e| dims.log2[e])
                        .sum::<f64>()
                        .exp2()
                })
                .sum();
            (ops / s.max(1.0), h, s)
        })
        .collect();
    scored.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
    let room = avail_elements - k * none.per_slice.peak.to_f64();
    let mut chosen = Vec::new();
    let mut used = 0.0;
    for (_, h, s) in scored {
        if used + s <= room {
            used += s;
            chosen.push(h);
        }
    }
    if chosen.is_empty() {
        return none;
    }
    chosen.sort_unstable();
    let some = price(sets, net, sliced, &chosen);
    if need(&some) <= avail_elements {
        some
    } else {
        none
    }
}
