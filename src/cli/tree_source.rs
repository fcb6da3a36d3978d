//! Where `fit` and `plan` get their tree: a tree file, or a search.

use std::path::PathBuf;

use clap::Args;

use crate::cost::{NodeSets, PeakModel};
use crate::error::Result;
use crate::network::{Dtype, Network};
use crate::report::inspect::TreeReport;
use crate::slicing::Refit;
use crate::tree::{read_tree_file, Tree};

/// Tree arguments.
#[derive(Debug, Clone, Args)]
pub struct TreeArgs {
    /// Use this tree file instead of searching.
    #[arg(long, value_name = "TREE")]
    pub tree: Option<PathBuf>,

    /// Seed of the randomised search (recorded in plans).
    #[arg(long, value_name = "S", default_value_t = 0)]
    pub seed: u64,
}

/// A tree and how it was found.
pub struct Found {
    /// The tree.
    pub tree: Tree,
    /// Where it came from, for reports.
    pub source: String,
    /// A proven lower bound on width, when computed.
    pub lower_bound: Option<f64>,
    /// The seed used.
    #[allow(dead_code)] // read by `plan` once it writes plan files
    pub seed: u64,
}

impl Found {
    /// The unsliced metrics of the tree as reported.
    pub fn report(&self, net: &Network, dtype: Dtype) -> TreeReport {
        let m = NodeSets::new(net, &self.tree).evaluate_unsliced(net, PeakModel::default());
        TreeReport::new(self.source.clone(), &m, dtype)
    }

    /// A tree re-planner for co-optimisation, when a search is available.
    pub fn refit<'a>(&self, _net: &'a Network) -> Option<Box<Refit<'a>>> {
        None
    }
}

impl TreeArgs {
    /// Checks the values without touching any file.
    pub fn check(&self) -> Result<()> {
        Ok(())
    }

    /// Reads or finds the tree.
    pub fn find(&self, net: &Network, _dtype: Dtype) -> Result<Found> {
        let (tree, source) = match &self.tree {
            Some(path) => (
                read_tree_file(path, net)?,
                format!("from {}", path.display()),
            ),
            None => (
                Tree::left_deep(net.num_tensors()),
                "baseline (file order)".to_string(),
            ),
        };
        Ok(Found {
            tree,
            source,
            lower_bound: None,
            seed: self.seed,
        })
    }
}
