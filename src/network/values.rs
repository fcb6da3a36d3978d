//! Turning a tensor's value source (inline list, `.npy` file, named filler)
//! into concrete complex values in row-major order.

use num_complex::Complex64;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use super::{Fill, Network, TensorId, Values};
use crate::error::{Error, Result};

/// The values of tensor `t`, row-major over its indices (last fastest).
///
/// Random fills draw both parts uniformly from [-1, 1) with ChaCha8 seeded by
/// the fill's seed; real dtypes use only the real part. Fails when the tensor
/// has no values, or when a `.npy` file cannot be read or has the wrong shape.
pub fn materialize(net: &Network, t: TensorId) -> Result<Vec<Complex64>> {
    let tensor = &net.tensors[t];
    let dims: Vec<u64> = tensor.indices.iter().map(|&e| net.indices[e].dim).collect();
    let len = crate::num::product(dims.iter().copied())
        .and_then(|n| usize::try_from(n).ok())
        .ok_or_else(|| {
            Error::Cannot(format!(
                "tensor '{}' is too large to hold in memory",
                tensor.name
            ))
        })?;
    let values = tensor.values.as_ref().ok_or_else(|| {
        Error::in_source(
            &net.name,
            format!(
                "tensor '{}' has no values; give `values`, `npy` or `fill` in the network file",
                tensor.name
            ),
        )
    })?;
    match values {
        Values::Inline { re, im } => Ok(match im {
            Some(im) => re
                .iter()
                .zip(im)
                .map(|(&r, &i)| Complex64::new(r, i))
                .collect(),
            None => re.iter().map(|&r| Complex64::new(r, 0.0)).collect(),
        }),
        Values::Npy(path) => {
            let array = crate::npy::read_npy(path).map_err(|e| match e {
                // A missing or unreadable side file: say which tensor of
                // which network names it.
                Error::Io { .. } => Error::in_source(
                    &net.name,
                    format!("tensor '{}' takes its values from {e}", tensor.name),
                ),
                other => other,
            })?;
            if array.shape != dims {
                return Err(Error::in_source(
                    path.display().to_string(),
                    format!(
                        "tensor '{}' has shape {dims:?}, but the file holds shape {:?}",
                        tensor.name, array.shape
                    ),
                ));
            }
            Ok(array.values)
        }
        Values::Fill(Fill::Ones) => Ok(vec![Complex64::new(1.0, 0.0); len]),
        Values::Fill(Fill::Copy) => {
            let mut v = vec![Complex64::new(0.0, 0.0); len];
            if let Some(&d) = dims.first() {
                // Element (i, i, ..., i) sits at i * (1 + d + d^2 + ...).
                let step: u64 = (0..dims.len() as u32).map(|k| d.pow(k)).sum();
                for i in 0..d {
                    v[(i * step) as usize] = Complex64::new(1.0, 0.0);
                }
            } else {
                v[0] = Complex64::new(1.0, 0.0);
            }
            Ok(v)
        }
        Values::Fill(Fill::Random { seed }) => {
            let mut rng = ChaCha8Rng::seed_from_u64(*seed);
            Ok((0..len)
                .map(|_| {
                    let re = rng.random_range(-1.0..1.0);
                    let im = rng.random_range(-1.0..1.0);
                    Complex64::new(re, im)
                })
                .collect())
        }
    }
}

/// The `.npy` side files of a network, as `inspect` reports them.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ValueFiles {
    /// Tensors whose values come from `.npy` files.
    pub files: usize,
    /// Bytes of data those files describe.
    pub data_bytes: u64,
    /// What is wrong with the files that are not whole, one line each.
    pub problems: Vec<String>,
}

/// Checks the `.npy` side files of `net` (readable, a valid header, the
/// tensor's shape, a file as long as the header says); `None` when the
/// network has none.
pub fn value_files(net: &Network) -> Option<ValueFiles> {
    let mut report = ValueFiles {
        files: 0,
        data_bytes: 0,
        problems: Vec::new(),
    };
    for t in 0..net.num_tensors() {
        if let Some(Values::Npy(path)) = &net.tensors[t].values {
            report.files += 1;
            match check_npy(net, t, path) {
                Ok(bytes) => report.data_bytes = report.data_bytes.saturating_add(bytes),
                Err(e) => report.problems.push(e.to_string()),
            }
        }
    }
    (report.files > 0).then_some(report)
}

/// Fails on the first `.npy` side file of `net` that is not whole (see
/// [`value_files`]): checked before a plan or a job directory is written,
/// so a broken file is found here and not by a task on the cluster.
pub fn check_value_files(net: &Network) -> Result<()> {
    for t in 0..net.num_tensors() {
        if let Some(Values::Npy(path)) = &net.tensors[t].values {
            check_npy(net, t, path)?;
        }
    }
    Ok(())
}

/// Checks one side file against tensor `t`; returns its data bytes.
fn check_npy(net: &Network, t: TensorId, path: &std::path::Path) -> Result<u64> {
    let tensor = &net.tensors[t];
    let header = crate::npy::read_npy_header(path).map_err(|e| match e {
        Error::Io { .. } => Error::in_source(
            &net.name,
            format!("tensor '{}' takes its values from {e}", tensor.name),
        ),
        other => other,
    })?;
    let dims: Vec<u64> = tensor.indices.iter().map(|&e| net.indices[e].dim).collect();
    if header.shape != dims {
        return Err(Error::in_source(
            path.display().to_string(),
            format!(
                "tensor '{}' has shape {dims:?}, but the file holds shape {:?}",
                tensor.name, header.shape
            ),
        ));
    }
    Ok(header.data_bytes)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::network::NetworkBuilder;

    #[test]
    fn copy_tensor_is_one_on_the_diagonal() {
        let mut b = NetworkBuilder::new("t");
        b.default_dim(3, None).unwrap();
        b.tensor("C", &["i", "j", "k"], Some(Values::Fill(Fill::Copy)), None)
            .unwrap();
        let net = b.build().unwrap();
        let v = materialize(&net, 0).unwrap();
        // Delta tensor: ones exactly at (0,0,0), (1,1,1), (2,2,2) = offsets 0, 13, 26.
        let ones: Vec<usize> = (0..27).filter(|&k| v[k].re == 1.0).collect();
        assert_eq!(ones, vec![0, 13, 26]);
        assert_eq!(v.iter().map(|z| z.re).sum::<f64>(), 3.0);
    }

    #[test]
    fn random_fill_is_reproducible() {
        let mut b = NetworkBuilder::new("t");
        b.default_dim(4, None).unwrap();
        b.tensor(
            "R",
            &["i"],
            Some(Values::Fill(Fill::Random { seed: 9 })),
            None,
        )
        .unwrap();
        let net = b.build().unwrap();
        assert_eq!(materialize(&net, 0).unwrap(), materialize(&net, 0).unwrap());
        assert!(materialize(&net, 0)
            .unwrap()
            .iter()
            .all(|z| z.re.abs() <= 1.0));
    }
}
