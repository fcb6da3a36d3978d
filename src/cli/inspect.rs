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
        Some(path) => (read_tree_file(path, &net)?, format!("from {}", path.display())),
        None => (
            Tree::left_deep(net.num_tensors()),
            "baseline: tensors merged in file order (run `sliceplan plan` to search for a good tree)".to_string(),
        ),
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
