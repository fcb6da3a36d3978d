//! Machine profiles (one node type, TOML) and the time estimate built on
//! them.
//!
//! A profile states a node's memory, cores, memory bandwidth and sustained
//! multiply-add rate per dtype. Version 2 adds what `sliceplan calibrate`
//! measures: a fixed overhead per contraction, and per thread count the
//! rate, the bandwidth and the share of the rate small matrix products
//! reach (`[[threads]]` tables), with how and when it was measured
//! (`[calibration]`). Version 1 files are still read; their rates are the
//! whole node's, scaled by threads / cores for a slice with fewer threads.
//!
//! The estimate is a model, not a measurement ([`super::time`]): per
//! contraction a fixed overhead plus ops / rate plus bytes moved /
//! bandwidth, for the threads one slice gets; summed per slice; the
//! wall time is ceil(slices / (nodes x slices per node)) x per-slice time.
//! It ignores start-up, file I/O and contention between slices.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::bytes::parse_bytes;
use super::time::{slice_seconds, Speeds};
use super::{Dims, NodeSets};
use crate::error::{Error, Result};
use crate::network::Dtype;

/// The `format` value of a machine profile.
pub const MACHINE_FORMAT: &str = "sliceplan-machine";
/// The newest profile version this build reads and writes.
pub const MACHINE_VERSION: u32 = 2;

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
    overhead_seconds: Option<f64>,
    #[serde(default)]
    threads: Vec<ThreadFile>,
    calibration: Option<Calibration>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ThreadFile {
    threads: u64,
    bandwidth: String,
    rate: Rates,
    efficiency: Option<Efficiency>,
    memory: Option<MemoryShare>,
}

/// Figures measured for slices running with a given number of threads.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ThreadFigures {
    /// Threads per slice.
    pub threads: u64,
    /// Bytes per second moved by memory-bound contractions.
    pub bandwidth: f64,
    /// Multiply-adds per second of large products.
    pub rate: Rates,
    /// Share of the rate small products reach.
    pub efficiency: Option<Efficiency>,
    /// Share of the bandwidth contractions reach by the data they move.
    pub memory: Option<MemoryShare>,
}

/// The share of `bandwidth` a contraction moving 2^`elements_log2`
/// elements (operands and result) reaches: above 1 while it fits in
/// caches, below 1 for tensors far larger than the one measured.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MemoryShare {
    /// log2 of the elements moved, increasing.
    pub elements_log2: Vec<f64>,
    /// The share of the bandwidth at each size.
    pub share: Vec<f64>,
}

impl MemoryShare {
    /// The (log2 elements, share) points.
    pub fn points(&self) -> Vec<(f64, f64)> {
        self.elements_log2
            .iter()
            .copied()
            .zip(self.share.iter().copied())
            .collect()
    }

    fn check(&self) -> std::result::Result<(), String> {
        let n = self.elements_log2.len();
        if n == 0
            || self
                .elements_log2
                .windows(2)
                .any(|w| w[0].partial_cmp(&w[1]) != Some(std::cmp::Ordering::Less))
        {
            return Err("memory.elements_log2 must list at least one size, increasing".into());
        }
        if self.share.len() != n {
            return Err(format!(
                "memory.share has {} shares but elements_log2 has {n} sizes; give one share per size",
                self.share.len()
            ));
        }
        if let Some(x) = self
            .share
            .iter()
            .find(|x| !(x.is_finite() && **x > 0.0 && **x <= 100.0))
        {
            return Err(format!(
                "memory.share: {x} must be a positive number (1 = the bandwidth)"
            ));
        }
        Ok(())
    }
}

/// The share of the rate one matrix product of 2^`ops_log2` multiply-adds
/// reaches, per dtype (a point per entry of `ops_log2`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Efficiency {
    /// log2 of the multiply-adds of one product, increasing.
    pub ops_log2: Vec<f64>,
    /// Shares for real 32-bit.
    pub f32: Vec<f64>,
    /// Shares for real 64-bit.
    pub f64: Vec<f64>,
    /// Shares for complex 32-bit parts.
    pub c64: Vec<f64>,
    /// Shares for complex 64-bit parts.
    pub c128: Vec<f64>,
}

impl Efficiency {
    /// The (log2 size, share) points of one dtype.
    pub fn points(&self, dtype: Dtype) -> Vec<(f64, f64)> {
        let shares = match dtype {
            Dtype::F32 => &self.f32,
            Dtype::F64 => &self.f64,
            Dtype::C64 => &self.c64,
            Dtype::C128 => &self.c128,
        };
        self.ops_log2
            .iter()
            .copied()
            .zip(shares.iter().copied())
            .collect()
    }

    fn check(&self) -> std::result::Result<(), String> {
        let n = self.ops_log2.len();
        if n == 0
            || self
                .ops_log2
                .windows(2)
                .any(|w| w[0].partial_cmp(&w[1]) != Some(std::cmp::Ordering::Less))
        {
            return Err("efficiency.ops_log2 must list at least one size, increasing".into());
        }
        for (name, v) in [
            ("f32", &self.f32),
            ("f64", &self.f64),
            ("c64", &self.c64),
            ("c128", &self.c128),
        ] {
            if v.len() != n {
                return Err(format!(
                    "efficiency.{name} has {} shares but ops_log2 has {n} sizes; give one share per size",
                    v.len()
                ));
            }
            if let Some(x) = v
                .iter()
                .find(|x| !(x.is_finite() && **x > 0.0 && **x <= 4.0))
            {
                return Err(format!(
                    "efficiency.{name}: share {x} must be a positive number (1 = the full rate)"
                ));
            }
        }
        Ok(())
    }
}

/// How and when a profile was measured (written by `sliceplan calibrate`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Calibration {
    /// Date of the measurement, `YYYY-MM-DD` (UTC).
    pub date: String,
    /// The host name of the node measured.
    pub host: String,
    /// The sliceplan version that measured it.
    pub tool_version: String,
    /// Load average (1 minute) when the measurement started, when known.
    #[serde(default)]
    pub load: Option<f64>,
    /// Seconds the measurement took.
    #[serde(default)]
    pub seconds: f64,
    /// How each figure was measured: figure name, method.
    #[serde(default)]
    pub method: std::collections::BTreeMap<String, String>,
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
    /// Seconds every pairwise contraction costs besides its arithmetic.
    pub overhead_seconds: f64,
    /// Figures measured per thread count (version 2), increasing threads.
    pub threads: Vec<ThreadFigures>,
    /// How and when the figures were measured, for a calibrated profile.
    pub calibration: Option<Calibration>,
    /// The profile's version.
    pub version: u32,
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
        let version = f.version.unwrap_or(1);
        if !(1..=MACHINE_VERSION).contains(&version) {
            return Err(bad(format!(
                "machine profile version {version} is not supported; this build reads versions 1 and {MACHINE_VERSION}"
            )));
        }
        if version == 1
            && (f.overhead_seconds.is_some() || !f.threads.is_empty() || f.calibration.is_some())
        {
            return Err(bad(
                "overhead_seconds, [[threads]] and [calibration] need `version = 2`".into(),
            ));
        }
        let overhead_seconds = f.overhead_seconds.unwrap_or(0.0);
        if !(overhead_seconds.is_finite() && overhead_seconds >= 0.0) {
            return Err(bad(format!(
                "overhead_seconds = {overhead_seconds} must be zero or a positive number of seconds"
            )));
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
        check_rates(&f.rate).map_err(bad)?;
        let mut threads = Vec::with_capacity(f.threads.len());
        for t in f.threads {
            let at = |m: String| bad(format!("[[threads]] with threads = {}: {m}", t.threads));
            if t.threads == 0 || t.threads > f.cores {
                return Err(at(format!("threads must be 1 to cores ({})", f.cores)));
            }
            let bandwidth = parse_bytes(&t.bandwidth).map_err(|m| at(format!("bandwidth: {m}")))?;
            if bandwidth == 0 {
                return Err(at("bandwidth must be positive".into()));
            }
            check_rates(&t.rate).map_err(at)?;
            if let Some(e) = &t.efficiency {
                e.check().map_err(at)?;
            }
            if let Some(m) = &t.memory {
                m.check().map_err(at)?;
            }
            threads.push(ThreadFigures {
                threads: t.threads,
                bandwidth: bandwidth as f64,
                rate: t.rate,
                efficiency: t.efficiency,
                memory: t.memory,
            });
        }
        threads.sort_by_key(|t| t.threads);
        if threads.windows(2).any(|w| w[0].threads == w[1].threads) {
            return Err(bad(
                "two [[threads]] tables have the same thread count".into()
            ));
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
            overhead_seconds,
            threads,
            calibration: f.calibration,
            version,
        })
    }

    /// The memory one slice may use: memory x usable fraction / slices per node.
    pub fn budget_per_slice(&self) -> u64 {
        (self.memory_bytes as f64 * self.usable_fraction / self.slices_per_node as f64).floor()
            as u64
    }
}

/// Checks that every rate is a positive number.
fn check_rates(rate: &Rates) -> std::result::Result<(), String> {
    for (name, r) in [
        ("f32", rate.f32),
        ("f64", rate.f64),
        ("c64", rate.c64),
        ("c128", rate.c128),
    ] {
        if !(r.is_finite() && r > 0.0) {
            return Err(format!(
                "rate.{name} = {r} must be a positive number of multiply-adds per second"
            ));
        }
    }
    Ok(())
}

impl Machine {
    /// Threads one slice gets when the node runs `slices_per_node` slices
    /// on its cores.
    pub fn threads_per_slice(&self) -> u64 {
        (self.cores / self.slices_per_node).max(1)
    }

    /// The thread counts an estimate lists: powers of two below the
    /// cores, the threads per slice, and the cores.
    fn listed_threads(&self) -> Vec<u64> {
        let mut t: Vec<u64> = std::iter::successors(Some(1u64), |x| x.checked_mul(2))
            .take_while(|&x| x < self.cores)
            .chain([self.threads_per_slice(), self.cores])
            .collect();
        t.extend(self.threads.iter().map(|f| f.threads));
        t.sort_unstable();
        t.dedup();
        t
    }
}

/// Model seconds per slice for one thread count.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ThreadSeconds {
    /// Threads per slice.
    pub threads: u64,
    /// Model seconds for one slice with that many threads.
    pub seconds_per_slice: f64,
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
    /// Threads each slice gets in `seconds_per_slice` (the node's cores
    /// over its slices per node); 0 in plans written before it was stored.
    #[serde(default)]
    pub threads_per_slice: u64,
    /// Model seconds per slice for other thread counts (a task with
    /// `--cpus-per-task C` running `k` slices at once gives each C / k).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub by_threads: Vec<ThreadSeconds>,
}

impl Estimate {
    /// Model seconds per slice with `threads` threads: the listed figure for
    /// the largest thread count not above `threads` (fewer threads are never
    /// faster, so this errs long), else the figure for the node's threads
    /// per slice. Returns the seconds and the thread count they are for.
    pub fn seconds_for_threads(&self, threads: u64) -> (f64, u64) {
        self.by_threads
            .iter()
            .filter(|t| t.threads <= threads.max(1))
            .max_by_key(|t| t.threads)
            .map_or((self.seconds_per_slice, self.threads_per_slice), |t| {
                (t.seconds_per_slice, t.threads)
            })
    }
}

/// The text that travels with every estimate.
pub const ESTIMATE_METHOD: &str = "model estimate: per contraction a fixed overhead + ops / rate + bytes moved / bandwidth, with the rate and bandwidth for the threads one slice gets (cores / slices per node) and the share of the rate a product of that size reaches; summed per slice, times ceil(slices / (nodes x slices per node)); ignores start-up, I/O and contention";

/// Estimates the time of `slices` slices of a tree priced with `dims`,
/// each slice with the machine's threads per slice; also lists the
/// per-slice time for other thread counts.
pub fn estimate(
    sets: &NodeSets,
    dims: &Dims,
    slices: f64,
    dtype: Dtype,
    machine: &Machine,
) -> Estimate {
    let per_threads =
        |t: u64| slice_seconds(sets, dims, dtype, &Speeds::for_threads(machine, dtype, t));
    let threads_per_slice = machine.threads_per_slice();
    let per_slice = per_threads(threads_per_slice);
    let by_threads = machine
        .listed_threads()
        .into_iter()
        .map(|threads| ThreadSeconds {
            threads,
            seconds_per_slice: per_threads(threads),
        })
        .collect();
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
        threads_per_slice,
        by_threads,
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
        // One product of 1000x1000 matrices: 10^9 ops. The node runs 2
        // slices on its 8 cores, so a slice has 4 threads and (version 1,
        // no per-thread figures) 4/8 of the f64 rate, 1e9 ops/s: 1 s, plus
        // moving 3 x 10^6 x 8 bytes at 1e11 B/s, 2.4e-4 s: 1.00024 s per
        // slice (closed form).
        let net =
            crate::formats::einsum::network_from_einsum("ab,bc->ac", Some(1000), &[]).unwrap();
        let tree = crate::tree::Tree::left_deep(2);
        let sets = NodeSets::new(&net, &tree);
        let m = Machine::parse(PROFILE, "p").unwrap();
        let e = estimate(&sets, &Dims::of(&net), 20.0, Dtype::F64, &m);
        assert!((e.seconds_per_slice - 1.00024).abs() < 1e-12);
        assert_eq!(e.threads_per_slice, 4);
        // 20 slices on 4 nodes x 2 at once: 3 rounds, 3.00072 s wall, 4 nodes.
        assert!((e.wall_seconds - 3.00072).abs() < 1e-12);
        assert_eq!(e.nodes_used, 4);
        assert!((e.node_hours - 3.00072 * 4.0 / 3600.0).abs() < 1e-15);
        // One thread gets 1/8 of the node's rate: 4 s + 2.4e-4 s (closed form).
        let (one, t) = e.seconds_for_threads(1);
        assert_eq!(t, 1);
        assert!((one - 4.00024).abs() < 1e-12);
        // 3 threads: the listed count below it (2 threads), 2 s, erring long.
        let (three, t) = e.seconds_for_threads(3);
        assert_eq!(t, 2);
        assert!((three - 2.00024).abs() < 1e-12);
    }

    const PROFILE_V2: &str = r#"
format = "sliceplan-machine"
version = 2
name = "measured"
memory = "16GiB"
usable_fraction = 0.5
slices_per_node = 1
nodes = 1
cores = 2
bandwidth = "10GB"
overhead_seconds = 1e-6
[rate]
f32 = 4e9
f64 = 2e9
c64 = 1e9
c128 = 5e8
[[threads]]
threads = 1
bandwidth = "5GB"
[threads.rate]
f32 = 2e9
f64 = 1e9
c64 = 5e8
c128 = 2.5e8
[threads.efficiency]
ops_log2 = [0, 10, 20]
f32 = [0.01, 0.5, 1]
f64 = [0.01, 0.5, 1]
c64 = [0.01, 0.5, 1]
c128 = [0.01, 0.5, 1]
[calibration]
date = "2025-01-01"
host = "example"
tool_version = "0.1.0"
"#;

    #[test]
    fn version_2_profiles_price_threads_and_sizes() {
        let m = Machine::parse(PROFILE_V2, "p").unwrap();
        assert_eq!((m.version, m.threads.len()), (2, 1));
        // A product of 2^10 multiply-adds (32 x 32 by 32 x 1) with one
        // thread: share 0.5 of 1e9, so 1024 / 5e8 = 2.048e-6 s; moving
        // (1024 + 32 + 32) x 8 bytes at 5e9 B/s is 1.7408e-6 s; plus the
        // overhead 1e-6 s: 4.7888e-6 s (closed form).
        let net = crate::formats::einsum::network_from_einsum("ab,b->a", Some(32), &[]).unwrap();
        let sets = NodeSets::new(&net, &crate::tree::Tree::left_deep(2));
        let speeds = Speeds::for_threads(&m, Dtype::F64, 1);
        let t = slice_seconds(&sets, &Dims::of(&net), Dtype::F64, &speeds);
        assert!((t - 4.7888e-6).abs() < 1e-15, "{t}");
        // Two threads: no table for 2, so the largest below (1 thread).
        assert_eq!(Speeds::for_threads(&m, Dtype::F64, 2).threads, 1);
        // Version 1 files may not carry version 2 tables.
        let v1 = PROFILE_V2.replace("version = 2", "version = 1");
        let e = Machine::parse(&v1, "p").unwrap_err().to_string();
        assert!(e.contains("need `version = 2`"), "{e}");
        let bad = PROFILE_V2.replace("f64 = [0.01, 0.5, 1]", "f64 = [0.5, 1]");
        let e = Machine::parse(&bad, "p").unwrap_err().to_string();
        assert!(e.contains("efficiency.f64 has 2 shares"), "{e}");
        let bad = PROFILE_V2.replace("threads = 1\n", "threads = 3\n");
        let e = Machine::parse(&bad, "p").unwrap_err().to_string();
        assert!(e.contains("threads must be 1 to cores (2)"), "{e}");
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
