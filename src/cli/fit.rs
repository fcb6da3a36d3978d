//! `sliceplan fit`: will this contraction fit, and with how many slices.

use std::path::PathBuf;

use clap::Args;

use super::budget_args::BudgetArgs;
use super::tree_source::{Found, TreeArgs};
use super::{to_json, NetArgs, Outcome};
use crate::error::Result;
use crate::network::Dtype;
use crate::plan::advise::{advise, Advice, Target};
use crate::report::fit::FitReport;
use crate::slicing::SliceOptions;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan fit demo-data/ising-6x6.toml --budget 4KiB
  sliceplan fit demo-data/matrix-chain.toml --budget 1MiB --dtype f64 --json
  sliceplan fit NET.toml --machine configs/machines/cpu-64g.toml --machine configs/machines/accel-80g.toml
  sliceplan fit NET.toml --budget 64GiB --csv frontier.csv --svg frontier.svg

Exit code 0 when it fits (with or without slicing), 1 when it cannot.";

/// Arguments of `fit`.
#[derive(Debug, Args)]
pub struct FitArgs {
    #[command(flatten)]
    net: NetArgs,

    #[command(flatten)]
    budget: BudgetArgs,

    #[command(flatten)]
    search: TreeArgs,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

pub(super) fn run(args: FitArgs) -> Result<Outcome> {
    args.net.validate()?;
    let checked = args.budget.check()?;
    if checked.budget.is_none() && args.budget.machine.is_empty() {
        return Err(crate::Error::usage(
            "give --budget SIZE or --machine FILE (or both)",
        ));
    }
    let search = args.search.check()?;
    let net = args.net.load()?;
    let targets = args.budget.targets(&checked)?;
    let dtype = args.budget.dtype_for(&checked, &net);
    let found = args.search.find(&net, &search)?;
    let (report, advice) = slice_and_report(&net, &found, &targets, dtype);
    write_extras(&report, &args.budget.csv, &args.budget.svg, &advice[0])?;
    let code = if report.fits { 0 } else { 1 };
    let stdout = if args.json {
        to_json(&report)
    } else {
        report.to_text()
    };
    Ok(Outcome { stdout, code })
}

/// Tree re-plans allowed per target while slicing.
const REPLANS: u32 = 16;

/// Slices the found tree for every target and builds the fit report.
pub(super) fn slice_and_report(
    net: &crate::network::Network,
    found: &Found,
    targets: &[Target],
    dtype: Dtype,
) -> (FitReport, Vec<Advice>) {
    let base = SliceOptions::new(targets[0].budget_bytes, dtype);
    let mut refit = found.refit(REPLANS * targets.len() as u32);
    // The library reports no progress for slicing; a spinner shows it is
    // working (drawn only when stderr is a terminal).
    let spinner = indicatif::ProgressBar::new_spinner();
    spinner.set_message(format!("choosing slices for {} target(s)", targets.len()));
    spinner.enable_steady_tick(std::time::Duration::from_millis(120));
    let advice = advise(
        net,
        &found.tree,
        &base,
        targets,
        refit.as_deref_mut(),
        REPLANS as usize,
    );
    spinner.finish_and_clear();
    let report = FitReport::new(
        net,
        found.report(net, dtype),
        Some(found.lower_bound),
        found.search.clone(),
        dtype,
        &advice,
    );
    (report, advice)
}

/// Writes the CSV and SVG frontier files when asked (atomically).
pub(super) fn write_extras(
    report: &FitReport,
    csv: &Option<PathBuf>,
    svg: &Option<PathBuf>,
    head: &crate::plan::advise::Advice,
) -> Result<()> {
    if let Some(path) = csv {
        crate::io::write_atomic(path, report.frontier_csv().as_bytes())?;
    }
    if let Some(path) = svg {
        let per_slice = (head.target.budget_bytes as f64
            - report.memory.inputs_bytes
            - report.memory.output_bytes)
            / head.target.slices_at_once as f64;
        let title = format!(
            "{}: slices vs total ops and per-slice peak",
            report.network.name
        );
        let text = crate::report::chart::frontier_svg(&report.frontier, per_slice, &title)
            .map_err(crate::Error::Cannot)?;
        crate::io::write_atomic(path, text.as_bytes())?;
    }
    Ok(())
}
