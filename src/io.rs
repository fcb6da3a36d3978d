//! File helpers: atomic writes (a temporary file in the target's directory,
//! flushed to disk, then renamed over the target, so an interruption never
//! leaves a half-written result behind) and reading our own versioned TOML
//! files with errors that name the line.

use std::io::Write;
use std::path::Path;

use serde::de::DeserializeOwned;

use crate::error::{line_of_offset, Error, Result};

/// Parses TOML text into `T`; a syntax or schema error names the line.
/// `what` names the kind of file, e.g. "plan file".
pub fn parse_toml<T: DeserializeOwned>(text: &str, source: &str, what: &str) -> Result<T> {
    toml::from_str(text).map_err(|e| {
        let line = e.span().map(|s| line_of_offset(text, s.start)).unwrap_or(1);
        Error::at_line(
            source,
            line,
            format!("not a valid {what}: {}", e.message().trim()),
        )
    })
}

/// Checks the `format` tag and `version` of one of our files.
pub fn check_header(
    source: &str,
    what: &str,
    format: &str,
    expected: &str,
    version: u32,
    newest: u32,
) -> Result<()> {
    if format != expected {
        return Err(Error::in_source(
            source,
            format!("format is '{format}', expected '{expected}'"),
        ));
    }
    if version == 0 || version > newest {
        return Err(Error::in_source(
            source,
            format!(
                "{what} version {version} is not supported; this build reads versions 1..={newest}"
            ),
        ));
    }
    Ok(())
}

/// Writes `bytes` to `path` atomically.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    let mut tmp = tempfile::Builder::new()
        .prefix(".sliceplan-")
        .suffix(".tmp")
        .tempfile_in(dir)
        .map_err(|e| Error::write(path, e))?;
    tmp.write_all(bytes).map_err(|e| Error::write(path, e))?;
    tmp.as_file()
        .sync_all()
        .map_err(|e| Error::write(path, e))?;
    tmp.persist(path).map_err(|e| Error::write(path, e.error))?;
    // Make the rename itself durable; failure here loses nothing already
    // written, so it is not an error on file systems that refuse it.
    if let Ok(d) = std::fs::File::open(dir) {
        let _ = d.sync_all();
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    #[test]
    fn writes_and_replaces() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.txt");
        super::write_atomic(&p, b"one").unwrap();
        super::write_atomic(&p, b"two").unwrap();
        assert_eq!(std::fs::read_to_string(&p).unwrap(), "two");
        let leftovers = std::fs::read_dir(dir.path()).unwrap().count();
        assert_eq!(leftovers, 1);
    }
}
