//! The options, progress reports and results of a search.

use std::time::Duration;

use serde::Serialize;

use super::bound::WidthBound;
use super::objective::{Measures, Objective};
use crate::cost::Metrics;
use crate::error::{Error, Result};
use crate::tree::Tree;

/// The most worker threads a search accepts.
pub const MAX_THREADS: usize = 1024;

/// Which finders the trials may draw.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Finders {
    /// The exact finder as the first candidate on small networks.
    pub exact: bool,
    /// The randomised greedy finder.
    pub greedy: bool,
    /// The balanced-partitioning finder.
    pub partition: bool,
    /// Subtree refinement inside trials and of the final best.
    pub refine: bool,
}

impl Default for Finders {
    fn default() -> Self {
        Finders {
            exact: true,
            greedy: true,
            partition: true,
            refine: true,
        }
    }
}

/// Options of a search.
#[derive(Debug, Clone, PartialEq)]
pub struct SearchOptions {
    /// What to minimise.
    pub objective: Objective,
    /// Stop after this many trials.
    pub trials: Option<u64>,
    /// Stop after this much time (the final refinement included).
    pub time: Option<Duration>,
    /// Seed of every random choice.
    pub seed: u64,
    /// Worker threads (0: one per core).
    pub threads: usize,
    /// Finders the trials may use.
    pub finders: Finders,
    /// Simplify (absorb small tensors) for some trials.
    pub simplify: bool,
    /// Bytes of memory the search may use (the caller reads the host);
    /// `None`: no check.
    pub available_memory: Option<u64>,
    /// Price the simple orders (file order, breadth-first sweep, min-fill,
    /// min-degree, nested dissection, plain greedy) before any random
    /// trial, so the answer is never worse than any of them.
    pub candidates: bool,
    /// Let the trials draw elimination orders (min-fill, min-degree) and
    /// nested dissections besides greedy and partitioning.
    pub orders: bool,
}

impl SearchOptions {
    /// Options for a fixed number of trials with a seed (deterministic).
    pub fn trials(trials: u64, seed: u64) -> SearchOptions {
        SearchOptions {
            objective: Objective::TotalOps,
            trials: Some(trials),
            time: None,
            seed,
            threads: 0,
            finders: Finders::default(),
            simplify: true,
            available_memory: None,
            candidates: true,
            orders: true,
        }
    }

    /// Options for a time budget with a seed.
    pub fn time(time: Duration, seed: u64) -> SearchOptions {
        SearchOptions {
            time: Some(time),
            trials: None,
            ..SearchOptions::trials(0, seed)
        }
    }

    /// Checks the options before any work.
    pub fn validate(&self) -> Result<()> {
        match (self.trials, self.time) {
            (None, None) => Err(Error::invalid(
                "time",
                "give a trial count or a time budget (e.g. 100 trials or 10s)",
            )),
            (Some(0), _) => Err(Error::invalid(
                "trials",
                "the trial count must be at least 1",
            )),
            (_, Some(t)) if t.is_zero() => {
                Err(Error::invalid("time", "the time budget must be positive"))
            }
            _ if self.threads > MAX_THREADS => Err(Error::invalid(
                "threads",
                format!(
                    "{} threads is too many; give at most {MAX_THREADS} (0 means one per core)",
                    self.threads
                ),
            )),
            _ if !(self.finders.greedy
                || self.finders.partition
                || self.finders.exact
                || self.orders
                || self.candidates) =>
            {
                Err(Error::invalid("finders", "enable at least one finder"))
            }
            _ => Ok(()),
        }
    }
}

/// Where a search stands, for progress display.
#[derive(Debug, Clone, PartialEq)]
pub struct Progress {
    /// Trials finished.
    pub trials_done: u64,
    /// The trial budget, if any.
    pub trials_total: Option<u64>,
    /// Time since the search started.
    pub elapsed: Duration,
    /// Measures of the best tree so far.
    pub best: Option<Measures>,
}

/// Where the time of a search went (seconds of wall time).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct PhaseTimes {
    /// Simplifying the network (dropping unit indices, merging parallel
    /// ones, absorbing small tensors).
    pub simplify: f64,
    /// Pricing the simple orders before the trials.
    pub candidates: f64,
    /// The randomised trials.
    pub trials: f64,
    /// The final subtree reconfiguration of the best trees.
    pub refine: f64,
    /// Building the final tree, its metrics and the lower bounds.
    pub pricing: f64,
}

/// One of the simple orders priced before the trials, as found.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CandidateScore {
    /// Its name (`file-order`, `sweep`, `file-order-by-component`,
    /// `min-fill`, `min-degree`, `dissection`, `greedy`, `exact`).
    pub finder: String,
    /// log2 of its total ops.
    pub total_ops_log2: f64,
    /// Its width.
    pub width: f64,
    /// Its op width.
    pub op_width: f64,
    /// Seconds it took, pricing included.
    pub seconds: f64,
}

/// The outcome of a search.
#[derive(Debug, Clone)]
pub struct SearchResult {
    /// The best tree, over the network's tensors.
    pub tree: Tree,
    /// Its metrics by the cost model (default peak model).
    pub metrics: Metrics,
    /// The proven lower bound on width.
    pub lower_bound: WidthBound,
    /// Trials run.
    pub trials: u64,
    /// The trial that found the best tree, counted from 1 (so at most
    /// `trials`); 0 when the best tree is a candidate priced before any
    /// trial (`finder` names it).
    pub best_trial: u64,
    /// How the best tree was found, e.g. `greedy+refine`.
    pub finder: String,
    /// Seconds from the start until the best trial finished.
    pub seconds_to_best: f64,
    /// Seconds the whole search took.
    pub seconds: f64,
    /// True when the search was stopped early (Ctrl-C).
    pub interrupted: bool,
    /// A proven lower bound on op width (every tree's largest single
    /// contraction is at least this, log2).
    pub op_width_lower_bound: f64,
    /// Where the time went.
    pub phases: PhaseTimes,
    /// The simple orders priced before the trials (those that finished in
    /// time), in the order they were priced.
    pub candidates: Vec<CandidateScore>,
    /// Other trees met on the way that no tree met beats on both width and
    /// total ops (at most one per whole width, narrowest first; the best
    /// tree left out): starting points for slicing, which may prefer a
    /// narrower tree to the cheapest. Empty for networks of over 20,000
    /// tensors.
    pub front: Vec<Tree>,
}
