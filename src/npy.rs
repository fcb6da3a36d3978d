//! Reading and writing `.npy` files (numpy's documented format).
//!
//! Writing: [`write_npy`] stores float64 when every imaginary part is zero,
//! else complex128, in C order, atomically. Reading: accepted element types: f32, f64, complex64, complex128, and integers and
//! booleans (converted exactly to f64). C and Fortran order are both read;
//! values are returned in row-major (C) order.

use std::path::Path;

use npyz::{NpyFile, Order, TypeChar, WriterBuilder};
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

/// Encodes row-major `values` of the given shape as `.npy` bytes: float64
/// when every imaginary part is zero, else complex128.
pub fn encode_npy(shape: &[u64], values: &[Complex64]) -> std::io::Result<Vec<u8>> {
    let mut bytes = Vec::new();
    if values.iter().all(|z| z.im == 0.0) {
        let mut w = npyz::WriteOptions::<f64>::new()
            .default_dtype()
            .shape(shape)
            .writer(&mut bytes)
            .begin_nd()?;
        w.extend(values.iter().map(|z| z.re))?;
        w.finish()?;
    } else {
        let mut w = npyz::WriteOptions::<Complex64>::new()
            .default_dtype()
            .shape(shape)
            .writer(&mut bytes)
            .begin_nd()?;
        w.extend(values.iter().copied())?;
        w.finish()?;
    }
    Ok(bytes)
}

/// Writes row-major `values` of the given shape to a `.npy` file atomically.
///
/// ```
/// use num_complex::Complex64;
/// let dir = tempfile::tempdir().unwrap();
/// let path = dir.path().join("t.npy");
/// let v = [Complex64::new(1.0, 0.0), Complex64::new(0.0, 2.0)];
/// sliceplan::npy::write_npy(&path, &[2], &v).unwrap();
/// assert_eq!(sliceplan::npy::read_npy(&path).unwrap().values, v);
/// ```
pub fn write_npy(path: &Path, shape: &[u64], values: &[Complex64]) -> Result<()> {
    let want = crate::num::product(shape.iter().copied());
    if want != Some(values.len() as u128) {
        return Err(Error::Cannot(format!(
            "{}: {} values do not fill shape {shape:?}",
            path.display(),
            values.len()
        )));
    }
    let bytes = encode_npy(shape, values).map_err(|e| Error::write(path, e))?;
    crate::io::write_atomic(path, &bytes)
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
    fn written_files_read_back() {
        let dir = tempfile::tempdir().unwrap();
        let real: Vec<Complex64> = (0..6)
            .map(|k| Complex64::new(k as f64 - 2.5, 0.0))
            .collect();
        let p = dir.path().join("r.npy");
        write_npy(&p, &[2, 3], &real).unwrap();
        let back = read_npy(&p).unwrap();
        assert_eq!((back.shape, back.values), (vec![2, 3], real));
        // numpy's format: magic "\x93NUMPY", then the header dict naming '<f8'.
        let bytes = std::fs::read(&p).unwrap();
        assert_eq!(&bytes[..6], b"\x93NUMPY");
        assert!(String::from_utf8_lossy(&bytes).contains("'descr': '<f8'"));
        let cplx = vec![Complex64::new(0.5, -1.0), Complex64::new(3.0, 1e-300)];
        let p = dir.path().join("c.npy");
        write_npy(&p, &[2], &cplx).unwrap();
        assert_eq!(read_npy(&p).unwrap().values, cplx);
        assert!(String::from_utf8_lossy(&std::fs::read(&p).unwrap()).contains("'descr': '<c16'"));
        assert!(write_npy(&p, &[3], &cplx).is_err());
    }

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
