//! The cost model of a contraction tree (DESIGN §3): total ops, width, op
//! width, peak with its traversal, height, and the same per slice.
//!
//! A node of the tree stands for the set S of tensors below it. Its indices
//! are those that touch S and also touch a tensor outside S or are open. An
//! index all of whose tensors lie in S and that is not open is summed at the
//! lowest node that contains all its tensors.
//!
//! [`NodeSets`] computes every node's indices once; [`NodeSets::evaluate`]
//! then prices the tree for any dimensions, which is how slicing is priced:
//! a sliced index simply has dimension 1 in [`Dims::sliced`].

pub mod bytes;
pub mod machine;
pub mod memory;
pub mod peak;
pub mod time;
pub mod trace;

use serde::Serialize;

use crate::network::{IndexId, Network};
use crate::num::{product, Count};
use crate::tree::Tree;
use peak::{min_peak_schedule, Job};

/// Index dimensions to price a tree with (the network's, or sliced ones).
#[derive(Debug, Clone, PartialEq)]
pub struct Dims {
    /// Dimension per index id.
    pub dim: Vec<u64>,
    /// log2 of each dimension.
    pub log2: Vec<f64>,
}

impl Dims {
    /// The network's own dimensions.
    pub fn of(net: &Network) -> Dims {
        Dims {
            dim: net.dims(),
            log2: net.log2_dims(),
        }
    }

    /// The network's dimensions with every index in `sliced` set to 1.
    pub fn sliced(net: &Network, sliced: &[IndexId]) -> Dims {
        let mut d = Dims::of(net);
        for &e in sliced {
            d.dim[e] = 1;
            d.log2[e] = 0.0;
        }
        d
    }

    fn size(&self, indices: &[IndexId]) -> Count {
        Count {
            exact: product(indices.iter().map(|&e| self.dim[e])),
            log2: indices.iter().map(|&e| self.log2[e]).sum(),
        }
    }
}

/// Which memory the peak counts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Inputs {
    /// Every input tensor is in memory from the start until consumed.
    #[default]
    Resident,
    /// An input tensor counts only from the contraction that first uses it
    /// (it is loaded, or sliced out of a shared copy, just in time).
    OnFirstUse,
}

/// Scratch memory a pairwise contraction needs besides operands and result.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Workspace {
    /// None: the output is written while both operands are live (DESIGN §3).
    #[default]
    None,
    /// The executor's rule. To contract `a` and `b` into `v`, it copies `a`
    /// into matrix layout and drops `a`, does the same for `b`, allocates
    /// `v` and multiplies, then drops the copies. Above the level before the
    /// job, memory peaks at `max(size a, size b, size v)` and ends at
    /// `size v - size a - size b`. The root's result is then permuted into
    /// the network's open-index order, one more copy of the root.
    PermuteCopies,
}

/// How to count the peak.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub struct PeakModel {
    /// When input tensors start to count.
    pub inputs: Inputs,
    /// Scratch memory per contraction.
    pub workspace: Workspace,
}

impl PeakModel {
    /// The model the executor keeps to: inputs from first use, permute copies.
    pub const EXECUTOR: PeakModel = PeakModel {
        inputs: Inputs::OnFirstUse,
        workspace: Workspace::PermuteCopies,
    };
}

/// The indices of every node of a tree over a network.
#[derive(Debug, Clone)]
pub struct NodeSets {
    leaves: usize,
    merges: Vec<[usize; 2]>,
    /// Sorted indices of every node (the indices its tensor keeps).
    pub indices: Vec<Vec<IndexId>>,
    /// For merge k: the sorted union of its operands' indices (what its ops
    /// multiply over).
    pub unions: Vec<Vec<IndexId>>,
}

/// Metrics of a tree (per slice when the dimensions are sliced).
#[derive(Debug, Clone, PartialEq)]
pub struct Metrics {
    /// Sum of ops over all merges.
    pub total_ops: Count,
    /// Largest log2 size over all nodes (leaves and root included).
    pub width: f64,
    /// Largest log2 size over all nodes except the root.
    pub width_without_root: f64,
    /// Largest log2 ops of a single merge (0 for a one-tensor tree).
    pub op_width: f64,
    /// Most elements alive at once in the best traversal.
    pub peak: Count,
    /// That traversal: merge numbers in execution order.
    pub order: Vec<usize>,
    /// Contraction rounds with unlimited parallelism.
    pub height: usize,
}

impl NodeSets {
    /// Computes every node's indices. O(total size of all index lists).
    pub fn new(net: &Network, tree: &Tree) -> NodeSets {
        assert_eq!(
            net.num_tensors(),
            tree.leaves(),
            "tree and network disagree on the tensor count"
        );
        let degree: Vec<u32> = net.incidence().iter().map(|v| v.len() as u32).collect();
        let open = net.open_mask();
        // (index, how many tensors below this node carry it), sorted by index.
        let mut counted: Vec<Vec<(IndexId, u32)>> = net
            .tensors
            .iter()
            .map(|t| {
                let mut v: Vec<(IndexId, u32)> = t.indices.iter().map(|&e| (e, 1)).collect();
                v.sort_unstable();
                v
            })
            .collect();
        let mut indices: Vec<Vec<IndexId>> = Vec::with_capacity(tree.num_nodes());
        for c in &counted {
            // A leaf keeps an index unless it is the index's only tensor and
            // the index is not open; such an index is summed by the first
            // merge above, which sees it in the union.
            indices.push(c.iter().map(|&(e, _)| e).collect());
        }
        let mut unions = Vec::with_capacity(tree.merges().len());
        for &[a, b] in tree.merges() {
            let (ca, cb) = (
                std::mem::take(&mut counted[a]),
                std::mem::take(&mut counted[b]),
            );
            let merged = merge_counts(&ca, &cb);
            unions.push(merged.iter().map(|&(e, _)| e).collect());
            let kept: Vec<(IndexId, u32)> = merged
                .into_iter()
                .filter(|&(e, c)| c < degree[e] || open[e])
                .collect();
            indices.push(kept.iter().map(|&(e, _)| e).collect());
            counted.push(kept);
        }
        NodeSets {
            leaves: tree.leaves(),
            merges: tree.merges().to_vec(),
            indices,
            unions,
        }
    }

    /// A node set from its parts, for a tree derived from another one (such
    /// as the tree with the subtrees of slice-invariant intermediates cut
    /// off, their roots as leaves: `crate::slicing::reuse`). Nodes
    /// `0..leaves` are leaves, merge k makes node `leaves + k` from earlier
    /// nodes; `indices` has one sorted list per node, `unions` one per merge.
    pub fn from_parts(
        leaves: usize,
        merges: Vec<[usize; 2]>,
        indices: Vec<Vec<IndexId>>,
        unions: Vec<Vec<IndexId>>,
    ) -> NodeSets {
        assert!(leaves >= 1 && merges.len() + 1 == leaves);
        assert!(indices.len() == leaves + merges.len() && unions.len() == merges.len());
        NodeSets {
            leaves,
            merges,
            indices,
            unions,
        }
    }

    /// Number of leaves.
    pub fn leaves(&self) -> usize {
        self.leaves
    }

    /// The operands of merge `k`.
    pub fn merge(&self, k: usize) -> [usize; 2] {
        self.merges[k]
    }

    /// Number of merges.
    pub fn num_merges(&self) -> usize {
        self.merges.len()
    }

    /// Prices the tree with the given dimensions.
    pub fn evaluate(&self, dims: &Dims, model: PeakModel) -> Metrics {
        let sizes: Vec<Count> = self.indices.iter().map(|s| dims.size(s)).collect();
        let mut total_ops = Count::ZERO;
        let mut op_width = 0.0f64;
        let mut heights = vec![0usize; sizes.len()];
        for (k, union) in self.unions.iter().enumerate() {
            let ops = dims.size(union);
            total_ops = total_ops + ops;
            op_width = op_width.max(ops.log2);
            let [a, b] = self.merges[k];
            heights[self.leaves + k] = 1 + heights[a].max(heights[b]);
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
        let (order, peak) = self.min_peak(&sizes, model);
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

    /// Prices the tree with the network's own dimensions.
    pub fn evaluate_unsliced(&self, net: &Network, model: PeakModel) -> Metrics {
        self.evaluate(&Dims::of(net), model)
    }

    /// Prices the tree with the indices in `sliced` fixed to one value.
    pub fn evaluate_sliced(&self, net: &Network, sliced: &[IndexId], model: PeakModel) -> Sliced {
        let per_slice = self.evaluate(&Dims::sliced(net, sliced), model);
        let slices = Count {
            exact: product(sliced.iter().map(|&e| net.indices[e].dim)),
            log2: sliced
                .iter()
                .map(|&e| (net.indices[e].dim as f64).log2())
                .sum(),
        };
        Sliced {
            slices,
            total_ops: per_slice.total_ops * slices,
            per_slice,
        }
    }

    /// The live-set peak of the best traversal, and that traversal.
    fn min_peak(&self, sizes: &[Count], model: PeakModel) -> (Vec<usize>, Count) {
        let n = self.leaves;
        let s = |v: usize| sizes[v].to_f64();
        // Jobs: with inputs on first use, leaves are jobs 0..n that load a
        // tensor; merges follow. A final permute job closes the executor model.
        let lazy = model.inputs == Inputs::OnFirstUse;
        let first_merge = if lazy { n } else { 0 };
        let mut jobs = Vec::with_capacity(n + self.merges.len() + 1);
        let mut preds: Vec<Vec<usize>> = Vec::with_capacity(jobs.capacity());
        if lazy {
            for v in 0..n {
                jobs.push(Job {
                    peak: s(v),
                    net: s(v),
                });
                preds.push(Vec::new());
            }
        }
        let job_of = |v: usize| -> Option<usize> {
            if v >= n {
                Some(first_merge + v - n)
            } else if lazy {
                Some(v)
            } else {
                None
            }
        };
        for (k, &[a, b]) in self.merges.iter().enumerate() {
            let v = n + k;
            let net = s(v) - s(a) - s(b);
            let peak = match model.workspace {
                Workspace::None => s(v),
                Workspace::PermuteCopies => s(a).max(s(b)).max(s(v)),
            };
            jobs.push(Job { peak, net });
            preds.push([a, b].into_iter().filter_map(job_of).collect());
        }
        let finish = model.workspace == Workspace::PermuteCopies;
        if finish {
            let root = sizes.len() - 1;
            jobs.push(Job {
                peak: s(root),
                net: 0.0,
            });
            preds.push(job_of(root).into_iter().collect());
        }
        let (job_order, _) = min_peak_schedule(&jobs, &preds);
        let order: Vec<usize> = job_order
            .into_iter()
            .filter(|&j| j >= first_merge && j < first_merge + self.merges.len())
            .map(|j| j - first_merge)
            .collect();
        let peak = self.live_peak(sizes, &order, model);
        (order, peak)
    }

    /// The peak of running the merges in `order` under `model`, recomputed
    /// exactly (u128) when every size and sum fits, otherwise in floating
    /// point.
    pub fn live_peak(&self, sizes: &[Count], order: &[usize], model: PeakModel) -> Count {
        if let Some(exact) = sizes.iter().map(|c| c.exact).collect::<Option<Vec<u128>>>() {
            let add = |x: u128, y: u128| x.checked_add(y);
            if let Some(peak) = self.simulate(&exact, order, model, add, 0) {
                return Count::from_u128(peak);
            }
        }
        // Beyond u128, in floating point scaled by the largest size, so
        // sizes past 2^1024 (a 10^6-tensor lattice reaches 2^1833) neither
        // overflow to infinity nor subtract to NaN; sizes below 2^-1074 of
        // the largest vanish, which cannot move the peak's log2.
        let scale = sizes
            .iter()
            .map(|c| c.log2)
            .fold(f64::NEG_INFINITY, f64::max);
        let scale = if scale.is_finite() { scale } else { 0.0 };
        let approx: Vec<f64> = sizes.iter().map(|c| (c.log2 - scale).exp2()).collect();
        let peak = self
            .simulate(&approx, order, model, |x: f64, y: f64| Some(x + y), 0.0)
            .unwrap_or(f64::INFINITY);
        Count::from_log2(peak.log2() + scale)
    }

    /// Walks the live set of a traversal; `add` returns `None` on overflow.
    fn simulate<T, F>(
        &self,
        s: &[T],
        order: &[usize],
        model: PeakModel,
        add: F,
        zero: T,
    ) -> Option<T>
    where
        T: Copy + PartialOrd + std::ops::Sub<Output = T>,
        F: Fn(T, T) -> Option<T>,
    {
        let max = |x: T, y: T| if y > x { y } else { x };
        let n = self.leaves;
        let lazy = model.inputs == Inputs::OnFirstUse;
        let permute = model.workspace == Workspace::PermuteCopies;
        let mut level = zero;
        if !lazy {
            for &size in &s[..n] {
                level = add(level, size)?;
            }
        }
        let mut peak = level;
        for &k in order {
            let [a, b] = self.merges[k];
            let v = n + k;
            if lazy {
                for c in [a, b].into_iter().filter(|&c| c < n) {
                    level = add(level, s[c])?;
                    peak = max(peak, level);
                }
            }
            let extra = if permute {
                max(max(s[a], s[b]), s[v])
            } else {
                s[v]
            };
            peak = max(peak, add(level, extra)?);
            // The operands are live, so `level >= s[a] + s[b]`.
            level = add(level, s[v])? - s[a] - s[b];
        }
        if lazy && self.merges.is_empty() {
            level = add(level, s[0])?;
            peak = max(peak, level);
        }
        if permute {
            peak = max(peak, add(level, s[s.len() - 1])?);
        }
        Some(peak)
    }

    /// One row per node for the per-node table of `inspect`.
    pub fn node_table(&self, net: &Network, dims: &Dims) -> Vec<NodeRow> {
        let mut rows = Vec::with_capacity(self.indices.len());
        for (v, idx) in self.indices.iter().enumerate() {
            let names =
                |ids: &[IndexId]| ids.iter().map(|&e| net.indices[e].name.clone()).collect();
            let (children, ops_log2, summed) = match v.checked_sub(self.leaves) {
                None => (None, None, Vec::new()),
                Some(k) => {
                    let summed: Vec<IndexId> = self.unions[k]
                        .iter()
                        .copied()
                        .filter(|e| !idx.contains(e))
                        .collect();
                    (
                        Some(self.merges[k]),
                        Some(dims.size(&self.unions[k]).log2),
                        names(&summed),
                    )
                }
            };
            rows.push(NodeRow {
                node: v,
                name: (v < self.leaves).then(|| net.tensors[v].name.clone()),
                children,
                indices: names(idx),
                size_log2: dims.size(idx).log2,
                ops_log2,
                summed,
            });
        }
        rows
    }
}

/// The metrics of a sliced tree.
#[derive(Debug, Clone, PartialEq)]
pub struct Sliced {
    /// Number of slices: product of the sliced dimensions.
    pub slices: Count,
    /// Metrics of one slice.
    pub per_slice: Metrics,
    /// Slices × per-slice total ops.
    pub total_ops: Count,
}

/// One node of the per-node table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NodeRow {
    /// Node id (tensors first, then merges).
    pub node: usize,
    /// Tensor name for leaves.
    pub name: Option<String>,
    /// The two operands of a merge.
    pub children: Option<[usize; 2]>,
    /// The node's indices.
    pub indices: Vec<String>,
    /// log2 of its size.
    pub size_log2: f64,
    /// log2 of its ops (merges only).
    pub ops_log2: Option<f64>,
    /// Indices summed at this node.
    pub summed: Vec<String>,
}

/// Merges two sorted (index, count) lists, adding counts of shared indices.
pub(crate) fn merge_counts(a: &[(IndexId, u32)], b: &[(IndexId, u32)]) -> Vec<(IndexId, u32)> {
    let mut out = Vec::with_capacity(a.len() + b.len());
    let (mut i, mut j) = (0, 0);
    while i < a.len() && j < b.len() {
        match a[i].0.cmp(&b[j].0) {
            std::cmp::Ordering::Less => {
                out.push(a[i]);
                i += 1;
            }
            std::cmp::Ordering::Greater => {
                out.push(b[j]);
                j += 1;
            }
            std::cmp::Ordering::Equal => {
                out.push((a[i].0, a[i].1 + b[j].1));
                i += 1;
                j += 1;
            }
        }
    }
    out.extend_from_slice(&a[i..]);
    out.extend_from_slice(&b[j..]);
    out
}

/// Metrics of a tree with the network's dimensions and the default model.
pub fn metrics(net: &Network, tree: &Tree) -> Metrics {
    NodeSets::new(net, tree).evaluate_unsliced(net, PeakModel::default())
}
