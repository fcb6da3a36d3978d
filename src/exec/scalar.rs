//! The element types the executor computes in (f32, f64, complex64,
//! complex128) and how they convert to and from the f64 lanes used for
//! summing, storing and reporting.

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
}

impl Scalar for f32 {
    const DTYPE: Dtype = Dtype::F32;
    fn from_complex(z: Complex64) -> Self {
        z.re as f32
    }
    fn to_lanes(self) -> [f64; 2] {
        [self as f64, 0.0]
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
}

impl Scalar for Complex32 {
    const DTYPE: Dtype = Dtype::C64;
    fn from_complex(z: Complex64) -> Self {
        Complex32::new(z.re as f32, z.im as f32)
    }
    fn to_lanes(self) -> [f64; 2] {
        [self.re as f64, self.im as f64]
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
