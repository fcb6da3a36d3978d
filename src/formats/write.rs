//! Writing a network as a native TOML file, with tensor values inline when
//! small and in `.npy` side files (numpy's documented format) when large.
//!
//! Side files go to the folder `<stem>.data/` next to the network file and
//! are named by tensor position (`0.npy`, `1.npy`, ...); the TOML refers to
//! them by relative path. Every file is written atomically, side files
//! first, so a network file never names a side file that is not complete.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::native::{NETWORK_FORMAT, NETWORK_VERSION};
use crate::error::{Error, Result};
use crate::network::{values::materialize, Fill, Network, Values};

/// Tensors with at most this many elements are written inline by default.
pub const DEFAULT_INLINE_MAX: usize = 256;

/// How to write a network.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct WriteOptions {
    /// Tensors with more elements than this go to `.npy` side files.
    pub inline_max: usize,
}

impl Default for WriteOptions {
    fn default() -> Self {
        WriteOptions {
            inline_max: DEFAULT_INLINE_MAX,
        }
    }
}

/// What [`write_native`] wrote.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Written {
    /// The network file.
    pub path: PathBuf,
    /// The `.npy` side files, in tensor order.
    pub npy_files: Vec<PathBuf>,
    /// The network's structure fingerprint.
    pub fingerprint: String,
}

#[derive(Serialize)]
struct OutFile<'a> {
    format: &'a str,
    version: u32,
    name: &'a str,
    #[serde(skip_serializing_if = "Option::is_none")]
    dtype: Option<&'a str>,
    open: Vec<&'a str>,
    indices: BTreeMap<&'a str, Dim>,
    tensor: Vec<OutTensor<'a>>,
}

#[derive(Serialize)]
#[serde(untagged)]
enum Dim {
    Int(i64),
    Text(String),
}

#[derive(Serialize, Default)]
struct OutTensor<'a> {
    name: &'a str,
    indices: Vec<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    values: Option<Vec<f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    imag: Option<Vec<f64>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    npy: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    fill: Option<&'static str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    seed: Option<i64>,
}

/// Writes `net` to `path` (a `.toml` file) with its values.
pub fn write_native(net: &Network, path: &Path, options: &WriteOptions) -> Result<Written> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .ok_or_else(|| Error::usage(format!("{}: not a file name", path.display())))?;
    let data_rel = format!("{stem}.data");
    let mut npy_files = Vec::new();
    let mut tensors = Vec::with_capacity(net.num_tensors());
    for (t, tensor) in net.tensors.iter().enumerate() {
        let mut out = OutTensor {
            name: &tensor.name,
            indices: tensor
                .indices
                .iter()
                .map(|&e| net.indices[e].name.as_str())
                .collect(),
            ..OutTensor::default()
        };
        let size = net.tensor_size(t).unwrap_or(u128::MAX);
        let inline = size <= options.inline_max as u128;
        match &tensor.values {
            None => {}
            Some(Values::Fill(Fill::Ones)) => out.fill = Some("ones"),
            Some(Values::Fill(Fill::Copy)) => out.fill = Some("copy"),
            Some(Values::Fill(Fill::Random { seed })) if i64::try_from(*seed).is_ok() => {
                out.fill = Some("random");
                out.seed = Some(*seed as i64);
            }
            Some(Values::Inline { re, im }) if inline => {
                out.values = Some(re.clone());
                out.imag = im.clone();
            }
            Some(_) => {
                let values = materialize(net, t)?;
                if inline {
                    out.values = Some(values.iter().map(|z| z.re).collect());
                    if values.iter().any(|z| z.im != 0.0) {
                        out.imag = Some(values.iter().map(|z| z.im).collect());
                    }
                } else {
                    let rel = format!("{data_rel}/{t}.npy");
                    let file = dir.join(&rel);
                    if npy_files.is_empty() {
                        std::fs::create_dir_all(dir.join(&data_rel))
                            .map_err(|e| Error::write(&dir.join(&data_rel), e))?;
                    }
                    let shape: Vec<u64> =
                        tensor.indices.iter().map(|&e| net.indices[e].dim).collect();
                    crate::npy::write_npy(&file, &shape, &values)?;
                    npy_files.push(file);
                    out.npy = Some(rel);
                }
            }
        }
        tensors.push(out);
    }
    let file = OutFile {
        format: NETWORK_FORMAT,
        version: NETWORK_VERSION,
        name: &net.name,
        dtype: net.dtype.map(|d| d.name()),
        open: net
            .open
            .iter()
            .map(|&e| net.indices[e].name.as_str())
            .collect(),
        indices: net
            .indices
            .iter()
            .map(|i| {
                let dim = match i64::try_from(i.dim) {
                    Ok(d) => Dim::Int(d),
                    Err(_) => Dim::Text(i.dim.to_string()),
                };
                (i.name.as_str(), dim)
            })
            .collect(),
        tensor: tensors,
    };
    let mut text = format!(
        "# Network written by sliceplan {}; structure fingerprint {}.\n",
        env!("CARGO_PKG_VERSION"),
        net.fingerprint()
    );
    text.push_str(
        &toml::to_string(&file)
            .map_err(|e| Error::Cannot(format!("cannot encode the network as TOML: {e}")))?,
    );
    crate::io::write_atomic(path, text.as_bytes())?;
    Ok(Written {
        path: path.to_path_buf(),
        npy_files,
        fingerprint: net.fingerprint(),
    })
}
