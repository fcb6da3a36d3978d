//! The arguments every command uses to name its input network.

use std::path::PathBuf;

use clap::Args;

use crate::error::{Error, Result};
use crate::formats::{self, einsum, Format, LoadOptions};
use crate::network::Network;

/// Where the network comes from: a file, or an einsum equation.
#[derive(Debug, Clone, Args)]
pub struct NetArgs {
    /// Network file (.toml native network).
    #[arg(value_name = "NET", required_unless_present = "einsum")]
    pub net: Option<PathBuf>,

    /// An einsum equation instead of a file, e.g. "ab,bc,cd->ad".
    #[arg(long, value_name = "EQ", conflicts_with = "net")]
    pub einsum: Option<String>,

    /// Dimension of every einsum index not named in --dims.
    #[arg(long, value_name = "D", requires = "einsum")]
    pub dim: Option<u64>,

    /// Per-index einsum dimensions, e.g. a=30,b=35.
    #[arg(long, value_name = "LIST", requires = "einsum")]
    pub dims: Option<String>,

    /// Input format when the extension does not tell (native).
    #[arg(long, value_name = "FMT")]
    pub format: Option<String>,
}

impl NetArgs {
    /// Checks the arguments without touching any file.
    pub fn validate(&self) -> Result<()> {
        if let Some(d) = &self.dims {
            einsum::parse_dims(d).map_err(|m| Error::usage(format!("--dims: {m}")))?;
        }
        if let Some(f) = &self.format {
            Format::from_name(f)?;
        }
        Ok(())
    }

    /// Reads the network.
    pub fn load(&self) -> Result<Network> {
        if let Some(eq) = &self.einsum {
            let dims = match &self.dims {
                Some(d) => {
                    einsum::parse_dims(d).map_err(|m| Error::usage(format!("--dims: {m}")))?
                }
                None => Vec::new(),
            };
            return einsum::network_from_einsum(eq, self.dim, &dims);
        }
        let path = self
            .net
            .as_ref()
            .ok_or_else(|| Error::usage("give a network file or --einsum"))?;
        let options = LoadOptions {
            format: self.format.as_deref().map(Format::from_name).transpose()?,
        };
        formats::load(path, &options)
    }
}
