//! The command line: clap definitions, the conversion of arguments into the
//! library's checked options, the rendering of its reports, and the exit
//! codes. No rule of the product lives here; each command is one call
//! into `sliceplan::command`.

mod args;
mod calibrate;
mod fit;
mod gather;
mod generate;
mod import;
mod inspect;
mod jobs;
mod plan;
mod progress;
mod report;
mod run;

use clap::{Parser, Subcommand};

use sliceplan::error::{Error, Result};

/// Exit code: the job cannot be done as asked (for example it cannot fit).
pub const EXIT_CANNOT: u8 = sliceplan::error::EXIT_CANNOT;

/// What a command produced: text for stdout and the exit code.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Outcome {
    /// Everything the command prints on stdout.
    pub stdout: String,
    /// The process exit code (0 ok, 1 cannot be done as asked, 3 fits but
    /// impractical).
    pub code: u8,
}

impl Outcome {
    /// Text or JSON, with an exit code.
    pub fn render<T: serde::Serialize>(json: bool, value: &T, text: String, code: u8) -> Outcome {
        Outcome {
            stdout: if json {
                sliceplan::report::to_json(value)
            } else {
                text
            },
            code,
        }
    }
}

/// sliceplan: memory-budget slicing advisor for tensor-network contraction.
///
/// Exit codes: 0 success, 1 the job cannot be done as asked (e.g. it cannot
/// fit the budget), 2 bad input or usage, 3 it fits but is impractical (see
/// `fit --help`).
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
    /// Measure this node (the executor's rates per thread count, memory
    /// bandwidth, overhead, cores, memory) and write its machine profile.
    #[command(after_help = calibrate::EXAMPLES)]
    Calibrate(calibrate::CalibrateArgs),
}

/// Runs a parsed command line. Library errors travel inside the
/// `anyhow::Error` and keep their type (see [`report_error`]).
pub fn run(cli: Cli) -> anyhow::Result<Outcome> {
    Ok(dispatch(cli)?)
}

fn dispatch(cli: Cli) -> Result<Outcome> {
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
        Command::Calibrate(args) => calibrate::run(args),
    }
}

/// The flag that sets a library option field.
fn flag(field: &str) -> String {
    match field {
        "output" => "-o/--output".into(),
        "budget_bytes" => "--budget".into(),
        "machines" => "--machine".into(),
        "amplitude" => "--bitstring/--open".into(),
        "time" => "--time".into(),
        "finders" => "--objective".into(),
        "network" => "--network".into(),
        "plan" => "PLAN".into(),
        other => format!("--{}", other.replace('_', "-")),
    }
}

/// What to print for an error and the exit code: a library error by its
/// kind ([`Error::exit_code`]) with options named by their flags; anything
/// else with its whole cause chain, exit code 1.
pub fn report_error(err: &anyhow::Error) -> (String, u8) {
    match err.downcast_ref::<Error>() {
        Some(e) => (message(e), e.exit_code()),
        None => (format!("{err:#}"), EXIT_CANNOT),
    }
}

/// The message printed for an error: options are named by their flags,
/// both the option an error is about and any "the `field` option" the
/// library's message points to.
pub fn message(err: &Error) -> String {
    let text = match err {
        Error::Invalid { field, message } => format!("{}: {message}", flag(field)),
        other => other.to_string(),
    };
    let mut out = String::with_capacity(text.len());
    let mut rest = text.as_str();
    while let Some(start) = rest.find("the `") {
        let after = &rest[start + 5..];
        match after.find("` option") {
            Some(end)
                if after[..end]
                    .chars()
                    .all(|c| c.is_ascii_lowercase() || c == '_') =>
            {
                out.push_str(&rest[..start]);
                out.push_str(&flag(&after[..end]));
                rest = &after[end + "` option".len()..];
            }
            _ => {
                out.push_str(&rest[..start + 5]);
                rest = after;
            }
        }
    }
    out.push_str(rest);
    out
}

#[cfg(test)]
mod tests {
    use clap::CommandFactory;

    #[test]
    fn cli_definition_is_consistent() {
        super::Cli::command().debug_assert();
    }

    #[test]
    fn fields_map_to_flags() {
        assert_eq!(super::flag("slices_per_task"), "--slices-per-task");
        assert_eq!(super::flag("budget_bytes"), "--budget");
        let e = sliceplan::Error::Cannot(
            "x holds other jobs; replace them with the `force` option, or keep `values` as they are".into(),
        );
        assert_eq!(
            super::message(&e),
            "x holds other jobs; replace them with --force, or keep `values` as they are"
        );
    }
}
