//! The fit report shared by `fit`, `plan` and `report`: the verdict, the
//! chosen slice set, the frontier, estimates, and one row per machine.

use serde::Serialize;

use super::inspect::TreeReport;
use super::plan::SearchReport;
use super::{group_decimal, log2_str, ops_str, overhead_str, Table};
use crate::cost::bytes::bytes_human;
use crate::cost::machine::{Estimate, ESTIMATE_METHOD};
use crate::cost::memory::MemoryNeed;
use crate::network::{Dtype, Network, Summary};
use crate::plan::advise::Advice;
use crate::search::WidthBound;
use crate::slicing::{CoverReport, FrontierRow, Origin};

/// The chosen slice set as it appears in JSON (`slicing.*`).
#[derive(Debug, Clone, Serialize)]
pub struct SlicingReport {
    /// Names of the sliced indices.
    pub indices: Vec<String>,
    /// log2 total ops, unsliced, of the tree the slices run on: the
    /// searched tree's, or the tree's that slicing re-planned (the
    /// overheads stay over the best unsliced tree found,
    /// `frontier[0]`).
    pub tree_total_ops_log2: f64,
    /// Their dimensions.
    pub dims: Vec<u64>,
    /// Number of slices, decimal.
    pub slices: String,
    /// log2 of the number of slices.
    pub slices_log2: f64,
    /// Metrics of one slice.
    pub per_slice: PerSlice,
    /// Total ops over all slices, decimal (or `2^x`).
    pub total_ops: String,
    /// log2 of the total ops over all slices.
    pub total_ops_log2: f64,
    /// Total ops with slicing over total ops without.
    pub overhead: f64,
    /// Whether the figures count slice-invariant work once per process
    /// (held intermediates) rather than in every slice.
    pub reuse: bool,
    /// Total ops if every slice repeated the slice-invariant work, log2.
    pub plain_total_ops_log2: f64,
    /// Those over total ops without slicing.
    pub plain_overhead: f64,
    /// Intermediates computed once per process and held.
    pub held_intermediates: usize,
    /// Their bytes.
    pub reused_bytes: f64,
    /// Ops of the work done once, log2 (absent when none is).
    pub invariant_ops_log2: Option<f64>,
    /// Which search found it.
    pub found_by: Origin,
    /// The fewest slices of any fitting set found, decimal.
    pub fewest_slices_found: Option<String>,
}

/// Per-slice metrics.
#[derive(Debug, Clone, Serialize)]
pub struct PerSlice {
    /// log2 of the total ops of one slice.
    pub total_ops_log2: f64,
    /// Width of one slice.
    pub width: f64,
    /// Peak bytes of one slice (executor model, workspace included).
    pub peak_bytes: f64,
}

/// A lower bound on the overhead, printed beside the result (text line
/// `floor`, JSON key `overhead_lower_bound`).
///
/// How it is derived ([`crate::slicing::bound`]): on the chosen tree, a
/// merge m whose operands were summed over sliced indices is repeated for
/// every value of those indices (with or without reuse, since it varies
/// with them), so it costs at least ops(m) x their dimensions; and a
/// process fits only when every node, as one slice holds it, has at most
/// C elements (the budget less inputs and output), which forces enough
/// slicing on every large node. A linear programme over "index e is
/// sliced" (relaxed to 0..1) minimises the largest merge term under those
/// covering rows; every fitting slice set is a point of it, so its optimum
/// (plus every other merge at least once) is at most the total ops of any
/// fitting set on that tree. Over the unsliced total ops (the overhead's
/// baseline) it bounds the overhead from below. It says nothing of other
/// trees, and it ignores the sum of live nodes, so it may be loose.
#[derive(Debug, Clone, Serialize)]
pub struct OverheadBound {
    /// Every slice set on the chosen tree whose process fits has at least
    /// 2^this total ops (with or without reuse).
    pub total_ops_log2: f64,
    /// That over the unsliced total ops (the overhead's baseline).
    pub overhead: f64,
    /// The largest node a slice may hold in the programme, elements.
    pub cap_elements: f64,
    /// True when the linear programme was solved; false when only the
    /// tree's own unsliced ops are claimed.
    pub solved: bool,
    /// What it bounds, in words.
    pub bounds: String,
}

/// What the overhead bound bounds (for JSON and text).
pub const OVERHEAD_BOUND_SCOPE: &str = "every slice set on the chosen tree whose process fits the budget, with or without reuse; other trees may do better";

/// One row of the machine comparison.
#[derive(Debug, Clone, Serialize)]
pub struct MachineRow {
    /// Machine (or budget) label.
    pub target: String,
    /// Bytes a process may use there.
    pub budget_bytes: u64,
    /// Slices a process runs at once there.
    pub slices_at_once: u64,
    /// Fits without slicing?
    pub fits_without_slicing: bool,
    /// Fits at all?
    pub fits: bool,
    /// Slices needed, decimal (absent when it cannot fit).
    pub slices: Option<String>,
    /// Overhead of the chosen slicing.
    pub overhead: Option<f64>,
    /// The time estimate, when the target is a machine.
    pub estimate: Option<Estimate>,
}

/// Everything `fit` and `plan` print.
#[derive(Debug, Clone, Serialize)]
pub struct FitReport {
    /// The network summary.
    pub network: Summary,
    /// The tree's unsliced metrics.
    pub tree: TreeReport,
    /// The proven lower bound on width, when computed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub lower_bound: Option<WidthBound>,
    /// How the tree search went, when there was one.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub search: Option<SearchReport>,
    /// Bytes one process may use.
    pub budget_bytes: u64,
    /// Element type.
    pub dtype: Dtype,
    /// Bytes per element.
    pub bytes_per_element: u64,
    /// Slices one process runs at once.
    pub slices_at_once: u64,
    /// Does the contraction fit without slicing?
    pub fits_without_slicing: bool,
    /// Does it fit at all (with the chosen slicing)?
    pub fits: bool,
    /// True unless the plan that fits is impractical (too many slices or
    /// too long on the machine; see `impractical`).
    pub practical: bool,
    /// Why a plan that fits is impractical, one reason each.
    pub impractical: Vec<String>,
    /// One sentence answering "will it fit".
    pub verdict: String,
    /// What a process needs with the chosen slicing (or unsliced when
    /// nothing fits).
    pub memory: MemoryReport,
    /// What a process needs without slicing: the one "unsliced" figure of
    /// every screen (the first frontier row shows the same).
    pub memory_unsliced: MemoryReport,
    /// The smallest budget that works with any slice set found, when it
    /// cannot fit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub smallest_budget_bytes: Option<f64>,
    /// The chosen slice set (no indices and 1 slice when none is needed;
    /// null when nothing fits).
    pub slicing: Option<SlicingReport>,
    /// Best points by slice count.
    pub frontier: Vec<FrontierRow>,
    /// The cover programme's bound.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cover: Option<CoverReport>,
    /// The lower bound on overhead of every fitting slice set on the
    /// chosen tree, when slicing is needed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub overhead_lower_bound: Option<OverheadBound>,
    /// The time estimate on the first machine.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub estimate: Option<Estimate>,
    /// One row per target when several were given.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub machines: Vec<MachineRow>,
}

/// Process memory by part, bytes.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct MemoryReport {
    /// Full input tensors.
    pub inputs_bytes: f64,
    /// Output accumulator.
    pub output_bytes: f64,
    /// One slice's peak.
    pub per_slice_peak_bytes: f64,
    /// Slice-invariant intermediates held for the process's life.
    pub reused_bytes: f64,
    /// The most held above the inputs while computing them.
    pub setup_bytes: f64,
    /// The total for the slices running at once.
    pub process_bytes: f64,
}

impl From<MemoryNeed> for MemoryReport {
    fn from(m: MemoryNeed) -> Self {
        MemoryReport {
            inputs_bytes: m.inputs_bytes,
            output_bytes: m.output_bytes,
            per_slice_peak_bytes: m.per_slice_peak_bytes,
            reused_bytes: m.reused_bytes,
            setup_bytes: m.setup_bytes,
            process_bytes: m.total_bytes(),
        }
    }
}

impl FitReport {
    /// Builds the report; the first advice is the headline, every advice
    /// gets a comparison row when there are several.
    pub fn new(
        net: &Network,
        tree: TreeReport,
        lower_bound: Option<WidthBound>,
        search: Option<SearchReport>,
        dtype: Dtype,
        advice: &[Advice],
    ) -> FitReport {
        let head = &advice[0];
        let r = &head.result;
        let fits_without = head.fits_without_slicing();
        let sliced_tree_ops = r.chosen.as_ref().map(|_| {
            crate::cost::NodeSets::new(net, &r.tree)
                .evaluate_unsliced(net, crate::cost::PeakModel::default())
                .total_ops
                .log2
        });
        let slicing = r.chosen.as_ref().map(|(p, origin)| SlicingReport {
            tree_total_ops_log2: sliced_tree_ops.unwrap_or(r.unsliced.total_ops.log2),
            indices: p
                .sliced
                .iter()
                .map(|&e| net.indices[e].name.clone())
                .collect(),
            dims: p.sliced.iter().map(|&e| net.indices[e].dim).collect(),
            slices: p.slices.to_json_string(),
            slices_log2: p.slices.log2,
            per_slice: PerSlice {
                total_ops_log2: p.per_slice_total_ops.log2,
                width: p.per_slice_width,
                peak_bytes: p.need.per_slice_peak_bytes,
            },
            total_ops: p.total_ops.to_json_string(),
            total_ops_log2: p.total_ops.log2,
            overhead: crate::num::overhead(p.total_ops.log2, r.unsliced.total_ops.log2),
            reuse: head.reuse,
            plain_total_ops_log2: p.plain_total_ops.log2,
            plain_overhead: crate::num::overhead(p.plain_total_ops.log2, r.unsliced.total_ops.log2),
            held_intermediates: p.held.len(),
            reused_bytes: p.need.reused_bytes,
            invariant_ops_log2: (!p.held.is_empty()).then_some(p.invariant_ops.log2),
            found_by: *origin,
            fewest_slices_found: r.fewest_slices.as_ref().map(|f| f.slices.to_json_string()),
        });
        let need = r
            .chosen
            .as_ref()
            .map(|(p, _)| p.need)
            .unwrap_or(r.unsliced.need);
        let budget = head.target.budget_bytes;
        let impractical = impractical(head);
        let verdict = verdict(head, fits_without, budget, &impractical);
        let machines = if advice.len() > 1 {
            advice.iter().map(machine_row).collect()
        } else {
            Vec::new()
        };
        FitReport {
            network: Summary::of(net),
            tree,
            lower_bound,
            search,
            budget_bytes: budget,
            dtype,
            bytes_per_element: dtype.bytes(),
            slices_at_once: head.target.slices_at_once,
            fits_without_slicing: fits_without,
            fits: r.chosen.is_some(),
            practical: impractical.is_empty(),
            impractical,
            verdict,
            memory: need.into(),
            memory_unsliced: r.unsliced.need.into(),
            smallest_budget_bytes: r.chosen.is_none().then_some(r.smallest_need_bytes),
            slicing,
            frontier: r.frontier.clone(),
            cover: r.cover.clone(),
            overhead_lower_bound: r.bound.as_ref().map(|b| OverheadBound {
                total_ops_log2: b.total_ops_log2,
                overhead: crate::num::overhead(b.total_ops_log2, r.unsliced.total_ops.log2),
                cap_elements: b.cap_elements,
                solved: b.solved,
                bounds: OVERHEAD_BOUND_SCOPE.into(),
            }),
            estimate: head.estimate.clone(),
            machines,
        }
    }

    /// The frontier as CSV.
    pub fn frontier_csv(&self) -> String {
        let mut out = String::from(
            "slices_at_most,slices,per_slice_peak_bytes,process_bytes,total_ops_log2,overhead,plain_total_ops_log2,plain_overhead,reused_bytes\n",
        );
        for r in &self.frontier {
            out.push_str(&format!(
                "{},{},{:.0},{:.0},{:.6},{:.6},{:.6},{:.6},{:.0}\n",
                r.slices_at_most,
                r.slices,
                r.per_slice_peak_bytes,
                r.process_bytes,
                r.total_ops_log2,
                r.overhead,
                r.plain_total_ops_log2,
                r.plain_overhead,
                r.reused_bytes
            ));
        }
        out
    }

    /// Renders the one-screen answer.
    pub fn to_text(&self) -> String {
        let n = &self.network;
        let t = &self.tree;
        let mut out = String::new();
        out.push_str(&format!(
            "network   {} ({} tensors, {} indices, fingerprint {})\n",
            n.name, n.tensors, n.indices, n.fingerprint
        ));
        let bound = self
            .lower_bound
            .map(|b| format!("; no tree has width below {}", log2_str(b.width)))
            .unwrap_or_default();
        out.push_str(&format!(
            "tree      {}: total ops {}, width {}, op width {}{bound}\n",
            t.source,
            ops_str(t.total_ops_log2),
            log2_str(t.width),
            log2_str(t.op_width),
        ));
        out.push_str(&format!(
            "budget    {} per process, {} slice{} at a time, {} ({} bytes per element)\n\n",
            bytes_human(self.budget_bytes as f64),
            self.slices_at_once,
            if self.slices_at_once == 1 { "" } else { "s" },
            self.dtype,
            self.bytes_per_element
        ));
        out.push_str(&format!("verdict   {}\n", self.verdict));
        out.push_str(
            "memory    a process holds its inputs, the output accumulator and, per slice at once, the slice's peak (executor rule):\n",
        );
        let line = |label: &str, m: &MemoryReport| {
            let held = if m.reused_bytes > 0.0 {
                format!(" + held {}", bytes_human(m.reused_bytes))
            } else {
                String::new()
            };
            let setup = if m.setup_bytes
                > m.reused_bytes + self.slices_at_once as f64 * m.per_slice_peak_bytes
            {
                format!(
                    " (setup {} before the first slice)",
                    bytes_human(m.setup_bytes)
                )
            } else {
                String::new()
            };
            format!(
                "          {label:<9} inputs {} + output {}{held} + {} x {} = {}{setup}\n",
                bytes_human(m.inputs_bytes),
                bytes_human(m.output_bytes),
                self.slices_at_once,
                bytes_human(m.per_slice_peak_bytes),
                bytes_human(m.process_bytes)
            )
        };
        out.push_str(&line("unsliced", &self.memory_unsliced));
        if self.slicing.as_ref().is_some_and(|s| !s.indices.is_empty()) {
            out.push_str(&line("sliced", &self.memory));
        }
        if let Some(s) = self.slicing.as_ref().filter(|s| !s.indices.is_empty()) {
            let reuse = if s.reuse && s.held_intermediates > 0 {
                format!(
                    " with reuse ({} intermediate{} computed once per process; plain {})",
                    s.held_intermediates,
                    if s.held_intermediates == 1 { "" } else { "s" },
                    overhead_str(s.plain_overhead)
                )
            } else if s.reuse {
                " (nothing to reuse)".to_string()
            } else {
                " (reuse off)".to_string()
            };
            out.push_str(&format!(
                "sliced    {} ({} slices); per slice {} ops, width {}; total {} ops, overhead {}{reuse} (found by {})\n",
                s.indices.join(", "),
                group_decimal(&s.slices),
                ops_str(s.per_slice.total_ops_log2),
                log2_str(s.per_slice.width),
                ops_str(s.total_ops_log2),
                overhead_str(s.overhead),
                origin_name(s.found_by)
            ));
            if let Some(first) = self.frontier.first() {
                if (s.tree_total_ops_log2 - first.total_ops_log2).abs() > 1e-9 {
                    out.push_str(&format!(
                        "          the slices run on a tree re-planned for slicing ({} ops unsliced); overheads are over {}, the best unsliced tree found\n",
                        ops_str(s.tree_total_ops_log2),
                        ops_str(first.total_ops_log2),
                    ));
                }
            }
        }
        if let Some(b) = self.overhead_lower_bound.as_ref().filter(|_| self.fits) {
            out.push_str(&format!(
                "floor     on this tree, every slice set that fits costs at least {} total ops: overhead >= {}{} (other trees may do better)\n",
                ops_str(b.total_ops_log2),
                overhead_str(b.overhead),
                if b.solved { " (linear-programme bound)" } else { " (the tree's own unsliced ops; the programme did not run to its end)" }
            ));
        }
        if let Some(c) = self.cover.as_ref().filter(|c| c.min_slices_log2 > 1e-9) {
            out.push_str(&format!(
                "bound     for this tree, no slice set with fewer than 2^{} slices keeps every tensor of a slice under {} elements{}\n",
                log2_str(c.min_slices_log2),
                group_decimal(&format!("{:.0}", c.cap_elements)),
                if c.optimal { "" } else { " (relaxation bound; the programme hit its time limit)" }
            ));
        }
        if let Some(e) = &self.estimate {
            out.push_str(&estimate_line(e));
        }
        if let Some(s) = &self.search {
            out.push_str(&format!(
                "search    {} trials in {:.2} s (best by {} at {:.2} s), seed {}{}\n",
                s.trials,
                s.seconds,
                s.finder,
                s.seconds_to_best,
                s.seed,
                if s.interrupted { ", interrupted" } else { "" }
            ));
        }
        if !self.frontier.is_empty() {
            out.push_str("\nfrontier (for each number of slices: the fitting set with the fewest total ops, or while none fits the smallest per-slice peak; * = chosen; overhead counts slice-invariant work once per process unless reuse is off, plain repeats it in every slice)\n");
            out.push_str(&frontier_table(&self.frontier));
        }
        if !self.machines.is_empty() {
            out.push_str("\nmachines\n");
            let mut table = Table::new([
                "target",
                "budget",
                "fits unsliced",
                "slices",
                "overhead",
                "node-hours",
            ]);
            for r in &self.machines {
                table.row([
                    r.target.clone(),
                    bytes_human(r.budget_bytes as f64),
                    yes_no(r.fits_without_slicing).to_string(),
                    r.slices
                        .as_deref()
                        .map(group_decimal)
                        .unwrap_or_else(|| "cannot fit".into()),
                    r.overhead.map(overhead_str).unwrap_or_default(),
                    r.estimate
                        .as_ref()
                        .map(|e| hours(e.node_hours))
                        .unwrap_or_default(),
                ]);
            }
            out.push_str(&table.render(2));
        }
        if !self.impractical.is_empty() {
            out.push_str("\nNote: 'impractical' uses the target's limits (a machine profile's [limits], else 1,000,000 slices and 168 hours of wall time: rules of thumb).\n");
        }
        if self.estimate.is_some() || self.machines.iter().any(|m| m.estimate.is_some()) {
            out.push_str(&format!("\nNote: every time is a {ESTIMATE_METHOD}. Measure before you book allocation hours.\n"));
        }
        out
    }
}

/// Why the chosen plan of `head`, though it fits, is impractical: more
/// slices than the machine's limits allow, or more wall time by the
/// model estimate (limits of the target's machine, else the defaults).
fn impractical(head: &Advice) -> Vec<String> {
    let Some((p, _)) = &head.result.chosen else {
        return Vec::new();
    };
    let limits = head
        .target
        .machine
        .as_ref()
        .map(|m| m.limits)
        .unwrap_or_default();
    let mut reasons = Vec::new();
    if p.slices.log2 > limits.max_slices.log2() + 1e-9 {
        reasons.push(format!(
            "{} slices, more than the {} this target counts as practical",
            group_decimal(&p.slices.to_json_string()),
            group_decimal(&format!("{:.0}", limits.max_slices))
        ));
    }
    if let Some(e) = &head.estimate {
        let hours = e.wall_seconds / 3600.0;
        if hours > limits.max_wall_hours {
            reasons.push(format!(
                "{} of wall time on {} node{} by the model estimate, more than the {} this target counts as practical",
                duration(e.wall_seconds),
                e.nodes_used,
                if e.nodes_used == 1 { "" } else { "s" },
                duration(limits.max_wall_hours * 3600.0)
            ));
        }
    }
    reasons
}

fn verdict(head: &Advice, fits_without: bool, budget: u64, impractical: &[String]) -> String {
    let r = &head.result;
    let need = r.unsliced.need.total_bytes();
    let but = if impractical.is_empty() {
        String::new()
    } else {
        format!("; IMPRACTICAL: {}", impractical.join("; "))
    };
    if fits_without {
        return format!(
            "FITS without slicing: a process needs {} of {} (margin {:.2}x){but}",
            bytes_human(need),
            bytes_human(budget as f64),
            budget as f64 / need
        );
    }
    match &r.chosen {
        Some((p, _)) => format!(
            "FITS with {} slices at overhead {} (unsliced a process needs {}, over the {} budget){but}",
            group_decimal(&p.slices.to_json_string()),
            overhead_str(crate::num::overhead(p.total_ops.log2, r.unsliced.total_ops.log2)),
            bytes_human(need),
            bytes_human(budget as f64)
        ),
        None => {
            let fixed = r.unsliced.need.fixed_bytes();
            let why = if fixed > budget as f64 {
                format!(
                    "the inputs ({}) and the output accumulator ({}) alone need {}, more than the {} budget; slicing cannot shrink them",
                    bytes_human(r.unsliced.need.inputs_bytes),
                    bytes_human(r.unsliced.need.output_bytes),
                    bytes_human(fixed),
                    bytes_human(budget as f64)
                )
            } else {
                format!(
                    "no slice set found brings a process under {}",
                    bytes_human(budget as f64)
                )
            };
            format!(
                "CANNOT FIT: {why}. The smallest budget that works with the slicing found is {}",
                bytes_human(r.smallest_need_bytes)
            )
        }
    }
}

fn machine_row(a: &Advice) -> MachineRow {
    let r = &a.result;
    MachineRow {
        target: a.target.label.clone(),
        budget_bytes: a.target.budget_bytes,
        slices_at_once: a.target.slices_at_once,
        fits_without_slicing: a.fits_without_slicing(),
        fits: r.chosen.is_some(),
        slices: r.chosen.as_ref().map(|(p, _)| p.slices.to_json_string()),
        overhead: r
            .chosen
            .as_ref()
            .map(|(p, _)| crate::num::overhead(p.total_ops.log2, r.unsliced.total_ops.log2)),
        estimate: a.estimate.clone(),
    }
}

/// The frontier as an aligned table, marking the rows that fit and the
/// chosen one. The text stops at the first row past 1,000x overhead or
/// three rows past the first fitting one (JSON and CSV keep every row).
pub fn frontier_table(rows: &[FrontierRow]) -> String {
    let mut table = Table::new([
        "slices <=",
        "slices",
        "per-slice peak",
        "process",
        "fits",
        "total ops",
        "overhead",
        "plain",
        "",
    ]);
    let first_fit = rows.iter().position(|r| r.fits);
    // Rows after the cut are left out, but for the chosen one.
    let cut = rows
        .iter()
        .enumerate()
        .position(|(k, r)| r.overhead > 1000.0 || first_fit.is_some_and(|f| k > f + 3))
        .unwrap_or(rows.len());
    let mut shown = 0;
    for (k, r) in rows.iter().enumerate() {
        if k >= cut && !r.chosen {
            continue;
        }
        if k >= cut && shown == cut {
            table.row(["...", "", "", "", "", "", "", "", ""].map(String::from));
        }
        table.row([
            group_decimal(&r.slices_at_most),
            group_decimal(&r.slices),
            bytes_human(r.per_slice_peak_bytes),
            bytes_human(r.process_bytes),
            yes_no(r.fits).to_string(),
            ops_str(r.total_ops_log2),
            overhead_str(r.overhead),
            overhead_str(r.plain_overhead.max(r.overhead)),
            if r.chosen { "*".into() } else { String::new() },
        ]);
        shown += 1;
    }
    let mut text = table.render(2);
    if shown < rows.len() {
        text.push_str(&format!(
            "  ({} more row(s) in --json and --csv)\n",
            rows.len() - shown
        ));
    }
    text
}

fn estimate_line(e: &Estimate) -> String {
    format!(
        "estimate  {}: {} per slice; {} wall on {} node{}; {} node-hours (model estimate)\n",
        e.machine,
        duration(e.seconds_per_slice),
        duration(e.wall_seconds),
        e.nodes_used,
        if e.nodes_used == 1 { "" } else { "s" },
        hours(e.node_hours)
    )
}

/// Node-hours with three decimals, or in scientific notation when tiny.
fn hours(h: f64) -> String {
    if h != 0.0 && h < 0.001 {
        format!("{h:.2e}")
    } else {
        format!("{h:.3}")
    }
}

/// Seconds in a readable unit.
pub fn duration(seconds: f64) -> String {
    if seconds < 0.1 {
        format!("{seconds:.2e} s")
    } else if seconds < 120.0 {
        format!("{seconds:.1} s")
    } else if seconds < 7200.0 {
        format!("{:.1} min", seconds / 60.0)
    } else if seconds < 172_800.0 {
        format!("{:.1} h", seconds / 3600.0)
    } else {
        format!("{:.1} days", seconds / 86400.0)
    }
}

fn yes_no(b: bool) -> &'static str {
    if b {
        "yes"
    } else {
        "no"
    }
}

fn origin_name(o: Origin) -> &'static str {
    match o {
        Origin::Unsliced => "no slicing",
        Origin::Greedy => "greedy",
        Origin::Cover => "cover programme",
        Origin::Cooptimised => "greedy with tree re-planning",
        Origin::SliceAware => "slice-aware search",
        Origin::Exhaustive => "exhaustive search",
        Origin::SearchFront => "greedy on a narrower searched tree",
        Origin::BisectionCut => "greedy from a balanced cut of the network",
    }
}
