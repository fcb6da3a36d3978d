//! Reading networks from files and equations, one file per input format,
//! and writing the native format back ([`mod@write`]).
//!
//! [`load`] picks the reader from the file's extension (or an explicit
//! format name) so every command accepts every input kind: native TOML
//! networks, OpenQASM 2.0 circuits ([`qasm`]), DIMACS CNF formulas
//! ([`cnf`]) and graphs ([`graph`]).

pub mod circuit;
pub mod cnf;
pub mod einsum;
pub mod graph;
pub mod native;
pub mod qasm;
pub mod write;

use std::path::Path;

use crate::error::{Error, Result};
use crate::network::Network;

pub use circuit::{AmplitudeSpec, OpenQubits};
pub use graph::{GraphProblem, ProblemKind};

/// The input formats [`load`] understands.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Our native TOML network file (`.toml`).
    Native,
    /// An OpenQASM 2.0 circuit (`.qasm`).
    Qasm,
    /// A DIMACS CNF formula (`.cnf`).
    Cnf,
    /// A graph: DIMACS `p edge` or a plain edge list (`.col`, `.graph`,
    /// `.edges`, `.edgelist`).
    Graph,
}

/// The names accepted by `--format`.
pub const FORMAT_NAMES: &str = "native, qasm, cnf, graph";

impl Format {
    /// Guesses the format from a file's extension.
    pub fn from_path(path: &Path) -> Option<Format> {
        match path.extension()?.to_str()?.to_ascii_lowercase().as_str() {
            "toml" => Some(Format::Native),
            "qasm" => Some(Format::Qasm),
            "cnf" => Some(Format::Cnf),
            "col" | "graph" | "edges" | "edgelist" => Some(Format::Graph),
            _ => None,
        }
    }

    /// Parses a format name given on the command line.
    pub fn from_name(name: &str) -> Result<Format> {
        match name {
            "native" | "toml" => Ok(Format::Native),
            "qasm" | "openqasm" => Ok(Format::Qasm),
            "cnf" | "dimacs-cnf" => Ok(Format::Cnf),
            "graph" | "dimacs-graph" | "edge-list" => Ok(Format::Graph),
            other => Err(Error::invalid(
                "format",
                format!("unknown input format '{other}'; valid: {FORMAT_NAMES}"),
            )),
        }
    }
}

/// Options that some input formats need.
#[derive(Debug, Clone, Default)]
pub struct LoadOptions {
    /// Force a format instead of guessing from the extension.
    pub format: Option<Format>,
    /// For circuits: the output bitstring and the qubits left open.
    pub amplitude: AmplitudeSpec,
    /// For graphs: what to count (required for graph input).
    pub problem: Option<GraphProblem>,
}

/// Reads a network from a file.
pub fn load(path: &Path, options: &LoadOptions) -> Result<Network> {
    let format = match options.format.or_else(|| Format::from_path(path)) {
        Some(f) => f,
        None => {
            return Err(Error::in_source(
                path.display().to_string(),
                "cannot tell the input format from the file name; use .toml (network), .qasm (OpenQASM 2.0), .cnf (DIMACS CNF), .col/.graph/.edges (graph), or name the format",
            ))
        }
    };
    let circuit_only = options.amplitude != AmplitudeSpec::default();
    if circuit_only && format != Format::Qasm {
        return Err(Error::invalid(
            "amplitude",
            "the bitstring and open qubits apply to OpenQASM circuits only",
        ));
    }
    if options.problem.is_some() && format != Format::Graph {
        return Err(Error::invalid("problem", "applies to graph input only"));
    }
    match format {
        Format::Native => native::read_native(path),
        Format::Qasm => qasm::load_qasm(path, &options.amplitude),
        Format::Cnf => cnf::load_cnf(path),
        Format::Graph => {
            let problem = options.problem.as_ref().ok_or_else(|| {
                Error::invalid(
                    "problem",
                    format!(
                        "{}: a graph needs a problem to say what to count ({})",
                        path.display(),
                        GraphProblem::NAMES
                    ),
                )
            })?;
            let g = graph::read_graph(path)?;
            let stem = path
                .file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_default();
            graph::graph_network(&g, problem, &path.display().to_string(), &stem)
        }
    }
}
