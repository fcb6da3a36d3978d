//! One slice of a plan: the shared input tensors, and the walk over the
//! plan's traversal order that contracts one slice into its output block.
//!
//! The full input tensors are materialised once per process
//! ([`Prepared::new`]) and shared by every slice. A slice never copies an
//! input just to fix its sliced indices: it reads it through a strided view
//! with those indices held at their values, and copies only when the
//! contraction needs a different layout (that copy is counted). Every
//! intermediate is dropped as soon as the merge that consumes it has taken
//! what it needs, following the plan's order.

use std::sync::Arc;

use super::dense::{row_major_strides, Dense, View};
use super::matmul::MatMul;
use super::memory::{Held, Meter};
use super::pairwise::{contract, Context, Operand};
use super::permute::permute_sum_mod;
use super::scalar::Scalar;
use super::scale::{floor_log2, headroom, ldexp};
use crate::cost::NodeSets;
use crate::error::{Error, Result};
use crate::network::{values::materialize, IndexId, Network, Values};
use crate::tree::Tree;

/// A plan made ready to run: shared inputs and per-node index lists.
#[derive(Debug)]
pub struct Prepared<T> {
    leaves: usize,
    merges: Vec<[usize; 2]>,
    order: Vec<usize>,
    /// Per node: the indices it keeps, active ones only (dimension above
    /// one, not sliced).
    keep: Vec<Vec<IndexId>>,
    /// Per input tensor: its indices in storage order.
    leaf_indices: Vec<Vec<IndexId>>,
    dims: Vec<usize>,
    sliced: Vec<IndexId>,
    /// The open indices that are active, in output order.
    open_active: Vec<IndexId>,
    inputs: Vec<Held<T>>,
    /// Per input tensor: the power of two its stored values are multiplied by.
    input_exps: Vec<i64>,
    /// Per node: the held intermediate, computed once (reuse).
    held: Vec<Option<Dense<T>>>,
}

impl<T: Scalar> Prepared<T> {
    /// Materialises every input tensor in `T` (counted on `process`) and
    /// computes the index lists. `order` must be a valid traversal of `tree`
    /// and `sliced` the slice set in slice-numbering order.
    pub fn new(
        net: &Network,
        tree: &Tree,
        order: &[usize],
        sliced: &[IndexId],
        process: &Arc<Meter>,
    ) -> Result<Prepared<T>> {
        tree.check_order(order)
            .map_err(|m| Error::in_source("plan", format!("order: {m}")))?;
        let dims: Vec<usize> = net
            .dims()
            .into_iter()
            .map(|d| {
                usize::try_from(d).map_err(|_| {
                    Error::Cannot(format!(
                        "dimension {d} does not fit this machine's address space"
                    ))
                })
            })
            .collect::<Result<_>>()?;
        let active = |e: &IndexId| dims[*e] > 1 && !sliced.contains(e);
        let sets = NodeSets::new(net, tree);
        let keep = sets
            .indices
            .iter()
            .map(|s| s.iter().copied().filter(active).collect())
            .collect();
        let mut inputs = Vec::with_capacity(net.num_tensors());
        let mut input_exps = Vec::with_capacity(net.num_tensors());
        for t in 0..net.num_tensors() {
            let complex = materialize(net, t)?;
            // Random fills are documented to use only their real part in a
            // real dtype; values the user gave must not lose theirs silently.
            let given = !matches!(net.tensors[t].values, Some(Values::Fill(_)));
            if given && !T::DTYPE.is_complex() && complex.iter().any(|z| z.im != 0.0) {
                return Err(Error::in_source(
                    &net.name,
                    format!(
                        "tensor '{}' has complex values, but the plan computes in {}; make a plan with dtype c64 or c128",
                        net.tensors[t].name,
                        T::DTYPE
                    ),
                ));
            }
            let (values, exp) = scaled_input::<T>(net, t, complex)?;
            inputs.push(Held::adopt(values, process));
            input_exps.push(exp);
        }
        Ok(Prepared {
            leaves: tree.leaves(),
            merges: tree.merges().to_vec(),
            order: order.to_vec(),
            keep,
            leaf_indices: net.tensors.iter().map(|t| t.indices.clone()).collect(),
            open_active: net.open.iter().copied().filter(active).collect(),
            dims,
            sliced: sliced.to_vec(),
            inputs,
            input_exps,
            held: Vec::new(),
        })
    }

    /// Computes the setup merges of `split` once, in their order, keeps the
    /// held intermediates (counted on `ctx.meter` while they live), and
    /// leaves each slice the per-slice merges. Returns the most bytes
    /// `ctx.meter` held during the setup.
    pub fn hold<K: MatMul>(&mut self, ctx: &Context<'_, K>, split: &super::reuse::Split) -> u64 {
        let n = self.leaves;
        let mut slots: Vec<Option<Dense<T>>> = (0..n + self.merges.len()).map(|_| None).collect();
        // Setup merges see no sliced index: any values do.
        let values = vec![0u64; self.sliced.len()];
        for &k in &split.setup {
            let [a, b] = self.merges[k];
            let oa = self.operand(a, &values, &mut slots);
            let ob = self.operand(b, &values, &mut slots);
            slots[n + k] = Some(contract(ctx, oa, ob, &self.keep[n + k]));
        }
        self.held = slots;
        self.order = split.slice.clone();
        ctx.meter.peak()
    }

    /// Bytes held by the shared inputs.
    pub fn input_bytes(&self) -> u64 {
        self.inputs.iter().map(Held::bytes).sum()
    }

    /// Elements of one slice's output block.
    pub fn block_len(&self) -> usize {
        self.open_active.iter().map(|&e| self.dims[e]).product()
    }

    /// Input tensor `t` with the sliced indices fixed to `values` (given in
    /// slice-set order), as a view without copying.
    fn leaf_view(&self, t: usize, values: &[u64]) -> View<'_, T> {
        let idx = &self.leaf_indices[t];
        let full: Vec<usize> = idx.iter().map(|&e| self.dims[e]).collect();
        let strides = row_major_strides(&full);
        let mut view = View {
            data: self.inputs[t].as_slice(),
            offset: 0,
            indices: Vec::new(),
            dims: Vec::new(),
            strides: Vec::new(),
            exp: self.input_exps[t],
        };
        for (k, &e) in idx.iter().enumerate() {
            if let Some(p) = self.sliced.iter().position(|&x| x == e) {
                view.offset += values[p] as usize * strides[k];
            } else if self.dims[e] > 1 {
                view.indices.push(e);
                view.dims.push(self.dims[e]);
                view.strides.push(strides[k]);
            }
        }
        view
    }

    /// Node `v` as an operand: a view for an input, the intermediate itself
    /// (taken out of `slots`) otherwise.
    fn operand(&self, v: usize, values: &[u64], slots: &mut [Option<Dense<T>>]) -> Operand<'_, T> {
        if v < self.leaves {
            Operand::Borrowed(self.leaf_view(v, values))
        } else if let Some(held) = self.held.get(v).and_then(Option::as_ref) {
            Operand::Borrowed(held.view())
        } else {
            Operand::Owned(slots[v].take().expect("operands exist before use"))
        }
    }

    /// Contracts the slice whose sliced indices take `values`; returns its
    /// output block, row-major over the active open indices in output order,
    /// with its exponent. Every buffer counts on `ctx.meter`.
    pub fn run_slice<K: MatMul>(&self, ctx: &Context<'_, K>, values: &[u64]) -> Dense<T> {
        let n = self.leaves;
        let mut slots: Vec<Option<Dense<T>>> = (0..n + self.merges.len()).map(|_| None).collect();
        for &k in &self.order {
            let [a, b] = self.merges[k];
            let oa = self.operand(a, values, &mut slots);
            let ob = self.operand(b, values, &mut slots);
            slots[n + k] = Some(contract(ctx, oa, ob, &self.keep[n + k]));
        }
        let root = self.operand(n + self.merges.len() - 1, values, &mut slots);
        match root {
            Operand::Owned(d) if d.indices == self.open_active => d,
            other => {
                let out =
                    permute_sum_mod(&other.view(), &self.open_active, ctx.meter, ctx.modulus());
                drop(other);
                out
            }
        }
    }
}

/// Tensor `t`'s values in `T` with their exponent: values whose largest part
/// leaves the headroom of `T` are scaled by a power of two first (in f64, so
/// an entry of 1e300 reaches an f32 tensor as a mantissa and an exponent).
/// Real dtypes use only the real parts. Refuses NaN and infinite values.
fn scaled_input<T: Scalar>(
    net: &Network,
    t: usize,
    mut values: Vec<num_complex::Complex64>,
) -> Result<(Vec<T>, i64)> {
    let complex = T::DTYPE.is_complex();
    let part_max = |z: &num_complex::Complex64| {
        if complex {
            z.re.abs().max(z.im.abs())
        } else {
            z.re.abs()
        }
    };
    let mut max = 0.0f64;
    for z in &values {
        let m = part_max(z);
        if !m.is_finite() {
            return Err(Error::in_source(
                &net.name,
                format!(
                    "tensor '{}' holds {}, which cannot be contracted; give finite values",
                    net.tensors[t].name,
                    if m.is_nan() {
                        "NaN"
                    } else {
                        "an infinite value"
                    }
                ),
            ));
        }
        max = max.max(m);
    }
    let mut exp = 0;
    if max > 0.0 {
        let top = floor_log2(max);
        let h = headroom::<T>();
        if !(-h..=h).contains(&top) {
            for z in &mut values {
                *z = num_complex::Complex64::new(ldexp(z.re, -top), ldexp(z.im, -top));
            }
            exp = top;
        }
    }
    Ok((values.into_iter().map(T::from_complex).collect(), exp))
}
