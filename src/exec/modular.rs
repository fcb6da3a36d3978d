//! Exact integer contraction by residues: arithmetic modulo primes below
//! 2^21 in f64, and reconstruction by the Chinese remainder theorem.
//!
//! # Method
//!
//! A network whose entries are whole numbers from 0 to [`MAX_ENTRY`] is
//! contracted once per prime `p` with every value kept as its residue in
//! `0..p`, stored exactly in an f64. With `p < 2^21` a product of two
//! residues is below 2^42, so a sum of up to [`INNER_BLOCK`] = 2^11 such
//! products (plus one residue already there) stays below 2^53 and is exact
//! in f64 whatever order the multiply sums in. The pairwise kernel therefore
//! reuses the ordinary f64 matrix multiply, with the inner dimension cut
//! into blocks of 2^11 and the result reduced modulo `p` after each block
//! ([`Prime::reduce`]). Entries of the inputs are already residues (they are
//! below every prime used), so the inputs are shared by all primes.
//!
//! The result `x` is known to lie in `0..=B` for a bound `B` proven from the
//! network (see [`super::exact`]); with primes whose product exceeds `B`,
//! the residues determine `x` (Chinese remainder theorem), rebuilt by
//! Garner's mixed-radix method ([`reconstruct`]).
//!
//! # Complexity
//!
//! `r = ceil((log2 B + 1) / 20.99)` primes; contraction time `r` times that
//! of one f64 contraction plus one reduction pass per inner block;
//! reconstruction `O(r^2)` word operations per element.
//!
//! Reference: Knuth, *The Art of Computer Programming* vol. 2 (3rd ed.),
//! section 4.3.2 (modular arithmetic, Garner's method).
//!
//! ```
//! use sliceplan::exec::modular::{primes_for, reconstruct};
//! let primes = primes_for(60.0);
//! assert_eq!(primes.len(), 3);
//! let x: u64 = 1 << 59;
//! let residues: Vec<u64> = primes.iter().map(|&p| x % p).collect();
//! assert_eq!(reconstruct(&residues, &primes).to_string(), x.to_string());
//! ```

use num_bigint::BigUint;

/// Every prime used lies below this (2^21).
pub const PRIME_LIMIT: u64 = 1 << 21;

/// Entries of a network contracted exactly must be whole numbers from 0 to
/// this (2^20), below every prime used, so that inputs need no reduction.
pub const MAX_ENTRY: f64 = (1u64 << 20) as f64;

/// Products summed exactly before a reduction: 2^11 (see the module
/// documentation).
pub const INNER_BLOCK: usize = 1 << 11;

/// Terms of plain additions (summing out an index) between reductions: a
/// sum of 2^31 residues below 2^21 stays below 2^52.
pub const ADD_BLOCK: usize = 1 << 31;

/// A prime below 2^21 with its reciprocal, for reduction in f64.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Prime {
    /// The prime.
    pub p: u64,
    pf: f64,
    inv: f64,
}

impl Prime {
    /// The prime `p` (below [`PRIME_LIMIT`]).
    pub fn new(p: u64) -> Prime {
        debug_assert!(p > 1 && p < PRIME_LIMIT);
        Prime {
            p,
            pf: p as f64,
            inv: 1.0 / p as f64,
        }
    }

    /// `x mod p` for a whole number `x` in `0..=2^53 - 2^22` (every sum the
    /// kernel forms stays below that; see the module documentation),
    /// exactly. The quotient `q` is `x / p` rounded to a whole number by
    /// adding and subtracting 1.5 x 2^52, so it is off by at most one; `q p`
    /// stays below 2^53 and is exact, and so is `x - q p`, which one
    /// correction brings into `0..p`. Plain adds and multiplies only: no
    /// `floor` or fused multiply-add, which are library calls on targets
    /// without SSE4.1 and FMA, and the loop over a tensor vectorises.
    #[inline]
    pub fn reduce(&self, x: f64) -> f64 {
        const ROUND: f64 = 6_755_399_441_055_744.0; // 1.5 x 2^52
        let q = (x * self.inv + ROUND) - ROUND;
        let r = x - q * self.pf;
        let r = if r < 0.0 { r + self.pf } else { r };
        if r >= self.pf {
            r - self.pf
        } else {
            r
        }
    }
}

/// True when `n` is prime (trial division; `n` is below 2^21 here).
fn is_prime(n: u64) -> bool {
    if n < 2 {
        return false;
    }
    let mut d = 2;
    while d * d <= n {
        if n % d == 0 {
            return false;
        }
        d += 1;
    }
    true
}

/// The fewest primes below 2^21 (the largest first) whose product exceeds
/// `2^(bound_log2 + 1)`, enough to recover any whole number in
/// `0..=2^bound_log2` (the extra bit absorbs rounding in the bound).
pub fn primes_for(bound_log2: f64) -> Vec<u64> {
    let mut primes = Vec::new();
    let mut bits = 0.0;
    let mut n = PRIME_LIMIT - 1;
    while bits <= bound_log2.max(0.0) + 1.0 {
        if is_prime(n) {
            primes.push(n);
            bits += (n as f64).log2();
        }
        n -= 1;
    }
    primes
}

/// The whole number in `0..product of primes` with the given residues
/// (Chinese remainder theorem, Garner's method).
pub fn reconstruct(residues: &[u64], primes: &[u64]) -> BigUint {
    debug_assert_eq!(residues.len(), primes.len());
    // Mixed-radix digits: x = v0 + v1 p0 + v2 p0 p1 + ...
    let mut digits: Vec<u64> = Vec::with_capacity(primes.len());
    for (i, (&r, &p)) in residues.iter().zip(primes).enumerate() {
        // Value of the digits so far modulo p, and p0 ... p_{i-1} modulo p.
        let (mut value, mut radix) = (0u64, 1u64);
        for (&d, &q) in digits.iter().zip(&primes[..i]) {
            value = (value + d % p * radix) % p;
            radix = radix * (q % p) % p;
        }
        let diff = (r % p + p - value) % p;
        digits.push(diff * inverse(radix, p) % p);
    }
    let mut x = BigUint::from(0u32);
    for (&d, &p) in digits.iter().zip(primes).rev() {
        x = x * p + d;
    }
    x
}

/// The inverse of `a` modulo the prime `p` (extended Euclid).
fn inverse(a: u64, p: u64) -> u64 {
    let (mut r0, mut r1) = (p as i64, a as i64);
    let (mut t0, mut t1) = (0i64, 1i64);
    while r1 != 0 {
        let q = r0 / r1;
        (r0, r1) = (r1, r0 - q * r1);
        (t0, t1) = (t1, t0 - q * t1);
    }
    debug_assert_eq!(r0, 1, "{a} is invertible modulo the prime {p}");
    t0.rem_euclid(p as i64) as u64
}

/// A running sum of tensors of residues, one set per prime.
#[derive(Debug, Clone)]
pub struct ResidueSum {
    primes: Vec<u64>,
    len: usize,
    /// Prime-major: residues of prime k at `k * len ..`.
    sums: Vec<u32>,
}

impl ResidueSum {
    /// A zero sum of `len` elements for each of `primes`.
    pub fn new(len: usize, primes: &[u64]) -> ResidueSum {
        ResidueSum {
            primes: primes.to_vec(),
            len,
            sums: vec![0; len * primes.len()],
        }
    }

    /// Bytes held.
    pub fn bytes(&self) -> u64 {
        (self.sums.len() * 4) as u64
    }

    /// Adds residues of prime number `k` (each below that prime; f64 whole
    /// numbers as the kernel leaves them).
    pub fn add(&mut self, k: usize, residues: impl IntoIterator<Item = f64>) {
        let p = self.primes[k];
        let dst = &mut self.sums[k * self.len..(k + 1) * self.len];
        for (s, r) in dst.iter_mut().zip(residues) {
            let v = *s as u64 + r as u64;
            *s = (if v >= p { v - p } else { v }) as u32;
        }
    }

    /// Adds the residue `r` (below prime number `k`) to element `i`.
    #[inline]
    pub fn add_at(&mut self, k: usize, i: usize, r: f64) {
        let p = self.primes[k];
        let s = &mut self.sums[k * self.len + i];
        let v = *s as u64 + r as u64;
        *s = (if v >= p { v - p } else { v }) as u32;
    }

    /// The primes.
    pub fn primes(&self) -> &[u64] {
        &self.primes
    }

    /// Adds residues given as f64 lanes, prime-major (as partial files hold them).
    pub fn add_lanes(&mut self, lanes: &[f64]) {
        for k in 0..self.primes.len() {
            let part = &lanes[k * self.len..(k + 1) * self.len];
            self.add(k, part.iter().copied());
        }
    }

    /// The residues as f64 lanes, prime-major.
    pub fn lanes(&self) -> Vec<f64> {
        self.sums.iter().map(|&s| s as f64).collect()
    }

    /// Element `i` rebuilt from its residues.
    pub fn value(&self, i: usize) -> BigUint {
        let residues: Vec<u64> = (0..self.primes.len())
            .map(|k| self.sums[k * self.len + i] as u64)
            .collect();
        reconstruct(&residues, &self.primes)
    }

    /// Number of elements.
    pub fn len(&self) -> usize {
        self.len
    }

    /// True when there are no elements.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reduction_is_exact_near_the_limits() {
        let m = Prime::new(2_097_143);
        // Residues of numbers up to 2^53 - 2^22 agree with integer arithmetic.
        for j in 0..1000u64 {
            let x = (1u64 << 53) - (1 << 22) - j * 977_777;
            assert_eq!(m.reduce(x as f64) as u64, x % 2_097_143);
        }
        for x in [
            0u64,
            1,
            2_097_142,
            2_097_143,
            4_194_286,
            4_194_287,
            3 * 2_097_143 - 1,
        ] {
            assert_eq!(m.reduce(x as f64) as u64, x % 2_097_143);
        }
    }

    #[test]
    fn primes_below_2_to_21() {
        // 2^21 - 9 = 2097143 is the largest prime below 2^21 (trial
        // division here; listed in tables of primes just below powers of two).
        let p = primes_for(0.0);
        assert_eq!(p, vec![2_097_143]);
        assert!(primes_for(200.0)
            .iter()
            .all(|&q| is_prime(q) && q < PRIME_LIMIT));
        let bits: f64 = primes_for(200.0).iter().map(|&q| (q as f64).log2()).sum();
        assert!(bits > 201.0);
    }

    #[test]
    fn chinese_remainders_rebuild_large_numbers() {
        // 3^150 computed directly with big integers, then from its residues.
        let x = BigUint::from(3u32).pow(150);
        let primes = primes_for(x.bits() as f64);
        let residues: Vec<u64> = primes
            .iter()
            .map(|&p| (&x % p).iter_u64_digits().next().unwrap_or(0))
            .collect();
        assert_eq!(reconstruct(&residues, &primes), x);
        assert_eq!(inverse(3, 7), 5);
    }
}
