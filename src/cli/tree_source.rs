//! Where `fit` and `plan` get their tree: a tree file, or a search; and the
//! re-planning search that slicing uses for co-optimisation.

use std::path::PathBuf;

use clap::Args;

use super::search_args::{search_with_bar, SearchArgs};
use crate::cost::{NodeSets, PeakModel};
use crate::error::Result;
use crate::network::{Dtype, Network};
use crate::report::inspect::TreeReport;
use crate::report::plan::SearchReport;
use crate::search::{find_tree, width_lower_bound, Objective, SearchOptions, WidthBound};
use crate::slicing::Refit;
use crate::tree::{read_tree_file, Tree};

/// Tree arguments: a file, or how to search.
#[derive(Debug, Clone, Args)]
pub struct TreeArgs {
    /// Use this tree file instead of searching.
    #[arg(long, value_name = "TREE")]
    pub tree: Option<PathBuf>,

    #[command(flatten)]
    pub search: SearchArgs,
}

/// A tree and how it was found.
pub struct Found {
    /// The tree.
    pub tree: Tree,
    /// Where it came from, for reports.
    pub source: String,
    /// The proven lower bound on width.
    pub lower_bound: WidthBound,
    /// How the search went, when there was one.
    pub search: Option<SearchReport>,
    /// The search options, for re-planning.
    options: SearchOptions,
}

impl Found {
    /// The unsliced metrics of the tree as reported.
    pub fn report(&self, net: &Network, dtype: Dtype) -> TreeReport {
        let m = NodeSets::new(net, &self.tree).evaluate_unsliced(net, PeakModel::default());
        TreeReport::new(self.source.clone(), &m, dtype)
    }

    /// The seed of the search (0 for a tree file).
    pub fn seed(&self) -> u64 {
        self.options.seed
    }

    /// A re-planner for co-optimisation: searches the network with the
    /// sliced indices at dimension 1 for least total ops within a width cap,
    /// each call with 1/`calls` of the original search's time (at least
    /// 50 ms) or 1/8 of its trials (at least 4). `None` when the tree came
    /// from a file.
    pub fn refit(&self, calls: u32) -> Option<Box<Refit<'static>>> {
        self.search.as_ref()?;
        let mut opts = self.options.clone();
        opts.trials = opts.trials.map(|t| (t / 8).max(4));
        opts.time = opts
            .time
            .map(|t| (t / calls.max(1)).max(std::time::Duration::from_millis(50)));
        Some(Box::new(
            move |net: &Network, sliced: &[usize], max_width: f64| {
                let mut reduced = net.clone();
                for &e in sliced {
                    reduced.indices[e].dim = 1;
                }
                let opts = SearchOptions {
                    objective: Objective::OpsWithinWidth { max_width },
                    ..opts.clone()
                };
                find_tree(&reduced, &opts).ok().map(|r| r.tree)
            },
        ))
    }
}

impl TreeArgs {
    /// Checks the values without touching any file.
    pub fn check(&self) -> Result<SearchOptions> {
        self.search.to_options()
    }

    /// Reads or finds the tree.
    pub fn find(&self, net: &Network, options: &SearchOptions) -> Result<Found> {
        if let Some(path) = &self.tree {
            return Ok(Found {
                tree: read_tree_file(path, net)?,
                source: format!("from {}", path.display()),
                lower_bound: width_lower_bound(net),
                search: None,
                options: options.clone(),
            });
        }
        let s = search_with_bar(net, options)?;
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
            }),
            lower_bound: s.lower_bound,
            tree: s.tree,
            options: options.clone(),
        })
    }
}
