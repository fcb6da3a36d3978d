//! Reading networks from files and equations, one file per input format.
//!
//! [`load`] picks the reader from the file's extension (or an explicit
//! format name) so every command accepts every input kind.

pub mod einsum;
pub mod native;

use std::path::Path;

use crate::error::{Error, Result};
use crate::network::Network;

/// The input formats [`load`] understands.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Our native TOML network file.
    Native,
}

impl Format {
    /// Guesses the format from a file's extension.
    pub fn from_path(path: &Path) -> Option<Format> {
        match path.extension()?.to_str()?.to_ascii_lowercase().as_str() {
            "toml" => Some(Format::Native),
            _ => None,
        }
    }

    /// Parses a format name given on the command line.
    pub fn from_name(name: &str) -> Result<Format> {
        match name {
            "native" | "toml" => Ok(Format::Native),
            other => Err(Error::usage(format!(
                "unknown input format '{other}'; valid: native"
            ))),
        }
    }
}

/// Options that some input formats need (extended by the format readers).
#[derive(Debug, Clone, Default)]
pub struct LoadOptions {
    /// Force a format instead of guessing from the extension.
    pub format: Option<Format>,
}

/// Reads a network from a file.
pub fn load(path: &Path, options: &LoadOptions) -> Result<Network> {
    let format = match options.format.or_else(|| Format::from_path(path)) {
        Some(f) => f,
        None => {
            return Err(Error::in_source(
                path.display().to_string(),
                "cannot tell the input format from the file name; use a .toml network file or give --format",
            ))
        }
    };
    match format {
        Format::Native => native::read_native(path),
    }
}
