//! `sliceplan inspect`: network summary and the metrics of a tree.

use std::path::PathBuf;

use clap::Args;

use super::args::{DtypeArg, NetArgs};
use super::Outcome;
use sliceplan::command::inspect::{inspect, InspectOptions};
use sliceplan::error::Result;

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
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    slice: Vec<String>,

    /// Element type for byte counts (default: the network's, else c64).
    #[arg(long, value_name = "DTYPE")]
    dtype: Option<DtypeArg>,

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
    let opts = InspectOptions {
        network: args.net.source()?,
        tree: args.tree,
        slice: args.slice,
        dtype: args.dtype.map(Into::into),
        inputs_on_first_use: args.inputs_on_first_use,
        nodes: args.nodes,
    };
    let report = inspect(&opts)?;
    Ok(Outcome::render(args.json, &report, report.to_text(), 0))
}
