//! The machine profile a calibration writes: version 2 TOML with comments
//! that say what each figure is and how it was measured.

use std::fmt::Write as _;

use super::{NodeFacts, Settings, BATCH_OPS_LOG2};
use crate::cost::bytes::bytes_human;
use crate::cost::machine::{Machine, MACHINE_FORMAT, MACHINE_VERSION};

/// Share of the memory slices may use in a calibrated profile (the rest
/// for the operating system and buffers; the same as the shipped CPU
/// profile).
pub const USABLE_FRACTION: f64 = 0.85;

/// How each figure was measured, as stored in `[calibration.method]`.
fn methods(node: &NodeFacts, settings: &Settings) -> Vec<(&'static str, String)> {
    vec![
        ("cores", node.cores_source.clone()),
        ("memory", node.memory_source.clone()),
        ("rate", format!(
            "the executor's pairwise kernel (faer multiply) on a square product of edge {} x cube root of the threads, mean of operands in matrix layout and permuted (copied first); median of {} timings of at least {} s",
            settings.large_edge, settings.reps, settings.min_seconds
        )),
        ("efficiency", format!(
            "the same kernel on batches of 2^{BATCH_OPS_LOG2} multiply-adds of nearly cubic products of 2^x each over dimension-2 indices (batch indices shared by both operands), stored in matrix order and permuted, over the rate"
        )),
        ("bandwidth", "bytes of operands and result per second of the same kernel on a memory-bound gate-like f64 contraction (2^22 elements over dimension-2 indices by 2 x 2 on one of them, stored permuted); [threads.memory] the same at 2^10, 2^14, 2^18 and 2^25 elements over it".to_string()),
        ("overhead_seconds", "the larger of: mean seconds per call of the same kernel on three small f64 contractions over dimension-2 indices (2 x 2 by 2 x 2 in matrix layout, a batch of two stored permuted, two 4-index tensors sharing two, both copied first); and the seconds per contraction that whole slices of a 6 x 6 bond-2 lattice (the executor's slice walk, one thread) take beyond the model's compute and memory terms".to_string()),
    ]
}

fn quote(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c if c.is_control() => {
                let _ = write!(out, "\\u{:04X}", c as u32);
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// Numbers with four significant digits (small shares in scientific
/// notation, so none rounds to zero).
fn list(v: &[f64]) -> String {
    let items: Vec<String> = v
        .iter()
        .map(|&x| {
            if x == 0.0 || x.abs() >= 0.01 {
                format!("{x:.4}")
            } else {
                format!("{x:.3e}")
            }
        })
        .collect();
    format!("[{}]", items.join(", "))
}

/// Bytes per second as a size the profile parser reads (decimal MB).
fn per_second(bytes: f64) -> String {
    format!("{:.0}MB", (bytes / 1e6).max(1.0))
}

/// The profile text of a calibrated `machine`.
pub fn render(machine: &Machine, node: &NodeFacts, settings: &Settings, seconds: f64) -> String {
    let mut s = String::new();
    let memory = match node.memory_bytes {
        Some(b) => format!("{}MiB", b >> 20),
        None => "1GiB".to_string(),
    };
    let _ = writeln!(
        s,
        "# Machine profile measured by `sliceplan calibrate` on host {} on {}.\n\
         # Every figure below was measured on that node with sliceplan's own\n\
         # executor (see [calibration.method]); time estimates made with it are\n\
         # model estimates for that node type. Set `nodes` to the nodes you may\n\
         # use at once and `slices_per_node` to the slices each node runs.",
        node.host, node.date
    );
    if node.memory_bytes.is_none() {
        s.push_str("# The memory could not be read on this system: set `memory` by hand.\n");
    }
    let _ = writeln!(s, "format = {}", quote(MACHINE_FORMAT));
    let _ = writeln!(s, "version = {MACHINE_VERSION}");
    let _ = writeln!(s, "name = {}", quote(&machine.name));
    let _ = writeln!(
        s,
        "description = {}",
        quote(&format!(
            "{} ({} cores, {}), calibrated {}",
            node.host,
            machine.cores,
            node.memory_bytes
                .map_or_else(|| "memory unknown".into(), |b| bytes_human(b as f64)),
            node.date
        ))
    );
    let _ = writeln!(
        s,
        "memory = \"{memory}\"  # bytes this process may use ({})",
        node.memory_source
    );
    let _ = writeln!(
        s,
        "usable_fraction = {USABLE_FRACTION}      # share of the memory slices may use"
    );
    let _ = writeln!(s, "slices_per_node = 1         # slices running at once per node, each with cores / slices_per_node threads");
    let _ = writeln!(
        s,
        "nodes = 1                   # nodes you may use at once: set it for your allocation"
    );
    let _ = writeln!(
        s,
        "cores = {}                   # {}",
        machine.cores, node.cores_source
    );
    let _ = writeln!(
        s,
        "bandwidth = \"{}\"  # bytes per second with all cores (memory-bound contractions)",
        per_second(machine.bandwidth)
    );
    let _ = writeln!(
        s,
        "overhead_seconds = {:.3e}  # fixed cost of one pairwise contraction",
        machine.overhead_seconds
    );
    let r = &machine.rate;
    let _ = writeln!(
        s,
        "\n[rate]                      # multiply-adds per second of large products, all cores"
    );
    let _ = writeln!(
        s,
        "f32 = {:.4e}\nf64 = {:.4e}\nc64 = {:.4e}\nc128 = {:.4e}",
        r.f32, r.f64, r.c64, r.c128
    );
    for t in &machine.threads {
        let _ = writeln!(
            s,
            "\n[[threads]]                 # figures for a slice running with this many threads"
        );
        let _ = writeln!(s, "threads = {}", t.threads);
        let _ = writeln!(s, "bandwidth = \"{}\"", per_second(t.bandwidth));
        let _ = writeln!(s, "[threads.rate]");
        let _ = writeln!(
            s,
            "f32 = {:.4e}\nf64 = {:.4e}\nc64 = {:.4e}\nc128 = {:.4e}",
            t.rate.f32, t.rate.f64, t.rate.c64, t.rate.c128
        );
        if let Some(e) = &t.efficiency {
            let _ = writeln!(s, "[threads.efficiency]        # share of the rate one product of 2^ops_log2 multiply-adds reaches");
            let _ = writeln!(s, "ops_log2 = {}", list(&e.ops_log2));
            let _ = writeln!(
                s,
                "f32 = {}\nf64 = {}\nc64 = {}\nc128 = {}",
                list(&e.f32),
                list(&e.f64),
                list(&e.c64),
                list(&e.c128)
            );
        }
        if let Some(m) = &t.memory {
            let _ = writeln!(s, "[threads.memory]            # share of the bandwidth when 2^elements_log2 elements move");
            let _ = writeln!(s, "elements_log2 = {}", list(&m.elements_log2));
            let _ = writeln!(s, "share = {}", list(&m.share));
        }
    }
    let _ = writeln!(s, "\n[calibration]");
    let _ = writeln!(s, "date = {}", quote(&node.date));
    let _ = writeln!(s, "host = {}", quote(&node.host));
    let _ = writeln!(s, "tool_version = {}", quote(env!("CARGO_PKG_VERSION")));
    if let Some(l) = node.load {
        let _ = writeln!(s, "load = {l:.2}                 # 1-minute load average when it started: other work slows the figures");
    }
    let _ = writeln!(s, "seconds = {seconds:.1}");
    let _ = writeln!(s, "[calibration.method]");
    for (k, v) in methods(node, settings) {
        let _ = writeln!(s, "{k} = {}", quote(&v));
    }
    s
}
