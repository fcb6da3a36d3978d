//! Counting and Ising networks on a graph.
//!
//! * independent sets: vertex v is the index `x<v>` (dimension 2, 1 = in
//!   the set) with a tensor `v<v>` = (1, 1); each edge is a tensor
//!   `e<u>_<v>` over both vertices that is 0 only when both are in the set.
//! * proper q-colourings: `x<v>` has dimension q, `v<v>` is all ones, and
//!   each edge tensor is 1 where the two colours differ.
//! * perfect matchings: edge u-v is the index `m<u>_<v>` (1 = in the
//!   matching); vertex tensor `v<v>` over its edges is 1 when exactly one of
//!   them is 1. Vertices of degree above [`CHAIN_FROM`] become a chain of
//!   three-leg tensors carrying "matched so far", so no tensor grows beyond
//!   8 elements. An isolated vertex makes the count 0.
//! * Ising: spin s_v = +1 (index value 0) or -1 (value 1); with energy
//!   H = -sum_edges J_uv s_u s_v - h sum_v s_v the value is the partition
//!   function Z = sum_s exp(-beta H). Vertex tensor `v<v>` =
//!   (e^{beta h}, e^{-beta h}); edge tensor [[e^{beta J}, e^{-beta J}],
//!   [e^{-beta J}, e^{beta J}]].
//!
//! Vertex variables are hyperedges: one index shared by the vertex tensor
//! and every edge tensor at that vertex.

use super::Graph;
use crate::error::{Error, Result};
use crate::network::{Dtype, Network, NetworkBuilder, Values};

/// Vertices with more edges than this get a chain in the matching network.
pub const CHAIN_FROM: usize = 10;

/// Which problem a graph poses, without its parameters.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ProblemKind {
    /// Independent sets.
    IndependentSets,
    /// Proper colourings (needs a number of colours).
    Colorings,
    /// Perfect matchings.
    PerfectMatchings,
    /// The Ising partition function (needs an inverse temperature).
    Ising,
}

/// What to count on a graph.
#[derive(Debug, Clone, PartialEq)]
pub enum GraphProblem {
    /// Number of independent sets (the empty set included).
    IndependentSets,
    /// Number of proper colourings with this many colours.
    Colorings {
        /// Number of colours (at least 1).
        colors: u64,
    },
    /// Number of perfect matchings.
    PerfectMatchings,
    /// Ising partition function.
    Ising {
        /// Inverse temperature.
        beta: f64,
        /// Uniform coupling; `None` takes the file's per-edge couplings, or 1.
        coupling: Option<f64>,
        /// External field h.
        field: f64,
    },
}

impl GraphProblem {
    /// The problems' names, as the command line spells them.
    pub const NAMES: &'static str = "independent-sets, colorings, perfect-matchings, ising";

    /// The problem of kind `kind` with the parameters that go with it;
    /// `None` without a kind. A parameter given for another problem, or a
    /// missing one, is an error naming the parameter's field.
    pub fn from_parts(
        kind: Option<ProblemKind>,
        colors: Option<u64>,
        beta: Option<f64>,
        coupling: Option<f64>,
        field: Option<f64>,
    ) -> Result<Option<GraphProblem>> {
        let ising_only = [("beta", beta), ("coupling", coupling), ("field", field)]
            .into_iter()
            .find(|(_, v)| v.is_some())
            .map(|(name, _)| name);
        let Some(kind) = kind else {
            if colors.is_some() {
                return Err(Error::invalid(
                    "colors",
                    "goes with a graph problem (colorings)",
                ));
            }
            if let Some(name) = ising_only {
                return Err(Error::invalid(name, "goes with a graph problem (ising)"));
            }
            return Ok(None);
        };
        let problem = match kind {
            ProblemKind::IndependentSets => GraphProblem::IndependentSets,
            ProblemKind::PerfectMatchings => GraphProblem::PerfectMatchings,
            ProblemKind::Colorings => GraphProblem::Colorings {
                colors: colors.ok_or_else(|| {
                    Error::invalid(
                        "colors",
                        "the colorings problem needs the number of colours",
                    )
                })?,
            },
            ProblemKind::Ising => GraphProblem::Ising {
                beta: beta.ok_or_else(|| {
                    Error::invalid("beta", "the ising problem needs the inverse temperature")
                })?,
                coupling,
                field: field.unwrap_or(0.0),
            },
        };
        if colors.is_some() && kind != ProblemKind::Colorings {
            return Err(Error::invalid(
                "colors",
                "goes with the colorings problem only",
            ));
        }
        if let (Some(name), false) = (ising_only, kind == ProblemKind::Ising) {
            return Err(Error::invalid(name, "goes with the ising problem only"));
        }
        Ok(Some(problem))
    }

    /// A short description for network names.
    pub fn describe(&self) -> String {
        match self {
            GraphProblem::IndependentSets => "independent sets".into(),
            GraphProblem::Colorings { colors } => format!("proper {colors}-colourings"),
            GraphProblem::PerfectMatchings => "perfect matchings".into(),
            GraphProblem::Ising { beta, field, .. } => {
                format!("Ising partition function, beta {beta}, field {field}")
            }
        }
    }
}

fn real(re: Vec<f64>) -> Option<Values> {
    Some(Values::Inline { re, im: None })
}

/// The network of `problem` on `g`. `source` names the input in errors.
pub fn graph_network(
    g: &Graph,
    problem: &GraphProblem,
    source: &str,
    name: &str,
) -> Result<Network> {
    let mut b = NetworkBuilder::new(source);
    b.name(format!("{name} {}", problem.describe()));
    b.dtype(Dtype::F64);
    if g.num_vertices() == 0 {
        // The empty graph: one (empty) set, colouring, matching, spin state.
        b.tensor_by_ids("one", vec![], real(vec![1.0]))?;
        return b.build();
    }
    match problem {
        GraphProblem::IndependentSets => vertex_model(&mut b, g, 2, &[1.0, 1.0], |x, y| {
            if x == 1 && y == 1 {
                0.0
            } else {
                1.0
            }
        })?,
        GraphProblem::Colorings { colors } => {
            let q = *colors;
            // Each edge tensor holds q^2 values.
            if q == 0 || q > 64 {
                return Err(Error::invalid(
                    "colors",
                    format!("{q}: give a number of colours from 1 to 64"),
                ));
            }
            vertex_model(&mut b, g, q, &vec![1.0; q as usize], |x, y| {
                if x == y {
                    0.0
                } else {
                    1.0
                }
            })?
        }
        GraphProblem::PerfectMatchings => matchings(&mut b, g)?,
        GraphProblem::Ising {
            beta,
            coupling,
            field,
        } => ising(&mut b, g, *beta, *coupling, *field, source)?,
    }
    b.build()
}

/// One index per vertex with values `vertex`, one tensor per edge with
/// `edge(colour_u, colour_v)`.
fn vertex_model(
    b: &mut NetworkBuilder,
    g: &Graph,
    dim: u64,
    vertex: &[f64],
    edge: impl Fn(usize, usize) -> f64,
) -> Result<()> {
    let ids = vertex_indices(b, g, dim, |_| vertex.to_vec())?;
    let d = dim as usize;
    let table: Vec<f64> = (0..d * d).map(|k| edge(k / d, k % d)).collect();
    for &(u, v) in &g.edges {
        b.tensor_by_ids(
            &edge_name("e", g, u, v),
            vec![ids[u], ids[v]],
            real(table.clone()),
        )?;
    }
    Ok(())
}

fn vertex_indices(
    b: &mut NetworkBuilder,
    g: &Graph,
    dim: u64,
    values: impl Fn(usize) -> Vec<f64>,
) -> Result<Vec<usize>> {
    let mut ids = Vec::with_capacity(g.num_vertices());
    for (v, name) in g.names.iter().enumerate() {
        let e = b.index(&format!("x{name}"), dim)?;
        b.tensor_by_ids(&format!("v{name}"), vec![e], real(values(v)))?;
        ids.push(e);
    }
    Ok(ids)
}

fn edge_name(prefix: &str, g: &Graph, u: usize, v: usize) -> String {
    format!("{prefix}{}_{}", g.names[u], g.names[v])
}

fn ising(
    b: &mut NetworkBuilder,
    g: &Graph,
    beta: f64,
    coupling: Option<f64>,
    field: f64,
    source: &str,
) -> Result<()> {
    if !beta.is_finite() || !field.is_finite() || coupling.is_some_and(|j| !j.is_finite()) {
        return Err(Error::invalid(
            "beta",
            "the inverse temperature, coupling and field must be finite numbers",
        ));
    }
    if coupling.is_some() && g.couplings.is_some() {
        return Err(Error::in_source(
            source,
            "the file gives a coupling per edge and the coupling option gives one for all; use one of them",
        ));
    }
    let ids = vertex_indices(b, g, 2, |_| {
        vec![(beta * field).exp(), (-beta * field).exp()]
    })?;
    for (k, &(u, v)) in g.edges.iter().enumerate() {
        let j = match (&g.couplings, coupling) {
            (Some(c), _) => c[k],
            (None, Some(j)) => j,
            (None, None) => 1.0,
        };
        let (same, differ) = ((beta * j).exp(), (-beta * j).exp());
        let values = vec![same, differ, differ, same];
        if values.iter().any(|x| !x.is_finite()) {
            return Err(Error::invalid(
                "beta",
                format!(
                    "beta * coupling = {} overflows exp(); choose a smaller inverse temperature",
                    beta * j
                ),
            ));
        }
        b.tensor_by_ids(&edge_name("e", g, u, v), vec![ids[u], ids[v]], real(values))?;
    }
    Ok(())
}

fn matchings(b: &mut NetworkBuilder, g: &Graph) -> Result<()> {
    let mut incident: Vec<Vec<usize>> = vec![Vec::new(); g.num_vertices()];
    for &(u, v) in &g.edges {
        let e = b.index(&edge_name("m", g, u, v), 2)?;
        incident[u].push(e);
        incident[v].push(e);
    }
    for (v, legs) in incident.into_iter().enumerate() {
        let name = format!("v{}", g.names[v]);
        if legs.len() <= CHAIN_FROM {
            let mut re = vec![0.0; 1 << legs.len()];
            for k in 0..legs.len() {
                // Exactly leg k set: offset with only bit (len-1-k) on.
                re[1 << (legs.len() - 1 - k)] = 1.0;
            }
            b.tensor_by_ids(&name, legs, real(re))?;
        } else {
            exactly_one_chain(b, &name, &legs)?;
        }
    }
    Ok(())
}

/// "Exactly one of `legs` is 1" as a chain: t1[e1, s1] with s1 = e1,
/// tj[s, ej, s'] with s' = s + ej <= 1, last[s, e] = 1 when s + e = 1.
fn exactly_one_chain(b: &mut NetworkBuilder, name: &str, legs: &[usize]) -> Result<()> {
    let m = legs.len();
    let mut carry = b.index(&format!("{name}_s1"), 2)?;
    b.tensor_by_ids(
        &format!("{name}_1"),
        vec![legs[0], carry],
        real(vec![1.0, 0.0, 0.0, 1.0]),
    )?;
    for (j, &leg) in legs.iter().enumerate().take(m - 1).skip(1) {
        let next = b.index(&format!("{name}_s{}", j + 1), 2)?;
        let mut re = vec![0.0; 8];
        for s in 0..2 {
            for e in 0..2 {
                if s + e <= 1 {
                    re[s * 4 + e * 2 + s + e] = 1.0;
                }
            }
        }
        b.tensor_by_ids(
            &format!("{name}_{}", j + 1),
            vec![carry, leg, next],
            real(re),
        )?;
        carry = next;
    }
    b.tensor_by_ids(
        &format!("{name}_{m}"),
        vec![carry, legs[m - 1]],
        real(vec![0.0, 1.0, 1.0, 0.0]),
    )?;
    Ok(())
}
