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
    let source = path.display().to_string();
    let file = std::fs::File::open(path).map_err(|e| Error::read(path, e))?;
    let meta = file.metadata().map_err(|e| Error::read(path, e))?;
    if !meta.is_file() {
        return Err(Error::in_source(source, "not a regular file"));
    }
    read_npy_from(std::io::BufReader::new(file), meta.len(), &source)
}

/// Parses `.npy` bytes already in memory (`source` names them in errors).
pub fn parse_npy(bytes: &[u8], source: &str) -> Result<NpyArray> {
    read_npy_from(bytes, bytes.len() as u64, source)
}

/// Reads a `.npy` stream of `len` bytes in all. The shape in the header is
/// checked against `len` before any element is read, so a damaged or
/// hostile header cannot make the reader allocate more than the file holds.
fn read_npy_from<R: std::io::Read>(mut reader: R, len: u64, source: &str) -> Result<NpyArray> {
    let bad = |m: String| Error::in_source(source, m);
    // The reader library multiplies the shape without checking for
    // overflow, so the shape is read and checked here first.
    let head =
        read_header_bytes(&mut reader).map_err(|m| bad(format!("not a valid .npy file: {m}")))?;
    if let Some(shape) = header_shape(&head) {
        if shape
            .iter()
            .try_fold(1u64, |acc, &d| acc.checked_mul(d))
            .is_none()
        {
            return Err(bad(format!(
                "the header's shape {shape:?} has more than 2^64 elements"
            )));
        }
    }
    let reader = std::io::Read::chain(std::io::Cursor::new(head), reader);
    let npy = NpyFile::new(reader).map_err(|e| bad(format!("not a valid .npy file: {e}")))?;
    let shape = npy.shape().to_vec();
    let elements = shape.iter().try_fold(1u64, |acc, &d| acc.checked_mul(d));
    let data_bytes = match (elements, npy.dtype().num_bytes()) {
        (Some(n), Some(b)) => n.checked_mul(b as u64),
        _ => None,
    };
    match data_bytes {
        Some(b) if b <= len => {}
        _ => {
            return Err(bad(format!(
                "the header's shape {shape:?} describes {} bytes of data, but the file holds {len} bytes in all",
                data_bytes.map_or_else(|| "more than 2^64".to_string(), |b| b.to_string())
            )))
        }
    }
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
    let read_err = |e: std::io::Error| {
        if e.kind() == std::io::ErrorKind::UnexpectedEof {
            bad(format!(
                "the file ends before the {shape:?} elements its header describes"
            ))
        } else {
            bad(format!("cannot read the data: {e}"))
        }
    };
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

/// The magic string, version, header length and header dictionary of a
/// `.npy` stream (numpy's format: `\x93NUMPY`, major and minor version, a
/// u16 length in version 1 or a u32 in versions 2 and 3, then the text).
fn read_header_bytes<R: std::io::Read>(reader: &mut R) -> std::result::Result<Vec<u8>, String> {
    let mut head = vec![0u8; 8];
    reader
        .read_exact(&mut head)
        .map_err(|_| "the file is shorter than the 8-byte .npy preamble".to_string())?;
    if &head[..6] != b"\x93NUMPY" {
        return Err("the file does not start with the .npy magic string".into());
    }
    let len = match head[6] {
        1 => {
            let mut b = [0u8; 2];
            reader.read_exact(&mut b).map_err(|e| e.to_string())?;
            head.extend_from_slice(&b);
            u16::from_le_bytes(b) as usize
        }
        2 | 3 => {
            let mut b = [0u8; 4];
            reader.read_exact(&mut b).map_err(|e| e.to_string())?;
            head.extend_from_slice(&b);
            u32::from_le_bytes(b) as usize
        }
        v => return Err(format!("format version {v} is not one of 1, 2, 3")),
    };
    // numpy limits headers far below this; a larger one is damage.
    if len > 1 << 20 {
        return Err(format!("the header claims {len} bytes"));
    }
    let start = head.len();
    head.resize(start + len, 0);
    reader
        .read_exact(&mut head[start..])
        .map_err(|_| "the file ends inside the header".to_string())?;
    check_nesting(&head[start..])?;
    Ok(head)
}

/// The deepest bracket nesting a header may have. numpy writes a flat dict
/// whose `shape` is a tuple (depth 2); structured dtypes, which this reader
/// refuses anyway, add a list of tuples.
const MAX_HEADER_NESTING: usize = 4;

/// Refuses headers nested deeper than [`MAX_HEADER_NESTING`] before the
/// header parser sees them: the parser of the reader library backtracks
/// exponentially on deep brackets (a 150-byte header of 60 `[` ran for
/// minutes; found by fuzzing).
fn check_nesting(dict: &[u8]) -> std::result::Result<(), String> {
    // Brackets inside quoted strings count too: an unclosed quote must not
    // hide the rest of the header, and no dtype this reader accepts has a
    // bracket in its strings.
    let mut depth = 0usize;
    for &b in dict {
        match b {
            b'(' | b'[' | b'{' => {
                depth += 1;
                if depth > MAX_HEADER_NESTING {
                    return Err(format!(
                        "the header nests brackets more than {MAX_HEADER_NESTING} deep; a .npy header is a flat dictionary"
                    ));
                }
            }
            b')' | b']' | b'}' => depth = depth.saturating_sub(1),
            _ => {}
        }
    }
    Ok(())
}

/// The shape in a `.npy` header, when it can be read as a tuple of
/// integers (anything else is left for the reader library to judge).
fn header_shape(head: &[u8]) -> Option<Vec<u64>> {
    let text = std::str::from_utf8(head).ok().or_else(|| {
        // The preamble is binary; the dictionary after it is ASCII.
        head.iter()
            .position(|&b| b == b'{')
            .and_then(|i| std::str::from_utf8(&head[i..]).ok())
    })?;
    let after = &text[text.find("'shape'")? + "'shape'".len()..];
    let open = after.find('(')?;
    let close = after[open..].find(')')? + open;
    after[open + 1..close]
        .split(',')
        .map(str::trim)
        .filter(|t| !t.is_empty())
        .map(|t| t.trim_end_matches('L').parse::<u64>().ok())
        .collect()
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

    /// A version 1.0 `.npy` header for `descr` and `shape` (the layout is
    /// numpy's documented format: magic, version, u16 length, dict padded
    /// with spaces to a multiple of 64 bytes, newline).
    fn header(descr: &str, shape: &str) -> Vec<u8> {
        let mut dict =
            format!("{{'descr': '{descr}', 'fortran_order': False, 'shape': {shape}, }}");
        while (10 + dict.len() + 1) % 64 != 0 {
            dict.push(' ');
        }
        dict.push('\n');
        let mut out = b"\x93NUMPY\x01\x00".to_vec();
        out.extend_from_slice(&(dict.len() as u16).to_le_bytes());
        out.extend_from_slice(dict.as_bytes());
        out
    }

    #[test]
    fn deeply_nested_headers_are_refused_before_parsing() {
        let deep = header("<f8", "([[[[(2,)]]]],)");
        let e = parse_npy(&deep, "t.npy").unwrap_err().to_string();
        assert!(e.contains("nests brackets more than 4 deep"), "{e}");
        assert!(check_nesting(b"{'descr': '<f8', 'shape': (2, 3), }").is_ok());
        // An unclosed quote does not hide what follows.
        assert!(check_nesting(b"{'descr: ((((((").is_err());
    }

    #[test]
    fn a_header_larger_than_the_data_is_refused() {
        // 2 x 2 float64 = 32 bytes of data; 16 given.
        let mut bytes = header("<f8", "(2, 2)");
        bytes.extend_from_slice(&[0; 16]);
        let e = parse_npy(&bytes, "t.npy").unwrap_err().to_string();
        assert!(e.contains("t.npy") && e.contains("ends before"), "{e}");
        // 2^32 x 2^32 x 8 bytes does not fit in 64 bits: refused, not wrapped.
        let bytes = header("<f8", "(4294967296, 4294967296)");
        let e = parse_npy(&bytes, "t.npy").unwrap_err().to_string();
        assert!(e.contains("more than 2^64"), "{e}");
        // The same header with its data reads.
        let mut bytes = header("<f8", "(2,)");
        bytes.extend_from_slice(&1.5f64.to_le_bytes());
        bytes.extend_from_slice(&(-2.0f64).to_le_bytes());
        let a = parse_npy(&bytes, "t.npy").unwrap();
        assert_eq!(a.shape, vec![2]);
        assert_eq!(
            a.values,
            vec![Complex64::new(1.5, 0.0), Complex64::new(-2.0, 0.0)]
        );
    }

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

/// What a `.npy` header says, checked against the file's size.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NpyHeader {
    /// The array's shape.
    pub shape: Vec<u64>,
    /// The element type as numpy writes it, e.g. `<f8`.
    pub descr: String,
    /// Bytes of data the header describes.
    pub data_bytes: u64,
}

/// Reads and checks the header of a `.npy` file without reading its data:
/// the preamble, the header's dictionary, a supported element type, and a
/// file long enough for the data the header describes (a truncated file is
/// refused here rather than when a run reads it).
pub fn read_npy_header(path: &Path) -> Result<NpyHeader> {
    let source = path.display().to_string();
    let bad = |m: String| Error::in_source(&source, m);
    let mut file = std::fs::File::open(path).map_err(|e| Error::read(path, e))?;
    let len = file.metadata().map_err(|e| Error::read(path, e))?.len();
    let head =
        read_header_bytes(&mut file).map_err(|m| bad(format!("not a valid .npy file: {m}")))?;
    let header_len = head.len() as u64;
    let npy = NpyFile::new(std::io::Cursor::new(head))
        .map_err(|e| bad(format!("not a valid .npy file: {e}")))?;
    let shape = npy.shape().to_vec();
    let descr = npy.dtype().descr();
    let supported = matches!(
        npy.dtype(),
        npyz::DType::Plain(t) if matches!(t.type_char(), TypeChar::Float | TypeChar::Complex | TypeChar::Int | TypeChar::Uint | TypeChar::Bool)
    );
    if !supported {
        return Err(bad(format!(
            "unsupported .npy element type {descr}; use float32, float64, complex64 or complex128"
        )));
    }
    let data_bytes = shape
        .iter()
        .try_fold(1u64, |acc, &d| acc.checked_mul(d))
        .zip(npy.dtype().num_bytes())
        .and_then(|(n, b)| n.checked_mul(b as u64));
    match data_bytes {
        Some(b) if header_len.checked_add(b).is_some_and(|end| end <= len) => Ok(NpyHeader {
            shape,
            descr,
            data_bytes: b,
        }),
        _ => Err(bad(format!(
            "the header's shape {shape:?} describes {} bytes of data, but the file holds {} bytes after its header (is it truncated?)",
            data_bytes.map_or_else(|| "more than 2^64".to_string(), |b| b.to_string()),
            len.saturating_sub(header_len)
        ))),
    }
}
