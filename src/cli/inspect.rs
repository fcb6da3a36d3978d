//! `sliceplan inspect`: network summary and the metrics of a tree.

use std::path::PathBuf;

use clap::Args;

use super::{to_json, NetArgs, Outcome};
use crate::cost::{Dims, Inputs, NodeSets, PeakModel};
use crate::error::{Error, Result};
use crate::network::{Dtype, Summary};
use crate::report::inspect::{InspectReport, SlicedReport, TreeReport};
use crate::tree::{read_tree_file, Tree};

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan inspect demo-data/matrix-chain.toml
  sliceplan inspect demo-data/matrix-chain.toml --tree demo-data/trees/matrix-chain.tree.toml --json
  sliceplan inspect --einsum \"ab,bc,cd->ad\" --dims a=30,b=35,c=15,d=5
  sliceplan inspect demo-data/ising-6x6.toml --slice h0_0a,h1_0a --nodes";

/// Arguments of `inspect`.
#[derive(Debug, Args)]
pub struct InspectArgs {
    #[command(flatten)]
    net: NetArgs,

    /// Tree file to price (default: a baseline that merges tensors in file order).
    #[arg(long, value_name = "TREE")]
    tree: Option<PathBuf>,

    /// Indices to slice, comma-separated, e.g. a,b.
    #[arg(long, value_name = "LIST")]
    slice: Option<String>,

    /// Element type for byte counts: f32, f64, c64, c128 (default: the network's, else c64).
    #[arg(long, value_name = "DTYPE")]
    dtype: Option<String>,

    /// Count input tensors only from the contraction that first uses them.
    #[arg(long)]
    inputs_on_first_use: bool,

    /// Also print the per-node table.
    #[arg(long)]
    nodes: bool,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

pub(super) fn run(args: InspectArgs) -> Result<Outcome> {
    args.net.validate()?;
    let dtype_arg: Option<Dtype> = args
        .dtype
        .as_deref()
        .map(|d| {
            d.parse()
                .map_err(|m: String| Error::usage(format!("--dtype: {m}")))
        })
        .transpose()?;
    let net = args.net.load()?;
    let dtype = dtype_arg.or(net.dtype).unwrap_or_default();
    let (tree, source) = match &args.tree {
        Some(path) => (
            read_tree_file(path, &net)?,
            format!("from {}", path.display()),
        ),
        None => baseline(&net)?,
    };
    let model = PeakModel {
        inputs: if args.inputs_on_first_use {
            Inputs::OnFirstUse
        } else {
            Inputs::Resident
        },
        ..PeakModel::default()
    };
    let sets = NodeSets::new(&net, &tree);
    let metrics = sets.evaluate_unsliced(&net, model);
    let slicing = match &args.slice {
        Some(list) => {
            let ids = net.parse_index_list(list, "--slice")?;
            let sliced = sets.evaluate_sliced(&net, &ids, model);
            let names = ids.iter().map(|&e| net.indices[e].name.clone()).collect();
            Some(SlicedReport::new(names, &sliced, &metrics, dtype))
        }
        None => None,
    };
    let report = InspectReport {
        network: Summary::of(&net),
        tree: TreeReport::new(source, &metrics, dtype),
        slicing,
        nodes: args.nodes.then(|| sets.node_table(&net, &Dims::of(&net))),
    };
    Ok(Outcome::ok(if args.json {
        to_json(&report)
    } else {
        report.to_text()
    }))
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
    let entries = file_order_entries(net);
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

/// Index entries of the intermediates of the file-order (left-deep) tree:
/// the sum over merges of the indices alive in the running result.
fn file_order_entries(net: &crate::network::Network) -> u64 {
    let mut remaining: Vec<u32> = vec![0; net.num_indices()];
    for t in &net.tensors {
        for &e in &t.indices {
            remaining[e] += 1;
        }
    }
    let open = net.open_mask();
    let mut seen = vec![false; net.num_indices()];
    let (mut live, mut total) = (0u64, 0u64);
    for t in &net.tensors {
        for &e in &t.indices {
            if !std::mem::replace(&mut seen[e], true) {
                live += 1;
            }
            remaining[e] -= 1;
            if remaining[e] == 0 && !open[e] {
                live -= 1;
            }
        }
        total = total.saturating_add(live);
    }
    total
}
