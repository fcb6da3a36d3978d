//! `sliceplan run`: contract slices of a plan on this machine, one partial
//! per chunk; with `--all`, every chunk and then the gather.

use std::ops::Range;
use std::path::PathBuf;

use clap::{ArgGroup, Args};

use super::gather::gathered_text;
use super::progress::Bars;
use super::{Outcome, EXIT_CANNOT};
use sliceplan::chunk::ChunkId;
use sliceplan::command::run::{run as run_command, RunOptions, SliceTime, Which};
use sliceplan::command::{Event, Hooks};
use sliceplan::error::{Error, Result};
use sliceplan::exec::report::{run_text, verify_text};

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan run ising.plan.toml --all
  sliceplan run ising.plan.toml --all --of 4 --threads 2 --verify -o ising.npy
  sliceplan run ising.plan.toml --chunk 1 --of 2 --out parts/
  sliceplan run ising.plan.toml --slices 0..2 --out parts/";

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
    #[arg(long, value_name = "A..B", value_parser = parse_range)]
    slices: Option<Range<u64>>,

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

    /// Run every slice whole: do not compute the plan's slice-invariant
    /// intermediates once and reuse them (same values, more arithmetic).
    #[arg(long)]
    no_reuse: bool,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

/// Parses `A..B` with A < B.
fn parse_range(text: &str) -> std::result::Result<Range<u64>, String> {
    let bad = || format!("'{text}': write a range as A..B with whole numbers A < B, e.g. 0..16");
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

pub(super) fn run(args: RunArgs) -> Result<Outcome> {
    let which = match (args.chunk, args.slices.clone(), args.all) {
        (Some(index), _, _) => Which::Chunk(ChunkId {
            index,
            of: args.of.ok_or_else(|| Error::usage("--chunk needs --of"))?,
        }),
        (None, Some(r), _) => Which::Slices(r),
        _ => Which::All(args.of),
    };
    let threads = match args.threads {
        Some(t) => t,
        None => std::thread::available_parallelism().map_or(1, |n| n.get()),
    };
    let opts = RunOptions {
        plan: args.plan,
        which,
        threads,
        out: args.out,
        force: args.force,
        verify: args.verify,
        output: args.output,
        network: args.network,
        available_memory: sliceplan::host::available_memory(),
        reuse: !args.no_reuse,
    };
    opts.check()?;
    let bars = Bars::new(None, 0);
    let on = |e: Event<'_>| bars.on(e);
    let hooks = Hooks {
        progress: &on,
        stop: bars.stop(),
    };
    let outcome = run_command(&opts, &hooks)?;
    drop(bars);
    let mut text = run_text(&outcome.run, &outcome.dir.display().to_string());
    text.push_str(&time_text(&outcome.time));
    if let Some(g) = &outcome.result {
        text.push_str(&gathered_text(g));
    }
    if let Some(v) = &outcome.verify {
        text.push_str(&verify_text(v));
    }
    let code = if outcome.succeeded() { 0 } else { EXIT_CANNOT };
    Ok(Outcome::render(args.json, &outcome, text, code))
}

/// Seconds for people: three significant digits.
fn secs(s: f64) -> String {
    if s >= 100.0 {
        format!("{s:.0} s")
    } else if s >= 0.01 {
        format!("{s:.3} s")
    } else {
        format!("{:.3} ms", s * 1e3)
    }
}

/// How the measurement was made, when the first slice was timed apart.
fn first_text(t: &SliceTime) -> String {
    match t.first_slice_seconds {
        Some(f) if t.slices_timed > 0 && t.measured_seconds_per_slice.is_some() => format!(
            " (mean of {} slice(s) after the first, which took {} with start-up)",
            t.slices_timed,
            secs(f)
        ),
        _ => String::new(),
    }
}

/// The time line of a run: predicted and measured seconds per slice.
fn time_text(t: &SliceTime) -> String {
    let measured = t
        .measured_seconds_per_slice
        .map_or_else(|| "nothing ran".to_string(), secs);
    match &t.predicted {
        Some(p) => format!(
            "time per slice: predicted {} (model, profile {} for {} thread(s), {}), measured {measured} with {} thread(s){}{}\n",
            secs(p.seconds_per_slice),
            p.machine,
            p.threads,
            p.source,
            t.threads_per_slice,
            first_text(t),
            t.ratio
                .map_or_else(String::new, |r| format!("; measured / predicted = {r:.2}"))
        ),
        None => format!(
            "time per slice: measured {measured} with {} thread(s){}; {}\n",
            t.threads_per_slice,
            first_text(t),
            t.note.as_deref().unwrap_or("no prediction")
        ),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges() {
        assert_eq!(parse_range("3..10").unwrap(), 3..10);
        assert!(parse_range("10..3").is_err());
        assert!(parse_range("3-10").is_err());
    }
}
