//! Pairwise contraction: two tensors into one by at most one permuting copy
//! of each operand and one (batched) matrix multiply.
//!
//! # Index roles
//!
//! For operands `a`, `b` and the kept index list of the result:
//!
//! | role  | in a | in b | kept | handled by |
//! |-------|------|------|------|------------|
//! | batch | yes  | yes  | yes  | one multiply per value (hyperedges, open indices) |
//! | rows  | yes  | no   | yes  | matrix rows |
//! | cols  | no   | yes  | yes  | matrix columns |
//! | inner | yes  | yes  | no   | the summed dimension of the multiply |
//! | alone | one side only | | no | summed out while copying that operand |
//!
//! # Layout and memory
//!
//! Each operand is viewed as a batch of matrices without copying when its
//! row indices, and its inner indices, each sit together in memory in one
//! order (so each group has a single stride); the inner order is chosen to
//! suit both operands when it can, else the larger one. Otherwise the operand
//! is copied into `[batch, rows, inner]` (or `[batch, inner, cols]`) order,
//! and the original is dropped at once if it was an intermediate. Memory
//! above the level before the call thus never exceeds
//! `max(size a, size b, size result)`: the rule
//! [`crate::cost::Workspace::PermuteCopies`] prices.
//! The result is laid out `[batch, rows, cols]`, or `[batch, cols, rows]`
//! when both operands are stored column-major (see the comment on `flip`).

use std::sync::Arc;

use super::dense::{for_each_offset, Dense, View};
use super::matmul::{MatMul, MatView};
use super::memory::{Held, Meter};
use super::modular::{Prime, INNER_BLOCK};
use super::permute::permute_sum_mod;
use super::scalar::Scalar;
use super::scale::rescale;
use crate::network::IndexId;

/// An operand: an intermediate the contraction consumes, or a view of
/// shared data (an input tensor, possibly with sliced indices fixed).
#[derive(Debug)]
pub enum Operand<'a, T> {
    /// Owned; dropped as soon as it is no longer needed.
    Owned(Dense<T>),
    /// Borrowed; costs nothing to hold.
    Borrowed(View<'a, T>),
}

impl<T: Scalar> Operand<'_, T> {
    /// A view of the operand.
    pub fn view(&self) -> View<'_, T> {
        match self {
            Operand::Owned(d) => d.view(),
            Operand::Borrowed(v) => v.clone(),
        }
    }
}

/// The arithmetic of a contraction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Kernel {
    /// Floating point; each result is rescaled by a power of two when its
    /// largest part leaves the headroom (see [`super::scale`]), so nothing
    /// overflows or underflows.
    Scaled,
    /// Floating point as the element type gives it, without rescaling: can
    /// overflow; kept as the baseline the numerics benchmark compares with.
    Unscaled,
    /// Whole numbers modulo a prime below 2^21, held in f64 (see
    /// [`super::modular`]); exponents stay 0.
    Modular(Prime),
}

/// What a contraction runs with: the multiply back end, the meter its
/// buffers count on, the threads one multiply may use, and the arithmetic.
pub struct Context<'m, K> {
    /// The matrix multiply.
    pub mm: &'m K,
    /// Where allocations are counted.
    pub meter: &'m Arc<Meter>,
    /// Threads for one multiply.
    pub threads: usize,
    /// The arithmetic.
    pub kernel: Kernel,
}

impl<K> Context<'_, K> {
    /// The prime of modular arithmetic, if that is the kernel.
    pub fn modulus(&self) -> Option<&Prime> {
        match &self.kernel {
            Kernel::Modular(p) => Some(p),
            _ => None,
        }
    }
}

/// Contracts `a` with `b`, keeping the indices in `keep` (each must belong
/// to `a` or `b`) and summing every other index of either operand. The
/// result's exponent is the sum of the operands' (then adjusted by the
/// rescaling of [`Kernel::Scaled`]).
pub fn contract<T: Scalar, K: MatMul>(
    ctx: &Context<'_, K>,
    a: Operand<'_, T>,
    b: Operand<'_, T>,
    keep: &[IndexId],
) -> Dense<T> {
    let (av, bv) = (a.view(), b.view());
    let in_a = |e: &IndexId| av.position(*e).is_some();
    let in_b = |e: &IndexId| bv.position(*e).is_some();
    let kept = |e: &IndexId| keep.contains(e);
    debug_assert!(keep.iter().all(|e| in_a(e) || in_b(e)));
    let batch = by_stride(&av, av.indices.iter().filter(|e| in_b(e) && kept(e)));
    let rows = by_stride(&av, av.indices.iter().filter(|e| !in_b(e) && kept(e)));
    let cols = by_stride(&bv, bv.indices.iter().filter(|e| !in_a(e) && kept(e)));
    let shared = av.indices.iter().filter(|e| in_b(e) && !kept(e));
    let inner_a = by_stride(&av, shared.clone());
    let inner_b = by_stride(&bv, shared);
    let a_alone = av.indices.iter().any(|e| !in_b(e) && !kept(e));
    let b_alone = bv.indices.iter().any(|e| !in_a(e) && !kept(e));
    let copies = |inner: &[IndexId]| {
        let ca = a_alone || !single_stride(&av, &rows) || !single_stride(&av, inner);
        let cb = b_alone || !single_stride(&bv, inner) || !single_stride(&bv, &cols);
        let cost = if ca { av.len() } else { 0 } + if cb { bv.len() } else { 0 };
        (ca, cb, cost)
    };
    // The inner order follows a's layout or b's: whichever copies less.
    let (follow_a, follow_b) = (copies(&inner_a), copies(&inner_b));
    let (inner, (copy_a, copy_b, _)) = if follow_b.2 < follow_a.2 {
        (inner_b, follow_b)
    } else {
        (inner_a, follow_a)
    };
    drop((av, bv));

    let a = if copy_a {
        let order = [&batch[..], &rows, &inner].concat();
        let c = permute_sum_mod(&a.view(), &order, ctx.meter, ctx.modulus());
        drop(a);
        Operand::Owned(c)
    } else {
        a
    };
    let b = if copy_b {
        let order = [&batch[..], &inner, &cols].concat();
        let c = permute_sum_mod(&b.view(), &order, ctx.meter, ctx.modulus());
        drop(b);
        Operand::Owned(c)
    } else {
        b
    };
    let (av, bv) = (a.view(), b.view());
    let dims_of = |v: &View<'_, T>, g: &[IndexId]| -> Vec<usize> {
        g.iter()
            .map(|&e| v.dims[v.position(e).expect("in view")])
            .collect()
    };
    let batch_dims = dims_of(&av, &batch);
    let row_dims = dims_of(&av, &rows);
    let col_dims = dims_of(&bv, &cols);
    let m: usize = row_dims.iter().product();
    let n: usize = col_dims.iter().product();
    let k: usize = dims_of(&av, &inner).iter().product();
    let strides_of = |v: &View<'_, T>, g: &[IndexId]| -> Vec<usize> {
        g.iter()
            .map(|&e| v.strides[v.position(e).expect("in view")])
            .collect()
    };
    let group_stride = |v: &View<'_, T>, g: &[IndexId]| {
        g.last()
            .map_or(1, |&e| v.strides[v.position(e).expect("in view")])
    };
    let (a_rs, a_cs) = (group_stride(&av, &rows), group_stride(&av, &inner));
    let (b_rs, b_cs) = (group_stride(&bv, &inner), group_stride(&bv, &cols));
    // A row-major result is computed by the back end as its transpose, so
    // the operand it then reads as its left one is `b`. When `b` is stored
    // column-major and `a` is not, writing the result column-major instead
    // (cols before rows) hands the back end a column-major left operand.
    let flip = n > 1 && m > 1 && b_rs < b_cs && a_rs < a_cs;
    let nb: usize = batch_dims.iter().product();
    let mut out: Held<T> = Held::zeroed(nb * m * n, ctx.meter);
    let dst = out.as_mut_slice();
    let mut block = 0usize;
    for_each_offset(
        &batch_dims,
        &strides_of(&av, &batch),
        &strides_of(&bv, &batch),
        |oa, ob| {
            let a = MatView {
                data: av.data,
                offset: av.offset + oa,
                rows: m,
                cols: k,
                row_stride: a_rs,
                col_stride: a_cs,
            };
            let b = MatView {
                data: bv.data,
                offset: bv.offset + ob,
                rows: k,
                cols: n,
                row_stride: b_rs,
                col_stride: b_cs,
            };
            let block_dst = &mut dst[block * m * n..(block + 1) * m * n];
            match ctx.modulus() {
                None => multiply(ctx, block_dst, a, b, flip, false),
                Some(prime) => {
                    // Inner blocks of at most 2^11 products keep every sum
                    // below 2^53; reduce after each (see `super::modular`).
                    for start in (0..k).step_by(INNER_BLOCK) {
                        let len = INNER_BLOCK.min(k - start);
                        let a_part = MatView {
                            offset: a.offset + start * a.col_stride,
                            cols: len,
                            ..a
                        };
                        let b_part = MatView {
                            offset: b.offset + start * b.row_stride,
                            rows: len,
                            ..b
                        };
                        multiply(ctx, block_dst, a_part, b_part, flip, start > 0);
                        for x in block_dst.iter_mut() {
                            *x = x.reduced(prime);
                        }
                    }
                }
            }
            block += 1;
        },
    );
    let (first, second, first_dims, second_dims) = if flip {
        (&cols, &rows, &col_dims, &row_dims)
    } else {
        (&rows, &cols, &row_dims, &col_dims)
    };
    let indices = [&batch[..], first, second].concat();
    let dims = [&batch_dims[..], first_dims, second_dims].concat();
    let mut exp = av.exp + bv.exp;
    if ctx.kernel == Kernel::Scaled {
        exp = rescale(out.as_mut_slice(), exp);
    }
    Dense::new(indices, dims, out).with_exp(exp)
}

/// `dst = a b` (or `dst += a b` when `add`), computed as `(b^T a^T)^T` into
/// a column-major result when `flip`.
fn multiply<T: Scalar, K: MatMul>(
    ctx: &Context<'_, K>,
    dst: &mut [T],
    a: MatView<'_, T>,
    b: MatView<'_, T>,
    flip: bool,
    add: bool,
) {
    let (lhs, rhs) = if flip {
        (b.transposed(), a.transposed())
    } else {
        (a, b)
    };
    if add {
        ctx.mm.matmul_add(dst, lhs, rhs, ctx.threads);
    } else {
        ctx.mm.matmul(dst, lhs, rhs, ctx.threads);
    }
}

/// The indices of `group`, ordered by decreasing stride in `v` (the only
/// order in which they can share one stride).
fn by_stride<'e, T>(v: &View<'_, T>, group: impl Iterator<Item = &'e IndexId>) -> Vec<IndexId> {
    let mut g: Vec<IndexId> = group.copied().collect();
    g.sort_by_key(|&e| std::cmp::Reverse(v.strides[v.position(e).expect("in view")]));
    g
}

/// True when the indices of `group`, in this order, address memory like one
/// index: each stride is the next one times the next dimension.
fn single_stride<T>(v: &View<'_, T>, group: &[IndexId]) -> bool {
    group.windows(2).all(|w| {
        let (p, q) = (
            v.position(w[0]).expect("in view"),
            v.position(w[1]).expect("in view"),
        );
        v.strides[p] == v.strides[q] * v.dims[q]
    })
}
