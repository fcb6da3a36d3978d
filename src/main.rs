//! The `sliceplan` binary: parse the command line, run the command, print its
//! output, map errors to exit codes (0 ok, 1 cannot be done as asked, 2 bad
//! input or usage).

use std::io::Write;
use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let cli = sliceplan::cli::Cli::parse();
    match sliceplan::cli::run(cli) {
        Ok(outcome) => {
            let mut out = std::io::stdout().lock();
            // A closed pipe (e.g. `| head`) is not an error worth a panic.
            let _ = out
                .write_all(outcome.stdout.as_bytes())
                .and_then(|_| out.flush());
            ExitCode::from(outcome.code)
        }
        Err(err) => {
            let code = err.exit_code();
            // The library's message already carries the OS error of an I/O
            // failure; printing the source chain too would repeat it.
            eprintln!("sliceplan: {err}");
            ExitCode::from(code)
        }
    }
}
