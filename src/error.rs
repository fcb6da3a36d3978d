//! The library's typed error and the exit codes the binary maps it to.
//!
//! Every error that comes from the user's input names where it was found
//! (file, line, item) and what would have been valid, so the binary can print
//! it once and exit with code 2. Errors that mean "this cannot be done as
//! asked" (a network that cannot fit any budget, an incomplete gather) exit 1.

use std::fmt;
use std::path::{Path, PathBuf};

/// Result alias used across the library.
pub type Result<T, E = Error> = std::result::Result<T, E>;

/// Exit code for success.
pub const EXIT_OK: u8 = 0;
/// Exit code when the job cannot be done as asked (e.g. it cannot fit).
pub const EXIT_CANNOT: u8 = 1;
/// Exit code for bad input or usage.
pub const EXIT_BAD_INPUT: u8 = 2;
/// Exit code when a plan fits but is impractical (too many slices or too
/// much wall time for the target's limits).
pub const EXIT_IMPRACTICAL: u8 = 3;

/// Where in the input an error was found.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Location {
    /// The file (or a label such as `--einsum`) the input came from.
    pub source: String,
    /// 1-based line number, when known.
    pub line: Option<usize>,
}

impl Location {
    /// A location naming only the source.
    pub fn source(source: impl Into<String>) -> Self {
        Location {
            source: source.into(),
            line: None,
        }
    }

    /// A location naming the source and a 1-based line.
    pub fn line(source: impl Into<String>, line: usize) -> Self {
        Location {
            source: source.into(),
            line: Some(line),
        }
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(line) => write!(f, "{}:{}", self.source, line),
            None => write!(f, "{}", self.source),
        }
    }
}

/// The library's error type.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// Input that is malformed or inconsistent (exit code 2).
    #[error("{location}: {message}")]
    Input {
        /// Where the bad input is.
        location: Location,
        /// What is wrong and what would be valid.
        message: String,
    },
    /// A bad command-line value or combination of options (exit code 2).
    #[error("{0}")]
    Usage(String),
    /// A bad value of one named option (exit code 2). `field` is the
    /// option's name in the library's option structs (for instance
    /// `"time"` of the search options); the binary prints the flag that
    /// sets it, so library messages never speak in flags.
    #[error("{field}: {message}")]
    Invalid {
        /// The option's field name.
        field: &'static str,
        /// What is wrong and what would be valid.
        message: String,
    },
    /// A file could not be read or written.
    #[error("{path}: {action}: {source}")]
    Io {
        /// The file concerned.
        path: PathBuf,
        /// What was being done ("cannot read", "cannot write", ...).
        action: &'static str,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
    /// The job cannot be done as asked (exit code 1). A message that
    /// points to an option writes "the `field` option"; the binary puts the
    /// flag there.
    #[error("{0}")]
    Cannot(String),
}

impl Error {
    /// An input error at a location.
    pub fn input(location: Location, message: impl Into<String>) -> Self {
        Error::Input {
            location,
            message: message.into(),
        }
    }

    /// An input error in a source without a known line.
    pub fn in_source(source: impl Into<String>, message: impl Into<String>) -> Self {
        Error::input(Location::source(source), message)
    }

    /// An input error at a 1-based line of a source.
    pub fn at_line(source: impl Into<String>, line: usize, message: impl Into<String>) -> Self {
        Error::input(Location::line(source, line), message)
    }

    /// A bad value of the option `field` (see [`Error::Invalid`]).
    pub fn invalid(field: &'static str, message: impl Into<String>) -> Self {
        Error::Invalid {
            field,
            message: message.into(),
        }
    }

    /// A usage error.
    pub fn usage(message: impl Into<String>) -> Self {
        Error::Usage(message.into())
    }

    /// A failure to read a file (the input is unusable, so exit code 2).
    pub fn read(path: &Path, source: std::io::Error) -> Self {
        Error::Io {
            path: path.to_path_buf(),
            action: "cannot read",
            source,
        }
    }

    /// A failure to write a file.
    pub fn write(path: &Path, source: std::io::Error) -> Self {
        Error::Io {
            path: path.to_path_buf(),
            action: "cannot write",
            source,
        }
    }

    /// The process exit code this error maps to.
    pub fn exit_code(&self) -> u8 {
        match self {
            Error::Input { .. } | Error::Usage(_) | Error::Invalid { .. } => EXIT_BAD_INPUT,
            Error::Io { action, .. } if *action == "cannot read" => EXIT_BAD_INPUT,
            Error::Io { .. } | Error::Cannot(_) => EXIT_CANNOT,
        }
    }
}

/// Line numbers of byte offsets in one text, each found by binary search
/// over the line starts (counting newlines from the start for every item
/// made reading a million-tensor file quadratic).
#[derive(Debug, Clone)]
pub struct LineIndex {
    newlines: Vec<usize>,
}

impl LineIndex {
    /// Indexes the newlines of `text`.
    pub fn new(text: &str) -> LineIndex {
        LineIndex {
            newlines: newline_offsets(text.as_bytes()),
        }
    }

    /// The 1-based line that `offset` falls on.
    pub fn line(&self, offset: usize) -> usize {
        self.newlines.partition_point(|&n| n < offset) + 1
    }
}

fn newline_offsets(bytes: &[u8]) -> Vec<usize> {
    bytes
        .iter()
        .enumerate()
        .filter_map(|(i, &b)| (b == b'\n').then_some(i))
        .collect()
}

/// The 1-based line that a byte offset falls on.
pub fn line_of_offset(text: &str, offset: usize) -> usize {
    let end = offset.min(text.len());
    text.as_bytes()[..end]
        .iter()
        .filter(|&&b| b == b'\n')
        .count()
        + 1
}

#[cfg(test)]
mod tests {
    #[test]
    fn line_index_agrees_with_counting() {
        let text = "a\nbb\n\nccc\n";
        let index = super::LineIndex::new(text);
        for offset in 0..=text.len() + 2 {
            assert_eq!(
                index.line(offset),
                super::line_of_offset(text, offset),
                "{offset}"
            );
        }
    }

    use super::*;

    #[test]
    fn line_numbers_are_one_based() {
        let text = "a\nbb\nccc";
        assert_eq!(line_of_offset(text, 0), 1);
        assert_eq!(line_of_offset(text, 2), 2);
        assert_eq!(line_of_offset(text, 5), 3);
        assert_eq!(line_of_offset(text, 99), 3);
    }

    #[test]
    fn exit_codes() {
        assert_eq!(Error::usage("x").exit_code(), EXIT_BAD_INPUT);
        assert_eq!(Error::Cannot("x".into()).exit_code(), EXIT_CANNOT);
        let e = Error::at_line("net.toml", 3, "unknown index 'q'");
        assert_eq!(e.to_string(), "net.toml:3: unknown index 'q'");
    }
}
