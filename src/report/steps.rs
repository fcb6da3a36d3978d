//! The per-slice contraction steps as plain data, for running a plan with
//! any array library.
//!
//! The list convention is that of numpy's `einsum` paths: start with the
//! input tensors in network order; each step names two positions in the
//! current list, removes both, and appends the result at the end. Each step
//! carries its own einsum equation over letters local to the step, and the
//! index names its result holds, in order. Sliced indices are already
//! removed: for slice s, first fix every sliced index to its value in s
//! (`slice_values` in the plan's numbering: first sliced index slowest) by
//! indexing the inputs along the axes listed under `inputs[].sliced_axes`.

use serde::Serialize;

use crate::cost::NodeSets;
use crate::error::{Error, Result};
use crate::network::Network;
use crate::plan::Plan;

/// The whole steps file.
#[derive(Debug, Clone, Serialize)]
pub struct Steps {
    /// Always `sliceplan-steps`.
    pub format: &'static str,
    /// Format version.
    pub version: u32,
    /// The network's fingerprint.
    pub network_fingerprint: String,
    /// The plan's fingerprint.
    pub plan_fingerprint: String,
    /// Sliced indices in slice-numbering order.
    pub sliced: Vec<SlicedOut>,
    /// Number of slices, decimal.
    pub slices: String,
    /// The inputs, in network order.
    pub inputs: Vec<InputOut>,
    /// The contraction steps of one slice.
    pub steps: Vec<StepOut>,
    /// The result's indices after the last step, and the equation that
    /// permutes it into the network's open-index order (without sliced open
    /// indices, whose values select the part of the output a slice fills).
    pub output: OutputOut,
}

/// A sliced index.
#[derive(Debug, Clone, Serialize)]
pub struct SlicedOut {
    /// Its name.
    pub name: String,
    /// Its dimension.
    pub dim: u64,
    /// Whether it is open (slices then fill different parts of the output).
    pub open: bool,
}

/// One input tensor.
#[derive(Debug, Clone, Serialize)]
pub struct InputOut {
    /// Tensor name.
    pub tensor: String,
    /// Its indices in storage order (before slicing).
    pub indices: Vec<String>,
    /// Axes to fix for slicing: (axis position, sliced index name).
    pub sliced_axes: Vec<(usize, String)>,
}

/// One pairwise contraction.
#[derive(Debug, Clone, Serialize)]
pub struct StepOut {
    /// Positions of the two operands in the current list.
    pub operands: [usize; 2],
    /// Its einsum equation (letters local to the step).
    pub equation: String,
    /// The index names of the result, in order.
    pub result_indices: Vec<String>,
}

/// The final output.
#[derive(Debug, Clone, Serialize)]
pub struct OutputOut {
    /// Index names of the last step's result.
    pub indices: Vec<String>,
    /// Equation permuting it into open-index order (`None` when already so).
    pub permute: Option<String>,
}

const LETTERS: &str = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ";

/// Builds the steps of a plan.
pub fn steps(net: &Network, plan: &Plan) -> Result<Steps> {
    plan.check_against(net)?;
    let tree = plan.tree()?;
    let sliced = plan.sliced_ids(net)?;
    let sets = NodeSets::new(net, &tree);
    let open = net.open_mask();
    let name = |e: usize| net.indices[e].name.clone();
    // Layout of every node, by node number (leaf t, merge k at n + k):
    // inputs keep their storage order, results the sorted order of the
    // node's index set; sliced indices dropped. Merges run in the plan's
    // traversal order, so a result is stored at its own node number.
    let mut layout: Vec<Vec<usize>> = net
        .tensors
        .iter()
        .map(|t| {
            t.indices
                .iter()
                .copied()
                .filter(|e| !sliced.contains(e))
                .collect()
        })
        .collect();
    let n = net.num_tensors();
    layout.resize(n + tree.merges().len(), Vec::new());
    let mut list: Vec<usize> = (0..n).collect();
    let mut steps = Vec::with_capacity(plan.order.len());
    for &k in &plan.order {
        let [a, b] = tree.merges()[k];
        let v = n + k;
        let result: Vec<usize> = sets.indices[v]
            .iter()
            .copied()
            .filter(|e| !sliced.contains(e))
            .collect();
        let pa = list.iter().position(|&x| x == a).expect("operand in list");
        let pb = list.iter().position(|&x| x == b).expect("operand in list");
        let mut local: Vec<usize> = Vec::new();
        for &e in layout[a].iter().chain(&layout[b]).chain(&result) {
            if !local.contains(&e) {
                local.push(e);
            }
        }
        if local.len() > LETTERS.len() {
            return Err(Error::Cannot(format!(
                "step {} involves {} indices; einsum equations are limited to {} letters",
                steps.len(),
                local.len(),
                LETTERS.len()
            )));
        }
        let letter = |e: &usize| {
            LETTERS.as_bytes()[local.iter().position(|x| x == e).expect("local")] as char
        };
        let word = |idx: &[usize]| idx.iter().map(letter).collect::<String>();
        steps.push(StepOut {
            operands: [pa, pb],
            equation: format!(
                "{},{}->{}",
                word(&layout[a]),
                word(&layout[b]),
                word(&result)
            ),
            result_indices: result.iter().map(|&e| name(e)).collect(),
        });
        list.retain(|&x| x != a && x != b);
        list.push(v);
        layout[v] = result;
    }
    let root = tree.root();
    let last = layout[root].clone();
    let want: Vec<usize> = net
        .open
        .iter()
        .copied()
        .filter(|e| !sliced.contains(e))
        .collect();
    let permute = (last != want).then(|| {
        let letter = |e: &usize| {
            LETTERS.as_bytes()[last.iter().position(|x| x == e).unwrap_or(0) % LETTERS.len()]
                as char
        };
        format!(
            "{}->{}",
            last.iter().map(letter).collect::<String>(),
            want.iter().map(letter).collect::<String>()
        )
    });
    Ok(Steps {
        format: "sliceplan-steps",
        version: 1,
        network_fingerprint: net.fingerprint(),
        plan_fingerprint: plan.fingerprint(),
        sliced: sliced
            .iter()
            .map(|&e| SlicedOut {
                name: name(e),
                dim: net.indices[e].dim,
                open: open[e],
            })
            .collect(),
        slices: plan
            .slice_count()
            .map(|c| c.to_string())
            .unwrap_or_else(|| "more than 2^64".into()),
        inputs: net
            .tensors
            .iter()
            .map(|t| InputOut {
                tensor: t.name.clone(),
                indices: t.indices.iter().map(|&e| name(e)).collect(),
                sliced_axes: t
                    .indices
                    .iter()
                    .enumerate()
                    .filter(|(_, e)| sliced.contains(e))
                    .map(|(axis, &e)| (axis, name(e)))
                    .collect(),
            })
            .collect(),
        steps,
        output: OutputOut {
            indices: last.iter().map(|&e| name(e)).collect(),
            permute,
        },
    })
}
