//! Atomic file writes: a temporary file in the target's directory, flushed to
//! disk, then renamed over the target, so an interruption never leaves a
//! half-written result behind.

use std::io::Write;
use std::path::Path;

use crate::error::{Error, Result};

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
