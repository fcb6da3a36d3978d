//! Writing a result as `.npy` files (numpy's documented format, version
//! 1.0): magic, header dictionary padded to a multiple of 64 bytes, then the
//! little-endian data in C order.
//!
//! # Values beyond the dtype's range
//!
//! A result is written as two files: `RESULT.npy` holds mantissas in the
//! plan's dtype, and `RESULT.exp2.npy` (see [`exponent_path`]) a 0-d int64
//! array `e`; the values are `mantissas x 2^e`. When every value fits in
//! the dtype (normal numbers of f32 for f32 and c64, of f64 otherwise), `e`
//! is 0 and `RESULT.npy` holds the plain values; otherwise the largest part
//! of the mantissas lies in `[1, 2)`. In numpy: `np.load("r.npy") *
//! 2.0 ** np.load("r.exp2.npy")` for values in range, or `np.log(abs(m)) +
//! e * np.log(2)` for the logarithm of any of them.

use std::path::{Path, PathBuf};

use super::gather::Gathered;
use super::scalar::encode_lanes;
use super::scale::settle_within;
use crate::error::Result;
use crate::network::Dtype;

/// numpy's type string for a dtype.
fn descr(dtype: Dtype) -> &'static str {
    match dtype {
        Dtype::F32 => "<f4",
        Dtype::F64 => "<f8",
        Dtype::C64 => "<c8",
        Dtype::C128 => "<c16",
    }
}

/// The bytes of a `.npy` file holding `lanes` (see [`super::scalar`]) with
/// the given shape.
pub fn npy_bytes(dtype: Dtype, shape: &[u64], lanes: &[f64]) -> Vec<u8> {
    let mut out = npy_header(descr(dtype), shape, lanes.len() * 8);
    encode_lanes(dtype, lanes, &mut out);
    out
}

/// Magic, version and padded header of a `.npy` file; `capacity` bytes of
/// data are expected to follow.
fn npy_header(descr: &str, shape: &[u64], capacity: usize) -> Vec<u8> {
    let dims: Vec<String> = shape.iter().map(u64::to_string).collect();
    let tuple = match dims.len() {
        1 => format!("({},)", dims[0]),
        _ => format!("({})", dims.join(", ")),
    };
    let mut header = format!("{{'descr': '{descr}', 'fortran_order': False, 'shape': {tuple}, }}");
    // magic (6) + version (2) + length (2) + header + '\n' is a multiple of 64.
    let unpadded = 10 + header.len() + 1;
    header.push_str(&" ".repeat((64 - unpadded % 64) % 64));
    header.push('\n');
    let mut out = Vec::with_capacity(10 + header.len() + capacity);
    out.extend_from_slice(b"\x93NUMPY\x01\x00");
    out.extend_from_slice(&(header.len() as u16).to_le_bytes());
    out.extend_from_slice(header.as_bytes());
    out
}

/// The bytes of a `.npy` file holding one int64 (a 0-d array).
pub fn npy_i64_bytes(value: i64) -> Vec<u8> {
    let mut out = npy_header("<i8", &[], 8);
    out.extend_from_slice(&value.to_le_bytes());
    out
}

/// Where the exponent of `result` goes: `r.npy` → `r.exp2.npy` (any other
/// name gets `.exp2.npy` appended).
pub fn exponent_path(result: &Path) -> PathBuf {
    let name = result
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let stem = name.strip_suffix(".npy").unwrap_or(&name);
    result.with_file_name(format!("{stem}.exp2.npy"))
}

/// The mantissas and exponent a result is written with (see the module
/// documentation).
pub fn npy_mantissas(dtype: Dtype, lanes: &[f64], exponent: i64) -> (Vec<f64>, i64) {
    let mut m = lanes.to_vec();
    let (lo, hi) = match dtype {
        Dtype::F32 | Dtype::C64 => (-126, 127),
        Dtype::F64 | Dtype::C128 => (-1022, 1023),
    };
    let e = settle_within(&mut m, exponent, lo, hi);
    (m, e)
}

impl Gathered {
    /// Writes the result as `path` (mantissas) and [`exponent_path`]`(path)`
    /// (the power of two), atomically each; returns the exponent written.
    pub fn write_npy(&self, path: &Path) -> Result<i64> {
        let (m, e) = npy_mantissas(self.dtype, &self.lanes, self.exponent);
        write_npy(path, self.dtype, &self.shape, &m)?;
        crate::io::write_atomic(&exponent_path(path), &npy_i64_bytes(e))?;
        Ok(e)
    }
}

/// Writes a `.npy` file atomically.
pub fn write_npy(path: &Path, dtype: Dtype, shape: &[u64], lanes: &[f64]) -> Result<()> {
    crate::io::write_atomic(path, &npy_bytes(dtype, shape, lanes))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn read_back_by_the_npy_reader() {
        // The reader is built on the npyz crate, an independent implementation
        // of numpy's format.
        let dir = tempfile::tempdir().unwrap();
        let cases: [(Dtype, Vec<u64>, Vec<f64>); 4] = [
            (Dtype::F32, vec![], vec![2.5]),
            (Dtype::F64, vec![3], vec![1.0, -2.0, 3.5]),
            (Dtype::C64, vec![1, 2], vec![1.0, 2.0, -3.0, 4.0]),
            (Dtype::C128, vec![2, 1, 1], vec![0.25, -0.5, 8.0, 16.0]),
        ];
        for (dtype, shape, lanes) in cases {
            let p = dir.path().join("x.npy");
            write_npy(&p, dtype, &shape, &lanes).unwrap();
            assert_eq!(std::fs::read(&p).unwrap()[8..10], [118, 0], "header length");
            let back = crate::npy::read_npy(&p).unwrap();
            assert_eq!(back.shape, shape);
            let got: Vec<f64> = back
                .values
                .iter()
                .flat_map(|z| {
                    if dtype.is_complex() {
                        vec![z.re, z.im]
                    } else {
                        vec![z.re]
                    }
                })
                .collect();
            assert_eq!(got, lanes, "{dtype}");
        }
    }

    #[test]
    fn exponents_beside_the_mantissas() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("exp.npy");
        std::fs::write(&p, npy_i64_bytes(-1039)).unwrap();
        // The reader (npyz) converts integers to f64 exactly.
        let back = crate::npy::read_npy(&p).unwrap();
        assert_eq!((back.shape.len(), back.values[0].re), (0, -1039.0));
        assert_eq!(
            exponent_path(Path::new("out/r.npy")),
            Path::new("out/r.exp2.npy")
        );
        assert_eq!(exponent_path(Path::new("r")), Path::new("r.exp2.npy"));
        // 1.5 x 2^200 fits in f64 but not in f32.
        assert_eq!(
            npy_mantissas(Dtype::F64, &[1.5], 200),
            (vec![1.5 * 2f64.powi(200)], 0)
        );
        assert_eq!(
            npy_mantissas(Dtype::C64, &[1.5, -0.5], 200),
            (vec![1.5, -0.5], 200)
        );
    }
}
