//! Compensated summation of many tensors of the same shape.
//!
//! Sums of slices (within a chunk) and of partials (in gather) use
//! Neumaier's variant of Kahan summation per f64 lane: the error of each
//! addition is carried in a second lane and added back at the end, so the
//! result's error does not grow with the number of terms (Neumaier,
//! "Rundungsfehleranalyse einiger Verfahren zur Summation endlicher Summen",
//! ZAMM 54, 1974).
//!
//! Terms carry power-of-two exponents (see [`super::scale`]). The sum keeps
//! one exponent, the largest of the non-zero terms so far: a term with a
//! larger one rescales the running sum (and its compensation) down first,
//! a term with a smaller one is scaled down as it is added. Scaling by
//! powers of two is exact, so the compensation stays valid.

use super::scalar::Scalar;
use super::scale::{ldexp, pow2, settle};

/// A running compensated sum of tensors, in f64 lanes, worth `sum x 2^exp`.
#[derive(Debug, Clone)]
pub struct Accumulator {
    sum: Vec<f64>,
    comp: Vec<f64>,
    lanes_per_element: usize,
    /// The exponent of the sum; `None` until a non-zero term arrives.
    exp: Option<i64>,
}

impl Accumulator {
    /// A zero sum of `elements` elements of `lanes_per_element` lanes (1 for
    /// real, 2 for complex).
    pub fn new(elements: usize, lanes_per_element: usize) -> Accumulator {
        Accumulator {
            sum: vec![0.0; elements * lanes_per_element],
            comp: vec![0.0; elements * lanes_per_element],
            lanes_per_element,
            exp: None,
        }
    }

    /// Number of lanes.
    pub fn lanes(&self) -> usize {
        self.sum.len()
    }

    /// Bytes this accumulator holds.
    pub fn bytes(&self) -> u64 {
        (self.sum.len() * 16) as u64
    }

    /// Prepares to add a term worth `x 2^exp` and returns the factor its
    /// lanes must be multiplied by before [`Accumulator::add_lane`]. Call it
    /// only for terms with a non-zero lane (zero terms need nothing), and
    /// before any lane of the term is added.
    pub fn align(&mut self, exp: i64) -> f64 {
        match self.exp {
            None => {
                self.exp = Some(exp);
                1.0
            }
            Some(e) if exp > e => {
                let shift = e - exp;
                for x in self.sum.iter_mut().chain(self.comp.iter_mut()) {
                    *x = ldexp(*x, shift);
                }
                self.exp = Some(exp);
                1.0
            }
            Some(e) if exp - e >= -1022 => pow2(exp - e),
            // Smaller than the sum by more than the whole f64 range: the
            // term vanishes next to it (ldexp would give 0 or a subnormal).
            Some(e) => ldexp(1.0, exp - e),
        }
    }

    /// The exponent of the sum (0 while it is zero).
    pub fn exp(&self) -> i64 {
        self.exp.unwrap_or(0)
    }

    /// Adds `x` to lane `i` (already multiplied by the factor from
    /// [`Accumulator::align`] when exponents are in use).
    #[inline]
    pub fn add_lane(&mut self, i: usize, x: f64) {
        let s = self.sum[i];
        let t = s + x;
        self.comp[i] += if s.abs() >= x.abs() {
            (s - t) + x
        } else {
            (x - t) + s
        };
        self.sum[i] = t;
    }

    /// Adds lanes `xs` to lanes `0..xs.len()`.
    pub fn add_lanes(&mut self, xs: &[f64]) {
        for (i, &x) in xs.iter().enumerate() {
            self.add_lane(i, x);
        }
    }

    /// Adds a tensor of scalars with exponent 0, element by element.
    pub fn add_scalars<T: Scalar>(&mut self, xs: &[T]) {
        self.add_scaled(xs, 0);
    }

    /// Adds a tensor of scalars worth `xs x 2^exp`, element by element.
    pub fn add_scaled<T: Scalar>(&mut self, xs: &[T], exp: i64) {
        if xs.iter().all(|x| x.max_part() == 0.0) {
            return;
        }
        let f = self.align(exp);
        let w = self.lanes_per_element;
        for (i, &x) in xs.iter().enumerate() {
            let lanes = x.to_lanes();
            for (j, &l) in lanes.iter().take(w).enumerate() {
                self.add_lane(i * w + j, l * f);
            }
        }
    }

    /// The compensated sums, to be multiplied by `2^`[`Accumulator::exp`].
    pub fn finish(&self) -> Vec<f64> {
        self.sum
            .iter()
            .zip(&self.comp)
            .map(|(s, c)| s + c)
            .collect()
    }

    /// The compensated sums and their exponent after [`settle`]: the plain
    /// values and exponent 0 when they fit in an f64.
    pub fn finish_settled(&self) -> (Vec<f64>, i64) {
        let mut lanes = self.finish();
        let exp = settle(&mut lanes, self.exp());
        (lanes, exp)
    }

    /// The compensated sums scaled so that the largest part lies in
    /// `[1, 2)`, and their exponent (0 for an all-zero sum): the form partial
    /// files store, whatever the element type's range.
    pub fn finish_normalized(&self) -> (Vec<f64>, i64) {
        let mut lanes = self.finish();
        let exp = super::scale::normalize(&mut lanes, self.exp());
        (lanes, exp)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn compensation_recovers_lost_low_bits() {
        // 1 + 1e-16 ten thousand times: exactly 1 + 1e-12 in real numbers;
        // plain f64 addition stays at 1.0 because each 1e-16 is below half an ulp.
        let mut acc = Accumulator::new(1, 1);
        acc.add_lane(0, 1.0);
        let mut plain = 1.0f64;
        for _ in 0..10_000 {
            acc.add_lane(0, 1e-16);
            plain += 1e-16;
        }
        assert_eq!(plain, 1.0);
        approx::assert_relative_eq!(acc.finish()[0], 1.0 + 1e-12, max_relative = 1e-15);
    }

    #[test]
    fn complex_scalars_fill_two_lanes() {
        let mut acc = Accumulator::new(2, 2);
        let z = [
            num_complex::Complex64::new(1.0, 2.0),
            num_complex::Complex64::new(-3.0, 0.5),
        ];
        acc.add_scalars(&z);
        acc.add_scalars(&z);
        assert_eq!(acc.finish(), vec![2.0, 4.0, -6.0, 1.0]);
    }

    #[test]
    fn terms_with_exponents_align_to_the_largest() {
        // 3 x 2^1100 + 1 x 2^1099 - 0.5 x 2^1101 = (3 + 0.5 - 1) x 2^1100
        // = 2.5 x 2^1100 = 1.25 x 2^1101 (exact: powers of two).
        let mut acc = Accumulator::new(1, 1);
        acc.add_scaled(&[1.0f64], 1099);
        acc.add_scaled(&[3.0f64], 1100);
        acc.add_scaled(&[0.0f64], 5000);
        acc.add_scaled(&[-0.5f64], 1101);
        assert_eq!(acc.finish_settled(), (vec![1.25], 1101));
        // In range, the plain value comes back with exponent 0:
        // 3 x 2^-2 + 1 x 2^-1 = 1.25.
        let mut acc = Accumulator::new(1, 1);
        acc.add_scaled(&[3.0f64], -2);
        acc.add_scaled(&[1.0f64], -1);
        assert_eq!(acc.finish_settled(), (vec![1.25], 0));
        assert_eq!(acc.finish_normalized(), (vec![1.25], 0));
    }
}
