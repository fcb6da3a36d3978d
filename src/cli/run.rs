//! `sliceplan run`: contract slices of a plan on this machine, one partial
//! per chunk; with `--all`, every chunk and then the gather.

use std::ops::Range;
use std::path::{Path, PathBuf};

use clap::{ArgGroup, Args};
use indicatif::{ProgressBar, ProgressStyle};
use serde::Serialize;

use super::plan_files::open_plan;
use super::{to_json, Outcome};
use crate::chunk::ChunkId;
use crate::cost::bytes::bytes_human;
use crate::error::{Error, Result, EXIT_CANNOT};
use crate::exec::report::{run_text, verify_text, IncompleteReport, ResultReport};
use crate::exec::runner::{predicted_process_bytes, slices_at_once};
use crate::exec::verify::{compare, contract_whole, Verification};
use crate::exec::{
    chunk_jobs, gather, run_plan, GatherOutcome, Progress, RunOptions, RunReport, Selection,
};
use crate::network::Network;
use crate::plan::Plan;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan run grid.plan.toml --all
  sliceplan run grid.plan.toml --all --of 32 --threads 8 --verify -o grid.npy
  sliceplan run grid.plan.toml --chunk 3 --of 100 --out parts/
  sliceplan run grid.plan.toml --slices 0..16 --out parts/";

/// `--all` splits the slices into this many chunks unless `--of` says otherwise.
const DEFAULT_ALL_CHUNKS: u64 = 16;

/// `--verify` refuses unsliced contractions predicted above this many bytes.
const VERIFY_MAX_BYTES: u64 = 1 << 30;

/// Arguments of `run`.
#[derive(Debug, Args)]
#[command(group(ArgGroup::new("which").required(true).args(["chunk", "slices", "all"])))]
pub struct RunArgs {
    /// Plan file (from `sliceplan plan`).
    #[arg(value_name = "PLAN")]
    plan: PathBuf,

    /// Run chunk I (counting from 0) of the split into --of chunks.
    #[arg(long, value_name = "I", requires = "of")]
    chunk: Option<u64>,

    /// Number of chunks the slices are split into (with --chunk, or with --all; default for --all: 16).
    #[arg(long, value_name = "N", conflicts_with = "slices")]
    of: Option<u64>,

    /// Run the slices A, A+1, ..., B-1, e.g. 0..16.
    #[arg(long, value_name = "A..B")]
    slices: Option<String>,

    /// Run every chunk on this machine, then gather and print the result.
    #[arg(long)]
    all: bool,

    /// Threads to use (default: all cores).
    #[arg(long, value_name = "T")]
    threads: Option<usize>,

    /// Directory for the partials (default: next to the plan, <plan name>.partials).
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,

    /// Re-run chunks even when their valid partial exists, and run even when
    /// the predicted memory exceeds what this machine has available.
    #[arg(long)]
    force: bool,

    /// With --all: also contract without slicing and compare (small networks only).
    #[arg(long, requires = "all")]
    verify: bool,

    /// With --all: write the result as a .npy file.
    #[arg(
        short = 'o',
        long = "output",
        value_name = "RESULT.npy",
        requires = "all"
    )]
    output: Option<PathBuf>,

    /// The network file, when it has moved since the plan was written.
    #[arg(long, value_name = "NET")]
    network: Option<PathBuf>,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

/// Which slices, as checked before any file is read.
enum Which {
    Chunk(ChunkId),
    Slices(Range<u64>),
    All(Option<u64>),
}

impl RunArgs {
    fn validate(&self) -> Result<(Which, usize)> {
        let threads = match self.threads {
            Some(0) => return Err(Error::usage("--threads 0: give at least 1 thread")),
            Some(t) => t,
            None => std::thread::available_parallelism().map_or(1, |n| n.get()),
        };
        if self.of == Some(0) {
            return Err(Error::usage("--of 0: give at least 1 chunk"));
        }
        let which = if let Some(index) = self.chunk {
            let of = self.of.expect("clap requires --of with --chunk");
            if index >= of {
                return Err(Error::usage(format!(
                    "--chunk {index} --of {of}: chunks are numbered 0..{of}, so give a number below {of}"
                )));
            }
            Which::Chunk(ChunkId { index, of })
        } else if let Some(text) = &self.slices {
            Which::Slices(parse_range(text)?)
        } else {
            Which::All(self.of)
        };
        Ok((which, threads))
    }
}

/// Parses `A..B` with A < B.
fn parse_range(text: &str) -> Result<Range<u64>> {
    let bad = || {
        Error::usage(format!(
            "--slices {text}: write a range as A..B with whole numbers A < B, e.g. 0..16"
        ))
    };
    let (a, b) = text.split_once("..").ok_or_else(bad)?;
    let (a, b): (u64, u64) = (
        a.trim().parse().map_err(|_| bad())?,
        b.trim().parse().map_err(|_| bad())?,
    );
    if a >= b {
        return Err(bad());
    }
    Ok(a..b)
}

/// Refuses a run this machine cannot hold: the process's predicted need
/// (inputs, output accumulator, slices at once x per-slice peak) against
/// the memory available now.
fn check_memory(path: &Path, plan: &Plan, net: &Network, threads: usize) -> Result<()> {
    let Some(available) = crate::host::available_memory() else {
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
        "{}: a process running this plan is predicted to need {need_text} ({} slice(s) at once), but this machine has {} available ({}); run it where there is more memory, use fewer --threads, plan again with a smaller --budget, or give --force to run anyway",
        path.display(),
        slices_at_once(plan, threads),
        bytes_human(available.bytes as f64),
        available.source
    )))
}

/// The default partials directory: `x.plan.toml` → `x.partials` beside it.
fn default_dir(plan: &Path) -> PathBuf {
    let name = plan.file_name().and_then(|n| n.to_str()).unwrap_or("plan");
    let stem = name
        .strip_suffix(".plan.toml")
        .or_else(|| name.strip_suffix(".toml"))
        .unwrap_or(name);
    plan.with_file_name(format!("{stem}.partials"))
}

#[derive(Serialize)]
struct RunJson<'a> {
    run: &'a RunReport,
    #[serde(skip_serializing_if = "Option::is_none")]
    result: Option<serde_json::Value>,
    #[serde(skip_serializing_if = "Option::is_none")]
    verify: Option<&'a Verification>,
}

pub(super) fn run(args: RunArgs) -> Result<Outcome> {
    let (which, threads) = args.validate()?;
    let (plan, net) = open_plan(&args.plan, args.network.as_deref())?;
    let total = plan.slice_count().ok_or_else(|| {
        Error::Cannot("the plan has more than 2^64 slices; no machine can run them".into())
    })?;
    if !args.force {
        check_memory(&args.plan, &plan, &net, threads)?;
    }
    let selection = match which {
        Which::Chunk(c) => Selection::Chunk(c),
        Which::Slices(r) => Selection::Slices(r),
        Which::All(of) => Selection::AllChunks {
            of: of.unwrap_or(DEFAULT_ALL_CHUNKS.min(total)),
        },
    };
    let dir = args.out.clone().unwrap_or_else(|| default_dir(&args.plan));
    let jobs = chunk_jobs(total, &selection, &dir)?;
    std::fs::create_dir_all(&dir).map_err(|e| Error::write(&dir, e))?;
    let bar = ProgressBar::new(0);
    if let Ok(style) =
        ProgressStyle::with_template("{bar:40} {pos}/{len} slices  {per_sec}  eta {eta}")
    {
        bar.set_style(style);
    }
    let progress = |p: Progress<'_>| match p {
        Progress::Begin { slices, .. } => bar.set_length(slices),
        Progress::Slices(n) => bar.inc(n),
        Progress::ChunkDone { .. } => {}
    };
    let options = RunOptions {
        threads,
        force: args.force,
    };
    let report = run_plan(&plan, &net, &jobs, &options, &progress);
    bar.finish_and_clear();
    let report = report?;
    let dir_text = dir.display().to_string();
    let mut text = run_text(&report, &dir_text);
    let mut code = 0;
    let mut result = None;
    let mut verification = None;
    if args.all {
        match gather(&plan, &net, &dir)? {
            GatherOutcome::Complete(g) => {
                if let Some(path) = &args.output {
                    g.write_npy(path)?;
                }
                let r = ResultReport::new(&g, args.output.clone());
                text.push_str(&r.to_text());
                result = Some(serde_json::to_value(&r).expect("reports serialise"));
                if args.verify {
                    let whole = contract_whole(&plan, &net, threads, VERIFY_MAX_BYTES)?;
                    let v = compare(&g, &whole);
                    text.push_str(&verify_text(&v));
                    if !v.agrees {
                        code = EXIT_CANNOT;
                    }
                    verification = Some(v);
                }
            }
            GatherOutcome::Incomplete(i) => {
                // Another process may be writing into the same directory.
                let r = IncompleteReport::new(&i, &args.plan.display().to_string(), &dir_text);
                text.push_str(&r.to_text());
                result = Some(serde_json::to_value(&r).expect("reports serialise"));
                code = EXIT_CANNOT;
            }
        }
    }
    let stdout = if args.json {
        to_json(&RunJson {
            run: &report,
            result,
            verify: verification.as_ref(),
        })
    } else {
        text
    };
    Ok(Outcome { stdout, code })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_and_default_directory() {
        assert_eq!(parse_range("3..10").unwrap(), 3..10);
        assert!(parse_range("10..3").is_err());
        assert!(parse_range("3-10").is_err());
        assert_eq!(
            default_dir(Path::new("runs/x.plan.toml")),
            PathBuf::from("runs/x.partials")
        );
    }
}
