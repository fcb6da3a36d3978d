//! `fit`: will this contraction fit the budget, with how many slices, at
//! what overhead; the pipeline `plan` reuses (network, tree, slicing per
//! target, report, frontier files).

use std::path::PathBuf;
use std::time::{Duration, Instant};

use super::machines::resolve_machine;
use super::{check_optional_output, Event, Found, Hooks, NetworkSource, TreeChoice};
use crate::error::{Error, Result};
use crate::network::{Dtype, Network};
use crate::plan::advise::{advise, Advice, Target};
use crate::report::fit::FitReport;
use crate::slicing::SliceOptions;

/// Options of `fit` (and of `plan` with a budget).
#[derive(Debug, Clone)]
pub struct FitOptions {
    /// The network.
    pub network: NetworkSource,
    /// The tree: a file or a search. With a search time T, the whole
    /// command (search, slicing, reports) keeps to T.
    pub tree: TreeChoice,
    /// Bytes one process may use.
    pub budget_bytes: Option<u64>,
    /// Machine profiles by name or path (repeatable; see
    /// [`super::machines`]).
    pub machines: Vec<String>,
    /// Nodes available at once on every machine (overrides the profiles).
    pub nodes: Option<u64>,
    /// Element type (default: the network's, else c64).
    pub dtype: Option<Dtype>,
    /// Slices one process runs at once under `budget_bytes`.
    pub slices_at_once: u64,
    /// Write the frontier as CSV here.
    pub csv: Option<PathBuf>,
    /// Write the frontier chart as SVG here.
    pub svg: Option<PathBuf>,
    /// Compute slice-invariant intermediates once per process and reuse
    /// them in every slice (default); `false` prices and plans every slice
    /// doing all the work.
    pub reuse: bool,
}

impl FitOptions {
    /// Options with no budget or machine yet, one slice at a time.
    pub fn new(network: NetworkSource, tree: TreeChoice) -> FitOptions {
        FitOptions {
            network,
            tree,
            budget_bytes: None,
            machines: Vec::new(),
            nodes: None,
            dtype: None,
            slices_at_once: 1,
            csv: None,
            svg: None,
            reuse: true,
        }
    }

    /// True when a budget or a machine is given (there is something to
    /// slice for).
    pub fn has_target(&self) -> bool {
        self.budget_bytes.is_some() || !self.machines.is_empty()
    }

    /// Checks the options without reading any input.
    pub fn check(&self) -> Result<()> {
        self.tree.check()?;
        if self.budget_bytes == Some(0) {
            return Err(Error::invalid(
                "budget_bytes",
                "a budget of 0 bytes cannot hold anything",
            ));
        }
        if self.slices_at_once == 0 {
            return Err(Error::invalid("slices_at_once", "must be at least 1"));
        }
        if self.nodes == Some(0) {
            return Err(Error::invalid("nodes", "must be at least 1"));
        }
        check_optional_output(self.csv.as_deref(), "csv")?;
        check_optional_output(self.svg.as_deref(), "svg")?;
        Ok(())
    }

    /// The targets: the explicit budget first (when given), then one per
    /// machine (profiles read here).
    pub fn targets(&self) -> Result<Vec<Target>> {
        let mut targets = Vec::new();
        if let Some(b) = self.budget_bytes {
            targets.push(Target::budget(b, self.slices_at_once));
        }
        for spec in &self.machines {
            let mut m = resolve_machine(spec)?;
            if let Some(n) = self.nodes {
                m.nodes = n;
            }
            targets.push(Target::machine(m));
        }
        // With an explicit budget and machines, the budget row keeps the
        // first machine's estimate: it is the same hardware, constrained.
        if self.budget_bytes.is_some() {
            if let Some(m) = targets.get(1).and_then(|t| t.machine.clone()) {
                targets[0].machine = Some(m);
            }
        }
        Ok(targets)
    }

    /// The dtype: explicit, else the network's, else c64.
    pub fn dtype_for(&self, net: &Network) -> Dtype {
        self.dtype.or(net.dtype).unwrap_or_default()
    }
}

/// What `fit` returns.
#[derive(Debug, Clone)]
pub struct FitOutcome {
    /// The one-screen answer.
    pub report: FitReport,
    /// The verdict per target (the first is the headline).
    pub advice: Vec<Advice>,
    /// The tree before slicing, and how it was found.
    pub found: Found,
    /// The network.
    pub network: Network,
    /// The dtype used.
    pub dtype: Dtype,
}

/// Share of a search time budget the tree search gets when slicing
/// follows; slicing's re-planning has the rest.
const SEARCH_SHARE: f64 = 0.7;

/// Tree re-plans allowed per target while slicing.
const REPLANS: u32 = 16;

/// Runs `fit`: reads the network, finds or reads the tree, slices it for
/// every target, writes the CSV and SVG files when asked.
pub fn fit(opts: &FitOptions, hooks: &Hooks<'_>) -> Result<FitOutcome> {
    opts.check()?;
    if !opts.has_target() {
        return Err(Error::invalid(
            "budget_bytes",
            "give a budget or a machine profile (or both)",
        ));
    }
    let start = Instant::now();
    let network = opts.network.load()?;
    fit_loaded(opts, network, start, hooks)
}

/// [`fit`] on a network already read; `start` is when the command began
/// (its time budget counts from there).
pub(super) fn fit_loaded(
    opts: &FitOptions,
    network: Network,
    start: Instant,
    hooks: &Hooks<'_>,
) -> Result<FitOutcome> {
    let targets = opts.targets()?;
    let dtype = opts.dtype_for(&network);
    let (tree, deadline, slicing_time) = share_time(&opts.tree, start);
    let found = tree.resolve(&network, hooks)?;
    let (report, advice) = slice_and_report(
        &network,
        &found,
        &targets,
        dtype,
        opts.reuse,
        slicing_time,
        deadline,
        hooks,
    );
    write_extras(
        &report,
        opts.csv.as_deref(),
        opts.svg.as_deref(),
        &advice[0],
    )?;
    Ok(FitOutcome {
        report,
        advice,
        found,
        network,
        dtype,
    })
}

/// Splits a search's time budget between the search and slicing: the
/// search gets [`SEARCH_SHARE`] of it; slicing must end by the deadline.
/// Without a time budget, the tree choice is unchanged and there is no
/// deadline.
fn share_time(
    tree: &TreeChoice,
    start: Instant,
) -> (TreeChoice, Option<Instant>, Option<Duration>) {
    match tree {
        TreeChoice::Search(s) => match s.time {
            Some(total) => {
                let mut s = s.clone();
                let search = total.mul_f64(SEARCH_SHARE);
                s.time = Some(search);
                (
                    TreeChoice::Search(s),
                    Some(start + total),
                    Some(total.saturating_sub(search)),
                )
            }
            None => (tree.clone(), None, None),
        },
        TreeChoice::File(_) => (tree.clone(), None, None),
    }
}

/// Slices the found tree for every target and builds the fit report.
#[allow(clippy::too_many_arguments)]
fn slice_and_report(
    net: &Network,
    found: &Found,
    targets: &[Target],
    dtype: Dtype,
    reuse: bool,
    slicing_time: Option<Duration>,
    deadline: Option<Instant>,
    hooks: &Hooks<'_>,
) -> (FitReport, Vec<Advice>) {
    let mut base = SliceOptions::new(targets[0].budget_bytes, dtype);
    base.reuse = reuse;
    base.deadline = deadline;
    let calls = REPLANS * targets.len() as u32;
    let mut refit = found.refit(calls, slicing_time, deadline);
    (hooks.progress)(Event::SlicingStarted {
        targets: targets.len(),
    });
    let advice = advise(
        net,
        &found.tree,
        &found.front,
        &base,
        targets,
        refit.as_deref_mut(),
        REPLANS as usize,
    );
    (hooks.progress)(Event::SlicingDone);
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
    csv: Option<&std::path::Path>,
    svg: Option<&std::path::Path>,
    head: &Advice,
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
            .map_err(Error::Cannot)?;
        crate::io::write_atomic(path, text.as_bytes())?;
    }
    Ok(())
}
