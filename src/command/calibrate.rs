//! `calibrate`: measure this node and write its machine profile.
//!
//! Where the profile goes: `output` is a file path (it has a `/` or ends in
//! `.toml`), or a bare name, which writes `NAME.toml` into the user's
//! profile directory ([`super::machines::user_profile_dir`]) so that
//! `--machine NAME` finds it from any directory. Without `output`, the
//! name is this host's name. The profile's `name` is the file's stem
//! unless given.

use std::path::PathBuf;

use serde::Serialize;

use super::machines::{is_name, user_profile_dir};
use super::{check_output_path, Event, Hooks};
use crate::calibrate::{calibrate as measure, NodeFacts, Settings};
use crate::cost::machine::Machine;
use crate::error::{Error, Result};

/// Options of `calibrate`.
#[derive(Debug, Clone, Default)]
pub struct CalibrateOptions {
    /// A file path or a bare profile name (see the module docs).
    pub output: Option<String>,
    /// The profile's name (default: the file's stem).
    pub name: Option<String>,
    /// Measure at most this many threads (default: every core this process may use).
    pub max_threads: Option<u64>,
    /// A rough measurement in well under a second, for tests and demos.
    pub quick: bool,
}

impl CalibrateOptions {
    /// Where the profile will be written and its name; checks the path.
    pub fn destination(&self) -> Result<(PathBuf, String)> {
        if self.max_threads == Some(0) {
            return Err(Error::invalid("max_threads", "give at least 1 thread"));
        }
        let spec = match &self.output {
            Some(o) => o.clone(),
            None => sanitize(&crate::calibrate::read_node().host),
        };
        let path = if is_name(&spec) {
            let dir = user_profile_dir().ok_or_else(|| {
                Error::invalid(
                    "output",
                    "no user profile directory ($HOME and $XDG_CONFIG_HOME are unset); give a file path",
                )
            })?;
            std::fs::create_dir_all(&dir).map_err(|e| Error::write(&dir, e))?;
            dir.join(format!("{spec}.toml"))
        } else {
            PathBuf::from(&spec)
        };
        check_output_path(&path, "output")?;
        let name = match &self.name {
            Some(n) if is_name(n) => n.clone(),
            Some(n) => {
                return Err(Error::invalid(
                    "name",
                    format!("'{n}' is not a profile name; use letters, digits, '-', '_' and '.'"),
                ))
            }
            None => path
                .file_stem()
                .and_then(|s| s.to_str())
                .map(sanitize)
                .unwrap_or_else(|| "calibrated".into()),
        };
        Ok((path, name))
    }
}

/// A host or file name as a profile name.
fn sanitize(s: &str) -> String {
    let n: String = s
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '-'
            }
        })
        .collect();
    if n.is_empty() {
        "calibrated".into()
    } else {
        n
    }
}

/// What `calibrate` wrote.
#[derive(Debug, Clone, Serialize)]
pub struct CalibrateOutcome {
    /// The profile file.
    pub path: PathBuf,
    /// True when it replaced an existing file.
    pub replaced: bool,
    /// The profile.
    pub machine: Machine,
    /// Cores and memory as the operating system gave them.
    #[serde(skip)]
    pub node: NodeFacts,
}

/// Runs `calibrate`.
pub fn calibrate(opts: &CalibrateOptions, hooks: &Hooks<'_>) -> Result<CalibrateOutcome> {
    let (path, name) = opts.destination()?;
    let mut settings = if opts.quick {
        Settings::quick(&name)
    } else {
        Settings::full(&name)
    };
    if opts.max_threads.is_some() {
        settings.max_threads = opts.max_threads;
    }
    let progress = |p: crate::calibrate::Progress<'_>| (hooks.progress)(Event::Calibrate(p));
    let done = measure(&settings, &progress, hooks.stop)?;
    let replaced = path.exists();
    crate::io::write_atomic(&path, done.profile_text.as_bytes())?;
    Ok(CalibrateOutcome {
        path,
        replaced,
        machine: done.machine,
        node: done.node,
    })
}
