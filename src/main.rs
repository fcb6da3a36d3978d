//! The `sliceplan` binary: parse the command line, run the command, print its
//! output, map errors to exit codes (0 ok, 1 cannot be done as asked, 2 bad
//! input or usage, 3 fits but impractical).

mod cli;

use std::io::Write;
use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(outcome) => {
            let mut out = std::io::stdout().lock();
            // A closed pipe (e.g. `| head`) is not an error worth a panic.
            let _ = out
                .write_all(outcome.stdout.as_bytes())
                .and_then(|_| out.flush());
            ExitCode::from(outcome.code)
        }
        Err(err) => {
            // The library's message already carries the OS error of an I/O
            // failure; printing its source chain too would repeat it.
            let (text, code) = cli::report_error(&err);
            eprintln!("sliceplan: {text}");
            ExitCode::from(code)
        }
    }
}
