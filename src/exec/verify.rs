//! `--verify`: contract the whole network without slicing, with the plan's
//! tree and order, in scaled floating point (whatever arithmetic the run
//! used, so an exact count is checked by an independent float contraction),
//! and compare with the gathered value.

use serde::Serialize;

use super::accumulate::Accumulator;
use super::gather::Gathered;
use super::matmul::FaerMatMul;
use super::memory::Meter;
use super::output::OutputLayout;
use super::pairwise::{Context, Kernel};
use super::runner::{check_runnable, predicted_slice_peak_bytes};
use super::scalar::{lanes_per_element, Scalar};
use super::scale::{floor_log2, ldexp};
use super::slice::Prepared;
use crate::error::{Error, Result};
use crate::network::{Dtype, Network};
use crate::plan::Plan;

/// The unsliced contraction of a network.
#[derive(Debug, Clone, PartialEq)]
pub struct Whole {
    /// Output shape.
    pub shape: Vec<u64>,
    /// Values as lanes, row-major, to be multiplied by `2^exponent`.
    pub lanes: Vec<f64>,
    /// Their power of two (0 whenever the values fit in an f64).
    pub exponent: i64,
    /// Predicted peak bytes without slicing (cost model, executor rule).
    pub predicted_peak: u64,
    /// Bytes held at most, by the executor's count.
    pub measured_peak: u64,
}

/// The comparison `--verify` prints.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verification {
    /// ‖sliced − unsliced‖₂ / ‖unsliced‖₂ (absolute when the norm is 0).
    pub relative_difference: f64,
    /// The tolerance for the dtype.
    pub tolerance: f64,
    /// Whether the difference is within it.
    pub agrees: bool,
    /// Unsliced peak bytes, predicted.
    pub unsliced_predicted_peak_bytes: u64,
    /// Unsliced peak bytes, measured.
    pub unsliced_measured_peak_bytes: u64,
}

/// Contracts `net` with the plan's tree and order but no slicing, refusing
/// when that would hold more than `max_bytes` by the cost model.
pub fn contract_whole(plan: &Plan, net: &Network, threads: usize, max_bytes: u64) -> Result<Whole> {
    check_runnable(plan, net)?;
    let tree = plan.tree()?;
    let predicted = predicted_slice_peak_bytes(net, &tree, &plan.order, &[], plan.dtype)
        .filter(|&b| b <= max_bytes)
        .ok_or_else(|| {
            Error::Cannot(format!(
                "--verify contracts without slicing, which this plan's tree would do in more than {max_bytes} bytes; verify on a smaller network"
            ))
        })?;
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads.max(1))
        .build()
        .map_err(|e| Error::Cannot(format!("cannot start {threads} threads: {e}")))?;
    let ((lanes, exponent), measured) = pool.install(|| match plan.dtype {
        Dtype::F32 => whole_typed::<f32>(plan, net, &tree, threads),
        Dtype::F64 => whole_typed::<f64>(plan, net, &tree, threads),
        Dtype::C64 => whole_typed::<num_complex::Complex32>(plan, net, &tree, threads),
        Dtype::C128 => whole_typed::<num_complex::Complex64>(plan, net, &tree, threads),
    })?;
    Ok(Whole {
        shape: OutputLayout::new(net, &[]).shape,
        lanes,
        exponent,
        predicted_peak: predicted,
        measured_peak: measured,
    })
}

fn whole_typed<T: Scalar>(
    plan: &Plan,
    net: &Network,
    tree: &crate::tree::Tree,
    threads: usize,
) -> Result<((Vec<f64>, i64), u64)> {
    let process = Meter::new();
    let prepared = Prepared::<T>::new(net, tree, &plan.order, &[], &process)?;
    let meter = Meter::child(&process);
    let ctx = Context {
        mm: &FaerMatMul,
        meter: &meter,
        threads: threads.max(1),
        kernel: Kernel::Scaled,
    };
    let out = prepared.run_slice(&ctx, &[]);
    let mut acc = Accumulator::new(out.data().len(), lanes_per_element(plan.dtype));
    acc.add_scaled(out.data(), out.exp);
    Ok((acc.finish_settled(), meter.peak()))
}

/// The tolerance on the relative difference for a dtype: single precision
/// keeps about 7 digits, double about 16; sums of many terms lose some.
pub fn tolerance(dtype: Dtype) -> f64 {
    match dtype {
        Dtype::F32 | Dtype::C64 => 1e-3,
        Dtype::F64 | Dtype::C128 => 1e-9,
    }
}

/// ‖a − b‖₂ / ‖b‖₂ over lanes (‖a − b‖₂ when b is zero).
pub fn relative_difference(a: &[f64], b: &[f64]) -> f64 {
    let diff: f64 = a
        .iter()
        .zip(b)
        .map(|(x, y)| (x - y) * (x - y))
        .sum::<f64>()
        .sqrt();
    let norm: f64 = b.iter().map(|y| y * y).sum::<f64>().sqrt();
    if norm > 0.0 {
        diff / norm
    } else {
        diff
    }
}

/// Compares a gathered result with the unsliced contraction, both brought
/// to their larger exponent.
pub fn compare(gathered: &Gathered, whole: &Whole) -> Verification {
    let dtype = gathered.dtype;
    // The larger of the two largest parts goes to [1, 2), so that squares
    // cannot overflow whatever the exponents.
    let top_of = |lanes: &[f64], exp: i64| {
        let m = lanes.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        (m > 0.0 && m.is_finite()).then(|| floor_log2(m) + exp)
    };
    let top = match (
        top_of(&gathered.lanes, gathered.exponent),
        top_of(&whole.lanes, whole.exponent),
    ) {
        (Some(a), Some(b)) => a.max(b),
        (Some(a), None) | (None, Some(a)) => a,
        (None, None) => 0,
    };
    let at = |lanes: &[f64], exp: i64| -> Vec<f64> {
        lanes.iter().map(|&x| ldexp(x, exp - top)).collect()
    };
    let rel = relative_difference(
        &at(&gathered.lanes, gathered.exponent),
        &at(&whole.lanes, whole.exponent),
    );
    Verification {
        relative_difference: rel,
        tolerance: tolerance(dtype),
        agrees: rel <= tolerance(dtype),
        unsliced_predicted_peak_bytes: whole.predicted_peak,
        unsliced_measured_peak_bytes: whole.measured_peak,
    }
}
