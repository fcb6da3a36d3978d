//! The arguments every command uses to name its input network, including
//! the options of circuit and graph input.

use std::path::PathBuf;

use clap::Args;

use crate::error::{Error, Result};
use crate::formats::{self, einsum, AmplitudeSpec, Format, GraphProblem, LoadOptions, OpenQubits};
use crate::network::Network;

/// Where the network comes from: a file, or an einsum equation.
#[derive(Debug, Clone, Args)]
pub struct NetArgs {
    /// Input file: network (.toml), OpenQASM 2.0 circuit (.qasm), DIMACS CNF
    /// formula (.cnf), or graph (.col, .graph, .edges).
    #[arg(value_name = "NET", required_unless_present = "einsum")]
    pub net: Option<PathBuf>,

    /// An einsum equation instead of a file, e.g. "ab,bc,cd->ad".
    #[arg(long, value_name = "EQ", conflicts_with = "net")]
    pub einsum: Option<String>,

    /// Dimension of every einsum index not named in --dims.
    #[arg(long, value_name = "D", requires = "einsum")]
    pub dim: Option<u64>,

    /// Per-index einsum dimensions, e.g. a=30,b=35.
    #[arg(long, value_name = "LIST", requires = "einsum")]
    pub dims: Option<String>,

    /// Input format when the extension does not tell: native, qasm, cnf, graph.
    #[arg(long, value_name = "FMT")]
    pub format: Option<String>,

    /// Circuits: the output bits, one 0/1 per qubit, leftmost = qubit 0 of the
    /// first qreg (default: all zeros).
    #[arg(long, value_name = "BITS")]
    pub bitstring: Option<String>,

    /// Circuits: qubits left open for a batch of amplitudes, e.g. 0,3,5 or all.
    #[arg(long, value_name = "QUBITS")]
    pub open: Option<String>,

    /// Graphs: what the network counts: independent-sets, colorings,
    /// perfect-matchings, ising.
    #[arg(long, value_name = "PROBLEM")]
    pub problem: Option<String>,

    /// Graphs: number of colours for --problem colorings.
    #[arg(long, value_name = "Q")]
    pub colors: Option<u64>,

    /// Graphs: inverse temperature for --problem ising.
    #[arg(long, value_name = "BETA", allow_negative_numbers = true)]
    pub beta: Option<f64>,

    /// Graphs: one coupling J for every edge (--problem ising; default: the
    /// file's per-edge couplings, else 1).
    #[arg(long, value_name = "J", allow_negative_numbers = true)]
    pub coupling: Option<f64>,

    /// Graphs: external field h for --problem ising (default 0).
    #[arg(long, value_name = "H", allow_negative_numbers = true)]
    pub field: Option<f64>,
}

impl NetArgs {
    /// Checks the arguments without touching any file.
    pub fn validate(&self) -> Result<()> {
        if let Some(d) = &self.dims {
            einsum::parse_dims(d).map_err(|m| Error::usage(format!("--dims: {m}")))?;
        }
        if let Some(f) = &self.format {
            Format::from_name(f)?;
        }
        self.amplitude()?;
        self.problem()?;
        Ok(())
    }

    /// The circuit options.
    fn amplitude(&self) -> Result<AmplitudeSpec> {
        let open = self
            .open
            .as_deref()
            .map(|o| OpenQubits::parse(o).map_err(|m| Error::usage(format!("--open: {m}"))))
            .transpose()?;
        let spec = AmplitudeSpec {
            bitstring: self.bitstring.clone(),
            open,
        };
        spec.validate().map_err(Error::usage)?;
        Ok(spec)
    }

    /// The graph problem, with its parameters checked.
    pub fn problem(&self) -> Result<Option<GraphProblem>> {
        GraphProblem::from_flags(
            self.problem.as_deref(),
            self.colors,
            self.beta,
            self.coupling,
            self.field,
        )
    }

    /// The options for [`formats::load`].
    pub fn load_options(&self) -> Result<LoadOptions> {
        Ok(LoadOptions {
            format: self.format.as_deref().map(Format::from_name).transpose()?,
            amplitude: self.amplitude()?,
            problem: self.problem()?,
        })
    }

    /// Reads the network.
    pub fn load(&self) -> Result<Network> {
        if let Some(eq) = &self.einsum {
            let dims = match &self.dims {
                Some(d) => {
                    einsum::parse_dims(d).map_err(|m| Error::usage(format!("--dims: {m}")))?
                }
                None => Vec::new(),
            };
            return einsum::network_from_einsum(eq, self.dim, &dims);
        }
        let path = self
            .net
            .as_ref()
            .ok_or_else(|| Error::usage("give a network file or --einsum"))?;
        formats::load(path, &self.load_options()?)
    }
}
