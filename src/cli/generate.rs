//! `sliceplan generate`: demo and benchmark networks written as native files.

use std::path::PathBuf;

use clap::{Args, Subcommand, ValueEnum};

use super::args::{amplitude, ProblemArg};
use super::Outcome;
use sliceplan::command::generate::{generate, Family, GenerateOptions, GraphValues, LatticeValues};
use sliceplan::error::{Error, Result};
use sliceplan::formats::graph::GraphProblem;
use sliceplan::formats::write::DEFAULT_INLINE_MAX;
use sliceplan::generate::ising::IsingParams;
use sliceplan::generate::values::Filler;

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
    family: FamilyArgs,
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

/// Tensor values of a generated network.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum ModelArg {
    /// Reproducible random complex values (--seed).
    Random,
    /// Every element 1.
    Ones,
    /// No values (structure only: enough for planning).
    None,
    /// The Ising model (lattices only; --beta, --coupling, --field).
    Ising,
}

#[derive(Debug, Subcommand)]
enum FamilyArgs {
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
        /// Tensor values.
        #[arg(long, value_name = "MODEL", default_value = "random")]
        model: ModelArg,
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
        /// Tensor values without --problem (default random).
        #[arg(long, value_name = "MODEL")]
        model: Option<ModelArg>,
        /// Count on the graph instead.
        #[arg(long)]
        problem: Option<ProblemArg>,
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
        #[arg(long, value_name = "LIST", value_delimiter = ',', required = true)]
        dims: Vec<u64>,
        /// Tensor values.
        #[arg(long, value_name = "MODEL", default_value = "random")]
        model: ModelArg,
        /// Seed for random values.
        #[arg(long, default_value_t = 0)]
        seed: u64,
        #[command(flatten)]
        out: Output,
    },
}

/// The filler of a non-Ising model.
fn filler(model: ModelArg, seed: u64) -> Result<Filler> {
    match model {
        ModelArg::Random => Ok(Filler::Random { seed }),
        ModelArg::Ones => Ok(Filler::Ones),
        ModelArg::None => Ok(Filler::None),
        ModelArg::Ising => Err(Error::invalid(
            "model",
            "ising is a lattice model; on a graph use --problem ising",
        )),
    }
}

/// Parses `6x6` or `4x4x4`.
fn parse_shape(text: &str) -> Result<Vec<usize>> {
    text.split('x')
        .map(|s| {
            s.trim().parse().map_err(|_| {
                Error::invalid("shape", format!("'{s}' in '{text}' is not a whole number"))
            })
        })
        .collect()
}

/// The library's family from the arguments (checked, no file touched).
fn family(args: &FamilyArgs) -> Result<(Family, &Output)> {
    Ok(match args {
        FamilyArgs::Lattice {
            shape,
            periodic,
            bond,
            model,
            seed,
            beta,
            coupling,
            field,
            out,
        } => {
            let values = if *model == ModelArg::Ising {
                if *bond != 2 {
                    return Err(Error::invalid("bond", "the ising model needs bond 2"));
                }
                LatticeValues::Ising(IsingParams {
                    beta: beta.ok_or_else(|| {
                        Error::invalid("beta", "the ising model needs the inverse temperature")
                    })?,
                    coupling: coupling.unwrap_or(1.0),
                    field: field.unwrap_or(0.0),
                })
            } else {
                if beta.is_some() || coupling.is_some() || field.is_some() {
                    return Err(Error::invalid(
                        "beta",
                        "--beta, --coupling and --field go with --model ising",
                    ));
                }
                LatticeValues::Fill {
                    filler: filler(*model, *seed)?,
                    bond: *bond,
                }
            };
            let family = Family::Lattice {
                shape: parse_shape(shape)?,
                periodic: *periodic,
                values,
            };
            (family, out)
        }
        FamilyArgs::RegularGraph {
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
            out,
        } => {
            let problem = GraphProblem::from_parts(
                problem.map(Into::into),
                *colors,
                *beta,
                *coupling,
                *field,
            )?;
            let values = match problem {
                Some(p) => {
                    if model.is_some() {
                        return Err(Error::invalid(
                            "model",
                            "--model and --problem exclude each other",
                        ));
                    }
                    GraphValues::Problem(p)
                }
                None => GraphValues::Fill {
                    filler: filler(model.unwrap_or(ModelArg::Random), *seed)?,
                    bond: *bond,
                },
            };
            let family = Family::RegularGraph {
                vertices: *vertices,
                degree: *degree,
                seed: *seed,
                values,
            };
            (family, out)
        }
        FamilyArgs::Brickwork {
            rows,
            cols,
            depth,
            seed,
            bitstring,
            open,
            out,
        } => (
            Family::Brickwork {
                rows: *rows,
                cols: *cols,
                depth: *depth,
                seed: *seed,
                amplitude: amplitude(bitstring, open)?,
            },
            out,
        ),
        FamilyArgs::MatrixChain {
            dims,
            model,
            seed,
            out,
        } => (
            Family::MatrixChain {
                dims: dims.clone(),
                filler: filler(*model, *seed)?,
            },
            out,
        ),
    })
}

pub(super) fn run(args: GenerateArgs) -> Result<Outcome> {
    let (family, out) = family(&args.family)?;
    let opts = GenerateOptions {
        family,
        output: out.output.clone(),
        inline_max: out.inline_max,
    };
    let r = generate(&opts)?;
    Ok(Outcome::render(out.json, &r, r.to_text(), 0))
}
