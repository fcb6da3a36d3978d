//! The plan file: everything needed to run and check a sliced contraction.
//!
//! A plan holds the network's fingerprint and path, the tree, the traversal
//! order, the slice set with dimensions, the predicted costs, the budget and
//! dtype, and the tool version and seed that produced it. It is our own
//! versioned TOML format; writes are atomic. The plan's own fingerprint
//! (a hash of everything that changes the arithmetic: network fingerprint,
//! tree, slice set, dtype) is what partial results carry.

pub mod advise;
mod build;

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::cost::machine::Estimate;
use crate::error::{Error, Result};
use crate::network::{Dtype, IndexId, Network};
use crate::slicing::bound::OpsBound;
use crate::slicing::{CoverReport, FrontierRow};
use crate::tree::Tree;

/// The `format` value of a plan file.
pub const PLAN_FORMAT: &str = "sliceplan-plan";
/// The newest plan version this build reads and writes.
pub const PLAN_VERSION: u32 = 1;

/// One sliced index.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct SlicedIndex {
    /// The index's name in the network.
    pub name: String,
    /// Its dimension (the number of values it is fixed to in turn).
    pub dim: u64,
}

/// Predicted costs stored in the plan (decimal strings where they may
/// exceed 2^53).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Predicted {
    /// log2 of total ops of one slice.
    pub per_slice_total_ops_log2: f64,
    /// Width of one slice.
    pub per_slice_width: f64,
    /// Peak bytes of one slice under the executor's memory model, decimal.
    pub per_slice_peak_bytes: String,
    /// log2 of total ops over all slices.
    pub total_ops_log2: f64,
    /// Total ops with slicing over total ops without.
    pub overhead: f64,
    /// log2 total ops of the unsliced baseline the overhead is measured
    /// against.
    #[serde(default)]
    pub baseline_total_ops_log2: f64,
    /// Which search found the slice set (greedy, cover, ...).
    #[serde(default)]
    pub found_by: String,
    /// Where the tree came from.
    #[serde(default)]
    pub tree_source: String,
    /// log2 total ops when every slice repeats the slice-invariant work
    /// (equal to `total_ops_log2` without reuse; 0 in plans from before).
    #[serde(default)]
    pub plain_total_ops_log2: f64,
    /// Bytes of the slice-invariant intermediates a process holds, decimal
    /// ("0" without reuse).
    #[serde(default = "zero_text")]
    pub reused_bytes: String,
    /// The most a process holds above its inputs while computing them,
    /// decimal ("0" without reuse).
    #[serde(default = "zero_text")]
    pub setup_bytes: String,
}

fn zero_text() -> String {
    "0".into()
}

/// A contraction plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Plan {
    /// Always [`PLAN_FORMAT`].
    pub format: String,
    /// File version.
    pub version: u32,
    /// The sliceplan version that wrote it.
    pub tool_version: String,
    /// Fingerprint of the network the plan is for.
    pub network_fingerprint: String,
    /// Path of the network file, relative to the plan file's directory when
    /// possible.
    pub network_path: String,
    /// Number of tensors.
    pub tensors: usize,
    /// The tree's merges in single-assignment form.
    #[serde(deserialize_with = "crate::tree::deserialize_merges")]
    pub merges: Vec<[usize; 2]>,
    /// Traversal order: merge numbers in execution order.
    pub order: Vec<usize>,
    /// The slice set, in slice-numbering order (first varies slowest).
    pub sliced: Vec<SlicedIndex>,
    /// Element type.
    pub dtype: Dtype,
    /// The memory budget per slice, bytes (0 when none was given).
    pub budget_bytes: u64,
    /// How many slices may run at once in one process within the budget.
    pub slices_at_once: u64,
    /// Seed of the search that produced the tree.
    pub seed: u64,
    /// Whether slice-invariant intermediates are computed once per process
    /// and held (`held`), rather than in every slice. Plans from before
    /// reuse read as `false`.
    #[serde(default)]
    pub reuse: bool,
    /// The held intermediates (node ids: merge k is node `tensors + k`), in
    /// the order a process computes them; their merges open `order`.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub held: Vec<usize>,
    /// Predicted costs.
    pub predicted: Predicted,
    /// The slices-versus-ops frontier met by the search.
    #[serde(default)]
    pub frontier: Vec<FrontierRow>,
    /// The cover programme's bound for this tree.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cover: Option<CoverReport>,
    /// The time estimate on the machine the plan was made for.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub estimate: Option<Estimate>,
    /// The proven lower bound on width, when computed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lower_bound_width: Option<f64>,
    /// The lower bound on the total ops of every fitting slice set on the
    /// plan's tree, when computed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ops_bound: Option<OpsBound>,
}

impl Plan {
    /// The tree of the plan.
    pub fn tree(&self) -> Result<Tree> {
        Tree::new(self.tensors, self.merges.clone()).map_err(|m| Error::in_source("plan", m))
    }

    /// Number of slices (product of the sliced dimensions), when it fits a u64.
    pub fn slice_count(&self) -> Option<u64> {
        self.sliced
            .iter()
            .try_fold(1u64, |acc, s| acc.checked_mul(s.dim))
    }

    /// The sliced index ids in `net`, in slice-numbering order.
    pub fn sliced_ids(&self, net: &Network) -> Result<Vec<IndexId>> {
        self.sliced
            .iter()
            .map(|s| {
                let id = net.index_id(&s.name).ok_or_else(|| {
                    Error::in_source(
                        "plan",
                        format!("sliced index '{}' is not in the network", s.name),
                    )
                })?;
                if net.indices[id].dim != s.dim {
                    return Err(Error::in_source(
                        "plan",
                        format!(
                            "sliced index '{}' has dimension {} in the plan but {} in the network",
                            s.name, s.dim, net.indices[id].dim
                        ),
                    ));
                }
                Ok(id)
            })
            .collect()
    }

    /// The values of the sliced indices in slice number `s` (mixed radix,
    /// first sliced index slowest).
    pub fn slice_assignment(&self, mut s: u64) -> Vec<u64> {
        let mut values = vec![0; self.sliced.len()];
        for (k, idx) in self.sliced.iter().enumerate().rev() {
            values[k] = s % idx.dim;
            s /= idx.dim;
        }
        values
    }

    /// A hash of everything that changes the arithmetic: the network's
    /// fingerprint, the tree, the slice set and the dtype. Partial results
    /// carry it; 16 hex digits.
    pub fn fingerprint(&self) -> String {
        let mut h = Sha256::new();
        h.update(b"sliceplan-plan-arithmetic-v1\n");
        h.update(self.network_fingerprint.as_bytes());
        h.update(format!("\n{}\n{:?}\n", self.tensors, self.merges).as_bytes());
        for s in &self.sliced {
            h.update(format!("{}={}\n", s.name, s.dim).as_bytes());
        }
        h.update(self.dtype.name().as_bytes());
        h.finalize()[..8]
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect()
    }

    /// Checks that the plan belongs to `net` and is internally consistent.
    pub fn check_against(&self, net: &Network) -> Result<()> {
        let fp = net.fingerprint();
        if fp != self.network_fingerprint {
            return Err(Error::in_source(
                "plan",
                format!(
                    "the plan was made for network {}, but this network has fingerprint {fp}",
                    self.network_fingerprint
                ),
            ));
        }
        let tree = self.tree()?;
        tree.check_order(&self.order)
            .map_err(|m| Error::in_source("plan", format!("order: {m}")))?;
        self.sliced_ids(net)?;
        Ok(())
    }

    /// The network path resolved against the plan file's location.
    pub fn network_path_from(&self, plan_path: &Path) -> PathBuf {
        let p = Path::new(&self.network_path);
        if p.is_absolute() {
            p.to_path_buf()
        } else {
            plan_path.parent().unwrap_or(Path::new(".")).join(p)
        }
    }
}

/// Reads a plan file.
pub fn read_plan(path: &Path) -> Result<Plan> {
    let text = crate::io::read_text(path)?;
    parse_plan(&text, &path.display().to_string())
}

/// Parses plan-file text (`source` names it in errors) and checks its
/// header and tree.
pub fn parse_plan(text: &str, source: &str) -> Result<Plan> {
    // Another of our files given where a plan belongs: say which, and how
    // to get a plan, before the schema's messages.
    if let Ok(table) = text.parse::<toml::Table>() {
        let format = table.get("format").and_then(|f| f.as_str());
        let what = match format {
            Some(crate::tree::TREE_FORMAT) => Some("a tree file"),
            Some("sliceplan-network") => Some("a network file"),
            Some("sliceplan-machine") => Some("a machine profile"),
            Some("sliceplan-jobs") => Some("a job manifest"),
            _ => None,
        };
        if let Some(what) = what {
            return Err(Error::in_source(
                source,
                format!(
                    "this is {what}, not a plan; make a plan with `sliceplan plan NETWORK --budget SIZE -o NAME.plan.toml`"
                ),
            ));
        }
    }
    let plan: Plan = crate::io::parse_toml(text, source, "plan file")?;
    crate::io::check_header(
        source,
        "plan",
        &plan.format,
        PLAN_FORMAT,
        plan.version,
        PLAN_VERSION,
    )?;
    let bad = |m: String| Error::in_source(source, m);
    let tree = plan.tree().map_err(|e| bad(e.to_string()))?;
    tree.check_order(&plan.order)
        .map_err(|m| bad(format!("order: {m}")))?;
    for (k, s) in plan.sliced.iter().enumerate() {
        if s.dim == 0 {
            return Err(bad(format!(
                "sliced index '{}' has dimension 0; dimensions are at least 1",
                s.name
            )));
        }
        if plan.sliced[..k].iter().any(|t| t.name == s.name) {
            return Err(bad(format!("sliced index '{}' is listed twice", s.name)));
        }
    }
    if plan.slice_count().is_none() {
        return Err(bad(
            "the sliced dimensions multiply to more than 2^64 slices".into(),
        ));
    }
    if plan.slices_at_once == 0 {
        return Err(bad("slices_at_once is 0; it is at least 1".into()));
    }
    // Only plans with reuse hold anything; the figures are read then.
    let held_figures = [
        ("reused_bytes", &plan.predicted.reused_bytes),
        ("setup_bytes", &plan.predicted.setup_bytes),
    ];
    for (field, text) in held_figures.into_iter().filter(|_| plan.reuse) {
        let ok = text
            .trim()
            .parse::<f64>()
            .is_ok_and(|b| b.is_finite() && b >= 0.0);
        if !ok {
            return Err(bad(format!(
                "predicted.{field} = '{text}' is not a byte count (a decimal number of bytes, \"0\" when nothing is held); write the plan again"
            )));
        }
    }
    if !plan.held.is_empty() && !plan.reuse {
        return Err(bad(
            "held lists intermediates but reuse is false; set reuse = true or remove held".into(),
        ));
    }
    for (k, &h) in plan.held.iter().enumerate() {
        if h < plan.tensors || h >= tree.num_nodes() || plan.held[..k].contains(&h) {
            return Err(bad(format!(
                "held node {h} is not an intermediate of the tree (nodes {}..{}) or is listed twice",
                plan.tensors,
                tree.num_nodes()
            )));
        }
    }
    Ok(plan)
}

/// Writes a plan file atomically.
pub fn write_plan(path: &Path, plan: &Plan) -> Result<()> {
    let body = toml::to_string(plan)
        .map_err(|e| Error::Cannot(format!("cannot serialise the plan: {e}")))?;
    let text = format!(
        "# sliceplan plan (our own format, version {PLAN_VERSION}). Re-render with `sliceplan report`.\n# Merge k makes node {}+k; node ids below {} are tensors in network file order.\n{body}",
        plan.tensors, plan.tensors
    );
    crate::io::write_atomic(path, text.as_bytes())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn plan() -> Plan {
        Plan {
            format: PLAN_FORMAT.into(),
            version: PLAN_VERSION,
            tool_version: env!("CARGO_PKG_VERSION").into(),
            network_fingerprint: "0123456789abcdef".into(),
            network_path: "net.toml".into(),
            tensors: 3,
            merges: vec![[0, 1], [3, 2]],
            order: vec![0, 1],
            sliced: vec![
                SlicedIndex {
                    name: "a".into(),
                    dim: 2,
                },
                SlicedIndex {
                    name: "b".into(),
                    dim: 3,
                },
            ],
            dtype: Dtype::F64,
            budget_bytes: 1 << 20,
            slices_at_once: 1,
            seed: 0,
            reuse: false,
            held: Vec::new(),
            predicted: Predicted::default(),
            frontier: Vec::new(),
            cover: None,
            estimate: None,
            lower_bound_width: None,
            ops_bound: None,
        }
    }

    #[test]
    fn slice_numbers_are_mixed_radix() {
        let p = plan();
        assert_eq!(p.slice_count(), Some(6));
        let all: Vec<Vec<u64>> = (0..6).map(|s| p.slice_assignment(s)).collect();
        assert_eq!(
            all,
            vec![
                vec![0, 0],
                vec![0, 1],
                vec![0, 2],
                vec![1, 0],
                vec![1, 1],
                vec![1, 2]
            ]
        );
    }

    #[test]
    fn round_trip_and_fingerprint() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("p.plan.toml");
        let p = plan();
        write_plan(&path, &p).unwrap();
        let q = read_plan(&path).unwrap();
        assert_eq!(p, q);
        let mut r = p.clone();
        r.sliced.pop();
        assert_ne!(p.fingerprint(), r.fingerprint());
        let mut s = p.clone();
        s.predicted.overhead = 2.0;
        assert_eq!(p.fingerprint(), s.fingerprint());
    }
}
