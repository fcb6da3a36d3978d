//! The element types the executor computes in (f32, f64, complex64,
//! complex128) and how they convert to and from the f64 lanes used for
//! summing, storing and reporting.

use std::ops::{Add, AddAssign, Mul};

use faer::traits::ComplexField;
use num_complex::{Complex32, Complex64};

use crate::network::Dtype;

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

/// Number of f64 lanes per element of `dtype` (1 real, 2 complex).
pub fn lanes_per_element(dtype: Dtype) -> usize {
    if dtype.is_complex() {
        2
    } else {
        1
    }
}

/// Appends lanes to `out` as little-endian elements of `dtype` (f32 parts
/// for f32 and c64, f64 parts for f64 and c128).
pub fn encode_lanes(dtype: Dtype, lanes: &[f64], out: &mut Vec<u8>) {
    match dtype {
        Dtype::F32 | Dtype::C64 => {
            for &x in lanes {
                out.extend_from_slice(&(x as f32).to_le_bytes());
            }
        }
        Dtype::F64 | Dtype::C128 => {
            for &x in lanes {
                out.extend_from_slice(&x.to_le_bytes());
            }
        }
    }
}

/// Reads little-endian elements of `dtype` back into lanes. `bytes` must hold
/// a whole number of parts.
pub fn decode_lanes(dtype: Dtype, bytes: &[u8]) -> Vec<f64> {
    match dtype {
        Dtype::F32 | Dtype::C64 => bytes
            .chunks_exact(4)
            .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]) as f64)
            .collect(),
        Dtype::F64 | Dtype::C128 => bytes
            .chunks_exact(8)
            .map(|c| f64::from_le_bytes([c[0], c[1], c[2], c[3], c[4], c[5], c[6], c[7]]))
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lanes_round_trip_through_bytes() {
        // 0.5, -2.25 and 3.0 are exact in f32, so every dtype returns them unchanged.
        let lanes = [0.5, -2.25, 3.0, 0.0];
        for dtype in Dtype::ALL {
            let mut bytes = Vec::new();
            encode_lanes(dtype, &lanes, &mut bytes);
            assert_eq!(
                bytes.len() as u64,
                4 * dtype.bytes() / lanes_per_element(dtype) as u64
            );
            assert_eq!(decode_lanes(dtype, &bytes), lanes);
        }
    }

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
