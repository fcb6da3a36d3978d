//! `generate`: demo and benchmark networks (lattices, random regular
//! graphs, brickwork circuits, matrix chains) written as native files.

use std::path::PathBuf;

use super::import::{check_network_output, WriteReport};
use crate::error::{Error, Result};
use crate::formats::circuit::{amplitude_network, AmplitudeSpec};
use crate::formats::graph::{graph_network, Graph, GraphProblem};
use crate::formats::write::{write_native, WriteOptions};
use crate::generate::circuit::brickwork_circuit;
use crate::generate::ising::{ising_lattice, IsingParams};
use crate::generate::values::{fill, Filler};
use crate::network::Network;

/// The values of a lattice.
#[derive(Debug, Clone, PartialEq)]
pub enum LatticeValues {
    /// Filled by a filler (random, ones, none), with this bond dimension.
    Fill {
        /// The filler.
        filler: Filler,
        /// The bond dimension.
        bond: u64,
    },
    /// The Ising partition function (bond dimension 2).
    Ising(IsingParams),
}

/// The values on a random regular graph.
#[derive(Debug, Clone, PartialEq)]
pub enum GraphValues {
    /// One tensor per vertex, filled, with this bond dimension per edge.
    Fill {
        /// The filler.
        filler: Filler,
        /// The bond dimension.
        bond: u64,
    },
    /// A counting problem (or the Ising model) on the graph.
    Problem(GraphProblem),
}

/// A family of networks with its parameters.
#[derive(Debug, Clone, PartialEq)]
pub enum Family {
    /// A 1- to 4-dimensional lattice.
    Lattice {
        /// Side lengths.
        shape: Vec<usize>,
        /// Wrap every side around.
        periodic: bool,
        /// The values.
        values: LatticeValues,
    },
    /// A seeded random regular graph.
    RegularGraph {
        /// Vertices.
        vertices: usize,
        /// Degree of every vertex.
        degree: usize,
        /// Seed of the graph (and of random values).
        seed: u64,
        /// The values.
        values: GraphValues,
    },
    /// A random brickwork circuit on a qubit grid.
    Brickwork {
        /// Grid rows.
        rows: usize,
        /// Grid columns.
        cols: usize,
        /// Two-qubit layers.
        depth: usize,
        /// Seed of the layer order and rotations.
        seed: u64,
        /// Output bits and open qubits.
        amplitude: AmplitudeSpec,
    },
    /// A chain of matrices.
    MatrixChain {
        /// d0, d1, ...: matrix k is d(k-1) x d(k).
        dims: Vec<u64>,
        /// The values.
        filler: Filler,
    },
}

/// Options of `generate`.
#[derive(Debug, Clone)]
pub struct GenerateOptions {
    /// What to generate.
    pub family: Family,
    /// The network file to write (`.toml`).
    pub output: PathBuf,
    /// Tensors with more elements than this go to `.npy` side files.
    pub inline_max: usize,
}

/// Builds the network of a family (checking its parameters first).
pub fn build(family: &Family) -> Result<Network> {
    match family {
        Family::Lattice {
            shape,
            periodic,
            values,
        } => match values {
            LatticeValues::Ising(p) => ising_lattice(shape, *periodic, *p),
            LatticeValues::Fill { filler, bond } => Ok(fill(
                crate::generate::lattice(shape, *bond, *periodic)?,
                *filler,
            )),
        },
        Family::RegularGraph {
            vertices,
            degree,
            seed,
            values,
        } => {
            let edges = crate::generate::random_regular_graph(*vertices, *degree, *seed)?;
            match values {
                GraphValues::Problem(p) => {
                    let g = Graph::from_edges(*vertices, &edges);
                    let name = format!(
                        "random {degree}-regular graph on {vertices} vertices, seed {seed},"
                    );
                    graph_network(&g, p, "regular-graph", &name)
                }
                GraphValues::Fill { filler, bond } => Ok(fill(
                    crate::generate::graph_network(*vertices, &edges, *bond)?,
                    *filler,
                )),
            }
        }
        Family::Brickwork {
            rows,
            cols,
            depth,
            seed,
            amplitude,
        } => {
            amplitude
                .validate()
                .map_err(|m| Error::invalid("amplitude", m))?;
            amplitude_network(&brickwork_circuit(*rows, *cols, *depth, *seed)?, amplitude)
        }
        Family::MatrixChain { dims, filler } => {
            Ok(fill(crate::generate::matrix_chain(dims)?, *filler))
        }
    }
}

/// Runs `generate`.
pub fn generate(opts: &GenerateOptions) -> Result<WriteReport> {
    check_network_output(&opts.output, None)?;
    let net = build(&opts.family)?;
    let written = write_native(
        &net,
        &opts.output,
        &WriteOptions {
            inline_max: opts.inline_max,
        },
    )?;
    Ok(WriteReport::new(&net, written))
}
