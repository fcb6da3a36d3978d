//! How result values are written for people: floats by their shortest
//! round-trip digits, values beyond f64 as a decimal mantissa times a power
//! of ten, logarithms of values with power-of-two exponents.
//!
//! # Method
//!
//! A value is `m x 2^e` with `m` an f64 and `e` an `i64`. When it fits in an
//! f64 it is printed as that f64: positionally for `1e-5 <= |x| < 2^53`,
//! otherwise in exponent form (`4.713241875372442e16`), so nothing that is
//! not an exact integer ever looks like one and no value is padded with
//! zeros. Digits are the shortest that read back to the same f64 (Rust's
//! formatting, after Steele and White 1990 / Ryu).
//!
//! Beyond f64, `log10 |x| = log10 |m| + e log10 2` is evaluated with
//! `log10 2` split into two f64 (a double-double constant) and the product
//! `e x hi` taken exactly with a fused multiply-add, so the fractional part,
//! and with it the decimal mantissa `10^frac`, keeps about 15 correct
//! digits for any `|e| < 2^53`; 15 significant digits are printed.
//! `ln |x|` is formed the same way.
//!
//! ```
//! use sliceplan::exec::render::{float_text, scaled_text};
//! assert_eq!(float_text(47132418753724416.0), "4.713241875372442e16");
//! assert_eq!(float_text(0.25), "0.25");
//! // 2^4000 = 1.31820409343094e1204 (to 15 digits).
//! assert_eq!(scaled_text(1.0, 4000), "1.31820409343094e1204");
//! ```

use super::scale::{floor_log2, ldexp};

/// log10 2 as a sum of two f64 (hi + lo, to about 2^-106): the standard
/// library's nearest f64 and the remainder (from 60-digit decimal
/// arithmetic).
const LOG10_2: (f64, f64) = (std::f64::consts::LOG10_2, -2.8037281277851704e-18);
/// ln 2 as a sum of two f64.
const LN_2: (f64, f64) = (std::f64::consts::LN_2, 2.3190468138462996e-17);

/// Significant digits printed for values beyond the f64 range.
const DIGITS: usize = 15;

/// A finite f64 by its shortest round-trip digits: positional for
/// `1e-5 <= |x| < 2^53` (and 0), else exponent form.
pub fn float_text(x: f64) -> String {
    let a = x.abs();
    if x == 0.0 || (1e-5..9007199254740992.0).contains(&a) {
        format!("{x}")
    } else {
        format!("{x:e}")
    }
}

/// `c x e` for an integer `e` as a double-double `(hi, lo)` with `hi` the
/// f64 nearest the product of `e` and the constant's high part.
fn times(e: i64, c: (f64, f64)) -> (f64, f64) {
    let ef = e as f64;
    let p = ef * c.0;
    let err = ef.mul_add(c.0, -p);
    (p, err + ef * c.1)
}

/// `ln |m 2^e|` for `m != 0`.
pub fn ln_abs(m: f64, e: i64) -> f64 {
    let (hi, lo) = times(e, LN_2);
    hi + (lo + m.abs().ln())
}

/// `m 2^e` as `d 10^k` with `1 <= |d| < 10` (`d` has the sign of `m`);
/// `(0, 0)` for zero.
pub fn decimal(m: f64, e: i64) -> (f64, i64) {
    if m == 0.0 {
        return (0.0, 0);
    }
    let (hi, lo) = times(e, LOG10_2);
    let mut k = hi.floor();
    let mut frac = (hi - k) + (lo + m.abs().log10());
    while frac < 0.0 {
        frac += 1.0;
        k -= 1.0;
    }
    while frac >= 1.0 {
        frac -= 1.0;
        k += 1.0;
    }
    let mut d = 10f64.powf(frac);
    if d >= 10.0 {
        d /= 10.0;
        k += 1.0;
    }
    (d.copysign(m), k as i64)
}

/// `m 2^e` as an f64 when it is finite and not below the smallest normal
/// number (or zero).
pub fn in_range(m: f64, e: i64) -> Option<f64> {
    let x = ldexp(m, e);
    (x.is_finite() && (m == 0.0 || x.abs() >= f64::MIN_POSITIVE)).then_some(x)
}

/// A decimal mantissa with [`DIGITS`] significant digits, trailing zeros
/// dropped.
fn mantissa_digits(d: f64) -> String {
    let s = format!("{:.*}", DIGITS - 1, d);
    let s = s.trim_end_matches('0');
    s.strip_suffix('.').unwrap_or(s).to_string()
}

/// The value `m 2^e`: [`float_text`] of the f64 when it is in range, else
/// `d.ddd...e+k` with 15 significant digits (`1.31820409343094e1204`).
pub fn scaled_text(m: f64, e: i64) -> String {
    if let Some(x) = in_range(m, e) {
        return float_text(x);
    }
    let (d, k) = decimal(m, e);
    // 15 digits may round d up to 10.
    let text = mantissa_digits(d);
    if text.trim_start_matches('-') == "10" {
        return format!("{}e{}", if d < 0.0 { "-1" } else { "1" }, k + 1);
    }
    format!("{text}e{k}")
}

/// `m 2^e` with `m` brought to `[1, 2)`: e.g. `1.5 x 2^1039`.
pub fn binary_text(m: f64, e: i64) -> String {
    if m == 0.0 {
        return "0".into();
    }
    let top = floor_log2(m);
    format!("{} x 2^{}", ldexp(m, -top), e + top)
}

/// A complex value `(re + im i) 2^e`: `a + bi` when both parts are in
/// range, else `(a + bi) x 10^k` with the parts scaled by the power of ten
/// of the modulus.
pub fn complex_text(re: f64, im: f64, e: i64) -> String {
    let sign = |x: f64| {
        if x < 0.0 || (x == 0.0 && x.is_sign_negative()) {
            '-'
        } else {
            '+'
        }
    };
    if let (Some(a), Some(b)) = (in_range(re, e), in_range(im, e)) {
        return format!("{} {} {}i", float_text(a), sign(b), float_text(b.abs()));
    }
    let r = re.hypot(im);
    let (d, k) = decimal(r, e);
    let (a, b) = (d * re / r, d * im / r);
    format!(
        "({} {} {}i) x 10^{k}",
        mantissa_digits(a),
        sign(b),
        mantissa_digits(b.abs())
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shortest_round_trip_and_no_false_integers() {
        // The count from the issue, exact in f64, printed before as
        // 47132418753724420 (shortest digits padded with a zero): a float
        // shows its shortest digits in exponent form, so it cannot pass for
        // an exact integer (exact counts are printed from the integer).
        assert_eq!(float_text(47132418753724416.0), "4.713241875372442e16");
        assert_eq!(float_text(5598861.0), "5598861");
        assert_eq!(float_text(-0.000771590221791855), "-0.000771590221791855");
        assert_eq!(float_text(1e300), "1e300");
        assert_eq!(float_text(1.5e-7), "1.5e-7");
        assert_eq!(float_text(0.0), "0");
    }

    #[test]
    fn decimal_mantissas_of_huge_powers() {
        // 10^20000 = 2^(20000 log2 10): built from the f64 log2 it is only
        // approximate, so check against its own logarithm instead: ln of
        // 2^4000 is 4000 ln 2 = 2772.588722239781 (closed form).
        assert!((ln_abs(1.0, 4000) - 2772.588722239781).abs() < 1e-12);
        // 2^-1100 = 7.36215182902286...e-332 (Python: Decimal(2)**-1100
        // with 40 digits).
        assert_eq!(scaled_text(1.0, -1100), "7.36215182902286e-332");
        assert_eq!(scaled_text(-1.0, 4000), "-1.31820409343094e1204");
        // In range: plain digits.
        assert_eq!(scaled_text(1.5, 10), "1536");
        assert_eq!(binary_text(3.0, 1000), "1.5 x 2^1001");
    }

    #[test]
    fn complex_values() {
        assert_eq!(complex_text(1.0, -0.5, 0), "1 - 0.5i");
        // (3 + 4i) 2^2000: 3 x 2^2000 = 3.44439208582276357...e602 and
        // 4 x 2^2000 = 4.59252278109701809...e602 (Python: Decimal(2)**2000
        // with 40 digits, times 3 and 4).
        assert_eq!(
            complex_text(3.0, 4.0, 2000),
            "(3.44439208582276 + 4.59252278109702i) x 10^602"
        );
    }
}
