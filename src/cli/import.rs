//! `sliceplan import`: read any input kind and write it as a native network
//! file with its values, so plans and jobs refer to one stable file.

use std::path::PathBuf;

use clap::Args;
use serde::Serialize;

use super::{to_json, NetArgs, Outcome};
use crate::error::{Error, Result};
use crate::formats::write::{write_native, WriteOptions, Written, DEFAULT_INLINE_MAX};
use crate::network::Network;

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

/// What `import` and `generate` report.
#[derive(Debug, Serialize)]
pub(super) struct WriteReport {
    name: String,
    tensors: usize,
    indices: usize,
    open: usize,
    has_values: bool,
    #[serde(flatten)]
    written: Written,
}

impl WriteReport {
    pub(super) fn render(net: &Network, written: Written, json: bool) -> Outcome {
        let report = WriteReport {
            name: net.name.clone(),
            tensors: net.num_tensors(),
            indices: net.num_indices(),
            open: net.open.len(),
            has_values: net.has_values(),
            written,
        };
        if json {
            return Outcome::ok(to_json(&report));
        }
        let side = match report.written.npy_files.len() {
            0 => String::new(),
            n => format!(", {n} .npy side file(s)"),
        };
        Outcome::ok(format!(
            "wrote {}: {}, {} tensors, {} indices, {} open{side}, fingerprint {}\n",
            report.written.path.display(),
            report.name,
            report.tensors,
            report.indices,
            report.open,
            report.written.fingerprint
        ))
    }
}

/// Checks an output path before any work: a `.toml` file that is not the input.
pub(super) fn check_output(
    output: &std::path::Path,
    input: Option<&std::path::Path>,
) -> Result<()> {
    if output.extension().and_then(|e| e.to_str()) != Some("toml") {
        return Err(Error::usage(format!(
            "-o {}: the network file must end in .toml",
            output.display()
        )));
    }
    if input.is_some_and(|i| i == output) {
        return Err(Error::usage(
            "-o names the input file; choose another output",
        ));
    }
    Ok(())
}

pub(super) fn run(args: ImportArgs) -> Result<Outcome> {
    args.net.validate()?;
    check_output(&args.output, args.net.net.as_deref())?;
    let net = args.net.load()?;
    let options = WriteOptions {
        inline_max: args.inline_max,
    };
    let written = write_native(&net, &args.output, &options)?;
    Ok(WriteReport::render(&net, written, args.json))
}
