//! Where `plan` and `fit` get their tree (a tree file, or a search), and the
//! re-planning search that slicing uses for co-optimisation.

use std::path::PathBuf;
use std::time::{Duration, Instant};

use super::{Event, Hooks};
use crate::cost::{NodeSets, PeakModel};
use crate::error::Result;
use crate::network::{Dtype, Network};
use crate::report::inspect::TreeReport;
use crate::report::plan::SearchReport;
use crate::search::{
    find_tree, find_tree_with, width_lower_bound, Objective, SearchOptions, WidthBound,
};
use crate::slicing::Refit;
use crate::tree::{read_tree_file, Tree};

/// A tree file, or how to search for a tree.
#[derive(Debug, Clone)]
pub enum TreeChoice {
    /// Read this tree file.
    File(PathBuf),
    /// Search with these options.
    Search(SearchOptions),
}

impl TreeChoice {
    /// Checks the options without touching any file.
    pub fn check(&self) -> Result<()> {
        match self {
            TreeChoice::File(_) => Ok(()),
            TreeChoice::Search(opts) => opts.validate(),
        }
    }

    /// Reads or finds the tree. A search reports progress and stops early
    /// (keeping its best tree) through `hooks`.
    pub fn resolve(&self, net: &Network, hooks: &Hooks<'_>) -> Result<Found> {
        match self {
            TreeChoice::File(path) => Ok(Found {
                tree: read_tree_file(path, net)?,
                source: format!("from {}", path.display()),
                lower_bound: width_lower_bound(net),
                search: None,
                options: None,
                front: Vec::new(),
            }),
            TreeChoice::Search(options) => {
                let progress = |p: &crate::search::Progress| (hooks.progress)(Event::Search(p));
                let s = find_tree_with(net, options, &progress, hooks.stop)?;
                Ok(Found {
                    source: format!(
                        "search ({}, trial {} of {}, found after {:.2} s)",
                        s.finder, s.best_trial, s.trials, s.seconds_to_best
                    ),
                    search: Some(SearchReport {
                        objective: options.objective.to_string(),
                        seed: options.seed,
                        trials: s.trials,
                        best_trial: s.best_trial,
                        finder: s.finder.clone(),
                        seconds_to_best: s.seconds_to_best,
                        seconds: s.seconds,
                        trials_per_second: s.trials as f64 / s.seconds.max(1e-9),
                        interrupted: s.interrupted,
                        phases: s.phases,
                        candidates: s.candidates.clone(),
                    }),
                    lower_bound: s.lower_bound,
                    front: s.front,
                    tree: s.tree,
                    options: Some(options.clone()),
                })
            }
        }
    }
}

/// A tree and how it was found.
#[derive(Debug, Clone)]
pub struct Found {
    /// The tree.
    pub tree: Tree,
    /// Where it came from, for reports.
    pub source: String,
    /// The proven lower bound on width.
    pub lower_bound: WidthBound,
    /// How the search went, when there was one.
    pub search: Option<SearchReport>,
    /// The search options, for re-planning (`None` for a tree file).
    options: Option<SearchOptions>,
    /// Other trees of the search's width/ops front, narrowest first (empty
    /// for a tree file): slicing may start from them.
    pub front: Vec<Tree>,
}

impl Found {
    /// The unsliced metrics of the tree as reported.
    pub fn report(&self, net: &Network, dtype: Dtype) -> TreeReport {
        let m = NodeSets::new(net, &self.tree).evaluate_unsliced(net, PeakModel::default());
        TreeReport::new(self.source.clone(), &m, dtype)
    }

    /// The seed of the search (0 for a tree file).
    pub fn seed(&self) -> u64 {
        self.options.as_ref().map_or(0, |o| o.seed)
    }

    /// A re-planner for co-optimisation: searches the network with the
    /// sliced indices at dimension 1 for least total ops within a width
    /// cap. Its work is bounded in proportion to the search's own: with a
    /// trial count T, all calls together run at most T trials (at least one
    /// per call, at most `calls` calls); with `time`, each call gets
    /// 1/`calls` of it (at least 50 ms). No call starts after `deadline`,
    /// and none runs past it. `None` when the tree came from a file.
    pub fn refit(
        &self,
        calls: u32,
        time: Option<Duration>,
        deadline: Option<Instant>,
    ) -> Option<Box<Refit<'static>>> {
        let base = self.options.clone()?;
        let calls = calls.max(1);
        let mut trials_left = base.trials.map(|t| t.max(1));
        let per_call_trials = base.trials.map(|t| (t / calls as u64).max(1));
        let per_call_time = time.map(|t| (t / calls).max(Duration::from_millis(50)));
        let mut calls_left = calls;
        Some(Box::new(
            move |net: &Network, sliced: &[usize], max_width: f64| {
                if calls_left == 0 || trials_left == Some(0) {
                    return None;
                }
                let mut time = per_call_time;
                if let Some(d) = deadline {
                    let left = d.saturating_duration_since(Instant::now());
                    if left.is_zero() {
                        return None;
                    }
                    time = Some(time.map_or(left, |t| t.min(left)));
                }
                let trials = match (per_call_trials, trials_left) {
                    (Some(p), Some(l)) => Some(p.min(l)),
                    _ => None,
                };
                if trials.is_none() && time.is_none() {
                    // Neither a trial count nor a clock: a short fixed slot.
                    time = Some(Duration::from_millis(50));
                }
                calls_left -= 1;
                if let (Some(l), Some(t)) = (trials_left.as_mut(), trials) {
                    *l -= t;
                }
                let mut reduced = net.clone();
                for &e in sliced {
                    reduced.indices[e].dim = 1;
                }
                let opts = SearchOptions {
                    objective: Objective::OpsWithinWidth { max_width },
                    trials,
                    time,
                    ..base.clone()
                };
                find_tree(&reduced, &opts).ok().map(|r| r.tree)
            },
        ))
    }
}
