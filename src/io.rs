//! File helpers: atomic writes (a temporary file in the target's directory,
//! flushed to disk, then renamed over the target, so an interruption never
//! leaves a half-written result behind) and reading our own versioned TOML
//! files with errors that name the line.

use std::io::Write;
use std::path::Path;

use serde::de::DeserializeOwned;

use crate::error::{line_of_offset, Error, Result};

/// The largest text input file read: networks, circuits, formulas,
/// graphs, trees, plans. Far above any real input (a 10^6-tensor lattice in
/// the native format is 156 MB); a larger file is refused before it is
/// read, so a wrong path (a disk image, a log) cannot exhaust memory.
pub const MAX_TEXT_INPUT_BYTES: u64 = 2 << 30;

/// Reads a text input file: a regular file of at most
/// [`MAX_TEXT_INPUT_BYTES`], valid UTF-8 (an error names the line of the
/// first bad byte), with a leading UTF-8 byte-order mark removed.
pub fn read_text(path: &Path) -> Result<String> {
    let source = path.display().to_string();
    let meta = std::fs::metadata(path).map_err(|e| Error::read(path, e))?;
    if meta.is_dir() {
        return Err(Error::in_source(source, "is a directory, not a file"));
    }
    if meta.is_file() && meta.len() > MAX_TEXT_INPUT_BYTES {
        return Err(Error::in_source(
            source,
            format!(
                "the file holds {} bytes; input files of up to {MAX_TEXT_INPUT_BYTES} bytes (2 GiB) are read",
                meta.len()
            ),
        ));
    }
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| {
            use std::io::Read;
            f.take(MAX_TEXT_INPUT_BYTES + 1).read_to_end(&mut bytes)
        })
        .map_err(|e| Error::read(path, e))?;
    if bytes.len() as u64 > MAX_TEXT_INPUT_BYTES {
        return Err(Error::in_source(
            source,
            format!(
                "more than {MAX_TEXT_INPUT_BYTES} bytes (2 GiB) of input; is this the right file?"
            ),
        ));
    }
    text_from_bytes(bytes, &source)
}

/// Checks that `bytes` are UTF-8 text (naming the line of the first bad
/// byte) and drops a leading byte-order mark.
pub fn text_from_bytes(bytes: Vec<u8>, source: &str) -> Result<String> {
    let mut text = String::from_utf8(bytes).map_err(|e| {
        let offset = e.utf8_error().valid_up_to();
        let line = e.as_bytes()[..offset]
            .iter()
            .filter(|&&b| b == b'\n')
            .count()
            + 1;
        Error::at_line(
            source,
            line,
            "the file is not UTF-8 text (is it a binary or compressed file?)",
        )
    })?;
    if let Some(nul) = text.find('\0') {
        return Err(Error::at_line(
            source,
            crate::error::line_of_offset(&text, nul),
            "the file holds a NUL byte, so it is not a text file (is it a binary or compressed file?)",
        ));
    }
    if text.starts_with('\u{feff}') {
        text.drain(..'\u{feff}'.len_utf8());
    }
    Ok(text)
}

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
    let mut builder = tempfile::Builder::new();
    builder.prefix(".sliceplan-").suffix(".tmp");
    // Created as a normal file would be (0666 less the umask), not 0600:
    // plans and job directories are shared on cluster file systems.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        builder.permissions(std::fs::Permissions::from_mode(0o666));
    }
    let mut tmp = builder
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
    #[cfg(unix)]
    #[test]
    fn written_files_follow_the_umask() {
        use std::os::unix::fs::PermissionsExt;
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("x.toml");
        super::write_atomic(&path, b"x").unwrap();
        let mode = std::fs::metadata(&path).unwrap().permissions().mode() & 0o777;
        // The process umask, read by setting and restoring it.
        let umask = unsafe {
            let m = libc::umask(0o022);
            libc::umask(m);
            m
        } as u32;
        assert_eq!(mode, 0o666 & !umask, "mode {mode:o}, umask {umask:o}");
    }

    #[test]
    fn text_drops_a_byte_order_mark_and_refuses_binary() {
        let t = super::text_from_bytes(b"\xef\xbb\xbfp cnf 1 1\n1 0\n".to_vec(), "f.cnf").unwrap();
        assert_eq!(t, "p cnf 1 1\n1 0\n");
        let e = super::text_from_bytes(b"ok\nbad \xff\n".to_vec(), "f.cnf").unwrap_err();
        assert!(
            e.to_string()
                .starts_with("f.cnf:2: the file is not UTF-8 text"),
            "{e}"
        );
        let e = super::text_from_bytes(b"a\n\nb\0c".to_vec(), "f.cnf").unwrap_err();
        assert!(
            e.to_string()
                .starts_with("f.cnf:3: the file holds a NUL byte"),
            "{e}"
        );
    }

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
