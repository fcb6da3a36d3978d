//! Search arguments shared by `plan` and `fit`, and running a search with a
//! progress bar on stderr and Ctrl-C keeping the best tree found.

use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, OnceLock};
use std::time::Duration;

use clap::Args;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use crate::error::{Error, Result};
use crate::search::{find_tree_with, Objective, Progress, SearchOptions, SearchResult};

/// How long and how to search for a tree.
#[derive(Debug, Clone, Args)]
pub struct SearchArgs {
    /// Time budget, e.g. 10s, 500ms, 2m (default 10s unless --trials is given).
    #[arg(long, value_name = "DURATION")]
    pub time: Option<String>,

    /// Number of trials; with --seed the result is the same on every run.
    #[arg(long, value_name = "N")]
    pub trials: Option<u64>,

    /// Seed of the random choices.
    #[arg(long, value_name = "S", default_value_t = 0)]
    pub seed: u64,

    /// Worker threads (default: one per core).
    #[arg(long, value_name = "T", default_value_t = 0)]
    pub threads: usize,

    /// What to minimise: ops, peak, width, mix:A,B,C or ops-within:W.
    #[arg(long, value_name = "OBJ", default_value = "ops")]
    pub objective: String,
}

impl SearchArgs {
    /// Checks the arguments without touching any file.
    pub fn to_options(&self) -> Result<SearchOptions> {
        let objective: Objective = self
            .objective
            .parse()
            .map_err(|m: String| Error::usage(format!("--objective: {m}")))?;
        let time = self.time.as_deref().map(parse_duration).transpose()?;
        let time = match (time, self.trials) {
            (None, None) => Some(Duration::from_secs(10)),
            (t, _) => t,
        };
        let search = SearchOptions {
            objective,
            trials: self.trials,
            time,
            seed: self.seed,
            threads: self.threads,
            available_memory: crate::host::available_memory().map(|a| a.bytes),
            ..SearchOptions::trials(1, self.seed)
        };
        search.validate().map_err(|e| match e {
            Error::Invalid { field, message } => {
                let flag = match field {
                    "threads" => "--threads",
                    "trials" => "--trials",
                    _ => "--trials/--time",
                };
                Error::usage(format!("{flag}: {message}"))
            }
            other => other,
        })?;
        Ok(search)
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

/// Runs the search with a progress bar on stderr and Ctrl-C keeping the best.
pub fn search_with_bar(
    net: &crate::network::Network,
    opts: &SearchOptions,
) -> Result<SearchResult> {
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
