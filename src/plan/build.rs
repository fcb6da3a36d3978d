//! Building a [`Plan`] from a network, a tree and a slice set, with every
//! predicted figure taken from the cost model under the executor's memory
//! rule.

use super::{Plan, Predicted, SlicedIndex, PLAN_FORMAT, PLAN_VERSION};
use crate::cost::{NodeSets, PeakModel};
use crate::network::{Dtype, IndexId, Network};
use crate::tree::Tree;

impl Plan {
    /// A plan for contracting `net` with `tree`, slicing `sliced` (in
    /// slice-numbering order: the first varies slowest).
    ///
    /// The traversal order and the per-slice figures come from
    /// [`NodeSets::evaluate_sliced`] under [`PeakModel::EXECUTOR`], so the
    /// predicted per-slice peak is what the executor will hold.
    /// `slices_at_once` is how many slices' peaks fit in `budget_bytes`
    /// (at least 1; 1 when the budget is 0, meaning none given). The seed is
    /// 0. `network_path` is stored as given (make it relative to where the
    /// plan file will live).
    ///
    /// ```
    /// use sliceplan::{generate, network::Dtype, plan::Plan, tree::Tree};
    /// let net = generate::matrix_chain(&[2, 3, 4]).unwrap();
    /// let tree = Tree::left_deep(2);
    /// let plan = Plan::for_tree(&net, "chain.toml", &tree, &[1], Dtype::F64, 1 << 20);
    /// assert_eq!(plan.slice_count(), Some(3));
    /// // One slice: A1's column (2 elements) and A2's row (4) come in; their
    /// // 2x4 product is written beside them (6 + 8 = 14), they go (8), and
    /// // the result is permuted once more (8 + 8 = 16 elements of 8 bytes).
    /// assert_eq!(plan.predicted.per_slice_peak_bytes, "128");
    /// ```
    pub fn for_tree(
        net: &Network,
        network_path: &str,
        tree: &Tree,
        sliced: &[IndexId],
        dtype: Dtype,
        budget_bytes: u64,
    ) -> Plan {
        let sets = NodeSets::new(net, tree);
        let whole = sets.evaluate_unsliced(net, PeakModel::EXECUTOR);
        let s = sets.evaluate_sliced(net, sliced, PeakModel::EXECUTOR);
        let bytes = crate::num::Count::from_u128(dtype.bytes() as u128);
        let peak_bytes = s.per_slice.peak * bytes;
        let slices_at_once = match (peak_bytes.exact, budget_bytes) {
            (_, 0) | (None, _) | (Some(0), _) => 1,
            (Some(p), b) => (b as u128 / p).clamp(1, u64::MAX as u128) as u64,
        };
        Plan {
            format: PLAN_FORMAT.into(),
            version: PLAN_VERSION,
            tool_version: env!("CARGO_PKG_VERSION").into(),
            network_fingerprint: net.fingerprint(),
            network_path: network_path.into(),
            tensors: net.num_tensors(),
            merges: tree.merges().to_vec(),
            order: s.per_slice.order.clone(),
            sliced: sliced
                .iter()
                .map(|&e| SlicedIndex {
                    name: net.indices[e].name.clone(),
                    dim: net.indices[e].dim,
                })
                .collect(),
            dtype,
            budget_bytes,
            slices_at_once,
            seed: 0,
            reuse: false,
            held: Vec::new(),
            predicted: Predicted {
                per_slice_total_ops_log2: s.per_slice.total_ops.log2,
                per_slice_width: s.per_slice.width,
                per_slice_peak_bytes: peak_bytes.to_json_string(),
                total_ops_log2: s.total_ops.log2,
                overhead: crate::num::overhead(s.total_ops.log2, whole.total_ops.log2),
                baseline_total_ops_log2: whole.total_ops.log2,
                found_by: String::new(),
                tree_source: String::new(),
                plain_total_ops_log2: s.total_ops.log2,
                reused_bytes: "0".into(),
                setup_bytes: "0".into(),
            },
            frontier: Vec::new(),
            cover: None,
            estimate: None,
            lower_bound_width: None,
            ops_bound: None,
        }
    }
}
