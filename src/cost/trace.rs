//! The live memory of one slice step by step: what each moment of a
//! traversal holds, split into inputs, intermediates and workspace.
//!
//! # What it computes
//!
//! For a traversal `order` of the tree's merges under a [`PeakModel`], one
//! [`LiveStep`] per merge, at the merge's own worst moment: the input
//! tensors live (all of them from the start under [`Inputs::Resident`];
//! from the merge that first uses each under [`Inputs::OnFirstUse`], so
//! an operand counts at its own merge), the intermediates live before it,
//! and its workspace: the result being written, or under
//! [`Workspace::PermuteCopies`] the largest of the operand copies and the
//! result, `max(size a, size b, size v)` (the rule the executor keeps, see
//! [`Workspace`]). With `PermuteCopies` a last step permutes the root
//! into output order (one more copy of it). The largest step total is the
//! peak [`NodeSets::live_peak`] computes for the same order and model.
//!
//! # Complexity
//!
//! O(merges) time and memory.
//!
//! # Example
//!
//! ```
//! use sliceplan::cost::{trace::live_trace, Dims, NodeSets, PeakModel};
//! use sliceplan::formats::einsum::network_from_einsum;
//! use sliceplan::tree::Tree;
//! // ab,bc->ac with dimension 2: a 4-element result from two 4-element
//! // inputs; with inputs resident and no workspace the step holds 4 + 4
//! // inputs and writes 4.
//! let net = network_from_einsum("ab,bc->ac", Some(2), &[]).unwrap();
//! let sets = NodeSets::new(&net, &Tree::left_deep(2));
//! let steps = live_trace(&sets, &Dims::of(&net), &[0], PeakModel::default());
//! assert_eq!((steps[0].inputs, steps[0].intermediates, steps[0].workspace), (8.0, 0.0, 4.0));
//! ```

use serde::Serialize;

use super::{Dims, Inputs, NodeSets, PeakModel, Workspace};

/// One step of a traversal, in elements.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LiveStep {
    /// The merge run at this step; `None` for the final permute of the root.
    pub merge: Option<usize>,
    /// Input tensors live at the step's worst moment.
    pub inputs: f64,
    /// Intermediates live before the step (its own operands included).
    pub intermediates: f64,
    /// What the step writes besides them: its result, or the larger of
    /// the operand copies and the result.
    pub workspace: f64,
}

impl LiveStep {
    /// Everything live at the step's worst moment.
    pub fn total(&self) -> f64 {
        self.inputs + self.intermediates + self.workspace
    }
}

/// The steps of running the merges in `order` under `model`.
pub fn live_trace(
    sets: &NodeSets,
    dims: &Dims,
    order: &[usize],
    model: PeakModel,
) -> Vec<LiveStep> {
    // Exact while the product fits an f64 mantissa, else from the log2s.
    let size = |v: usize| {
        let idx = &sets.indices[v];
        crate::num::product(idx.iter().map(|&e| dims.dim[e]))
            .filter(|&p| p < 1 << 53)
            .map_or_else(
                || idx.iter().map(|&e| dims.log2[e]).sum::<f64>().exp2(),
                |p| p as f64,
            )
    };
    let n = sets.leaves();
    let lazy = model.inputs == Inputs::OnFirstUse;
    let permute = model.workspace == Workspace::PermuteCopies;
    let mut inputs: f64 = if lazy { 0.0 } else { (0..n).map(size).sum() };
    let mut intermediates = 0.0;
    let mut steps = Vec::with_capacity(order.len() + 1);
    for &k in order {
        let [a, b] = sets.merge(k);
        let v = n + k;
        if lazy {
            inputs += [a, b]
                .iter()
                .filter(|&&c| c < n)
                .map(|&c| size(c))
                .sum::<f64>();
        }
        let workspace = if permute {
            size(a).max(size(b)).max(size(v))
        } else {
            size(v)
        };
        steps.push(LiveStep {
            merge: Some(k),
            inputs,
            intermediates,
            workspace,
        });
        for c in [a, b] {
            if c < n {
                inputs -= size(c);
            } else {
                intermediates -= size(c);
            }
        }
        intermediates += size(v);
    }
    if permute {
        let root = if order.is_empty() {
            0
        } else {
            n + sets.num_merges() - 1
        };
        let held = if order.is_empty() && lazy {
            size(0)
        } else {
            0.0
        };
        steps.push(LiveStep {
            merge: None,
            inputs: inputs + held,
            intermediates,
            workspace: size(root),
        });
    }
    steps
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::num::Count;

    #[test]
    fn the_largest_step_is_the_models_peak() {
        // Independent check: NodeSets::live_peak walks the same order with
        // its own simulation; the trace's largest total must equal it for
        // every model, on networks with hyperedges, open and sliced indices.
        for eq in [
            "ab,bc,cd,de->ae",
            "abc,cde,efa,bdf->",
            "ab,ac,ad,ae,bcde->a",
            "ij,jk,kl,li,ik->",
        ] {
            let net = crate::formats::einsum::network_from_einsum(eq, Some(3), &[]).unwrap();
            for tree in [crate::tree::Tree::left_deep(net.num_tensors())] {
                let sets = NodeSets::new(&net, &tree);
                for sliced in [vec![], vec![0usize]] {
                    let dims = Dims::sliced(&net, &sliced);
                    let sizes: Vec<Count> = sets
                        .indices
                        .iter()
                        .map(|s| Count::from_u128(s.iter().map(|&e| dims.dim[e] as u128).product()))
                        .collect();
                    for model in [
                        PeakModel::default(),
                        PeakModel::EXECUTOR,
                        PeakModel {
                            inputs: Inputs::Resident,
                            workspace: Workspace::PermuteCopies,
                        },
                    ] {
                        let order = sets.evaluate(&dims, model).order;
                        let trace = live_trace(&sets, &dims, &order, model);
                        let top = trace.iter().map(LiveStep::total).fold(0.0, f64::max);
                        let peak = sets.live_peak(&sizes, &order, model).to_f64();
                        assert_eq!(top, peak, "{eq} sliced {sliced:?} {model:?}");
                    }
                }
            }
        }
    }
}
