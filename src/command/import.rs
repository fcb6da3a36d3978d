//! `import`: read any input kind and write it as a native network file with
//! its values, so plans and jobs refer to one stable file; and the report
//! that `import` and `generate` share.

use std::path::{Path, PathBuf};

use serde::Serialize;

use super::{check_output_path, NetworkSource};
use crate::error::{Error, Result};
use crate::formats::write::{write_native, WriteOptions, Written};
use crate::network::Network;

/// Options of `import`.
#[derive(Debug, Clone)]
pub struct ImportOptions {
    /// The input.
    pub network: NetworkSource,
    /// The network file to write (`.toml`).
    pub output: PathBuf,
    /// Tensors with more elements than this go to `.npy` side files.
    pub inline_max: usize,
}

/// What `import` and `generate` wrote.
#[derive(Debug, Clone, Serialize)]
pub struct WriteReport {
    /// The network's name.
    pub name: String,
    /// Tensors.
    pub tensors: usize,
    /// Indices.
    pub indices: usize,
    /// Open indices.
    pub open: usize,
    /// True when every tensor has values.
    pub has_values: bool,
    /// The files written and the fingerprint.
    #[serde(flatten)]
    pub written: Written,
}

impl WriteReport {
    /// The report for `net` written as `written`.
    pub fn new(net: &Network, written: Written) -> WriteReport {
        WriteReport {
            name: net.name.clone(),
            tensors: net.num_tensors(),
            indices: net.num_indices(),
            open: net.open.len(),
            has_values: net.has_values(),
            written,
        }
    }

    /// One line for people.
    pub fn to_text(&self) -> String {
        let side = match self.written.npy_files.len() {
            0 => String::new(),
            n => format!(", {n} .npy side file(s)"),
        };
        format!(
            "wrote {}: {}, {} tensors, {} indices, {} open{side}, fingerprint {}\n",
            self.written.path.display(),
            self.name,
            self.tensors,
            self.indices,
            self.open,
            self.written.fingerprint
        )
    }
}

/// Checks an output network path before any work: a `.toml` file in an
/// existing directory that is not the input.
pub(super) fn check_network_output(output: &Path, input: Option<&Path>) -> Result<()> {
    if output.extension().and_then(|e| e.to_str()) != Some("toml") {
        return Err(Error::invalid(
            "output",
            format!("{}: the network file must end in .toml", output.display()),
        ));
    }
    if input.is_some_and(|i| i == output) {
        return Err(Error::invalid(
            "output",
            "names the input file; choose another output",
        ));
    }
    check_output_path(output, "output")
}

/// Runs `import`.
pub fn import(opts: &ImportOptions) -> Result<WriteReport> {
    check_network_output(&opts.output, opts.network.path())?;
    let net = opts.network.load()?;
    let written = write_native(
        &net,
        &opts.output,
        &WriteOptions {
            inline_max: opts.inline_max,
        },
    )?;
    Ok(WriteReport::new(&net, written))
}
