//! Power-of-two exponents for values beyond the range of the element type.
//!
//! # Method
//!
//! A tensor in the executor is its data times `2^exp`, with `exp` an `i64`
//! carried beside the data ([`super::dense::Dense::exp`]). Multiplying by a
//! power of two changes only the binary exponent of each element, so
//! rescaling loses nothing (unless an element falls below the smallest
//! normal number, where it is negligible next to the largest one by more
//! than the type's whole range).
//!
//! After every pairwise contraction the result's largest part is measured;
//! when it leaves `[2^-H, 2^H]` the data is rescaled so that the largest part
//! lies in `[1, 2)` and the exponent takes the difference. `H` is an eighth
//! of the type's exponent range ([`headroom`]: 16 for f32 parts, 128 for f64
//! parts), so a product of two operands times the number of terms summed,
//! at most `2^(2H) · n_a · n_b · k`, stays below the type's limit whenever
//! `n_a · n_b · k < 2^(MAX_EXP - 2H - 1)`: 2^95 for f32 and 2^767 for f64,
//! far above the products of sizes any tensor that fits in memory can reach.
//! Input tensors are rescaled the same way before they are converted to the
//! element type, so an input entry of 1e300 works in f32 too.
//!
//! Sums of tensors with different exponents ([`super::accumulate`]) align to
//! the largest exponent; a final value is brought back to exponent 0 when it
//! fits in an f64 ([`settle`]).
//!
//! Reference: the per-block exponent is the "block floating point" of
//! Wilkinson, *Rounding Errors in Algebraic Processes* (1963), ch. 1.
//!
//! ```
//! use sliceplan::exec::scale::{ldexp, settle};
//! let mut lanes = vec![3.0, -1.5];
//! // 3 x 2^2000 and -1.5 x 2^2000 do not fit in an f64: the exponent stays.
//! let e = settle(&mut lanes, 2000);
//! assert_eq!((lanes, e), (vec![1.5, -0.75], 2001));
//! assert_eq!(ldexp(1.5, 3), 12.0);
//! ```

use super::scalar::Scalar;

/// Exponent bound of intermediates: rescale when the largest part leaves
/// `[2^-H, 2^H]` (see the module documentation).
pub fn headroom<T: Scalar>() -> i64 {
    T::MAX_EXP / 8
}

/// 2^n as an f64 for `n` in the normal range `-1022..=1023`.
pub fn pow2(n: i64) -> f64 {
    debug_assert!((-1022..=1023).contains(&n), "2^{n} is not a normal f64");
    f64::from_bits(((n + 1023) as u64) << 52)
}

/// `x * 2^n` without intermediate overflow or underflow (0 when the result
/// is below the smallest subnormal, infinite when above the largest f64).
pub fn ldexp(mut x: f64, mut n: i64) -> f64 {
    while n > 1000 {
        x *= pow2(1000);
        n -= 1000;
        if x.is_infinite() || x == 0.0 {
            return x;
        }
    }
    while n < -1000 {
        x *= pow2(-1000);
        n += 1000;
        if x == 0.0 {
            return x;
        }
    }
    x * pow2(n)
}

/// floor(log2 |x|) for a finite, non-zero x (subnormals included).
pub fn floor_log2(x: f64) -> i64 {
    debug_assert!(x.is_finite() && x != 0.0);
    let bits = x.abs().to_bits();
    let biased = (bits >> 52) as i64;
    if biased == 0 {
        // Subnormal: the value is mantissa x 2^-1074.
        let mantissa = bits & ((1 << 52) - 1);
        63 - mantissa.leading_zeros() as i64 - 1074
    } else {
        biased - 1023
    }
}

/// The largest part of the elements of `data` (0 for no or all-zero data;
/// NaN parts are skipped, infinite ones returned).
pub fn max_part<T: Scalar>(data: &[T]) -> f64 {
    data.iter().fold(0.0f64, |m, &x| m.max(x.max_part()))
}

/// Multiplies every element by `2^shift` in place. `shift` must keep the
/// elements in range, as the callers' choice of `shift` guarantees.
pub fn scale_in_place<T: Scalar>(data: &mut [T], shift: i64) {
    if shift == 0 {
        return;
    }
    let factor = pow2(shift);
    for x in data {
        *x = x.scaled(factor);
    }
}

/// Rescales `data` (worth `data x 2^exp`) when its largest part leaves
/// `[2^-H, 2^H]` ([`headroom`]), so that the largest part lies in `[1, 2)`;
/// returns the new exponent. Data that is zero, or not finite, is left as it
/// is (non-finite values are reported where results are checked).
pub fn rescale<T: Scalar>(data: &mut [T], exp: i64) -> i64 {
    let h = headroom::<T>();
    let m = max_part(data);
    if m == 0.0 || !m.is_finite() {
        return exp;
    }
    let top = floor_log2(m);
    if (-h..=h).contains(&top) {
        return exp;
    }
    scale_in_place(data, -top);
    exp + top
}

/// Brings f64 lanes worth `lanes x 2^exp` to their final form: when every
/// lane fits in an f64 (the largest part below 2^1024 and at least 2^-1022),
/// the lanes become the plain values and the exponent 0; otherwise the lanes
/// are scaled so that the largest part lies in `[1, 2)`. Returns the
/// exponent. All-zero lanes get exponent 0.
pub fn settle(lanes: &mut [f64], exp: i64) -> i64 {
    settle_within(lanes, exp, -1022, 1023)
}

/// Scales f64 lanes worth `lanes x 2^exp` so that the largest part lies in
/// `[1, 2)`; returns the new exponent (0 for all-zero lanes).
pub fn normalize(lanes: &mut [f64], exp: i64) -> i64 {
    // An empty range of "fitting" exponents: always scale.
    settle_within(lanes, exp, 0, -1)
}

/// [`settle`] for a type whose normal numbers have binary exponents
/// `lo..=hi` (f32: -126..=127).
pub fn settle_within(lanes: &mut [f64], exp: i64, lo: i64, hi: i64) -> i64 {
    let m = lanes.iter().fold(0.0f64, |m, &x| m.max(x.abs()));
    if m == 0.0 || !m.is_finite() {
        return if m == 0.0 { 0 } else { exp };
    }
    let top = floor_log2(m) + exp;
    let keep = if (lo..=hi).contains(&top) { 0 } else { top };
    let shift = exp - keep;
    if shift != 0 {
        for x in lanes.iter_mut() {
            *x = ldexp(*x, shift);
        }
    }
    keep
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn powers_and_logs_of_two() {
        assert_eq!(pow2(0), 1.0);
        assert_eq!(pow2(-1022), f64::MIN_POSITIVE);
        assert_eq!(pow2(1023), 2f64.powi(1023));
        assert_eq!(floor_log2(1.0), 0);
        assert_eq!(floor_log2(-3.99), 1);
        assert_eq!(floor_log2(0.75), -1);
        // The smallest subnormal is 2^-1074.
        assert_eq!(floor_log2(f64::from_bits(1)), -1074);
        assert_eq!(floor_log2(f64::MAX), 1023);
        assert_eq!(ldexp(1.0, -1074), f64::from_bits(1));
        assert_eq!(ldexp(1.0, -1075), 0.0);
        assert_eq!(ldexp(2f64.powi(-1000), 1500), 2f64.powi(500));
        assert!(ldexp(1.0, 1024).is_infinite());
    }

    #[test]
    fn rescale_only_outside_the_headroom() {
        // f32 headroom is 2^16: 1000 stays, 2^20 is brought to [1, 2).
        let mut small = vec![1000.0f32, -3.0];
        assert_eq!(rescale(&mut small, 5), 5);
        assert_eq!(small, vec![1000.0, -3.0]);
        let mut big = vec![3.0 * 2f32.powi(20), 1.0];
        assert_eq!(rescale(&mut big, 5), 26);
        assert_eq!(big, vec![1.5, 2f32.powi(-21)]);
        let mut tiny = vec![2f64.powi(-200)];
        assert_eq!(rescale(&mut tiny, 0), -200);
        assert_eq!(tiny, vec![1.0]);
        let mut zero = vec![0.0f64; 3];
        assert_eq!(rescale(&mut zero, 7), 7);
    }

    #[test]
    fn settle_returns_plain_values_when_they_fit() {
        let mut v = vec![1.5, 0.25];
        assert_eq!(settle(&mut v, 10), 0);
        assert_eq!(v, vec![1536.0, 256.0]);
        let mut z = vec![0.0];
        assert_eq!(settle(&mut z, 99), 0);
        // 1.5 x 2^127 does not fit in f32 (largest below 2^128 but the
        // normal range asked for is -126..=127; 2^127 fits, 2^128 does not).
        let mut f = vec![1.5];
        assert_eq!(settle_within(&mut f, 128, -126, 127), 128);
        assert_eq!(f, vec![1.5]);
    }
}
