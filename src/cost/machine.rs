//! Machine profiles (one node type, TOML) and the time model built on them.
//!
//! The time estimate is a model, not a measurement: for each pairwise
//! contraction the larger of ops / rate (compute bound) and bytes moved /
//! bandwidth (memory bound), where bytes moved counts reading both operands
//! and writing the result once; the per-slice time is the sum over the tree;
//! the wall time is ceil(slices / (nodes x slices per node)) x per-slice time.
//! It ignores start-up, file I/O, permutes beyond one pass, and contention.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::bytes::parse_bytes;
use super::{Dims, NodeSets};
use crate::error::{Error, Result};
use crate::network::Dtype;

/// The `format` value of a machine profile.
pub const MACHINE_FORMAT: &str = "sliceplan-machine";

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct MachineFile {
    format: Option<String>,
    version: Option<u32>,
    name: String,
    #[serde(default)]
    description: String,
    memory: String,
    usable_fraction: f64,
    slices_per_node: u64,
    nodes: u64,
    cores: u64,
    bandwidth: String,
    rate: Rates,
    #[serde(default)]
    limits: Limits,
}

/// What counts as practical on a machine: beyond these a plan that fits is
/// reported as impractical (and `fit` exits with its own code). Profiles
/// may set them in a `[limits]` table.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default)]
pub struct Limits {
    /// The most slices a plan may have.
    pub max_slices: f64,
    /// The most wall-clock hours all slices may take on the machine's
    /// nodes (by the model estimate).
    pub max_wall_hours: f64,
}

impl Default for Limits {
    /// A million slices and a week of wall time: rules of thumb for one
    /// allocation (common practice, no source), stated in every report that
    /// uses them.
    fn default() -> Self {
        Limits {
            max_slices: 1e6,
            max_wall_hours: 168.0,
        }
    }
}

/// Sustained multiply-adds per second for each dtype.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Rates {
    /// Real 32-bit.
    pub f32: f64,
    /// Real 64-bit.
    pub f64: f64,
    /// Complex with 32-bit parts.
    pub c64: f64,
    /// Complex with 64-bit parts.
    pub c128: f64,
}

impl Rates {
    /// The rate for one dtype.
    pub fn of(&self, dtype: Dtype) -> f64 {
        match dtype {
            Dtype::F32 => self.f32,
            Dtype::F64 => self.f64,
            Dtype::C64 => self.c64,
            Dtype::C128 => self.c128,
        }
    }
}

/// One node type.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Machine {
    /// Short name.
    pub name: String,
    /// One line of description.
    pub description: String,
    /// Memory per node, bytes.
    pub memory_bytes: u64,
    /// Share of the memory slices may use.
    pub usable_fraction: f64,
    /// Slices running at once per node, each with its own peak.
    pub slices_per_node: u64,
    /// Nodes available at once.
    pub nodes: u64,
    /// Cores (or devices) per node.
    pub cores: u64,
    /// Sustained memory bandwidth per slice, bytes per second.
    pub bandwidth: f64,
    /// Sustained multiply-adds per second.
    pub rate: Rates,
    /// What counts as practical.
    pub limits: Limits,
}

impl Machine {
    /// Reads a machine profile.
    pub fn read(path: &Path) -> Result<Machine> {
        let text = crate::io::read_text(path)?;
        Machine::parse(&text, &path.display().to_string())
    }

    /// Parses profile text (`source` names it in errors).
    pub fn parse(text: &str, source: &str) -> Result<Machine> {
        let f: MachineFile = crate::io::parse_toml(text, source, "machine profile")?;
        let bad = |m: String| Error::in_source(source, m);
        if let Some(fmt) = &f.format {
            if fmt != MACHINE_FORMAT {
                return Err(bad(format!(
                    "format is '{fmt}', expected '{MACHINE_FORMAT}'"
                )));
            }
        }
        if let Some(v) = f.version {
            if v != 1 {
                return Err(bad(format!(
                    "machine profile version {v} is not supported; this build reads version 1"
                )));
            }
        }
        let memory_bytes = parse_bytes(&f.memory).map_err(|m| bad(format!("memory: {m}")))?;
        let bandwidth =
            parse_bytes(&f.bandwidth).map_err(|m| bad(format!("bandwidth: {m}")))? as f64;
        if !(f.usable_fraction > 0.0 && f.usable_fraction <= 1.0) {
            return Err(bad(format!(
                "usable_fraction {} must be in (0, 1]",
                f.usable_fraction
            )));
        }
        if f.slices_per_node == 0 || f.nodes == 0 || f.cores == 0 {
            return Err(bad(
                "slices_per_node, nodes and cores must be at least 1".into()
            ));
        }
        if !(f.limits.max_slices >= 1.0 && f.limits.max_wall_hours > 0.0) {
            return Err(bad(
                "limits: max_slices must be at least 1 and max_wall_hours positive".into(),
            ));
        }
        if memory_bytes == 0 || bandwidth <= 0.0 {
            return Err(bad("memory and bandwidth must be positive".into()));
        }
        for (name, r) in [
            ("f32", f.rate.f32),
            ("f64", f.rate.f64),
            ("c64", f.rate.c64),
            ("c128", f.rate.c128),
        ] {
            if !(r.is_finite() && r > 0.0) {
                return Err(bad(format!(
                    "rate.{name} = {r} must be a positive number of multiply-adds per second"
                )));
            }
        }
        Ok(Machine {
            name: f.name,
            description: f.description,
            memory_bytes,
            usable_fraction: f.usable_fraction,
            slices_per_node: f.slices_per_node,
            nodes: f.nodes,
            cores: f.cores,
            bandwidth,
            rate: f.rate,
            limits: f.limits,
        })
    }

    /// The memory one slice may use: memory x usable fraction / slices per node.
    pub fn budget_per_slice(&self) -> u64 {
        (self.memory_bytes as f64 * self.usable_fraction / self.slices_per_node as f64).floor()
            as u64
    }
}

/// A time estimate for a sliced contraction on one machine type.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Estimate {
    /// The machine's name.
    pub machine: String,
    /// Model seconds for one slice.
    pub seconds_per_slice: f64,
    /// Model wall-clock seconds for all slices on the machine's nodes.
    pub wall_seconds: f64,
    /// Nodes busy (at most the machine's node count).
    pub nodes_used: u64,
    /// wall seconds x nodes used / 3600.
    pub node_hours: f64,
    /// How the numbers were made.
    pub method: String,
}

/// The text that travels with every estimate.
pub const ESTIMATE_METHOD: &str = "model estimate: per contraction max(ops / rate, bytes moved / bandwidth), summed per slice, times ceil(slices / (nodes x slices per node)); ignores start-up, I/O and contention";

/// Estimates the time of `slices` slices of a tree priced with `dims`.
pub fn estimate(
    sets: &NodeSets,
    dims: &Dims,
    slices: f64,
    dtype: Dtype,
    machine: &Machine,
) -> Estimate {
    let rate = machine.rate.of(dtype);
    let bytes = dtype.bytes() as f64;
    let size = |idx: &[usize]| -> f64 { idx.iter().map(|&e| dims.log2[e]).sum::<f64>().exp2() };
    let n = sets.leaves();
    let mut per_slice = 0.0;
    for (k, union) in sets.unions.iter().enumerate() {
        let ops = size(union);
        let [a, b] = sets.merge(k);
        let moved =
            bytes * (size(&sets.indices[a]) + size(&sets.indices[b]) + size(&sets.indices[n + k]));
        per_slice += (ops / rate).max(moved / machine.bandwidth);
    }
    let at_once = (machine.nodes * machine.slices_per_node) as f64;
    let rounds = (slices / at_once).ceil().max(1.0);
    let nodes_used =
        ((slices / machine.slices_per_node as f64).ceil() as u64).clamp(1, machine.nodes);
    let wall = rounds * per_slice;
    Estimate {
        machine: machine.name.clone(),
        seconds_per_slice: per_slice,
        wall_seconds: wall,
        nodes_used,
        node_hours: wall * nodes_used as f64 / 3600.0,
        method: ESTIMATE_METHOD.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const PROFILE: &str = r#"
name = "test"
memory = "64GiB"
usable_fraction = 0.5
slices_per_node = 2
nodes = 4
cores = 8
bandwidth = "100GB"
[rate]
f32 = 4e9
f64 = 2e9
c64 = 1e9
c128 = 5e8
"#;

    #[test]
    fn budget_per_slice() {
        let m = Machine::parse(PROFILE, "p").unwrap();
        // 64 GiB x 0.5 / 2 = 16 GiB.
        assert_eq!(m.budget_per_slice(), 16 << 30);
    }

    #[test]
    fn estimate_of_a_matrix_product() {
        // One product of 1000x1000 matrices: 10^9 ops; as f64 at 2e9 ops/s
        // that is 0.5 s, while moving 3 x 10^6 x 8 bytes at 1e11 B/s takes
        // 2.4e-4 s, so compute-bound: 0.5 s per slice (closed form).
        let net =
            crate::formats::einsum::network_from_einsum("ab,bc->ac", Some(1000), &[]).unwrap();
        let tree = crate::tree::Tree::left_deep(2);
        let sets = NodeSets::new(&net, &tree);
        let m = Machine::parse(PROFILE, "p").unwrap();
        let e = estimate(&sets, &Dims::of(&net), 20.0, Dtype::F64, &m);
        assert!((e.seconds_per_slice - 0.5).abs() < 1e-12);
        // 20 slices on 4 nodes x 2 at once: 3 rounds, 1.5 s wall, 4 nodes.
        assert!((e.wall_seconds - 1.5).abs() < 1e-12);
        assert_eq!(e.nodes_used, 4);
        assert!((e.node_hours - 1.5 * 4.0 / 3600.0).abs() < 1e-15);
    }

    #[test]
    fn bad_profiles_name_the_field() {
        let bad = PROFILE.replace("usable_fraction = 0.5", "usable_fraction = 1.5");
        assert!(Machine::parse(&bad, "p")
            .unwrap_err()
            .to_string()
            .contains("usable_fraction 1.5"));
        let bad = PROFILE.replace("\"64GiB\"", "\"64 gigs\"");
        assert!(Machine::parse(&bad, "p")
            .unwrap_err()
            .to_string()
            .contains("memory:"));
        let bad = PROFILE.replace("c128 = 5e8", "c128 = 0");
        assert!(Machine::parse(&bad, "p")
            .unwrap_err()
            .to_string()
            .contains("rate.c128"));
    }
}
