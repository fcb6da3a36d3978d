//! Writing a result as a `.npy` file (numpy's documented format, version
//! 1.0): magic, header dictionary padded to a multiple of 64 bytes, then the
//! little-endian data in C order.

use std::path::Path;

use super::scalar::encode_lanes;
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
    let dims: Vec<String> = shape.iter().map(u64::to_string).collect();
    let tuple = match dims.len() {
        1 => format!("({},)", dims[0]),
        _ => format!("({})", dims.join(", ")),
    };
    let mut header = format!(
        "{{'descr': '{}', 'fortran_order': False, 'shape': {tuple}, }}",
        descr(dtype)
    );
    // magic (6) + version (2) + length (2) + header + '\n' is a multiple of 64.
    let unpadded = 10 + header.len() + 1;
    header.push_str(&" ".repeat((64 - unpadded % 64) % 64));
    header.push('\n');
    let mut out = Vec::with_capacity(10 + header.len() + lanes.len() * 8);
    out.extend_from_slice(b"\x93NUMPY\x01\x00");
    out.extend_from_slice(&(header.len() as u16).to_le_bytes());
    out.extend_from_slice(header.as_bytes());
    encode_lanes(dtype, lanes, &mut out);
    out
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
}
