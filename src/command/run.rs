//! `run`: contract slices of a plan on this machine, one partial per chunk;
//! with every chunk selected, also gather (and verify) the result.

use std::ops::Range;
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::gather::{finish, GatherOutcome};
use super::{check_optional_output, open_plan, Event, Hooks};
use crate::chunk::ChunkId;
use crate::cost::bytes::bytes_human;
use crate::error::{Error, Result};
use crate::exec::runner::{predicted_process_bytes, slices_at_once};
use crate::exec::verify::{compare, contract_whole, Verification};
use crate::exec::{chunk_jobs, gather, run_plan, RunReport, Selection};
use crate::host::Available;
use crate::network::Network;
use crate::plan::Plan;

/// `--all` splits the slices into this many chunks unless told otherwise.
pub const DEFAULT_ALL_CHUNKS: u64 = 16;

/// Verification refuses unsliced contractions predicted above this many bytes.
pub const VERIFY_MAX_BYTES: u64 = 1 << 30;

/// Which slices to run.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Which {
    /// One chunk of a split.
    Chunk(ChunkId),
    /// An explicit range of slice numbers.
    Slices(Range<u64>),
    /// Every chunk of a split into this many (default
    /// [`DEFAULT_ALL_CHUNKS`], at most one per slice), then gather.
    All(Option<u64>),
}

/// Options of `run`.
#[derive(Debug, Clone)]
pub struct RunOptions {
    /// The plan file.
    pub plan: PathBuf,
    /// Which slices.
    pub which: Which,
    /// Threads in all.
    pub threads: usize,
    /// The partials directory (default: `<plan name>.partials` beside the plan).
    pub out: Option<PathBuf>,
    /// Re-run chunks whose valid partial exists, and run even when the
    /// predicted memory exceeds what is available.
    pub force: bool,
    /// With every chunk: also contract without slicing and compare.
    pub verify: bool,
    /// With every chunk: write the result as `.npy` here.
    pub output: Option<PathBuf>,
    /// The network file, when it has moved since the plan was written.
    pub network: Option<PathBuf>,
    /// The memory this machine has available now (the caller reads the
    /// host); `None` skips the check.
    pub available_memory: Option<Available>,
    /// Compute the plan's held slice-invariant intermediates once and
    /// reuse them in every slice (default); `false` runs every slice whole.
    pub reuse: bool,
}

impl RunOptions {
    /// Checks the options without reading any file.
    pub fn check(&self) -> Result<()> {
        if self.threads == 0 {
            return Err(Error::invalid("threads", "give at least 1 thread"));
        }
        match &self.which {
            Which::Chunk(c) if c.of == 0 => {
                return Err(Error::invalid("of", "give at least 1 chunk"))
            }
            Which::Chunk(c) if c.index >= c.of => {
                return Err(Error::invalid(
                    "chunk",
                    format!(
                        "chunk {} of {}: chunks are numbered 0..{}, so give a number below {}",
                        c.index, c.of, c.of, c.of
                    ),
                ))
            }
            Which::Slices(r) if r.start >= r.end => {
                return Err(Error::invalid(
                    "slices",
                    format!("{}..{} is empty; give A..B with A < B", r.start, r.end),
                ))
            }
            Which::All(Some(0)) => return Err(Error::invalid("of", "give at least 1 chunk")),
            _ => {}
        }
        let all = matches!(self.which, Which::All(_));
        if !all && (self.verify || self.output.is_some()) {
            return Err(Error::invalid(
                if self.verify { "verify" } else { "output" },
                "applies only when every chunk runs (and the result is gathered)",
            ));
        }
        check_optional_output(self.output.as_deref(), "output")
    }
}

/// What `run` returns.
#[derive(Debug, Clone, Serialize)]
pub struct RunOutcome {
    /// The run's figures.
    pub run: RunReport,
    /// The partials directory.
    pub dir: PathBuf,
    /// With every chunk: the gathered result, or what is missing.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub result: Option<GatherOutcome>,
    /// With verification: the comparison with the unsliced contraction.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub verify: Option<Verification>,
}

impl RunOutcome {
    /// True when everything asked for was done and agrees: the result (if
    /// gathered) is complete and the verification (if asked) agrees.
    pub fn succeeded(&self) -> bool {
        let complete = !matches!(self.result, Some(GatherOutcome::Incomplete(_)));
        complete && self.verify.as_ref().is_none_or(|v| v.agrees)
    }
}

/// Runs `run`.
pub fn run(opts: &RunOptions, hooks: &Hooks<'_>) -> Result<RunOutcome> {
    opts.check()?;
    let (mut plan, net) = open_plan(&opts.plan, opts.network.as_deref())?;
    if !opts.reuse {
        without_reuse(&mut plan, &net)?;
    }
    let total = plan.slice_count().ok_or_else(|| {
        Error::Cannot("the plan has more than 2^64 slices; no machine can run them".into())
    })?;
    if !opts.force {
        check_memory(
            &opts.plan,
            &plan,
            &net,
            opts.threads,
            opts.available_memory.as_ref(),
        )?;
    }
    let selection = match &opts.which {
        Which::Chunk(c) => Selection::Chunk(*c),
        Which::Slices(r) => Selection::Slices(r.clone()),
        Which::All(of) => Selection::AllChunks {
            of: of.unwrap_or(DEFAULT_ALL_CHUNKS.min(total)),
        },
    };
    let dir = opts.out.clone().unwrap_or_else(|| default_dir(&opts.plan));
    let jobs = chunk_jobs(total, &selection, &dir)?;
    std::fs::create_dir_all(&dir).map_err(|e| Error::write(&dir, e))?;
    let progress = |p: crate::exec::Progress<'_>| (hooks.progress)(Event::Run(p));
    let exec_options = crate::exec::RunOptions {
        threads: opts.threads,
        force: opts.force,
    };
    let report = run_plan(&plan, &net, &jobs, &exec_options, &progress)?;
    let mut outcome = RunOutcome {
        run: report,
        dir: dir.clone(),
        result: None,
        verify: None,
    };
    if matches!(opts.which, Which::All(_)) {
        let gathered = gather(&plan, &net, &dir)?;
        let result = finish(gathered, opts.output.as_deref(), &opts.plan, &dir, None)?;
        if let (GatherOutcome::Complete { gathered, .. }, true) = (&result, opts.verify) {
            let whole = contract_whole(&plan, &net, opts.threads, VERIFY_MAX_BYTES)?;
            outcome.verify = Some(compare(gathered, &whole));
        }
        outcome.result = Some(result);
    }
    Ok(outcome)
}

/// Refuses a run this machine cannot hold: the process's predicted need
/// (inputs, output accumulator, slices at once x per-slice peak) against
/// the memory available now.
fn check_memory(
    path: &Path,
    plan: &Plan,
    net: &Network,
    threads: usize,
    available: Option<&Available>,
) -> Result<()> {
    let Some(available) = available else {
        return Ok(());
    };
    let need = predicted_process_bytes(plan, net, threads);
    if need.is_some_and(|n| n <= available.bytes) {
        return Ok(());
    }
    let need_text = need.map_or_else(
        || "more than 2^64 bytes".to_string(),
        |n| bytes_human(n as f64),
    );
    Err(Error::Cannot(format!(
        "{}: a process running this plan is predicted to need {need_text} ({} slice(s) at once), but this machine has {} available ({}); run it where there is more memory, use fewer threads, plan again with a smaller budget, or run anyway with the `force` option",
        path.display(),
        slices_at_once(plan, threads),
        bytes_human(available.bytes as f64),
        available.source
    )))
}

/// Turns `plan` into one whose slices do all the work (the same
/// arithmetic, so its partials are interchangeable): no held
/// intermediates, and the order of least per-slice peak.
fn without_reuse(plan: &mut Plan, net: &Network) -> Result<()> {
    if !plan.reuse {
        return Ok(());
    }
    plan.reuse = false;
    if !plan.held.is_empty() {
        plan.held.clear();
        let tree = plan.tree()?;
        let sliced = plan.sliced_ids(net)?;
        plan.order = crate::cost::NodeSets::new(net, &tree)
            .evaluate_sliced(net, &sliced, crate::cost::PeakModel::EXECUTOR)
            .per_slice
            .order;
    }
    Ok(())
}

/// The default partials directory: `x.plan.toml` → `x.partials` beside it.
pub fn default_dir(plan: &Path) -> PathBuf {
    let name = plan.file_name().and_then(|n| n.to_str()).unwrap_or("plan");
    let stem = name
        .strip_suffix(".plan.toml")
        .or_else(|| name.strip_suffix(".toml"))
        .unwrap_or(name);
    plan.with_file_name(format!("{stem}.partials"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_directory_sits_beside_the_plan() {
        assert_eq!(
            default_dir(Path::new("runs/x.plan.toml")),
            PathBuf::from("runs/x.partials")
        );
    }
}
