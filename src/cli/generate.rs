//! `sliceplan generate`: demo and benchmark networks written as native files.

use std::path::PathBuf;

use clap::{Args, Subcommand};

use super::import::{check_output, WriteReport};
use super::Outcome;
use crate::error::{Error, Result};
use crate::formats::circuit::{amplitude_network, AmplitudeSpec, OpenQubits};
use crate::formats::graph::{graph_network, Graph, GraphProblem};
use crate::formats::write::{write_native, WriteOptions, DEFAULT_INLINE_MAX};
use crate::generate::circuit::brickwork_circuit;
use crate::generate::ising::{ising_lattice, IsingParams};
use crate::generate::values::{fill, Filler};
use crate::network::Network;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan generate lattice --shape 6x6 --periodic --model ising --beta 0.44 -o ising.toml
  sliceplan generate lattice --shape 4x4x4 --bond 3 --seed 7 -o cube.toml
  sliceplan generate regular-graph --vertices 40 --degree 3 --seed 2 --problem independent-sets -o rrg.toml
  sliceplan generate brickwork --rows 4 --cols 4 --depth 12 --seed 1 --open 0,1 -o brick.toml
  sliceplan generate matrix-chain --dims 30,35,15,5,10,20,25 -o chain.toml";

/// Arguments of `generate`.
#[derive(Debug, Args)]
pub struct GenerateArgs {
    /// The family to generate.
    #[command(subcommand)]
    family: Family,
}

/// Where to write, shared by every family.
#[derive(Debug, Args)]
struct Output {
    /// The network file to write (.toml).
    #[arg(short, long, value_name = "OUT")]
    output: PathBuf,

    /// Tensors with more elements than this are written as .npy side files.
    #[arg(long, value_name = "N", default_value_t = DEFAULT_INLINE_MAX)]
    inline_max: usize,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

#[derive(Debug, Subcommand)]
enum Family {
    /// A 1- to 4-dimensional lattice, one tensor per site, one index per bond.
    Lattice {
        /// Side lengths, e.g. 6x6 or 4x4x4.
        #[arg(long, value_name = "AxB[xC]")]
        shape: String,
        /// Wrap every side around (sides at least 3).
        #[arg(long)]
        periodic: bool,
        /// Bond dimension (2 for the Ising model).
        #[arg(long, value_name = "D", default_value_t = 2)]
        bond: u64,
        /// Tensor values: random (seeded), ones, none, or ising.
        #[arg(long, value_name = "MODEL", default_value = "random")]
        model: String,
        /// Seed for random values.
        #[arg(long, default_value_t = 0)]
        seed: u64,
        /// Ising: inverse temperature.
        #[arg(long, allow_negative_numbers = true)]
        beta: Option<f64>,
        /// Ising: coupling J (default 1).
        #[arg(long, allow_negative_numbers = true)]
        coupling: Option<f64>,
        /// Ising: external field h (default 0).
        #[arg(long, allow_negative_numbers = true)]
        field: Option<f64>,
        #[command(flatten)]
        out: Output,
    },
    /// A seeded random regular graph: random tensors per vertex, or a graph problem.
    RegularGraph {
        /// Number of vertices.
        #[arg(long, value_name = "N")]
        vertices: usize,
        /// Degree of every vertex.
        #[arg(long, value_name = "D")]
        degree: usize,
        /// Seed for the graph (and random values).
        #[arg(long, default_value_t = 0)]
        seed: u64,
        /// Bond dimension of the edges (without --problem).
        #[arg(long, value_name = "D", default_value_t = 2)]
        bond: u64,
        /// Tensor values without --problem: random, ones, none.
        #[arg(long, value_name = "MODEL")]
        model: Option<String>,
        /// Count on the graph instead: independent-sets, colorings, perfect-matchings, ising.
        #[arg(long)]
        problem: Option<String>,
        /// Colours for --problem colorings.
        #[arg(long)]
        colors: Option<u64>,
        /// Inverse temperature for --problem ising.
        #[arg(long, allow_negative_numbers = true)]
        beta: Option<f64>,
        /// Coupling for --problem ising (default 1).
        #[arg(long, allow_negative_numbers = true)]
        coupling: Option<f64>,
        /// Field for --problem ising (default 0).
        #[arg(long, allow_negative_numbers = true)]
        field: Option<f64>,
        #[command(flatten)]
        out: Output,
    },
    /// A random brickwork circuit on a qubit grid, with gate values.
    Brickwork {
        /// Grid rows.
        #[arg(long)]
        rows: usize,
        /// Grid columns.
        #[arg(long)]
        cols: usize,
        /// Number of two-qubit layers.
        #[arg(long)]
        depth: usize,
        /// Seed for the layer order and the rotations.
        #[arg(long, default_value_t = 0)]
        seed: u64,
        /// Output bits, one 0/1 per qubit, leftmost = qubit 0 (default zeros).
        #[arg(long, value_name = "BITS")]
        bitstring: Option<String>,
        /// Qubits left open, e.g. 0,3 or all.
        #[arg(long, value_name = "QUBITS")]
        open: Option<String>,
        #[command(flatten)]
        out: Output,
    },
    /// A chain of matrices with the given dimensions.
    MatrixChain {
        /// Dimensions d0,d1,...: matrix k is d(k-1) x d(k).
        #[arg(long, value_name = "LIST")]
        dims: String,
        /// Tensor values: random (seeded), ones, none.
        #[arg(long, value_name = "MODEL", default_value = "random")]
        model: String,
        /// Seed for random values.
        #[arg(long, default_value_t = 0)]
        seed: u64,
        #[command(flatten)]
        out: Output,
    },
}

fn filler(model: &str, seed: u64) -> Result<Filler> {
    match model {
        "random" => Ok(Filler::Random { seed }),
        "ones" => Ok(Filler::Ones),
        "none" => Ok(Filler::None),
        other => Err(Error::usage(format!(
            "--model: unknown model '{other}'; valid: random, ones, none"
        ))),
    }
}

fn parse_list<T: std::str::FromStr>(text: &str, sep: char, what: &str) -> Result<Vec<T>> {
    text.split(sep)
        .map(|s| {
            s.trim()
                .parse()
                .map_err(|_| Error::usage(format!("{what}: '{s}' is not a whole number")))
        })
        .collect()
}

/// Builds the requested network (validating the options first).
fn build(family: &Family) -> Result<Network> {
    match family {
        Family::Lattice {
            shape,
            periodic,
            bond,
            model,
            seed,
            beta,
            coupling,
            field,
            ..
        } => {
            let shape: Vec<usize> = parse_list(shape, 'x', "--shape")?;
            if model == "ising" {
                if *bond != 2 {
                    return Err(Error::usage("--model ising needs --bond 2"));
                }
                let beta = beta.ok_or_else(|| Error::usage("--model ising needs --beta"))?;
                let p = IsingParams {
                    beta,
                    coupling: coupling.unwrap_or(1.0),
                    field: field.unwrap_or(0.0),
                };
                return ising_lattice(&shape, *periodic, p);
            }
            if beta.is_some() || coupling.is_some() || field.is_some() {
                return Err(Error::usage(
                    "--beta, --coupling and --field go with --model ising",
                ));
            }
            let f = filler(model, *seed)?;
            Ok(fill(crate::generate::lattice(&shape, *bond, *periodic)?, f))
        }
        Family::RegularGraph {
            vertices,
            degree,
            seed,
            bond,
            model,
            problem,
            colors,
            beta,
            coupling,
            field,
            ..
        } => {
            let problem =
                GraphProblem::from_flags(problem.as_deref(), *colors, *beta, *coupling, *field)?;
            let edges = crate::generate::random_regular_graph(*vertices, *degree, *seed)?;
            match problem {
                Some(p) => {
                    if model.is_some() {
                        return Err(Error::usage("--model and --problem exclude each other"));
                    }
                    let g = Graph::from_edges(*vertices, &edges);
                    let name = format!(
                        "random {degree}-regular graph on {vertices} vertices, seed {seed},"
                    );
                    graph_network(&g, &p, "regular-graph", &name)
                }
                None => {
                    let f = filler(model.as_deref().unwrap_or("random"), *seed)?;
                    Ok(fill(
                        crate::generate::graph_network(*vertices, &edges, *bond)?,
                        f,
                    ))
                }
            }
        }
        Family::Brickwork {
            rows,
            cols,
            depth,
            seed,
            bitstring,
            open,
            ..
        } => {
            let open = open
                .as_deref()
                .map(|o| OpenQubits::parse(o).map_err(|m| Error::usage(format!("--open: {m}"))))
                .transpose()?;
            let spec = AmplitudeSpec {
                bitstring: bitstring.clone(),
                open,
            };
            spec.validate().map_err(Error::usage)?;
            amplitude_network(&brickwork_circuit(*rows, *cols, *depth, *seed)?, &spec)
        }
        Family::MatrixChain {
            dims, model, seed, ..
        } => {
            let dims: Vec<u64> = parse_list(dims, ',', "--dims")?;
            let f = filler(model, *seed)?;
            Ok(fill(crate::generate::matrix_chain(&dims)?, f))
        }
    }
}

pub(super) fn run(args: GenerateArgs) -> Result<Outcome> {
    let out = match &args.family {
        Family::Lattice { out, .. }
        | Family::RegularGraph { out, .. }
        | Family::Brickwork { out, .. }
        | Family::MatrixChain { out, .. } => out,
    };
    check_output(&out.output, None)?;
    let net = build(&args.family)?;
    let options = WriteOptions {
        inline_max: out.inline_max,
    };
    let written = write_native(&net, &out.output, &options)?;
    Ok(WriteReport::render(&net, written, out.json))
}
