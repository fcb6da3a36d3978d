//! What one process needs in memory to run slices of a plan.
//!
//! The executor keeps every full input tensor once (shared by all slices it
//! runs), an accumulator for the full output (two f64 per real lane), and for each slice
//! running at once that slice's peak under [`PeakModel::EXECUTOR`] (sliced
//! inputs copied in at first use, permuted operand copies, the result, and
//! the final permute of the root). The plan's budget must cover the sum.
//!
//! With reuse of slice-invariant work (see `crate::slicing::reuse`), the
//! process also holds, for its whole life, the intermediates that are the
//! same in every slice (`reused_bytes`), and each slice's peak is that of
//! the rest of the tree, the held intermediates read like inputs. Before
//! the first slice the process computes those intermediates one after the
//! other; the most it holds above the inputs then is `setup_bytes`. So a
//! process needs
//!
//! ```text
//! inputs + output + max(reused + slices at once x per-slice peak, setup)
//! ```
//!
//! and without reuse `reused` and `setup` are 0: the rule above.

use serde::{Deserialize, Serialize};

use super::{NodeSets, PeakModel};
use crate::network::{Dtype, IndexId, Network};
use crate::num::Count;

/// Bytes one process needs, by part.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MemoryNeed {
    /// All full input tensors, held once.
    pub inputs_bytes: f64,
    /// The output accumulator (full output, whatever is sliced).
    pub output_bytes: f64,
    /// Peak of one slice under the executor's model.
    pub per_slice_peak_bytes: f64,
    /// Slices running at once in the process.
    pub slices_at_once: u64,
    /// Slice-invariant intermediates held for the process's life (0
    /// without reuse).
    #[serde(default)]
    pub reused_bytes: f64,
    /// The most held above the inputs while those intermediates are
    /// computed, before the first slice (0 without reuse).
    #[serde(default)]
    pub setup_bytes: f64,
}

impl MemoryNeed {
    /// A need without reuse: inputs, output, slices at once x per-slice peak.
    pub fn plain(
        inputs_bytes: f64,
        output_bytes: f64,
        per_slice_peak_bytes: f64,
        slices_at_once: u64,
    ) -> MemoryNeed {
        MemoryNeed {
            inputs_bytes,
            output_bytes,
            per_slice_peak_bytes,
            slices_at_once,
            reused_bytes: 0.0,
            setup_bytes: 0.0,
        }
    }

    /// The total: inputs + output + max(reused + slices at once x per-slice
    /// peak, setup).
    pub fn total_bytes(&self) -> f64 {
        self.inputs_bytes
            + self.output_bytes
            + (self.reused_bytes + self.slices_at_once as f64 * self.per_slice_peak_bytes)
                .max(self.setup_bytes)
    }

    /// The part that slicing cannot reduce (inputs and output).
    pub fn fixed_bytes(&self) -> f64 {
        self.inputs_bytes + self.output_bytes
    }
}

/// Bytes of all full input tensors.
pub fn inputs_bytes(net: &Network, dtype: Dtype) -> f64 {
    let elements: f64 = (0..net.num_tensors())
        .map(|t| net.tensor_size_log2(t).exp2())
        .sum();
    elements * dtype.bytes() as f64
}

/// Bytes of the output accumulator. The executor sums slices in f64 lanes
/// (one per real element, two per complex one) with a compensation lane
/// beside each (Neumaier summation), so every lane takes 16 bytes whatever
/// the element type: twice a c128 output, four times a c64 one.
pub fn output_bytes(net: &Network, dtype: Dtype) -> f64 {
    let log2: f64 = net
        .open
        .iter()
        .map(|&e| (net.indices[e].dim as f64).log2())
        .sum();
    let lanes = if dtype.is_complex() { 2.0 } else { 1.0 };
    log2.exp2() * lanes * ACCUMULATOR_BYTES_PER_LANE
}

/// Bytes per f64 lane of the output accumulator: the sum and its
/// compensation.
pub const ACCUMULATOR_BYTES_PER_LANE: f64 = 16.0;

/// The per-slice peak in elements under the executor's model.
pub fn per_slice_peak(sets: &NodeSets, net: &Network, sliced: &[IndexId]) -> Count {
    sets.evaluate_sliced(net, sliced, PeakModel::EXECUTOR)
        .per_slice
        .peak
}

/// What a process running `at_once` slices with slice set `sliced` needs,
/// without reuse.
pub fn memory_need(
    sets: &NodeSets,
    net: &Network,
    sliced: &[IndexId],
    dtype: Dtype,
    at_once: u64,
) -> MemoryNeed {
    MemoryNeed::plain(
        inputs_bytes(net, dtype),
        output_bytes(net, dtype),
        per_slice_peak(sets, net, sliced).to_f64() * dtype.bytes() as f64,
        at_once,
    )
}
