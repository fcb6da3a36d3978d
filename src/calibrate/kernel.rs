//! Timing the executor's own pairwise kernel ([`contract`]) on chosen
//! shapes: the measuring instrument of `calibrate`.
//!
//! A shape is two operands given as (index, dimension) lists in storage
//! order and the indices the result keeps, exactly as the executor sees
//! them (only indices of dimension above one). The operands are filled
//! once with values in [-1, 1) and borrowed by every call, as input
//! tensors are in a run; each call allocates its result, as in a run.

use std::sync::Arc;
use std::time::Instant;

use num_complex::Complex64;

use crate::exec::dense::{row_major_strides, View};
use crate::exec::matmul::FaerMatMul;
use crate::exec::memory::Meter;
use crate::exec::pairwise::{contract, Context, Kernel, Operand};
use crate::exec::scalar::Scalar;
use crate::network::IndexId;

/// One operand: (index, dimension) in storage order, first slowest.
pub type Legs = Vec<(IndexId, usize)>;

/// A pairwise contraction to time.
#[derive(Debug, Clone, PartialEq)]
pub struct Shape {
    /// The left operand.
    pub a: Legs,
    /// The right operand.
    pub b: Legs,
    /// The indices the result keeps.
    pub keep: Vec<IndexId>,
}

impl Shape {
    /// A batched matrix product: `a[batch, m, k] b[batch, k, n] ->
    /// v[batch, m, n]` with every group one index (dimension-one groups
    /// left out, as the executor leaves them out). With `permuted`, `a` is
    /// stored `[k, batch, m]` and `b` `[n, batch, k]`, so the kernel must
    /// copy both into matrix layout first.
    pub fn batched(batch: usize, m: usize, k: usize, n: usize, permuted: bool) -> Shape {
        let legs = |list: &[(IndexId, usize)]| -> Legs {
            list.iter().copied().filter(|&(_, d)| d > 1).collect()
        };
        let (ib, im, ik, in_) = ((0, batch), (1, m), (2, k), (3, n));
        let (a, b) = if permuted {
            (legs(&[ik, ib, im]), legs(&[in_, ib, ik]))
        } else {
            (legs(&[ib, im, ik]), legs(&[ib, ik, in_]))
        };
        let keep = [ib, im, in_]
            .iter()
            .filter(|&&(_, d)| d > 1)
            .map(|&(e, _)| e)
            .collect();
        Shape { a, b, keep }
    }

    /// A batched product over dimension-2 indices, as in circuits, spin
    /// lattices and formulas: `batch` indices shared and kept, `m` only in
    /// `a`, `k` summed, `n` only in `b` (counts of indices). In matrix
    /// layout `a` is `[batch, m, k]` and `b` `[batch, k, n]`; `permuted`
    /// stores `a` reversed and `b` rotated by half, so the kernel copies
    /// both through many small axes first.
    pub fn binary(batch: usize, m: usize, k: usize, n: usize, permuted: bool) -> Shape {
        let ids = |from: usize, count: usize| (from..from + count).map(|e| (e, 2usize));
        let (b0, m0, k0, n0) = (0, batch, batch + m, batch + m + k);
        let mut a: Legs = ids(b0, batch).chain(ids(m0, m)).chain(ids(k0, k)).collect();
        let mut b: Legs = ids(b0, batch).chain(ids(k0, k)).chain(ids(n0, n)).collect();
        if permuted {
            a.reverse();
            let half = b.len() / 2;
            b.rotate_left(half);
        }
        let keep = (b0..b0 + batch)
            .chain(m0..m0 + m)
            .chain(n0..n0 + n)
            .collect();
        Shape { a, b, keep }
    }

    /// The small contractions whose mean time is the fixed overhead of one
    /// contraction, all over dimension-2 indices: a 2 x 2 by 2 x 2 product
    /// in matrix layout, a batch of two such stored permuted, and
    /// `a[i,j,k,l] b[l,m,j,n] -> v[i,k,m,n]` with both operands copied
    /// first (as the site tensors of a lattice or the gates of a circuit).
    pub fn small() -> [Shape; 3] {
        [
            Shape::batched(1, 2, 2, 2, false),
            Shape::batched(2, 2, 2, 2, true),
            Shape {
                a: vec![(0, 2), (1, 2), (2, 2), (3, 2)],
                b: vec![(3, 2), (4, 2), (1, 2), (5, 2)],
                keep: vec![0, 2, 4, 5],
            },
        ]
    }

    /// Multiply-adds of the contraction: the product of the dimensions of
    /// every index of either operand.
    pub fn ops(&self) -> f64 {
        let mut all: Vec<(IndexId, usize)> = self.a.iter().chain(&self.b).copied().collect();
        all.sort_unstable();
        all.dedup_by_key(|x| x.0);
        all.iter().map(|&(_, d)| d as f64).product()
    }

    /// Elements of the operands and of the result.
    pub fn elements(&self) -> [f64; 3] {
        let size = |l: &Legs| l.iter().map(|&(_, d)| d as f64).product::<f64>();
        let dims: Vec<(IndexId, usize)> = self.a.iter().chain(&self.b).copied().collect();
        let v: f64 = self
            .keep
            .iter()
            .map(|e| dims.iter().find(|x| x.0 == *e).map_or(1, |x| x.1) as f64)
            .product();
        [size(&self.a), size(&self.b), v]
    }
}

fn view<'d, T>(legs: &Legs, data: &'d [T]) -> View<'d, T> {
    let dims: Vec<usize> = legs.iter().map(|&(_, d)| d).collect();
    View {
        data,
        offset: 0,
        indices: legs.iter().map(|&(e, _)| e).collect(),
        strides: row_major_strides(&dims),
        dims,
        exp: 0,
    }
}

/// Seconds one call of the kernel takes on `shape` with `threads` threads
/// per multiply: the median of `reps` timings (not the fastest: a run
/// meets the node's usual load, not its best moment), each of enough calls
/// to last at least `min_seconds` (so timer resolution does not matter).
/// Must run inside a thread pool of at least `threads` threads.
pub fn time_shape<T: Scalar>(shape: &Shape, threads: usize, reps: usize, min_seconds: f64) -> f64 {
    let fill = |legs: &Legs, seed: u64| -> Vec<T> {
        let len: usize = legs.iter().map(|&(_, d)| d).product();
        // A cheap deterministic sequence in [-1, 1): values do not change
        // the speed of dense arithmetic, only denormals would.
        let mut x = seed.wrapping_mul(0x9E37_79B9_7F4A_7C15) | 1;
        (0..len)
            .map(|_| {
                x ^= x << 13;
                x ^= x >> 7;
                x ^= x << 17;
                let u = (x >> 11) as f64 / (1u64 << 53) as f64;
                T::from_complex(Complex64::new(2.0 * u - 1.0, 1.0 - 2.0 * u))
            })
            .collect()
    };
    let (da, db) = (fill(&shape.a, 1), fill(&shape.b, 2));
    let meter: Arc<Meter> = Meter::new();
    let ctx = Context {
        mm: &FaerMatMul,
        meter: &meter,
        threads,
        // The arithmetic `run` uses by default.
        kernel: Kernel::Scaled,
    };
    let call = || {
        let v = contract(
            &ctx,
            Operand::Borrowed(view(&shape.a, &da)),
            Operand::Borrowed(view(&shape.b, &db)),
            &shape.keep,
        );
        std::hint::black_box(v.data().first().copied());
    };
    // One call to warm caches and the allocator, and to size the loop.
    let t = Instant::now();
    call();
    let once = t.elapsed().as_secs_f64().max(1e-9);
    let calls = ((min_seconds / once).ceil() as usize).clamp(1, 1 << 24);
    let mut times: Vec<f64> = (0..reps.max(1))
        .map(|_| {
            let t = Instant::now();
            for _ in 0..calls {
                call();
            }
            t.elapsed().as_secs_f64() / calls as f64
        })
        .collect();
    times.sort_by(f64::total_cmp);
    times[times.len() / 2]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn batched_shapes_count_ops_and_elements() {
        // 4 products of 8x2 by 2x3: 4 x 8 x 2 x 3 = 192 multiply-adds;
        // operands 4x8x2 = 64 and 4x2x3 = 24 elements, result 4x8x3 = 96
        // (closed form).
        for permuted in [false, true] {
            let s = Shape::batched(4, 8, 2, 3, permuted);
            assert_eq!(s.ops(), 192.0);
            assert_eq!(s.elements(), [64.0, 24.0, 96.0]);
        }
        // Dimension-one groups are left out: a plain 5x7 by 7x1 product.
        let s = Shape::batched(1, 5, 7, 1, false);
        assert_eq!(s.a, vec![(1, 5), (2, 7)]);
        assert_eq!(s.keep, vec![1]);
    }

    #[test]
    fn timing_is_positive() {
        let s = Shape::batched(2, 4, 4, 4, true);
        assert!(time_shape::<f64>(&s, 1, 1, 0.0) > 0.0);
    }
}
