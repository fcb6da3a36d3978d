//! The command-line interface: argument definitions and the glue that turns
//! them into library calls. No algorithm lives here.
//!
//! Each command has a file holding its clap arguments and a `run` function
//! that validates them (cheaply, before any long work), calls the library and
//! returns what to print on stdout with the exit code.

mod budget_args;
mod fit;
mod gather;
mod generate;
mod import;
mod inspect;
mod jobs;
mod net_args;
mod plan;
mod plan_files;
mod report;
mod run;
mod search_args;
mod tree_source;

use clap::{Parser, Subcommand};

pub use net_args::NetArgs;
pub use plan::{PlanArgs, PlanOptions};
pub use search_args::parse_duration;

use crate::error::Result;

/// What a command produced: text for stdout and the exit code.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Outcome {
    /// Everything the command prints on stdout.
    pub stdout: String,
    /// The process exit code (0 ok, 1 cannot be done as asked).
    pub code: u8,
}

impl Outcome {
    /// A successful outcome printing `stdout`.
    pub fn ok(stdout: String) -> Outcome {
        Outcome { stdout, code: 0 }
    }
}

/// sliceplan: memory-budget slicing advisor for tensor-network contraction.
///
/// Exit codes: 0 success, 1 the job cannot be done as asked (e.g. it cannot
/// fit the budget), 2 bad input or usage.
#[derive(Debug, Parser)]
#[command(name = "sliceplan", version, about, long_about = None, max_term_width = 100)]
pub struct Cli {
    /// The command to run.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Summarise a network and price a contraction tree.
    #[command(after_help = inspect::EXAMPLES)]
    Inspect(inspect::InspectArgs),
    /// Search for a contraction tree; with a budget, slice it and write a plan.
    #[command(after_help = plan::EXAMPLES)]
    Plan(plan::PlanArgs),
    /// Will it fit the budget? With how many slices, at what overhead?
    #[command(after_help = fit::EXAMPLES)]
    Fit(fit::FitArgs),
    /// Re-render a plan (text, JSON, CSV, SVG, steps) without searching.
    #[command(after_help = report::EXAMPLES)]
    Report(report::ReportArgs),
    /// Write a plan's chunks as a Slurm job array; --status lists what to resubmit.
    #[command(after_help = jobs::EXAMPLES)]
    Jobs(jobs::JobsArgs),
    /// Contract slices of a plan on this machine and write their partials.
    #[command(after_help = run::EXAMPLES)]
    Run(run::RunArgs),
    /// Check the partials of a plan, sum them and print the result.
    #[command(after_help = gather::EXAMPLES)]
    Gather(gather::GatherArgs),
    /// Read a circuit, formula, graph or network and write it as a native
    /// network file with its values.
    #[command(after_help = import::EXAMPLES)]
    Import(import::ImportArgs),
    /// Write a demo or benchmark network (lattice, regular graph, brickwork
    /// circuit, matrix chain) as a native network file.
    #[command(after_help = generate::EXAMPLES)]
    Generate(generate::GenerateArgs),
}

/// Runs a parsed command line.
pub fn run(cli: Cli) -> Result<Outcome> {
    match cli.command {
        Command::Inspect(args) => inspect::run(args),
        Command::Plan(args) => plan::run(args),
        Command::Fit(args) => fit::run(args),
        Command::Report(args) => report::run(args),
        Command::Jobs(args) => jobs::run(args),
        Command::Run(args) => run::run(args),
        Command::Gather(args) => gather::run(args),
        Command::Import(args) => import::run(args),
        Command::Generate(args) => generate::run(args),
    }
}

/// Prints JSON for `--json` output (one object, newline-terminated).
pub(crate) fn to_json<T: serde::Serialize>(value: &T) -> String {
    let mut s = serde_json::to_string_pretty(value).expect("reports always serialise");
    s.push('\n');
    s
}

#[cfg(test)]
mod tests {
    use clap::CommandFactory;

    #[test]
    fn cli_definition_is_consistent() {
        super::Cli::command().debug_assert();
    }
}
