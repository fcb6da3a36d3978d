//! The element types the executor computes in (f32, f64, complex64,
//! complex128), how they convert to and from the f64 lanes used for
//! summing, storing and reporting, and the three element-wise operations
//! scaled and modular arithmetic need (largest part, power-of-two scaling,
//! reduction modulo a prime).

use std::ops::{Add, AddAssign, Mul};

use faer::traits::ComplexField;
use num_complex::{Complex32, Complex64};

use crate::network::Dtype;

pub use crate::lanes::{decode_lanes, encode_lanes, lanes_per_element};

/// An element type the executor can contract in.
///
/// Values leave the contraction as f64 *lanes*: one lane (the value) for the
/// real types, two (real part, imaginary part) for the complex ones. Sums
/// over slices, partial files and results are all kept in lanes, so only the
/// contraction itself is generic.
pub trait Scalar:
    ComplexField
    + super::memory::ZeroBits
    + Copy
    + Default
    + Send
    + Sync
    + 'static
    + Add<Output = Self>
    + Mul<Output = Self>
    + AddAssign
{
    /// The dtype this type implements.
    const DTYPE: Dtype;

    /// Converts a complex value (the imaginary part is dropped for the real types).
    fn from_complex(z: Complex64) -> Self;

    /// The value's lanes: `[re, im]`; only the first is used for real types.
    fn to_lanes(self) -> [f64; 2];

    /// The binary exponent one past the largest finite value of a part
    /// (128 for f32 parts, 1024 for f64 parts): values stay below 2^MAX_EXP.
    const MAX_EXP: i64;

    /// The largest absolute value of the parts (`max(|re|, |im|)`).
    fn max_part(self) -> f64;

    /// The value times `factor`, a power of two that the part type holds.
    fn scaled(self, factor: f64) -> Self;

    /// Each part reduced modulo the prime `m` (see
    /// [`super::modular::Prime::reduce`]); parts must be whole numbers in
    /// `0..2^53`.
    fn reduced(self, m: &super::modular::Prime) -> Self;
}

impl Scalar for f32 {
    const DTYPE: Dtype = Dtype::F32;
    fn from_complex(z: Complex64) -> Self {
        z.re as f32
    }
    fn to_lanes(self) -> [f64; 2] {
        [self as f64, 0.0]
    }
    const MAX_EXP: i64 = 128;
    fn max_part(self) -> f64 {
        self.abs() as f64
    }
    fn scaled(self, factor: f64) -> Self {
        self * factor as f32
    }
    fn reduced(self, m: &super::modular::Prime) -> Self {
        m.reduce(self as f64) as f32
    }
}

impl Scalar for f64 {
    const DTYPE: Dtype = Dtype::F64;
    fn from_complex(z: Complex64) -> Self {
        z.re
    }
    fn to_lanes(self) -> [f64; 2] {
        [self, 0.0]
    }
    const MAX_EXP: i64 = 1024;
    fn max_part(self) -> f64 {
        self.abs()
    }
    fn scaled(self, factor: f64) -> Self {
        self * factor
    }
    fn reduced(self, m: &super::modular::Prime) -> Self {
        m.reduce(self)
    }
}

impl Scalar for Complex32 {
    const DTYPE: Dtype = Dtype::C64;
    fn from_complex(z: Complex64) -> Self {
        Complex32::new(z.re as f32, z.im as f32)
    }
    fn to_lanes(self) -> [f64; 2] {
        [self.re as f64, self.im as f64]
    }
    const MAX_EXP: i64 = 128;
    fn max_part(self) -> f64 {
        self.re.abs().max(self.im.abs()) as f64
    }
    fn scaled(self, factor: f64) -> Self {
        let f = factor as f32;
        Complex32::new(self.re * f, self.im * f)
    }
    fn reduced(self, m: &super::modular::Prime) -> Self {
        Complex32::new(
            m.reduce(self.re as f64) as f32,
            m.reduce(self.im as f64) as f32,
        )
    }
}

impl Scalar for Complex64 {
    const DTYPE: Dtype = Dtype::C128;
    fn from_complex(z: Complex64) -> Self {
        z
    }
    fn to_lanes(self) -> [f64; 2] {
        [self.re, self.im]
    }
    const MAX_EXP: i64 = 1024;
    fn max_part(self) -> f64 {
        self.re.abs().max(self.im.abs())
    }
    fn scaled(self, factor: f64) -> Self {
        Complex64::new(self.re * factor, self.im * factor)
    }
    fn reduced(self, m: &super::modular::Prime) -> Self {
        Complex64::new(m.reduce(self.re), m.reduce(self.im))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dtypes_match_their_types() {
        assert_eq!(
            <f32 as Scalar>::DTYPE.bytes(),
            std::mem::size_of::<f32>() as u64
        );
        assert_eq!(
            <Complex32 as Scalar>::DTYPE.bytes(),
            std::mem::size_of::<Complex32>() as u64
        );
        assert_eq!(
            <Complex64 as Scalar>::DTYPE.bytes(),
            std::mem::size_of::<Complex64>() as u64
        );
        assert_eq!(
            Complex32::from_complex(Complex64::new(1.5, -2.0)).to_lanes(),
            [1.5, -2.0]
        );
        assert_eq!(
            f64::from_complex(Complex64::new(1.5, -2.0)).to_lanes(),
            [1.5, 0.0]
        );
    }
}
