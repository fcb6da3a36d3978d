//! Reading `.npy` files (numpy's documented format) into complex values.
//!
//! Accepted element types: f32, f64, complex64, complex128, and integers and
//! booleans (converted exactly to f64). C and Fortran order are both read;
//! values are returned in row-major (C) order.

use std::path::Path;

use npyz::{NpyFile, Order, TypeChar};
use num_complex::Complex64;

use crate::error::{Error, Result};

/// An array read from a `.npy` file: shape and row-major values.
#[derive(Debug, Clone, PartialEq)]
pub struct NpyArray {
    /// The array's shape.
    pub shape: Vec<u64>,
    /// Its values in row-major order.
    pub values: Vec<Complex64>,
}

/// Reads a `.npy` file.
pub fn read_npy(path: &Path) -> Result<NpyArray> {
    let bad = |m: String| Error::in_source(path.display().to_string(), m);
    let file = std::fs::File::open(path).map_err(|e| Error::read(path, e))?;
    let npy = NpyFile::new(std::io::BufReader::new(file))
        .map_err(|e| bad(format!("not a valid .npy file: {e}")))?;
    let shape = npy.shape().to_vec();
    let order = npy.order();
    let type_str = match npy.dtype() {
        npyz::DType::Plain(t) => t,
        other => {
            return Err(bad(format!(
                "unsupported .npy element type {}; use float32, float64, complex64 or complex128",
                other.descr()
            )))
        }
    };
    let size = type_str.size_field();
    let read_err = |e: std::io::Error| bad(format!("cannot read the data: {e}"));
    let values: Vec<Complex64> = match (type_str.type_char(), size) {
        (TypeChar::Float, 4) => npy.into_vec::<f32>().map_err(read_err)?.into_iter().map(|x| Complex64::new(x as f64, 0.0)).collect(),
        (TypeChar::Float, 8) => npy.into_vec::<f64>().map_err(read_err)?.into_iter().map(|x| Complex64::new(x, 0.0)).collect(),
        (TypeChar::Complex, 8) => npy
            .into_vec::<num_complex::Complex32>()
            .map_err(read_err)?
            .into_iter()
            .map(|z| Complex64::new(z.re as f64, z.im as f64))
            .collect(),
        (TypeChar::Complex, 16) => npy.into_vec::<Complex64>().map_err(read_err)?,
        (TypeChar::Int, _) => npy.into_vec::<i64>().map_err(read_err)?.into_iter().map(|x| Complex64::new(x as f64, 0.0)).collect(),
        (TypeChar::Uint, _) => npy.into_vec::<u64>().map_err(read_err)?.into_iter().map(|x| Complex64::new(x as f64, 0.0)).collect(),
        (TypeChar::Bool, _) => npy
            .into_vec::<bool>()
            .map_err(read_err)?
            .into_iter()
            .map(|x| Complex64::new(if x { 1.0 } else { 0.0 }, 0.0))
            .collect(),
        _ => return Err(bad(format!("unsupported .npy element type '{type_str}'; use float32, float64, complex64 or complex128"))),
    };
    let values = match order {
        Order::C => values,
        Order::Fortran => fortran_to_c(&values, &shape),
    };
    Ok(NpyArray { shape, values })
}

/// Reorders column-major values into row-major order.
fn fortran_to_c(values: &[Complex64], shape: &[u64]) -> Vec<Complex64> {
    let n = values.len();
    let mut out = vec![Complex64::new(0.0, 0.0); n];
    let mut idx = vec![0u64; shape.len()];
    for v in out.iter_mut() {
        // Column-major offset of the current row-major multi-index.
        let mut off = 0u64;
        let mut stride = 1u64;
        for (k, &d) in shape.iter().enumerate() {
            off += idx[k] * stride;
            stride *= d;
        }
        *v = values[off as usize];
        for k in (0..shape.len()).rev() {
            idx[k] += 1;
            if idx[k] < shape[k] {
                break;
            }
            idx[k] = 0;
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fortran_order_is_transposed() {
        // A 2x3 matrix [[1,2,3],[4,5,6]] in column-major order is 1,4,2,5,3,6.
        let f: Vec<Complex64> = [1., 4., 2., 5., 3., 6.]
            .iter()
            .map(|&x| Complex64::new(x, 0.0))
            .collect();
        let c: Vec<f64> = fortran_to_c(&f, &[2, 3]).iter().map(|z| z.re).collect();
        assert_eq!(c, vec![1., 2., 3., 4., 5., 6.]);
    }
}
