//! The command layer: one function per command, checked and typed options
//! in, a typed report out, and all the orchestration between the stages.
//!
//! | command | function | report |
//! |---|---|---|
//! | `inspect` | [`inspect::inspect`] | [`crate::report::inspect::InspectReport`] |
//! | `plan` | [`plan::plan`] | [`plan::PlanOutcome`] |
//! | `fit` | [`fit::fit`] | [`fit::FitOutcome`] |
//! | `report` | [`report::report`] | [`crate::report::fit::FitReport`] |
//! | `jobs` | [`jobs::write`], [`jobs::status`] | [`jobs::JobsOutcome`], [`jobs::StatusOutcome`] |
//! | `run` | [`run::run`] | [`run::RunOutcome`] |
//! | `gather` | [`gather::gather`] | [`gather::GatherOutcome`] |
//! | `import` | [`import::import`] | [`import::WriteReport`] |
//! | `generate` | [`generate::generate`] | [`import::WriteReport`] |
//! | `calibrate` | [`calibrate::calibrate`] | [`calibrate::CalibrateOutcome`] |
//!
//! The binary only turns arguments into these options, renders the
//! reports and maps errors to exit codes; benchmarks and tests call the
//! same functions. Options are checked (`check` methods, no file touched)
//! before any long work, and every output path is checked before the work
//! that would fill it. Errors name option fields ([`Error::Invalid`]); the
//! binary names the flags. The library never prints: long work reports
//! through [`Hooks`].
//!
//! # Example: plan and slice an einsum network in a few lines
//!
//! ```
//! use sliceplan::command::{fit::{fit, FitOptions}, Hooks, NetworkSource, TreeChoice};
//! use sliceplan::search::SearchOptions;
//!
//! let network = NetworkSource::einsum("ab,bc,cd,de->ae", Some(16), &[]);
//! let mut opts = FitOptions::new(network, TreeChoice::Search(SearchOptions::trials(20, 1)));
//! opts.budget_bytes = Some(64 << 10);
//! let outcome = fit(&opts, &Hooks::quiet()).unwrap();
//! assert!(outcome.report.fits);
//! ```

pub mod calibrate;
pub mod fit;
pub mod gather;
pub mod generate;
pub mod import;
pub mod inspect;
pub mod jobs;
pub mod machines;
mod open;
pub mod plan;
pub mod report;
pub mod run;
mod source;
mod tree_choice;

use std::path::Path;
use std::sync::atomic::AtomicBool;

pub use open::open_plan;
pub use source::NetworkSource;
pub use tree_choice::{Found, TreeChoice};

use crate::error::{Error, Result};

/// What long work reports while it runs.
#[derive(Debug, Clone, Copy)]
pub enum Event<'a> {
    /// The tree search made progress.
    Search(&'a crate::search::Progress),
    /// Slicing started for this many targets (a budget or machines).
    SlicingStarted {
        /// Targets to slice for.
        targets: usize,
    },
    /// Slicing finished.
    SlicingDone,
    /// The executor made progress.
    Run(crate::exec::Progress<'a>),
    /// A calibration made progress.
    Calibrate(crate::calibrate::Progress<'a>),
}

/// The callbacks of a command: progress events, and a flag that asks long
/// work to stop early and keep what it has (Ctrl-C in the binary).
#[derive(Clone, Copy)]
pub struct Hooks<'a> {
    /// Called from worker threads with each event.
    pub progress: &'a (dyn Fn(Event<'_>) + Sync),
    /// Set to stop early.
    pub stop: &'a AtomicBool,
}

static NEVER: AtomicBool = AtomicBool::new(false);

fn ignore(_: Event<'_>) {}

impl Hooks<'static> {
    /// No progress reports, never stopped.
    pub fn quiet() -> Hooks<'static> {
        Hooks {
            progress: &ignore,
            stop: &NEVER,
        }
    }
}

/// Checks, before any work, that a file can be written at `path`: its
/// directory exists and `path` is not a directory. `field` names the option
/// in the error.
pub fn check_output_path(path: &Path, field: &'static str) -> Result<()> {
    if path.as_os_str().is_empty() {
        return Err(Error::invalid(field, "the output path is empty"));
    }
    if path.is_dir() {
        return Err(Error::invalid(
            field,
            format!("{} is a directory; give a file name", path.display()),
        ));
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    };
    match std::fs::metadata(dir) {
        Ok(m) if m.is_dir() => Ok(()),
        Ok(_) => Err(Error::invalid(
            field,
            format!(
                "cannot write {}: {} is not a directory",
                path.display(),
                dir.display()
            ),
        )),
        Err(_) => Err(Error::invalid(
            field,
            format!(
                "cannot write {}: the directory {} does not exist",
                path.display(),
                dir.display()
            ),
        )),
    }
}

/// [`check_output_path`] for an optional path.
pub fn check_optional_output(path: Option<&Path>, field: &'static str) -> Result<()> {
    path.map_or(Ok(()), |p| check_output_path(p, field))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn output_paths_are_checked_before_work() {
        let dir = tempfile::tempdir().unwrap();
        assert!(check_output_path(&dir.path().join("x.toml"), "output").is_ok());
        let e = check_output_path(&dir.path().join("no/such/x.toml"), "output").unwrap_err();
        assert!(e.to_string().contains("does not exist"), "{e}");
        assert!(matches!(
            e,
            Error::Invalid {
                field: "output",
                ..
            }
        ));
        let e = check_output_path(dir.path(), "output").unwrap_err();
        assert!(e.to_string().contains("is a directory"), "{e}");
    }
}
