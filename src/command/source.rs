//! Where a command's network comes from: a file of any input kind (with
//! the options circuits and graphs need), or an einsum equation.

use std::path::{Path, PathBuf};

use crate::error::Result;
use crate::formats::{self, einsum, Format, LoadOptions};
use crate::network::Network;

/// The input network of a command.
#[derive(Debug, Clone)]
pub enum NetworkSource {
    /// A file, read by [`formats::load`].
    File {
        /// The file.
        path: PathBuf,
        /// Format, circuit and graph options.
        load: LoadOptions,
    },
    /// A network already in memory (built by a generator or by the
    /// caller).
    Memory(Box<Network>),
    /// An einsum equation with index dimensions.
    Einsum {
        /// The equation, e.g. `ab,bc->ac`.
        equation: String,
        /// The dimension of every index not in `dims`.
        dim: Option<u64>,
        /// Per-index dimensions.
        dims: Vec<(String, u64)>,
    },
}

impl NetworkSource {
    /// A file with default load options.
    pub fn file(path: impl Into<PathBuf>) -> NetworkSource {
        NetworkSource::File {
            path: path.into(),
            load: LoadOptions::default(),
        }
    }

    /// An einsum equation.
    pub fn einsum(equation: &str, dim: Option<u64>, dims: &[(String, u64)]) -> NetworkSource {
        NetworkSource::Einsum {
            equation: equation.to_string(),
            dim,
            dims: dims.to_vec(),
        }
    }

    /// Reads (or builds) the network.
    pub fn load(&self) -> Result<Network> {
        match self {
            NetworkSource::File { path, load } => formats::load(path, load),
            NetworkSource::Einsum {
                equation,
                dim,
                dims,
            } => einsum::network_from_einsum(equation, *dim, dims),
            NetworkSource::Memory(net) => Ok((**net).clone()),
        }
    }

    /// The input file, when there is one.
    pub fn path(&self) -> Option<&Path> {
        match self {
            NetworkSource::File { path, .. } => Some(path),
            NetworkSource::Einsum { .. } | NetworkSource::Memory(_) => None,
        }
    }

    /// The file, when it is a native network file that a plan can refer
    /// to as it is (any other input is written beside the plan first).
    pub fn native_path(&self) -> Option<&Path> {
        match self {
            NetworkSource::File { path, load } => {
                let format = load.format.or_else(|| Format::from_path(path));
                (format == Some(Format::Native)).then_some(path.as_path())
            }
            NetworkSource::Einsum { .. } | NetworkSource::Memory(_) => None,
        }
    }
}
