//! `sliceplan import`: read any input kind and write it as a native network
//! file with its values.

use std::path::PathBuf;

use clap::Args;

use super::args::NetArgs;
use super::Outcome;
use sliceplan::command::import::{import, ImportOptions};
use sliceplan::error::Result;
use sliceplan::formats::write::DEFAULT_INLINE_MAX;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan import demo-data/circuits/ghz-teleport.qasm --bitstring 011101 -o ghz.toml
  sliceplan import demo-data/circuits/phase-kickback.qasm --open all -o qpe-state.toml
  sliceplan import demo-data/formulas/seating.cnf -o seating.toml
  sliceplan import demo-data/graphs/ring-of-cliques.col --problem colorings --colors 4 -o col.toml
  sliceplan import demo-data/graphs/mixed-ladder.edges --problem ising --beta 0.5 -o ladder.toml";

/// Arguments of `import`.
#[derive(Debug, Args)]
pub struct ImportArgs {
    #[command(flatten)]
    net: NetArgs,

    /// The network file to write (.toml); large tensors go to NAME.data/*.npy.
    #[arg(short, long, value_name = "OUT")]
    output: PathBuf,

    /// Tensors with more elements than this are written as .npy side files.
    #[arg(long, value_name = "N", default_value_t = DEFAULT_INLINE_MAX)]
    inline_max: usize,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

pub(super) fn run(args: ImportArgs) -> Result<Outcome> {
    let opts = ImportOptions {
        network: args.net.source()?,
        output: args.output,
        inline_max: args.inline_max,
    };
    let r = import(&opts)?;
    Ok(Outcome::render(args.json, &r, r.to_text(), 0))
}
