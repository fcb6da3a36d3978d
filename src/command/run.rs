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

/// Seconds per slice: the model's prediction beside the measurement.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SliceTime {
    /// Threads each slice ran with (the run's threads over its slices at once).
    pub threads_per_slice: u64,
    /// Measured seconds per slice: with one slice at a time and more than
    /// one slice, the mean of the slices after the first (which pays the
    /// process's start-up, see `first_slice_seconds`); otherwise the wall
    /// time of all slices x slices at once / slices run. Inputs are already
    /// in memory and writing partials is left out. `None` when no slice ran.
    pub measured_seconds_per_slice: Option<f64>,
    /// Slices the measurement is the mean of.
    pub slices_timed: u64,
    /// Seconds of the first slice, when timed apart.
    pub first_slice_seconds: Option<f64>,
    /// The model's prediction, when a machine profile is known.
    pub predicted: Option<TimePrediction>,
    /// measured / predicted, when both are known.
    pub ratio: Option<f64>,
    /// How to get a prediction when there is none.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// The model's seconds per slice for a run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TimePrediction {
    /// The machine profile's name.
    pub machine: String,
    /// Where the profile came from (the plan, or this host's calibrated
    /// profile and its file).
    pub source: String,
    /// The thread count the figure is for (the listed count at or below
    /// the slice's threads).
    pub threads: u64,
    /// Model seconds per slice.
    pub seconds_per_slice: f64,
}

/// What `run` returns.
#[derive(Debug, Clone, Serialize)]
pub struct RunOutcome {
    /// The run's figures.
    pub run: RunReport,
    /// Seconds per slice, predicted and measured.
    pub time: SliceTime,
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
    let at_once = slices_at_once(&plan, opts.threads);
    // Chunks run one after another unless several run at once in lanes;
    // then the time spent writing a partial can be told apart.
    let sequential = at_once == 1 || jobs.len() == 1;
    let clock = std::sync::Mutex::new(Clock::default());
    let progress = |p: crate::exec::Progress<'_>| {
        if let Ok(mut c) = clock.lock() {
            c.on(&p, sequential);
        }
        (hooks.progress)(Event::Run(p))
    };
    let exec_options = crate::exec::RunOptions {
        threads: opts.threads,
        force: opts.force,
    };
    let report = run_plan(&plan, &net, &jobs, &exec_options, &progress)?;
    let timed = clock
        .into_inner()
        .map(|c| c.finish(at_once == 1))
        .unwrap_or(Timed {
            busy: report.seconds,
            first: None,
            steady: None,
        });
    let time = slice_time(&plan, &net, &report, &timed)?;
    let mut outcome = RunOutcome {
        run: report,
        time,
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

/// Times the slices from the runner's progress events.
///
/// With one slice at a time every `Slices` event ends one slice, so the
/// first slice (which pays the process's start-up: first touches of fresh
/// memory, the multiply's set-up) is timed apart from the rest, and the
/// time spent writing partials between chunks is left out.
#[derive(Debug, Default)]
struct Clock {
    begin: Option<std::time::Instant>,
    /// When the first slice ended, and how many slices that event counted.
    first: Option<(std::time::Instant, u64)>,
    last: Option<std::time::Instant>,
    /// Slices ended after the first event.
    after_first: u64,
    /// Time spent writing partials after the first event.
    writing: std::time::Duration,
}

/// What the clock measured.
struct Timed {
    /// Seconds from the first slice's start to the last slice's end, less
    /// partial writes.
    busy: f64,
    /// Seconds of the first slice, when told apart.
    first: Option<f64>,
    /// Seconds per slice after the first, and how many slices that is.
    steady: Option<(f64, u64)>,
}

impl Clock {
    fn on(&mut self, p: &crate::exec::Progress<'_>, sequential: bool) {
        use crate::exec::Progress;
        let now = std::time::Instant::now();
        match *p {
            Progress::Begin { .. } => self.begin = Some(now),
            Progress::Slices(n) => {
                if self.first.is_none() {
                    self.first = Some((now, n));
                } else {
                    self.after_first += n;
                }
                self.last = Some(now);
            }
            Progress::ChunkDone { job, skipped } => {
                let len = job.slices.end - job.slices.start;
                if skipped {
                    // Its slices were counted without being run.
                    match self.first {
                        Some((_, n)) if self.after_first == 0 && n == len => self.first = None,
                        _ => self.after_first = self.after_first.saturating_sub(len),
                    }
                } else if sequential {
                    if let Some(t) = self.last.filter(|_| self.first.is_some()) {
                        self.writing += now - t;
                    }
                    // The next chunk's slices start now.
                    self.last = Some(now);
                    if self.first.is_none() {
                        self.begin = Some(now);
                    }
                }
            }
        }
    }

    fn finish(&self, one_at_a_time: bool) -> Timed {
        let (Some(begin), Some((first, n)), Some(last)) = (self.begin, self.first, self.last)
        else {
            return Timed {
                busy: 0.0,
                first: None,
                steady: None,
            };
        };
        let after = last
            .saturating_duration_since(first)
            .saturating_sub(self.writing);
        let first_secs = first.saturating_duration_since(begin).as_secs_f64();
        let steady = (one_at_a_time && n == 1 && self.after_first > 0).then(|| {
            (
                after.as_secs_f64() / self.after_first as f64,
                self.after_first,
            )
        });
        Timed {
            busy: first_secs + after.as_secs_f64(),
            first: steady.map(|_| first_secs),
            steady,
        }
    }
}

/// The prediction and measurement of seconds per slice for a run.
fn slice_time(plan: &Plan, net: &Network, report: &RunReport, timed: &Timed) -> Result<SliceTime> {
    let at_once = report.slices_at_once.max(1) as u64;
    let threads = (report.threads as u64 / at_once).max(1);
    let measured = match timed.steady {
        Some((s, _)) => Some(s),
        None => (report.slices_run > 0 && timed.busy > 0.0)
            .then(|| timed.busy * at_once as f64 / report.slices_run as f64),
    };
    let predicted = predict(plan, net, threads)?;
    let note = predicted.is_none().then(|| {
        "no time prediction: the plan has no machine profile and this host has no calibrated one; run `sliceplan calibrate` once on this machine (a minute), or plan with a machine profile".to_string()
    });
    let ratio = match (&predicted, measured) {
        (Some(p), Some(m)) if p.seconds_per_slice > 0.0 => Some(m / p.seconds_per_slice),
        _ => None,
    };
    Ok(SliceTime {
        threads_per_slice: threads,
        measured_seconds_per_slice: measured,
        slices_timed: timed.steady.map_or(report.slices_run, |(_, n)| n),
        first_slice_seconds: timed.first,
        predicted,
        ratio,
        note,
    })
}

/// The model's seconds per slice of `plan` with `threads` threads per
/// slice: from the plan's own estimate when it has one (its machine), else
/// from this host's calibrated profile, else none.
pub fn predict(plan: &Plan, net: &Network, threads: u64) -> Result<Option<TimePrediction>> {
    if let Some(e) = plan.estimate.as_ref().filter(|e| e.threads_per_slice > 0) {
        let (seconds, t) = e.seconds_for_threads(threads);
        return Ok(Some(TimePrediction {
            machine: e.machine.clone(),
            source: "the plan's machine profile".into(),
            threads: t,
            seconds_per_slice: seconds,
        }));
    }
    let (machine, source) = match &plan.estimate {
        // A plan written before estimates listed thread counts: price it
        // again with its profile when that can still be found.
        Some(e) => match super::machines::resolve_machine(&e.machine) {
            Ok(m) => (m, "the plan's machine profile (found by name)".to_string()),
            Err(_) => return Ok(None),
        },
        None => match super::machines::this_host_profile() {
            Some((m, path)) => (
                m,
                format!("this host's calibrated profile {}", path.display()),
            ),
            None => return Ok(None),
        },
    };
    let tree = plan.tree()?;
    let sliced = plan.sliced_ids(net)?;
    let sets = crate::cost::NodeSets::new(net, &tree);
    let speeds = crate::cost::time::Speeds::for_threads(&machine, plan.dtype, threads);
    let seconds = crate::cost::time::slice_seconds(
        &sets,
        &crate::cost::Dims::sliced(net, &sliced),
        plan.dtype,
        &speeds,
    );
    Ok(Some(TimePrediction {
        machine: machine.name,
        source,
        threads: speeds.threads,
        seconds_per_slice: seconds,
    }))
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
