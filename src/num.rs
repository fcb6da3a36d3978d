//! Exact-where-possible counts: a u128 when the value fits, always a log2.
//!
//! Contraction costs easily reach 2^200, far beyond any machine integer.
//! Every count therefore carries its log2 as an `f64`, and the exact value as
//! a `u128` while it fits. Overflow is never silent: a count that does not fit
//! has `exact == None` and prints as a power of two.

use std::fmt;

/// A non-negative count, exact while it fits in a `u128`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Count {
    /// The exact value, when it fits in a `u128`.
    pub exact: Option<u128>,
    /// log2 of the value (`-inf` for zero).
    pub log2: f64,
}

impl Count {
    /// Zero.
    pub const ZERO: Count = Count {
        exact: Some(0),
        log2: f64::NEG_INFINITY,
    };
    /// One.
    pub const ONE: Count = Count {
        exact: Some(1),
        log2: 0.0,
    };

    /// An exact count.
    pub fn from_u128(v: u128) -> Count {
        Count {
            exact: Some(v),
            log2: log2_u128(v),
        }
    }

    /// A count known only by its log2.
    pub fn from_log2(log2: f64) -> Count {
        Count { exact: None, log2 }
    }

    /// The value as an `f64` (may be `inf` beyond 2^1024).
    pub fn to_f64(self) -> f64 {
        match self.exact {
            Some(v) => v as f64,
            None => self.log2.exp2(),
        }
    }

    /// Decimal digits when exact, otherwise `None`.
    pub fn decimal(self) -> Option<String> {
        self.exact.map(|v| v.to_string())
    }

    /// Decimal digits when exact, otherwise `2^x.xx` (for JSON strings).
    pub fn to_json_string(self) -> String {
        match self.exact {
            Some(v) => v.to_string(),
            None => format!("2^{:.2}", self.log2),
        }
    }
}

impl std::ops::Mul for Count {
    type Output = Count;

    /// The product; exact while it fits. Logs add.
    #[allow(clippy::suspicious_arithmetic_impl)]
    fn mul(self, other: Count) -> Count {
        let exact = match (self.exact, other.exact) {
            (Some(a), Some(b)) => a.checked_mul(b),
            (Some(0), None) | (None, Some(0)) => Some(0),
            _ => None,
        };
        Count {
            exact,
            log2: self.log2 + other.log2,
        }
    }
}

impl std::ops::Add for Count {
    type Output = Count;

    /// The sum; exact while it fits.
    fn add(self, other: Count) -> Count {
        let exact = match (self.exact, other.exact) {
            (Some(a), Some(b)) => a.checked_add(b),
            _ => None,
        };
        Count {
            exact,
            log2: log2_add(self.log2, other.log2),
        }
    }
}

impl fmt::Display for Count {
    /// Exact values print with thousands separators up to 10^15, then in
    /// scientific notation with the log2 beside them.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.exact {
            Some(v) if v < 1_000_000_000_000_000 => write!(f, "{}", group_thousands(v)),
            _ => write!(f, "{:.3e} (2^{:.2})", self.to_f64(), self.log2),
        }
    }
}

/// log2 of a u128, exact for powers of two (`-inf` for zero).
pub fn log2_u128(v: u128) -> f64 {
    if v == 0 {
        return f64::NEG_INFINITY;
    }
    if v.is_power_of_two() {
        return v.trailing_zeros() as f64;
    }
    (v as f64).log2()
}

/// log2(2^a + 2^b) without overflow.
pub fn log2_add(a: f64, b: f64) -> f64 {
    let (hi, lo) = if a >= b { (a, b) } else { (b, a) };
    if lo == f64::NEG_INFINITY {
        return hi;
    }
    hi + (1.0 + (lo - hi).exp2()).log2()
}

/// Product of dimensions, exact while it fits in a u128.
pub fn product<I: IntoIterator<Item = u64>>(dims: I) -> Option<u128> {
    let mut acc: u128 = 1;
    for d in dims {
        acc = acc.checked_mul(d as u128)?;
    }
    Some(acc)
}

/// `1234567` → `1,234,567`.
pub fn group_thousands(v: u128) -> String {
    let digits = v.to_string();
    let mut out = String::with_capacity(digits.len() + digits.len() / 3);
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

/// A total order for `f64` keys in heaps and sorts (NaN sorts last).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ordered(pub f64);

impl Eq for Ordered {}

impl PartialOrd for Ordered {
    fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
        Some(self.cmp(other))
    }
}

impl Ord for Ordered {
    fn cmp(&self, other: &Self) -> std::cmp::Ordering {
        self.0.total_cmp(&other.0)
    }
}

/// The overhead of `sliced_log2` ops over `unsliced_log2` ops (both log2):
/// their ratio, and 1 when both are zero ops (a network of one tensor has
/// nothing to contract, sliced or not).
pub fn overhead(sliced_log2: f64, unsliced_log2: f64) -> f64 {
    if sliced_log2 == f64::NEG_INFINITY && unsliced_log2 == f64::NEG_INFINITY {
        1.0
    } else {
        (sliced_log2 - unsliced_log2).exp2()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_stay_exact_until_they_overflow() {
        let a = Count::from_u128(1 << 100);
        let b = a * Count::from_u128(1 << 27);
        assert_eq!(b.exact, Some(1 << 127));
        let c = b * Count::from_u128(2);
        assert_eq!(c.exact, None);
        assert_eq!(c.log2, 128.0);
        assert_eq!(c.to_json_string(), "2^128.00");
    }

    #[test]
    fn log2_add_matches_direct_sum() {
        // 2^3 + 2^3 = 2^4; 8 + 1 = 9.
        assert!((log2_add(3.0, 3.0) - 4.0).abs() < 1e-12);
        assert!((log2_add(3.0, 0.0) - 9f64.log2()).abs() < 1e-12);
        assert_eq!(log2_add(f64::NEG_INFINITY, 5.0), 5.0);
    }

    #[test]
    fn thousands() {
        assert_eq!(group_thousands(15125), "15,125");
        assert_eq!(group_thousands(999), "999");
        assert_eq!(group_thousands(1_000_000), "1,000,000");
    }
}
