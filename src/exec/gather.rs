//! Gather: check every partial of a plan, check that every slice is covered
//! exactly once, and sum the partials into the final output.
//!
//! A partial that belongs to another plan is refused outright (an input
//! error: the directory mixes plans). A partial that fails its checksum or
//! does not match the plan's output is *rejected*: its slices count as
//! missing, so the answer is "re-run these chunks", not a wrong sum. So is
//! a partial computed in another arithmetic than the plan's network gets
//! now (see [`super::exact`]), such as a version 1 partial of a counting
//! network that is now counted exactly.
//!
//! Float partials are summed with their exponents (the result is
//! `lanes x 2^exponent`, exponent 0 whenever the values fit in an f64);
//! modular ones residue by residue, then rebuilt into whole numbers by the
//! Chinese remainder theorem.

use std::ops::Range;
use std::path::{Path, PathBuf};

use serde::Serialize;

use num_bigint::{BigInt, BigUint, Sign};

use super::accumulate::Accumulator;
use super::exact::Numerics;
use super::modular::ResidueSum;
use super::output::OutputLayout;
use super::scalar::lanes_per_element;
use super::scale::{floor_log2, ldexp, settle};
use crate::chunk::chunk_range;
use crate::error::{Error, Result};
use crate::network::{Dtype, Network};
use crate::partial::{list_partials, read_partial, Arithmetic, Partial, PartialHeader};
use crate::plan::Plan;

/// The summed output of a plan.
#[derive(Debug, Clone, PartialEq)]
pub struct Gathered {
    /// Element type.
    pub dtype: Dtype,
    /// Output shape (open indices in order; empty for a scalar).
    pub shape: Vec<u64>,
    /// The values as lanes, row-major (re, im pairs for complex dtypes),
    /// to be multiplied by `2^exponent`.
    pub lanes: Vec<f64>,
    /// The power of two of all lanes: 0 whenever every value fits in an
    /// f64 (the lanes are then the plain values).
    pub exponent: i64,
    /// The exact values (real parts, row-major) when the result is exact:
    /// a counting network computed without rounding.
    pub exact: Option<Vec<BigInt>>,
    /// The arithmetic the partials were computed in and what the result is worth.
    pub numerics: Numerics,
    /// Number of partials summed.
    pub partials: usize,
    /// Number of slices they cover.
    pub slices: u64,
}

/// A partial that could not be used.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Rejected {
    /// The file.
    pub file: PathBuf,
    /// Why.
    pub reason: String,
}

/// Why a gather could not produce the value.
#[derive(Debug, Clone, PartialEq, Eq, Default, Serialize)]
pub struct Incomplete {
    /// Slice ranges no accepted partial covers.
    pub missing: Vec<Range<u64>>,
    /// Slice ranges covered by more than one partial.
    pub duplicated: Vec<Range<u64>>,
    /// The chunking the partials were written with, when they agree on one.
    pub chunks_of: Option<u64>,
    /// Chunks (of `chunks_of`) that overlap a missing range: re-run these.
    pub missing_chunks: Vec<u64>,
    /// Partials that failed their checks.
    pub rejected: Vec<Rejected>,
}

/// What gather found.
#[derive(Debug, Clone, PartialEq)]
pub enum GatherOutcome {
    /// Every slice covered once: the value.
    Complete(Gathered),
    /// Something is missing, duplicated or damaged.
    Incomplete(Incomplete),
}

/// Gathers the partials of `plan` (for network `net`) found in `dir`.
///
/// Every `*.partial` file in `dir` is read and checked: checksum, format,
/// plan fingerprint, dtype and output shape. Coverage of slices
/// `0..slice count` is checked next; only then are the partials summed, in
/// slice order, with compensated summation.
pub fn gather(plan: &Plan, net: &Network, dir: &Path) -> Result<GatherOutcome> {
    let total = plan
        .slice_count()
        .ok_or_else(|| Error::Cannot("the plan has more than 2^64 slices".into()))?;
    let sliced = plan.sliced_ids(net)?;
    let layout = OutputLayout::new(net, &sliced);
    let fingerprint = plan.fingerprint();
    let numerics = Numerics::for_network(net, plan.dtype)?;
    let mut accepted: Vec<(PathBuf, PartialHeader)> = Vec::new();
    let mut report = Incomplete::default();
    let mut chunkings: Vec<u64> = Vec::new();
    for path in list_partials(dir)? {
        let partial = match read_partial(&path) {
            Ok(p) => p,
            Err(reason) => {
                report.rejected.push(Rejected { file: path, reason });
                continue;
            }
        };
        let h = &partial.header;
        if h.plan_fingerprint != fingerprint {
            return Err(Error::in_source(
                path.display().to_string(),
                format!(
                    "this partial belongs to plan {}, not to this plan ({fingerprint}); move it out of {} or gather it with its own plan",
                    h.plan_fingerprint,
                    dir.display()
                ),
            ));
        }
        if let Some(c) = h.chunk {
            chunkings.push(c.of);
        }
        if let Err(reason) = check_matches(h, plan, &layout, total, &numerics.arithmetic) {
            report.rejected.push(Rejected { file: path, reason });
            continue;
        }
        accepted.push((path, partial.header));
    }
    accepted.sort_by_key(|(_, h)| (h.first_slice, h.end_slice));
    let (missing, duplicated) = coverage(accepted.iter().map(|(_, h)| h.slices()), total);
    report.missing = missing;
    report.duplicated = duplicated;
    chunkings.sort_unstable();
    chunkings.dedup();
    if let [of] = chunkings[..] {
        report.chunks_of = Some(of);
        report.missing_chunks = (0..of)
            .filter(|&i| {
                let r = chunk_range(total, i, of);
                report
                    .missing
                    .iter()
                    .any(|m| m.start < r.end && r.start < m.end)
            })
            .collect();
    }
    if !report.missing.is_empty() || !report.duplicated.is_empty() || !report.rejected.is_empty() {
        return Ok(GatherOutcome::Incomplete(report));
    }
    let w = lanes_per_element(plan.dtype);
    if layout.len().checked_mul(16 * w).is_none() {
        return Err(Error::Cannot(format!(
            "the output of shape {:?} is too large to hold in memory",
            layout.shape
        )));
    }
    let mut sum = match &numerics.arithmetic {
        Arithmetic::Float => Sum::Float(Accumulator::new(layout.len(), w)),
        Arithmetic::Modular { primes } => Sum::Modular(ResidueSum::new(layout.len(), primes)),
    };
    for (path, _) in &accepted {
        // Read again: holding every partial at once could exceed memory.
        let partial: Partial = read_partial(path).map_err(|reason| {
            Error::in_source(
                path.display().to_string(),
                format!("changed while gathering: {reason}"),
            )
        })?;
        for (i, &key) in partial.header.blocks.iter().enumerate() {
            match &mut sum {
                Sum::Float(acc) => {
                    let exp = partial.header.exponents[i];
                    layout.add_block(key, partial.block(i), exp, w, acc);
                }
                Sum::Modular(r) => layout.add_residue_block(key, partial.block(i), w, r),
            }
        }
    }
    let (lanes, exponent, exact) = match sum {
        Sum::Float(acc) => {
            let (lanes, exponent) = acc.finish_settled();
            let exact = numerics.exact.then(|| {
                lanes
                    .iter()
                    .step_by(w)
                    .map(|&x| float_to_integer(x, exponent))
                    .collect::<Option<Vec<BigInt>>>()
            });
            (lanes, exponent, exact.flatten())
        }
        Sum::Modular(r) => {
            let exact: Vec<BigInt> = (0..r.len())
                .map(|i| BigInt::from_biguint(Sign::Plus, r.value(i)))
                .collect();
            let (lanes, exponent) = integers_to_lanes(&exact, w);
            (lanes, exponent, Some(exact))
        }
    };
    if lanes.iter().any(|x| !x.is_finite()) {
        return Err(Error::Cannot(
            "the partials sum to NaN or an infinite value; no result is given (the inputs are finite, so this is a bug: please report it with the plan and partials)".into(),
        ));
    }
    Ok(GatherOutcome::Complete(Gathered {
        dtype: plan.dtype,
        shape: layout.shape.clone(),
        lanes,
        exponent,
        exact,
        numerics,
        partials: accepted.len(),
        slices: total,
    }))
}

/// The running sum of a gather.
enum Sum {
    Float(Accumulator),
    Modular(ResidueSum),
}

/// `x 2^exp` as a whole number, when it is one.
pub fn float_to_integer(x: f64, exp: i64) -> Option<BigInt> {
    if !x.is_finite() {
        return None;
    }
    if x == 0.0 {
        return Some(BigInt::from(0));
    }
    // x = m 2^k with m a 53-bit whole number.
    let k = floor_log2(x) - 52;
    let m = ldexp(x.abs(), -k) as u64;
    let shift = k + exp;
    let magnitude = if shift >= 0 {
        BigUint::from(m) << shift as u64
    } else {
        let down = (-shift) as u64;
        if down >= 64 || m & ((1u64 << down) - 1) != 0 {
            return None;
        }
        BigUint::from(m >> down)
    };
    let sign = if x < 0.0 { Sign::Minus } else { Sign::Plus };
    Some(BigInt::from_biguint(sign, magnitude))
}

/// `x` as `m 2^e` with `m` an f64 rounded from the top 64 bits.
pub fn integer_to_float(x: &BigInt) -> (f64, i64) {
    let bits = x.bits();
    let (sign, mag) = (x.sign(), x.magnitude());
    let (top, e) = if bits <= 64 {
        (mag.iter_u64_digits().next().unwrap_or(0), 0)
    } else {
        let shifted: BigUint = mag >> (bits - 64);
        (
            shifted.iter_u64_digits().next().unwrap_or(0),
            (bits - 64) as i64,
        )
    };
    let m = top as f64;
    (if sign == Sign::Minus { -m } else { m }, e)
}

/// Whole numbers as real lanes (`w` lanes per element, imaginary parts 0)
/// and one exponent, settled as [`settle`] does.
fn integers_to_lanes(values: &[BigInt], w: usize) -> (Vec<f64>, i64) {
    let parts: Vec<(f64, i64)> = values.iter().map(integer_to_float).collect();
    let top = parts
        .iter()
        .filter(|(m, _)| *m != 0.0)
        .map(|&(m, e)| floor_log2(m) + e)
        .max()
        .unwrap_or(0);
    let mut lanes = Vec::with_capacity(values.len() * w);
    for &(m, e) in &parts {
        lanes.push(ldexp(m, e - top));
        if w == 2 {
            lanes.push(0.0);
        }
    }
    let exponent = settle(&mut lanes, top);
    (lanes, exponent)
}

/// The arithmetic, for messages.
fn arithmetic_name(a: &Arithmetic) -> String {
    match a {
        Arithmetic::Float => "floating point".into(),
        Arithmetic::Modular { primes } => format!("exact, modulo {} primes", primes.len()),
    }
}

fn check_matches(
    h: &PartialHeader,
    plan: &Plan,
    layout: &OutputLayout,
    total: u64,
    arithmetic: &Arithmetic,
) -> std::result::Result<(), String> {
    if &h.arithmetic != arithmetic {
        return Err(format!(
            "it was computed in {} (by an older version or with other primes), but this network is contracted in {}; run its chunk again",
            arithmetic_name(&h.arithmetic),
            arithmetic_name(arithmetic)
        ));
    }
    if h.dtype != plan.dtype {
        return Err(format!(
            "dtype {} differs from the plan's {}",
            h.dtype, plan.dtype
        ));
    }
    if h.shape != layout.shape || h.block_shape != layout.block_shape {
        return Err(format!(
            "output shape {:?} (blocks {:?}) differs from the plan's {:?} (blocks {:?})",
            h.shape, h.block_shape, layout.shape, layout.block_shape
        ));
    }
    if h.first_slice > h.end_slice || h.end_slice > total {
        return Err(format!(
            "slice range {}..{} is outside the plan's 0..{total}",
            h.first_slice, h.end_slice
        ));
    }
    if h.blocks.iter().any(|&b| b >= layout.blocks()) {
        return Err(format!(
            "a block number is not below the plan's {} blocks",
            layout.blocks()
        ));
    }
    let dims: Vec<u64> = plan.sliced.iter().map(|s| s.dim).collect();
    let expected = layout.blocks_of_slices(&dims, h.slices());
    if h.blocks != expected {
        return Err(format!(
            "it lists output blocks {} but slices {}..{} fill blocks {}",
            short_list(&h.blocks),
            h.first_slice,
            h.end_slice,
            short_list(&expected)
        ));
    }
    Ok(())
}

/// A list for a message: all of it when short, else its ends.
fn short_list(v: &[u64]) -> String {
    if v.len() <= 8 {
        format!("{v:?}")
    } else {
        format!(
            "[{}, {}, ..., {}] ({} in all)",
            v[0],
            v[1],
            v[v.len() - 1],
            v.len()
        )
    }
}

/// The gaps and overlaps of `ranges` (sorted by start) over `0..total`.
pub fn coverage(
    ranges: impl Iterator<Item = Range<u64>>,
    total: u64,
) -> (Vec<Range<u64>>, Vec<Range<u64>>) {
    let (mut missing, mut duplicated) = (Vec::new(), Vec::new());
    let mut covered = 0u64;
    for r in ranges.filter(|r| r.start < r.end) {
        if r.start > covered {
            missing.push(covered..r.start);
        }
        if r.start < covered {
            push_merged(&mut duplicated, r.start..r.end.min(covered));
        }
        covered = covered.max(r.end);
    }
    if covered < total {
        missing.push(covered..total);
    }
    (missing, duplicated)
}

fn push_merged(list: &mut Vec<Range<u64>>, r: Range<u64>) {
    match list.last_mut() {
        Some(last) if r.start <= last.end => last.end = last.end.max(r.end),
        _ => list.push(r),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn floats_and_whole_numbers() {
        // 3 x 2^100 = 3 x 1267650600228229401496703205376.
        let three_2_100 = float_to_integer(3.0, 100).unwrap();
        assert_eq!(three_2_100.to_string(), "3802951800684688204490109616128");
        assert_eq!(float_to_integer(-12.0, -2).unwrap(), BigInt::from(-3));
        assert_eq!(float_to_integer(1.5, 0), None);
        // 2^53 + 1 rounds to 2^53 as an f64; 47132418753724416 is exact.
        assert_eq!(
            float_to_integer(47132418753724416.0, 0)
                .unwrap()
                .to_string(),
            "47132418753724416"
        );
        let (m, e) = integer_to_float(&three_2_100);
        assert_eq!(ldexp(m, e), 3.0 * 2f64.powi(100));
        let (lanes, exp) = integers_to_lanes(&[BigInt::from(5), three_2_100], 2);
        assert_eq!((lanes, exp), (vec![5.0, 0.0, 3.0 * 2f64.powi(100), 0.0], 0));
    }

    #[test]
    fn coverage_finds_gaps_and_overlaps() {
        let ranges = vec![0..4, 4..7, 9..12, 10..11, 11..14];
        let (missing, dup) = coverage(ranges.into_iter(), 16);
        assert_eq!(missing, vec![7..9, 14..16]);
        assert_eq!(dup, vec![10..12]);
        let (missing, dup) = coverage(std::iter::empty(), 5);
        assert_eq!(missing.len(), 1);
        assert_eq!((missing[0].clone(), dup.len()), (0..5, 0));
    }
}
