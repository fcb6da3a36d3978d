//! Compensated summation of many tensors of the same shape.
//!
//! Sums of slices (within a chunk) and of partials (in gather) use
//! Neumaier's variant of Kahan summation per f64 lane: the error of each
//! addition is carried in a second lane and added back at the end, so the
//! result's error does not grow with the number of terms (Neumaier,
//! "Rundungsfehleranalyse einiger Verfahren zur Summation endlicher Summen",
//! ZAMM 54, 1974).

use super::scalar::Scalar;

/// A running compensated sum of tensors, in f64 lanes.
#[derive(Debug, Clone)]
pub struct Accumulator {
    sum: Vec<f64>,
    comp: Vec<f64>,
    lanes_per_element: usize,
}

impl Accumulator {
    /// A zero sum of `elements` elements of `lanes_per_element` lanes (1 for
    /// real, 2 for complex).
    pub fn new(elements: usize, lanes_per_element: usize) -> Accumulator {
        Accumulator {
            sum: vec![0.0; elements * lanes_per_element],
            comp: vec![0.0; elements * lanes_per_element],
            lanes_per_element,
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

    /// Adds `x` to lane `i`.
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

    /// Adds a tensor of scalars element by element.
    pub fn add_scalars<T: Scalar>(&mut self, xs: &[T]) {
        let w = self.lanes_per_element;
        for (i, &x) in xs.iter().enumerate() {
            let lanes = x.to_lanes();
            for (j, &l) in lanes.iter().take(w).enumerate() {
                self.add_lane(i * w + j, l);
            }
        }
    }

    /// The compensated sums.
    pub fn finish(&self) -> Vec<f64> {
        self.sum
            .iter()
            .zip(&self.comp)
            .map(|(s, c)| s + c)
            .collect()
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
}
