//! `inspect`: network summary, the metrics of a tree (a file-order
//! baseline without one), sliced metrics and the per-node table.

use std::path::PathBuf;

use crate::cost::{Dims, Inputs, NodeSets, PeakModel};
use crate::error::Result;
use crate::network::{Dtype, Summary};
use crate::report::inspect::{InspectReport, SlicedReport, TreeReport};
use crate::tree::{read_tree_file, Tree};

use super::NetworkSource;

/// Options of `inspect`.
#[derive(Debug, Clone)]
pub struct InspectOptions {
    /// The network.
    pub network: NetworkSource,
    /// A tree file to price (default: the file-order baseline).
    pub tree: Option<PathBuf>,
    /// Index names to slice.
    pub slice: Vec<String>,
    /// Element type for byte counts (default: the network's, else c64).
    pub dtype: Option<Dtype>,
    /// Count input tensors only from the contraction that first uses them.
    pub inputs_on_first_use: bool,
    /// Include the per-node table.
    pub nodes: bool,
}

impl InspectOptions {
    /// Options that summarise `network` and price its baseline tree.
    pub fn new(network: NetworkSource) -> InspectOptions {
        InspectOptions {
            network,
            tree: None,
            slice: Vec::new(),
            dtype: None,
            inputs_on_first_use: false,
            nodes: false,
        }
    }
}

/// Runs `inspect`.
pub fn inspect(opts: &InspectOptions) -> Result<InspectReport> {
    let net = opts.network.load()?;
    let dtype = opts.dtype.or(net.dtype).unwrap_or_default();
    let (tree, source) = match &opts.tree {
        Some(path) => (
            read_tree_file(path, &net)?,
            format!("from {}", path.display()),
        ),
        None => baseline(&net)?,
    };
    let model = PeakModel {
        inputs: if opts.inputs_on_first_use {
            Inputs::OnFirstUse
        } else {
            Inputs::Resident
        },
        ..PeakModel::default()
    };
    let sets = NodeSets::new(&net, &tree);
    let metrics = sets.evaluate_unsliced(&net, model);
    let slicing = if opts.slice.is_empty() {
        None
    } else {
        let ids = net.index_ids(&opts.slice, "slice")?;
        let sliced = sets.evaluate_sliced(&net, &ids, model);
        Some(SlicedReport::new(
            opts.slice.clone(),
            &sliced,
            &metrics,
            dtype,
        ))
    };
    Ok(InspectReport {
        network: Summary::of(&net),
        values: crate::network::values::value_files(&net),
        tree: TreeReport::new(source, &metrics, dtype),
        slicing,
        nodes: opts.nodes.then(|| sets.node_table(&net, &Dims::of(&net))),
    })
}

/// Index entries the per-node sets may hold before the file-order baseline
/// is replaced (about 800 MB).
const BASELINE_MAX_ENTRIES: u64 = 100_000_000;

/// The baseline tree: tensors merged in file order, unless its
/// intermediates would hold more than [`BASELINE_MAX_ENTRIES`] index
/// entries in all (a circuit's input states come first in the file, so a
/// 60,000-qubit circuit's file-order tree holds about 2 x 10^9 and took 29 s
/// and 5 GB); then one plain greedy trial, which is linear.
fn baseline(net: &crate::network::Network) -> Result<(Tree, String)> {
    let entries = crate::search::file_order_entries(net);
    if entries <= BASELINE_MAX_ENTRIES {
        return Ok((
            Tree::left_deep(net.num_tensors()),
            "baseline: tensors merged in file order (run `sliceplan plan` to search for a good tree)".to_string(),
        ));
    }
    let opts = crate::search::SearchOptions {
        threads: 1,
        finders: crate::search::Finders {
            exact: false,
            greedy: true,
            partition: false,
            refine: false,
        },
        ..crate::search::SearchOptions::trials(1, 0)
    };
    let found = crate::search::find_tree(net, &opts)?;
    Ok((
        found.tree,
        format!("baseline: one greedy trial (the file-order tree would hold {entries} index entries; run `sliceplan plan` to search for a good tree)"),
    ))
}
