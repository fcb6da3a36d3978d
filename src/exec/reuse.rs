//! Slice-invariant intermediates in a run: which a plan holds, where its
//! traversal splits into the once-per-process setup and the per-slice
//! part, and what each part is predicted to hold (the cost model's rule,
//! `crate::slicing::reuse`), so the executor's meters can be checked
//! against it.

use crate::cost::{Dims, NodeSets, PeakModel};
use crate::error::{Error, Result};
use crate::network::{Dtype, IndexId, Network};
use crate::num::{product, Count};
use crate::slicing::reuse::{collapse, variant_nodes};
use crate::tree::Tree;

/// A plan's traversal split by its held intermediates.
#[derive(Debug, Clone, PartialEq)]
pub struct Split {
    /// The held intermediates (node ids).
    pub held: Vec<usize>,
    /// The setup merges (inside held subtrees, held ones included), in the
    /// plan's order.
    pub setup: Vec<usize>,
    /// The per-slice merges, in the plan's order.
    pub slice: Vec<usize>,
    /// Per merge: true when it belongs to the setup.
    pub in_setup: Vec<bool>,
}

impl Split {
    /// Splits `order` by `held`, checking that every held node is an
    /// intermediate below the root that no sliced index reaches, and none
    /// lies below another.
    pub fn new(
        net: &Network,
        tree: &Tree,
        order: &[usize],
        sliced: &[IndexId],
        held: &[usize],
    ) -> Result<Split> {
        let n = tree.leaves();
        let sets = NodeSets::new(net, tree);
        let variant = variant_nodes(&sets, net, sliced);
        for &h in held {
            if h < n || h >= tree.root() || variant[h] {
                return Err(Error::in_source(
                    "plan",
                    format!(
                        "held node {h} is not an intermediate below the root that is the same in every slice; plan again"
                    ),
                ));
            }
        }
        let cut = collapse(&sets, held);
        if held.iter().any(|&h| cut.inside[h]) {
            return Err(Error::in_source(
                "plan",
                "a held node lies below another held node; plan again",
            ));
        }
        let in_setup: Vec<bool> = (0..tree.merges().len())
            .map(|k| cut.inside[n + k] || held.contains(&(n + k)))
            .collect();
        let (setup, slice) = order.iter().partition(|&&k| in_setup[k]);
        Ok(Split {
            held: held.to_vec(),
            setup,
            slice,
            in_setup,
        })
    }

    /// A split with nothing held: every merge per slice.
    pub fn none(tree: &Tree, order: &[usize]) -> Split {
        Split {
            held: Vec::new(),
            setup: Vec::new(),
            slice: order.to_vec(),
            in_setup: vec![false; tree.merges().len()],
        }
    }
}

/// Exact element counts of every node with `sliced` at dimension 1
/// (infinite log2 where a count passes u128).
fn sizes(sets: &NodeSets, net: &Network, sliced: &[IndexId]) -> Vec<Count> {
    let dims = Dims::sliced(net, sliced);
    sets.indices
        .iter()
        .map(|s| match product(s.iter().map(|&e| dims.dim[e])) {
            Some(v) => Count::from_u128(v),
            None => Count::from_log2(f64::INFINITY),
        })
        .collect()
}

/// The cost model's per-slice peak in bytes for the per-slice part of
/// `split`, under [`PeakModel::EXECUTOR`] with the held intermediates read
/// like inputs; `None` beyond 2^64.
pub fn slice_peak_bytes(
    net: &Network,
    tree: &Tree,
    split: &Split,
    sliced: &[IndexId],
    dtype: Dtype,
) -> Option<u64> {
    let sets = NodeSets::new(net, tree);
    let cut = collapse(&sets, &split.held);
    let mut cut_of = vec![usize::MAX; tree.merges().len()];
    for (c, &k) in cut.merge_of.iter().enumerate() {
        cut_of[k] = c;
    }
    let order: Vec<usize> = split.slice.iter().map(|&k| cut_of[k]).collect();
    let peak = cut
        .sets
        .live_peak(&sizes(&cut.sets, net, sliced), &order, PeakModel::EXECUTOR)
        .exact?;
    u64::try_from(peak.checked_mul(dtype.bytes() as u128)?).ok()
}

/// The most bytes held above the inputs while the setup merges of `split`
/// run in their order (inputs copied at first use, permute copies, held
/// results kept): the executor's rule for the setup. 0 when nothing is
/// held; `None` beyond 2^64.
pub fn setup_peak_bytes(net: &Network, tree: &Tree, split: &Split, dtype: Dtype) -> Option<u64> {
    if split.setup.is_empty() {
        return Some(0);
    }
    let sets = NodeSets::new(net, tree);
    let n = tree.leaves();
    let s: Vec<u128> = sizes(&sets, net, &[])
        .iter()
        .map(|c| c.exact)
        .collect::<Option<_>>()?;
    let (mut level, mut peak) = (0u128, 0u128);
    for &k in &split.setup {
        let [a, b] = tree.merges()[k];
        for c in [a, b].into_iter().filter(|&c| c < n) {
            level = level.checked_add(s[c])?;
            peak = peak.max(level);
        }
        let v = n + k;
        let extra = s[a].max(s[b]).max(s[v]);
        peak = peak.max(level.checked_add(extra)?);
        level = level.checked_add(s[v])? - s[a] - s[b];
    }
    u64::try_from(peak.checked_mul(dtype.bytes() as u128)?).ok()
}

/// Bytes of the held intermediates; `None` beyond 2^64.
pub fn held_bytes(net: &Network, tree: &Tree, split: &Split, dtype: Dtype) -> Option<u64> {
    let sets = NodeSets::new(net, tree);
    let s = sizes(&sets, net, &[]);
    let mut total = 0u128;
    for &h in &split.held {
        total = total.checked_add(s[h].exact?)?;
    }
    u64::try_from(total.checked_mul(dtype.bytes() as u128)?).ok()
}
