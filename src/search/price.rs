//! The cost-model metrics of a tree without keeping every node's index
//! list, for the search's final pricing of trees of 10^6 tensors.
//!
//! # What it computes
//!
//! [`tree_metrics`] returns exactly what [`crate::cost::metrics`] returns
//! (total ops, width with and without the root, op width, peak with its
//! traversal under the default peak model, height), by the rules of DESIGN
//! §3. The cost model keeps every node's index list, which is fine for
//! balanced trees; a left-deep tree of a 1000 x 1000 lattice has 10^6 nodes
//! of about 1,000 indices each (10^9 entries, 16 GB with the unions).
//! Here the operands' lists are dropped once merged, so memory is the
//! lists alive at once plus a few numbers per node.
//!
//! A left-deep tree (each merge joins the previous result with a tensor, as
//! the file order and the sweep do) is priced in O(index entries of the
//! network) by keeping the running result as a set.
//!
//! # Complexity
//!
//! Time O(sum over merges of both operands' list lengths) plus the
//! min-peak schedule ([`crate::cost::peak::min_peak_schedule`]); memory
//! O(nodes + lists alive at once).
//!
//! # Example
//!
//! ```
//! use sliceplan::search::tree_metrics;
//! use sliceplan::tree::Tree;
//! let net = sliceplan::generate::matrix_chain(&[30, 35, 15, 5]).unwrap();
//! let tree = Tree::left_deep(3);
//! assert_eq!(tree_metrics(&net, &tree), sliceplan::cost::metrics(&net, &tree));
//! ```

use crate::cost::peak::{min_peak_schedule, Job};
use crate::cost::{merge_counts, Metrics};
use crate::network::Network;
use crate::num::{product, Count};
use crate::tree::Tree;

/// The metrics of a tree by the cost model with the default peak model
/// (see the module docs).
pub fn tree_metrics(net: &Network, tree: &Tree) -> Metrics {
    assert_eq!(
        net.num_tensors(),
        tree.leaves(),
        "tree and network disagree on the tensor count"
    );
    if is_left_deep(tree) {
        return left_deep_metrics(net, tree);
    }
    let n = tree.leaves();
    let dims = net.dims();
    let log2 = net.log2_dims();
    let size = |list: &[(usize, u32)]| Count {
        exact: product(list.iter().map(|&(e, _)| dims[e])),
        log2: list.iter().map(|&(e, _)| log2[e]).sum(),
    };
    let mut degree = vec![0u32; net.num_indices()];
    for t in &net.tensors {
        for &e in &t.indices {
            degree[e] += 1;
        }
    }
    let open = net.open_mask();
    // (index, how many tensors below the node carry it), sorted by index.
    let mut counted: Vec<Vec<(usize, u32)>> = net
        .tensors
        .iter()
        .map(|t| {
            let mut v: Vec<(usize, u32)> = t.indices.iter().map(|&e| (e, 1)).collect();
            v.sort_unstable();
            v
        })
        .collect();
    let mut sizes: Vec<Count> = counted.iter().map(|c| size(c)).collect();
    let mut total_ops = Count::ZERO;
    let mut op_width = 0.0f64;
    let mut heights = vec![0usize; tree.num_nodes()];
    counted.reserve(tree.merges().len());
    for (k, &[a, b]) in tree.merges().iter().enumerate() {
        let ca = std::mem::take(&mut counted[a]);
        let cb = std::mem::take(&mut counted[b]);
        let merged = merge_counts(&ca, &cb);
        let ops = size(&merged);
        total_ops = total_ops + ops;
        op_width = op_width.max(ops.log2);
        let kept: Vec<(usize, u32)> = merged
            .into_iter()
            .filter(|&(e, c)| c < degree[e] || open[e])
            .collect();
        sizes.push(size(&kept));
        counted.push(kept);
        heights[n + k] = 1 + heights[a].max(heights[b]);
    }
    drop(counted);
    let root = sizes.len() - 1;
    let width = sizes
        .iter()
        .map(|s| s.log2)
        .fold(f64::NEG_INFINITY, f64::max);
    let width_without_root = sizes[..root]
        .iter()
        .map(|s| s.log2)
        .fold(f64::NEG_INFINITY, f64::max);
    let (order, peak) = min_peak(tree, &sizes);
    Metrics {
        total_ops,
        width,
        width_without_root: if root == 0 { width } else { width_without_root },
        op_width,
        peak,
        order,
        height: heights[root],
    }
}

/// True when every merge after the first joins the previous merge with a
/// tensor (a left-deep tree in any leaf order).
fn is_left_deep(tree: &Tree) -> bool {
    let n = tree.leaves();
    tree.merges().iter().enumerate().all(|(k, &[a, b])| {
        if k == 0 {
            a < n && b < n
        } else {
            let prev = n + k - 1;
            (a == prev && b < n) || (b == prev && a < n)
        }
    })
}

/// The indices of a running result: those of dimension 2 or more in a list
/// with positions (for O(1) removal), every one flagged.
struct Running<'a> {
    dims: &'a [u64],
    log2: &'a [f64],
    live: Vec<usize>,
    pos: Vec<usize>,
    inside: Vec<bool>,
    size_log2: f64,
}

impl Running<'_> {
    fn add(&mut self, e: usize) {
        if !self.inside[e] {
            self.inside[e] = true;
            if self.dims[e] > 1 {
                self.pos[e] = self.live.len();
                self.live.push(e);
                self.size_log2 += self.log2[e];
            }
        }
    }

    fn remove(&mut self, e: usize) {
        if !self.inside[e] {
            return;
        }
        self.inside[e] = false;
        if self.dims[e] > 1 {
            let p = self.pos[e];
            self.live.swap_remove(p);
            if p < self.live.len() {
                self.pos[self.live[p]] = p;
            }
            self.pos[e] = usize::MAX;
            self.size_log2 -= self.log2[e];
        }
        if self.live.is_empty() {
            self.size_log2 = 0.0;
        }
    }

    /// The size of the set with `extra` added (indices not in it), exact
    /// while it fits a u128.
    fn size_with(&self, extra: &[usize]) -> Count {
        let log2 = self.size_log2 + extra.iter().map(|&e| self.log2[e]).sum::<f64>();
        let exact = if log2 > 127.5 {
            None
        } else {
            product(self.live.iter().chain(extra).map(|&e| self.dims[e]))
        };
        Count { exact, log2 }
    }
}

/// [`tree_metrics`] of a left-deep tree in O(index entries of the network):
/// the running result is a set of indices with its log2 size kept by
/// additions and removals; its exact size is recomputed only while it fits
/// a u128 (then the set has at most 127 indices of dimension 2 or more).
/// The traversal of a chain is forced.
fn left_deep_metrics(net: &Network, tree: &Tree) -> Metrics {
    let n = tree.leaves();
    let dims = net.dims();
    let log2 = net.log2_dims();
    let open = net.open_mask();
    let mut remaining = vec![0u32; net.num_indices()];
    for t in &net.tensors {
        for &e in &t.indices {
            remaining[e] += 1;
        }
    }
    let mut sizes: Vec<Count> = (0..n)
        .map(|t| Count {
            exact: net.tensor_size(t),
            log2: net.tensor_size_log2(t),
        })
        .collect();
    let mut run = Running {
        dims: &dims,
        log2: &log2,
        live: Vec::new(),
        pos: vec![usize::MAX; net.num_indices()],
        inside: vec![false; net.num_indices()],
        size_log2: 0.0,
    };
    let mut total_ops = Count::ZERO;
    let mut op_width = 0.0f64;
    let merges = tree.merges();
    let mut leaf_order: Vec<usize> = Vec::with_capacity(n);
    if let Some(&[a, b]) = merges.first() {
        leaf_order.extend([a, b]);
    }
    for &[a, b] in merges.iter().skip(1) {
        leaf_order.push(if a < n { a } else { b });
    }
    let first = leaf_order.first().copied().unwrap_or(0);
    for &e in &net.tensors[first].indices {
        remaining[e] -= 1;
        run.add(e);
    }
    let mut first_list: &[usize] = &net.tensors[first].indices;
    for &t in leaf_order.iter().skip(1) {
        let list = &net.tensors[t].indices;
        // Ops: the running result with the tensor's new indices.
        let fresh: Vec<usize> = list
            .iter()
            .copied()
            .filter(|&e| !run.inside[e] && dims[e] > 1)
            .collect();
        let ops = run.size_with(&fresh);
        op_width = op_width.max(ops.log2);
        total_ops = total_ops + ops;
        for &e in list {
            remaining[e] -= 1;
            run.add(e);
        }
        // An index leaves once no unmerged tensor holds it (and it is not
        // open): this tensor's, and at the first merge the first tensor's.
        for &e in list.iter().chain(first_list) {
            if remaining[e] == 0 && !open[e] {
                run.remove(e);
            }
        }
        first_list = &[];
        sizes.push(run.size_with(&[]));
    }
    let root = sizes.len() - 1;
    let width = sizes
        .iter()
        .map(|s| s.log2)
        .fold(f64::NEG_INFINITY, f64::max);
    let width_without_root = sizes[..root]
        .iter()
        .map(|s| s.log2)
        .fold(f64::NEG_INFINITY, f64::max);
    let order: Vec<usize> = (0..merges.len()).collect();
    let peak = live_peak(tree, &sizes, &order);
    Metrics {
        total_ops,
        width,
        width_without_root: if root == 0 { width } else { width_without_root },
        op_width,
        peak,
        order,
        height: merges.len(),
    }
}

/// The best traversal and its peak with every input resident from the start
/// and no workspace (the default peak model of the cost module).
fn min_peak(tree: &Tree, sizes: &[Count]) -> (Vec<usize>, Count) {
    let n = tree.leaves();
    let s = |v: usize| sizes[v].to_f64();
    let mut jobs = Vec::with_capacity(tree.merges().len());
    let mut preds: Vec<Vec<usize>> = Vec::with_capacity(tree.merges().len());
    for (k, &[a, b]) in tree.merges().iter().enumerate() {
        let v = n + k;
        jobs.push(Job {
            peak: s(v),
            net: s(v) - s(a) - s(b),
        });
        preds.push(
            [a, b]
                .into_iter()
                .filter(|&c| c >= n)
                .map(|c| c - n)
                .collect(),
        );
    }
    let (order, _) = min_peak_schedule(&jobs, &preds);
    let peak = live_peak(tree, sizes, &order);
    (order, peak)
}

/// The peak of running the merges in `order`: exact (u128) when every size
/// and sum fits, else in floating point scaled by the largest size.
fn live_peak(tree: &Tree, sizes: &[Count], order: &[usize]) -> Count {
    if let Some(exact) = sizes.iter().map(|c| c.exact).collect::<Option<Vec<u128>>>() {
        if let Some(peak) = simulate(tree, &exact, order, |x, y| x.checked_add(y), 0) {
            return Count::from_u128(peak);
        }
    }
    let scale = sizes
        .iter()
        .map(|c| c.log2)
        .fold(f64::NEG_INFINITY, f64::max);
    let scale = if scale.is_finite() { scale } else { 0.0 };
    let approx: Vec<f64> = sizes.iter().map(|c| (c.log2 - scale).exp2()).collect();
    let peak = simulate(tree, &approx, order, |x, y| Some(x + y), 0.0).unwrap_or(f64::INFINITY);
    Count::from_log2(peak.log2() + scale)
}

/// Walks the live set; `add` returns `None` on overflow.
fn simulate<T, F>(tree: &Tree, s: &[T], order: &[usize], add: F, zero: T) -> Option<T>
where
    T: Copy + PartialOrd + std::ops::Sub<Output = T>,
    F: Fn(T, T) -> Option<T>,
{
    let n = tree.leaves();
    let mut level = zero;
    for &size in &s[..n] {
        level = add(level, size)?;
    }
    let mut peak = level;
    for &k in order {
        let [a, b] = tree.merges()[k];
        let v = n + k;
        let high = add(level, s[v])?;
        if high > peak {
            peak = high;
        }
        level = high - s[a] - s[b];
    }
    Some(peak)
}
