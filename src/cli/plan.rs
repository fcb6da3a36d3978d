//! `sliceplan plan`: search for a contraction tree and report it.
//!
//! The command runs in three steps so later options (a memory budget, a plan
//! file) slot in: [`PlanArgs::validate`] turns the raw arguments into
//! [`PlanOptions`] without touching any file; [`run`] loads the network and
//! calls the search with a progress bar and Ctrl-C handling; the result is
//! rendered as text or JSON.

use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, OnceLock};
use std::time::Duration;

use clap::Args;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use super::{to_json, NetArgs, Outcome};
use crate::error::{Error, Result};
use crate::network::{Dtype, Summary};
use crate::report::inspect::TreeReport;
use crate::report::plan::{PlanReport, SearchReport};
use crate::search::{find_tree_with, Objective, Progress, SearchOptions, SearchResult};
use crate::tree::write_tree_file;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan plan demo-data/ising-6x6.toml --time 5s -o ising.tree.toml
  sliceplan plan --einsum \"ab,bc,cd,de,ef,fg->ag\" --dims a=30,b=35,c=15,d=5,e=10,f=20,g=25 --trials 50
  sliceplan plan demo-data/matrix-chain.toml --trials 500 --seed 7 --threads 2 --objective width --json";

/// Arguments of `plan`.
#[derive(Debug, Args)]
pub struct PlanArgs {
    #[command(flatten)]
    net: NetArgs,

    /// Time budget, e.g. 10s, 500ms, 2m (default 10s unless --trials is given).
    #[arg(long, value_name = "DURATION")]
    time: Option<String>,

    /// Number of trials; with --seed the result is the same on every run.
    #[arg(long, value_name = "N")]
    trials: Option<u64>,

    /// Seed of the random choices.
    #[arg(long, value_name = "S", default_value_t = 0)]
    seed: u64,

    /// Worker threads (default: one per core).
    #[arg(long, value_name = "T", default_value_t = 0)]
    threads: usize,

    /// What to minimise: ops, peak, width, mix:A,B,C or ops-within:W.
    #[arg(long, value_name = "OBJ", default_value = "ops")]
    objective: String,

    /// Element type for byte counts: f32, f64, c64, c128 (default: the network's, else c64).
    #[arg(long, value_name = "DTYPE")]
    dtype: Option<String>,

    /// Write the tree to this file (atomically).
    #[arg(short = 'o', long = "output", value_name = "TREE")]
    output: Option<PathBuf>,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

/// Checked options of `plan`, ready to run.
#[derive(Debug, Clone)]
pub struct PlanOptions {
    /// Search options.
    pub search: SearchOptions,
    /// Element type for byte counts, when given.
    pub dtype: Option<Dtype>,
    /// Where to write the tree.
    pub output: Option<PathBuf>,
    /// JSON output.
    pub json: bool,
}

impl PlanArgs {
    /// Checks the arguments without touching any file.
    pub fn validate(&self) -> Result<PlanOptions> {
        self.net.validate()?;
        let objective: Objective = self
            .objective
            .parse()
            .map_err(|m: String| Error::usage(format!("--objective: {m}")))?;
        let time = self.time.as_deref().map(parse_duration).transpose()?;
        let time = match (time, self.trials) {
            (None, None) => Some(Duration::from_secs(10)),
            (t, _) => t,
        };
        let dtype = self
            .dtype
            .as_deref()
            .map(|d| {
                d.parse()
                    .map_err(|m: String| Error::usage(format!("--dtype: {m}")))
            })
            .transpose()?;
        let search = SearchOptions {
            objective,
            trials: self.trials,
            time,
            seed: self.seed,
            threads: self.threads,
            ..SearchOptions::trials(1, self.seed)
        };
        search.validate().map_err(|e| match e {
            Error::Usage(m) if m.contains("threads") => Error::usage(format!("--threads: {m}")),
            Error::Usage(m) => Error::usage(format!("--trials/--time: {m}")),
            other => other,
        })?;
        Ok(PlanOptions {
            search,
            dtype,
            output: self.output.clone(),
            json: self.json,
        })
    }
}

/// Parses `10s`, `500ms`, `2m`, `1h` or a plain number of seconds.
pub fn parse_duration(text: &str) -> Result<Duration> {
    let t = text.trim();
    let split = t
        .find(|c: char| !(c.is_ascii_digit() || c == '.'))
        .unwrap_or(t.len());
    let (num, unit) = t.split_at(split);
    let scale = match unit.trim() {
        "" | "s" => 1.0,
        "ms" => 1e-3,
        "m" | "min" => 60.0,
        "h" => 3600.0,
        _ => f64::NAN,
    };
    match num.parse::<f64>() {
        Ok(v) if scale.is_finite() && v > 0.0 && (v * scale) < 1e9 => {
            Ok(Duration::from_secs_f64(v * scale))
        }
        _ => Err(Error::usage(format!(
            "--time: '{text}' is not a positive duration; write e.g. 10s, 500ms, 2m or 1h"
        ))),
    }
}

/// The flag Ctrl-C sets; the handler is installed once per process.
fn interrupt_flag() -> Arc<AtomicBool> {
    static FLAG: OnceLock<Arc<AtomicBool>> = OnceLock::new();
    FLAG.get_or_init(|| {
        let flag = Arc::new(AtomicBool::new(false));
        let setter = flag.clone();
        // Without a handler (e.g. one is already set) Ctrl-C just ends the
        // process, which loses only the search in progress.
        let _ = ctrlc::set_handler(move || setter.store(true, Ordering::SeqCst));
        flag
    })
    .clone()
}

pub(super) fn run(args: PlanArgs) -> Result<Outcome> {
    let opts = args.validate()?;
    let net = args.net.load()?;
    let dtype = opts.dtype.or(net.dtype).unwrap_or_default();
    let result = search_with_bar(&net, &opts.search)?;
    if let Some(path) = &opts.output {
        write_tree_file(path, &result.tree, &net)?;
    }
    let s = &result;
    let source = format!(
        "search ({}, trial {} of {}, found after {:.2} s)",
        s.finder, s.best_trial, s.trials, s.seconds_to_best
    );
    let report = PlanReport {
        network: Summary::of(&net),
        tree: TreeReport::new(source, &s.metrics, dtype),
        lower_bound: s.lower_bound,
        search: SearchReport {
            objective: opts.search.objective.to_string(),
            seed: opts.search.seed,
            trials: s.trials,
            best_trial: s.best_trial,
            finder: s.finder.clone(),
            seconds_to_best: s.seconds_to_best,
            seconds: s.seconds,
            trials_per_second: s.trials as f64 / s.seconds.max(1e-9),
            interrupted: s.interrupted,
        },
        tree_file: opts.output.as_ref().map(|p| p.display().to_string()),
    };
    Ok(Outcome::ok(if opts.json {
        to_json(&report)
    } else {
        report.to_text()
    }))
}

/// Runs the search with a progress bar on stderr and Ctrl-C keeping the best.
fn search_with_bar(net: &crate::network::Network, opts: &SearchOptions) -> Result<SearchResult> {
    let stop = interrupt_flag();
    stop.store(false, Ordering::SeqCst);
    let bar = match opts.trials {
        Some(n) => ProgressBar::new(n),
        None => ProgressBar::new(opts.time.map_or(0, |t| t.as_millis() as u64)),
    };
    bar.set_draw_target(ProgressDrawTarget::stderr());
    bar.set_style(
        ProgressStyle::with_template("{spinner} [{elapsed_precise}] {wide_bar} {msg}")
            .expect("the template is valid"),
    );
    let by_time = opts.trials.is_none();
    let on_progress = |p: &Progress| {
        if by_time {
            bar.set_position(p.elapsed.as_millis() as u64);
        } else {
            bar.set_position(p.trials_done);
        }
        let rate = p.trials_done as f64 / p.elapsed.as_secs_f64().max(1e-9);
        if let Some(b) = &p.best {
            bar.set_message(format!(
                "best: 2^{:.2} ops, width {:.2} | {} trials, {:.0}/s",
                b.total_ops_log2, b.width, p.trials_done, rate
            ));
        }
    };
    let result = find_tree_with(net, opts, &on_progress, &stop);
    bar.finish_and_clear();
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn durations() {
        assert_eq!(parse_duration("10s").unwrap(), Duration::from_secs(10));
        assert_eq!(parse_duration("500ms").unwrap(), Duration::from_millis(500));
        assert_eq!(parse_duration("2m").unwrap(), Duration::from_secs(120));
        assert_eq!(parse_duration("1.5").unwrap(), Duration::from_millis(1500));
        for bad in ["", "0s", "ten", "5 parsecs", "-1s"] {
            let e = parse_duration(bad).unwrap_err().to_string();
            assert!(e.contains("write e.g. 10s"), "{bad}: {e}");
        }
    }
}
