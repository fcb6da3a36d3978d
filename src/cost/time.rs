//! The time model: seconds of one pairwise contraction and of one slice,
//! for the threads a slice really gets.
//!
//! # What it computes
//!
//! For each pairwise contraction of a slice, with `t` threads per slice:
//!
//! ```text
//! seconds = overhead + ops / (rate(t) x efficiency(t, size))
//!                    + moved / (bandwidth(t) x memory share(t, moved))
//! ```
//!
//! * `ops`: multiply-adds, the product of the dimensions of both operands'
//!   indices (DESIGN §3).
//! * `size`: the multiply-adds of *one* matrix product of the contraction,
//!   `ops / batch`, where the batch is the product of the dimensions of the
//!   indices both operands share and the result keeps (the executor runs one
//!   product per batch value). Small products run far below the rate of
//!   large ones (call and packing costs, the plain loop below 256
//!   multiply-adds); a calibrated profile measures this share per thread
//!   count and dtype, a profile without the measurement uses 1.
//! * `moved`: bytes of both operands and the result, once each; the
//!   bandwidth's share depends on how much moves (caches hold small
//!   contractions, large ones lose more to scattered copies), measured per
//!   thread count by a calibrated profile, 1 otherwise.
//! * `overhead`: the fixed cost of one contraction (index bookkeeping,
//!   allocating the result), measured on tiny tensors.
//!
//! The compute and memory terms are added, not overlapped (the roofline's
//! max): the executor first copies operands that need another layout, then
//! multiplies, then the next contraction reads the result, and on this
//! executor the sum matched the measured time of single contractions of
//! plans better than the max did (`scripts/bench-time-model.sh`).
//!
//! The slice's time is the sum over its contractions. Which rate,
//! bandwidth and efficiency apply for `t` threads is [`Speeds::for_threads`]:
//! the profile's figures measured for the largest thread count not above
//! `t`, else (profiles without per-thread figures) the node's rate scaled by
//! `t / cores`.
//!
//! # Complexity
//!
//! O(total size of the tree's index lists).
//!
//! # Reference
//!
//! Compute time against memory time is the roofline model's split
//! (Williams, Waterman and Patterson, "Roofline: an insightful visual
//! performance model for multicore architectures", CACM 52(4), 2009); the
//! size-dependent efficiency and fixed overhead are our own measurements of
//! the executor (`sliceplan calibrate`).
//!
//! # Example
//!
//! ```
//! use sliceplan::cost::time::{Speeds, contraction_seconds, Step};
//! // A 1000 x 1000 by 1000 x 1000 f64 product at 1e9 multiply-adds per
//! // second is 1 s of compute; moving 3 x 8 MB at 1e10 B/s is 2.4 ms.
//! let speeds = Speeds { threads: 1, rate: 1e9, bandwidth: 1e10, overhead: 0.0, efficiency: None, memory: None };
//! let step = Step { ops_log2: 3.0 * 1000f64.log2(), product_ops_log2: 3.0 * 1000f64.log2(), moved_elements: 3e6, indices: 3 };
//! assert!((contraction_seconds(&speeds, &step, 8.0) - 1.0024).abs() < 1e-9);
//! ```

use serde::Serialize;

use super::machine::Machine;
use super::{Dims, NodeSets};
use crate::network::Dtype;

/// The figures that price contractions for one dtype and thread count.
#[derive(Debug, Clone, PartialEq)]
pub struct Speeds {
    /// The thread count the figures were measured (or scaled) for.
    pub threads: u64,
    /// Multiply-adds per second of large products.
    pub rate: f64,
    /// Bytes per second moved by memory-bound contractions.
    pub bandwidth: f64,
    /// Seconds every contraction costs besides its arithmetic.
    pub overhead: f64,
    /// Share of `rate` reached by one product of 2^x multiply-adds:
    /// (x, share) points, x increasing; `None` means 1 everywhere.
    pub efficiency: Option<Vec<(f64, f64)>>,
    /// Share of `bandwidth` reached when 2^x elements move: (x, share)
    /// points; `None` means 1 everywhere.
    pub memory: Option<Vec<(f64, f64)>>,
}

impl Speeds {
    /// The figures of `machine` for `dtype` when a slice runs with
    /// `threads` threads (see the module docs).
    pub fn for_threads(machine: &Machine, dtype: Dtype, threads: u64) -> Speeds {
        let threads = threads.max(1);
        let measured = machine
            .threads
            .iter()
            .filter(|f| f.threads <= threads)
            .max_by_key(|f| f.threads);
        match measured {
            Some(f) => Speeds {
                threads: f.threads,
                rate: f.rate.of(dtype),
                bandwidth: f.bandwidth,
                overhead: machine.overhead_seconds,
                efficiency: f.efficiency.as_ref().map(|e| e.points(dtype)),
                memory: f.memory.as_ref().map(|m| m.points()),
            },
            None => {
                let used = threads.min(machine.cores);
                Speeds {
                    threads: used,
                    rate: machine.rate.of(dtype) * used as f64 / machine.cores as f64,
                    bandwidth: machine.bandwidth,
                    overhead: machine.overhead_seconds,
                    efficiency: None,
                    memory: None,
                }
            }
        }
    }

    /// The share of the rate one product of 2^`x` multiply-adds reaches:
    /// linear between measured points in x, constant beyond the ends.
    pub fn share(&self, x: f64) -> f64 {
        interpolate(self.efficiency.as_deref(), x)
    }

    /// The share of the bandwidth when 2^`x` elements move (as
    /// [`Speeds::share`]).
    pub fn memory_share(&self, x: f64) -> f64 {
        interpolate(self.memory.as_deref(), x)
    }
}

/// Linear interpolation between (x, y) points, constant beyond the ends;
/// 1 without points.
fn interpolate(points: Option<&[(f64, f64)]>, x: f64) -> f64 {
    let Some(points) = points.filter(|p| !p.is_empty()) else {
        return 1.0;
    };
    match points.iter().position(|&(px, _)| px >= x) {
        None => points.last().map_or(1.0, |p| p.1),
        Some(0) => points[0].1,
        Some(i) => {
            let ((x0, y0), (x1, y1)) = (points[i - 1], points[i]);
            y0 + (y1 - y0) * (x - x0) / (x1 - x0)
        }
    }
}

/// One pairwise contraction, as the time model sees it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Step {
    /// log2 of its multiply-adds.
    pub ops_log2: f64,
    /// log2 of the multiply-adds of one of its matrix products.
    pub product_ops_log2: f64,
    /// Elements of both operands and the result.
    pub moved_elements: f64,
    /// Indices it multiplies over (of dimension above one).
    pub indices: usize,
}

/// The contractions of a tree priced with `dims`, by merge number.
pub fn steps(sets: &NodeSets, dims: &Dims) -> Vec<Step> {
    let log2 = |idx: &[usize]| idx.iter().map(|&e| dims.log2[e]).sum::<f64>();
    let n = sets.leaves();
    (0..sets.num_merges())
        .map(|k| {
            let [a, b] = sets.merge(k);
            let (ia, ib, iv) = (&sets.indices[a], &sets.indices[b], &sets.indices[n + k]);
            let batch: Vec<usize> = ia
                .iter()
                .copied()
                .filter(|e| ib.binary_search(e).is_ok() && iv.binary_search(e).is_ok())
                .collect();
            let ops_log2 = log2(&sets.unions[k]);
            Step {
                ops_log2,
                product_ops_log2: ops_log2 - log2(&batch),
                moved_elements: log2(ia).exp2() + log2(ib).exp2() + log2(iv).exp2(),
                indices: sets.unions[k].iter().filter(|&&e| dims.dim[e] > 1).count(),
            }
        })
        .collect()
}

/// Seconds of one contraction with elements of `bytes` bytes.
pub fn contraction_seconds(speeds: &Speeds, step: &Step, bytes: f64) -> f64 {
    let rate = speeds.rate * speeds.share(step.product_ops_log2).max(1e-9);
    let compute = step.ops_log2.exp2() / rate;
    let bandwidth = speeds.bandwidth * speeds.memory_share(step.moved_elements.log2()).max(1e-9);
    let memory = step.moved_elements * bytes / bandwidth;
    speeds.overhead + compute + memory
}

/// Seconds of one slice: the sum over its contractions.
pub fn slice_seconds(sets: &NodeSets, dims: &Dims, dtype: Dtype, speeds: &Speeds) -> f64 {
    let bytes = dtype.bytes() as f64;
    steps(sets, dims)
        .iter()
        .map(|s| contraction_seconds(speeds, s, bytes))
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shares_interpolate_in_log_size() {
        let s = Speeds {
            threads: 1,
            rate: 1.0,
            bandwidth: 1.0,
            overhead: 0.0,
            efficiency: Some(vec![(0.0, 0.1), (10.0, 0.5), (20.0, 1.0)]),
            memory: None,
        };
        // Linear interpolation by hand: halfway from (0, 0.1) to (10, 0.5).
        assert!((s.share(5.0) - 0.3).abs() < 1e-12);
        assert_eq!(s.share(-3.0), 0.1);
        assert_eq!(s.share(30.0), 1.0);
        assert_eq!(s.share(10.0), 0.5);
    }

    #[test]
    fn batch_indices_make_small_products() {
        // a[x,i,k] b[x,k,j] -> v[x,i,j], dims x=8, i=k=j=4: x is a batch
        // index, so one product is 4 x 4 x 4 = 2^6 multiply-adds of 2^9 in
        // all; moved = 128 + 128 + 128 elements (closed form).
        let net =
            crate::formats::einsum::network_from_einsum("xik,xkj->xij", Some(4), &[]).unwrap();
        let mut dims = Dims::of(&net);
        let x = net.index_id("x").unwrap();
        dims.dim[x] = 8;
        dims.log2[x] = 3.0;
        let sets = NodeSets::new(&net, &crate::tree::Tree::left_deep(2));
        let s = steps(&sets, &dims);
        assert_eq!(s.len(), 1);
        assert!((s[0].ops_log2 - 9.0).abs() < 1e-12);
        assert!((s[0].product_ops_log2 - 6.0).abs() < 1e-12);
        assert!((s[0].moved_elements - 384.0).abs() < 1e-9);
        assert_eq!(s[0].indices, 4);
    }
}
