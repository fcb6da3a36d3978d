//! The one way the tests run the `sliceplan` binary.

use std::ffi::OsStr;
use std::path::Path;
use std::process::{Command, Output};

/// The binary under test as a command, for tests that set its environment,
/// feed its stdin or kill it. It sees no machine profiles of the user's or
/// this host's (a calibrated profile of this host would change what `jobs`
/// and `fit` print); a test that wants some sets `SLICEPLAN_MACHINES`.
pub fn binary() -> Command {
    let mut command = Command::new(env!("CARGO_BIN_EXE_sliceplan"));
    command
        .env(
            "XDG_CONFIG_HOME",
            std::env::temp_dir().join("sliceplan-tests-without-profiles"),
        )
        .env_remove("SLICEPLAN_MACHINES");
    command
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
