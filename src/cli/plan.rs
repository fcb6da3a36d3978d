//! `sliceplan plan`: search for a contraction tree; with a budget, also
//! choose the slice set and write the plan file.

use std::path::PathBuf;

use clap::Args;

use super::args::{BudgetArgs, NetArgs, SearchArgs};
use super::fit::{exit_code, search_bars};
use super::Outcome;
use sliceplan::command::fit::FitOptions;
use sliceplan::command::plan::{plan, PlanOptions, PlanOutcome};
use sliceplan::command::{Event, Hooks};
use sliceplan::error::Result;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan plan demo-data/ising-6x6.toml --time 5s -o ising.tree.toml
  sliceplan plan --einsum \"ab,bc,cd,de,ef,fg->ag\" --dims a=30,b=35,c=15,d=5,e=10,f=20,g=25 --trials 50
  sliceplan plan demo-data/ising-6x6.toml --trials 500 --seed 7 --threads 2 --objective ops-within --max-width 8 --json
  sliceplan plan demo-data/ising-6x6.toml --machine cpu-64g --nodes 4 -o big.plan.toml --svg frontier.svg
  sliceplan plan demo-data/ising-6x6.toml --budget 6KiB --trials 32 -o ising.plan.toml

Without --budget or --machine, -o writes the tree file; with one, it writes
the plan file (tree, traversal order, slice set, predicted costs), and the
exit code is 1 when nothing fits, 3 when it fits but is impractical.";

/// Arguments of `plan`.
#[derive(Debug, Args)]
pub struct PlanArgs {
    #[command(flatten)]
    net: NetArgs,

    #[command(flatten)]
    search: SearchArgs,

    #[command(flatten)]
    budget: BudgetArgs,

    /// Write the tree file, or with a budget the plan file (atomically).
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    output: Option<PathBuf>,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

pub(super) fn run(args: PlanArgs) -> Result<Outcome> {
    let mut fit = FitOptions::new(args.net.source()?, args.search.choice()?);
    args.budget.apply(&mut fit);
    let opts = PlanOptions {
        fit,
        output: args.output,
    };
    opts.check()?;
    let bars = search_bars(&opts.fit.tree);
    let on = |e: Event<'_>| bars.on(e);
    let hooks = Hooks {
        progress: &on,
        stop: bars.stop(),
    };
    let outcome = plan(&opts, &hooks)?;
    drop(bars);
    match outcome {
        PlanOutcome::Tree(report) => Ok(Outcome::render(args.json, &report, report.to_text(), 0)),
        PlanOutcome::Sliced { fit, written } => {
            let mut text = fit.report.to_text();
            match &written {
                Some(w) => {
                    if let Some(n) = &w.network_written {
                        text.push_str(&format!(
                            "\nnetwork written to {} (the plan refers to it)",
                            n.display()
                        ));
                    }
                    text.push_str(&format!(
                        "\nplan written to {} (fingerprint {})\n",
                        w.path.display(),
                        w.fingerprint
                    ));
                }
                None if opts.output.is_some() => {
                    text.push_str("\nno plan written: nothing fits the budget\n")
                }
                None => {}
            }
            Ok(Outcome::render(
                args.json,
                &fit.report,
                text,
                exit_code(&fit.report),
            ))
        }
    }
}
