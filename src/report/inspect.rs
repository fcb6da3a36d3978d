//! The `inspect` report: network summary, tree metrics, sliced metrics.

use serde::Serialize;

use super::{group_decimal, log2_str, ops_str, pow2_human, Table};
use crate::cost::{Metrics, NodeRow, Sliced};
use crate::network::{Dtype, Summary};
use crate::num::Count;

/// Tree metrics as they appear in JSON (`tree.*` of DESIGN §5).
#[derive(Debug, Clone, Serialize)]
pub struct TreeReport {
    /// Where the tree came from (a file, a search, or the file-order baseline).
    pub source: String,
    /// Sum of ops over all merges, exact decimal (or `2^x` beyond 2^128).
    pub total_ops: String,
    /// log2 of the total ops.
    pub total_ops_log2: f64,
    /// Largest log2 intermediate size (leaves and root included).
    pub width: f64,
    /// The same without the root.
    pub width_without_root: f64,
    /// Largest log2 ops of one merge.
    pub op_width: f64,
    /// Most elements alive at once in the best traversal, decimal.
    pub peak_elements: String,
    /// log2 of the peak.
    pub peak_log2: f64,
    /// Peak in bytes for the dtype below, decimal.
    pub peak_bytes: String,
    /// The dtype used for bytes.
    pub dtype: Dtype,
    /// Contraction rounds with unlimited parallelism.
    pub height: usize,
    /// Real flops = `flops_per_op` × ops for this dtype.
    pub flops_per_op: u64,
}

impl TreeReport {
    /// Builds the report of a tree's metrics.
    pub fn new(source: impl Into<String>, m: &Metrics, dtype: Dtype) -> TreeReport {
        let bytes = m.peak * Count::from_u128(dtype.bytes() as u128);
        TreeReport {
            source: source.into(),
            total_ops: m.total_ops.to_json_string(),
            total_ops_log2: m.total_ops.log2,
            width: m.width,
            width_without_root: m.width_without_root,
            op_width: m.op_width,
            peak_elements: m.peak.to_json_string(),
            peak_log2: m.peak.log2,
            peak_bytes: bytes.to_json_string(),
            dtype,
            height: m.height,
            flops_per_op: dtype.flops_per_op(),
        }
    }
}

/// Sliced metrics as they appear in JSON.
#[derive(Debug, Clone, Serialize)]
pub struct SlicedReport {
    /// Names of the sliced indices.
    pub indices: Vec<String>,
    /// Number of slices, decimal.
    pub slices: String,
    /// Metrics of one slice.
    pub per_slice: TreeReport,
    /// Total ops over all slices, decimal.
    pub total_ops: String,
    /// log2 of the total ops over all slices.
    pub total_ops_log2: f64,
    /// Total ops with slicing divided by total ops without.
    pub overhead: f64,
}

impl SlicedReport {
    /// Builds the report of sliced metrics against the unsliced ones.
    pub fn new(indices: Vec<String>, s: &Sliced, unsliced: &Metrics, dtype: Dtype) -> SlicedReport {
        SlicedReport {
            indices,
            slices: s.slices.to_json_string(),
            per_slice: TreeReport::new("per slice", &s.per_slice, dtype),
            total_ops: s.total_ops.to_json_string(),
            total_ops_log2: s.total_ops.log2,
            overhead: crate::num::overhead(s.total_ops.log2, unsliced.total_ops.log2),
        }
    }
}

/// Everything `inspect` reports.
#[derive(Debug, Clone, Serialize)]
pub struct InspectReport {
    /// The network summary.
    pub network: Summary,
    /// The `.npy` side files and whether each is whole.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub values: Option<crate::network::values::ValueFiles>,
    /// The tree's metrics.
    pub tree: TreeReport,
    /// Metrics with the requested indices sliced.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub slicing: Option<SlicedReport>,
    /// The per-node table, when asked for.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub nodes: Option<Vec<NodeRow>>,
}

impl InspectReport {
    /// Renders the report as aligned text.
    pub fn to_text(&self) -> String {
        let n = &self.network;
        let mut out = String::new();
        out.push_str(&format!(
            "network      {}  (fingerprint {})\n",
            n.name, n.fingerprint
        ));
        out.push_str(&format!(
            "size         {} tensors, {} indices, {} connected component{}\n",
            n.tensors,
            n.indices,
            n.components,
            if n.components == 1 { "" } else { "s" }
        ));
        let hist: Vec<String> = n
            .dimension_histogram
            .iter()
            .map(|(d, c)| format!("{d} x{c}"))
            .collect();
        out.push_str(&format!("dimensions   {}\n", hist.join(", ")));
        out.push_str(&format!(
            "open         {}\n",
            list_or(&n.open, "none (the value is a scalar)")
        ));
        if !n.open.is_empty() {
            out.push_str(&format!(
                "output       {} elements\n",
                pow2_human(n.output_size_log2)
            ));
        }
        out.push_str(&format!(
            "hyperedges   {}\n",
            list_or(&n.hyperedges, "none")
        ));
        if !n.dangling.is_empty() {
            out.push_str(&format!(
                "dangling     {} (on one tensor only, summed there)\n",
                short_list(&n.dangling)
            ));
        }
        out.push_str(&format!(
            "largest      {} with {} elements\n",
            n.largest_tensor,
            pow2_human(n.largest_tensor_log2)
        ));
        out.push_str(&format!(
            "degrees      indices per tensor {}..{} (mean {:.2}); tensors per index {}..{} (mean {:.2})\n",
            n.tensor_degree.min,
            n.tensor_degree.max,
            n.tensor_degree.mean,
            n.index_degree.min,
            n.index_degree.max,
            n.index_degree.mean
        ));
        out.push_str(&format!(
            "values       {}\n",
            if n.has_values {
                "every tensor has values"
            } else {
                "structure only (no values)"
            }
        ));
        if let Some(v) = &self.values {
            let state = if v.problems.is_empty() {
                "all whole".to_string()
            } else {
                format!("{} not usable", v.problems.len())
            };
            out.push_str(&format!(
                "value files  {} .npy file(s), {} of data, {state}\n",
                v.files,
                crate::cost::bytes::bytes_human(v.data_bytes as f64)
            ));
            for p in v.problems.iter().take(10) {
                out.push_str(&format!("  problem    {p}\n"));
            }
            if v.problems.len() > 10 {
                out.push_str(&format!("  ... and {} more\n", v.problems.len() - 10));
            }
        }
        out.push('\n');
        out.push_str(&format!("tree: {}\n", self.tree.source));
        out.push_str(&tree_lines(&self.tree));
        if let Some(s) = &self.slicing {
            out.push('\n');
            out.push_str(&format!(
                "sliced over {} -> {} slices\n",
                s.indices.join(", "),
                group_decimal(&s.slices)
            ));
            out.push_str("  per slice:\n");
            out.push_str(&indent(&tree_lines(&s.per_slice), 2));
            out.push_str(&format!(
                "  total ops   {} ({}), overhead {:.3}x\n",
                group_decimal(&s.total_ops),
                ops_str(s.total_ops_log2),
                s.overhead
            ));
        }
        if let Some(nodes) = &self.nodes {
            out.push('\n');
            let mut t = Table::new([
                "node",
                "tensor/merge",
                "log2 size",
                "log2 ops",
                "summed",
                "indices",
            ]);
            for r in nodes {
                let what = match (&r.name, r.children) {
                    (Some(name), _) => name.clone(),
                    (None, Some([a, b])) => format!("{a} * {b}"),
                    _ => String::new(),
                };
                t.row([
                    r.node.to_string(),
                    what,
                    log2_str(r.size_log2),
                    r.ops_log2.map(log2_str).unwrap_or_default(),
                    r.summed.join(" "),
                    short_list(&r.indices),
                ]);
            }
            out.push_str(&t.render(0));
        }
        out
    }
}

pub(crate) fn tree_lines(t: &TreeReport) -> String {
    format!(
        "  total ops   {} ({}); real flops = {} x ops for {}\n  width       {}  (largest intermediate, log2 elements)\n  op width    {}  (largest single contraction, log2 ops)\n  peak        {} elements = {} bytes as {} (best traversal)\n  height      {}  (contraction rounds with unlimited parallelism)\n",
        group_decimal(&t.total_ops),
        ops_str(t.total_ops_log2),
        t.flops_per_op,
        t.dtype,
        log2_str(t.width),
        log2_str(t.op_width),
        pow2_human(t.peak_log2),
        group_decimal(&t.peak_bytes),
        t.dtype,
        t.height
    )
}

fn indent(text: &str, by: usize) -> String {
    let pad = " ".repeat(by);
    text.lines().map(|l| format!("{pad}{l}\n")).collect()
}

fn list_or(items: &[String], empty: &str) -> String {
    if items.is_empty() {
        empty.to_string()
    } else {
        short_list(items)
    }
}

fn short_list(items: &[String]) -> String {
    const SHOWN: usize = 12;
    if items.len() <= SHOWN {
        items.join(", ")
    } else {
        format!(
            "{}, ... ({} in all)",
            items[..SHOWN].join(", "),
            items.len()
        )
    }
}
