//! `sliceplan fit`: will this contraction fit, and with how many slices.

use clap::Args;

use super::args::{BudgetArgs, NetArgs, SearchArgs};
use super::progress::Bars;
use super::{Outcome, EXIT_CANNOT};
use sliceplan::command::fit::{fit, FitOptions};
use sliceplan::command::{Event, Hooks, TreeChoice};
use sliceplan::error::Result;
use sliceplan::report::fit::FitReport;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan fit demo-data/ising-6x6.toml --budget 6KiB
  sliceplan fit demo-data/matrix-chain.toml --budget 1MiB --dtype f64 --json
  sliceplan fit demo-data/ising-6x6.toml --machine cpu-64g --machine accel-80g
  sliceplan fit demo-data/ising-6x6.toml --budget 6KiB --csv frontier.csv --svg frontier.svg

Exit code 0 when it fits (with or without slicing), 1 when it cannot, 3 when
it fits but is impractical.";

/// Arguments of `fit`.
#[derive(Debug, Args)]
pub struct FitArgs {
    #[command(flatten)]
    net: NetArgs,

    #[command(flatten)]
    budget: BudgetArgs,

    #[command(flatten)]
    search: SearchArgs,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

/// The bars for a command that may search.
pub(super) fn search_bars(tree: &TreeChoice) -> Bars {
    match tree {
        TreeChoice::Search(s) => Bars::new(s.trials, s.time.map_or(0, |t| t.as_millis() as u64)),
        TreeChoice::File(_) => Bars::new(None, 0),
    }
}

/// 0 when it fits, 1 when it cannot, 3 when it fits but is impractical.
pub(super) fn exit_code(report: &FitReport) -> u8 {
    match (report.fits, report.practical) {
        (true, true) => 0,
        (true, false) => sliceplan::error::EXIT_IMPRACTICAL,
        (false, _) => EXIT_CANNOT,
    }
}

pub(super) fn run(args: FitArgs) -> Result<Outcome> {
    let mut opts = FitOptions::new(args.net.source()?, args.search.choice()?);
    args.budget.apply(&mut opts);
    opts.check()?;
    let bars = search_bars(&opts.tree);
    let on = |e: Event<'_>| bars.on(e);
    let hooks = Hooks {
        progress: &on,
        stop: bars.stop(),
    };
    let outcome = fit(&opts, &hooks)?;
    drop(bars);
    let report = &outcome.report;
    Ok(Outcome::render(
        args.json,
        report,
        report.to_text(),
        exit_code(report),
    ))
}
