//! The one way the tests run the `sliceplan` binary.

use std::ffi::OsStr;
use std::path::Path;
use std::process::{Command, Output};

/// The binary under test as a command, for tests that set its environment,
/// feed its stdin or kill it.
pub fn binary() -> Command {
    Command::new(env!("CARGO_BIN_EXE_sliceplan"))
}

/// Exit code (`None` when killed by a signal), stdout and stderr of a
/// finished command.
pub fn outcome(out: Output) -> (Option<i32>, String, String) {
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// Runs `sliceplan ARGS` in the current directory.
pub fn run<S: AsRef<OsStr>>(args: &[S]) -> (Option<i32>, String, String) {
    outcome(binary().args(args).output().expect("the binary runs"))
}

/// Runs `sliceplan ARGS` in `dir`.
pub fn run_in<S: AsRef<OsStr>>(dir: &Path, args: &[S]) -> (Option<i32>, String, String) {
    outcome(
        binary()
            .args(args)
            .current_dir(dir)
            .output()
            .expect("the binary runs"),
    )
}
