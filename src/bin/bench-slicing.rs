//! Benchmark of the slicing search: the overhead (total ops with slicing over
//! total ops without) when the per-slice peak must be 2^5, 2^10 and 2^15
//! times smaller than unsliced, for greedy only, greedy with tree
//! re-planning, and the cover programme's own candidate. Fixed seeds;
//! prints a table; nothing is asserted. Run with `scripts/bench-slicing.sh`.

use std::time::Instant;

use sliceplan::cost::memory::{inputs_bytes, output_bytes};
use sliceplan::cost::NodeSets;
use sliceplan::generate::{brickwork, lattice};
use sliceplan::network::{Dtype, Network};
use sliceplan::search::{find_tree, Objective, SearchOptions};
use sliceplan::slicing::greedy::GreedyRule;
use sliceplan::slicing::{cover, find_slices, Point, SliceOptions};
use sliceplan::tree::Tree;

const DTYPE: Dtype = Dtype::C64;

/// Builds one benchmark network.
type Family = Box<dyn Fn() -> Network>;

struct Row {
    family: String,
    reduction: u32,
    method: &'static str,
    slices_log2: Option<f64>,
    overhead: Option<f64>,
    seconds: f64,
}

fn main() {
    let which: Vec<String> = std::env::args().skip(1).collect();
    let families: Vec<(&str, Family)> = vec![
        (
            "lattice 16x16",
            Box::new(|| lattice(&[16, 16], 2, false).unwrap()),
        ),
        (
            "lattice 24x24",
            Box::new(|| lattice(&[24, 24], 2, false).unwrap()),
        ),
        (
            "lattice 5x5x5",
            Box::new(|| lattice(&[5, 5, 5], 2, false).unwrap()),
        ),
        (
            "circuit 6x6 d16",
            Box::new(|| brickwork(6, 6, 16, 1).unwrap()),
        ),
        (
            "circuit 6x6 d16 s2",
            Box::new(|| brickwork(6, 6, 16, 2).unwrap()),
        ),
        (
            "circuit 8x8 d12",
            Box::new(|| brickwork(8, 8, 12, 1).unwrap()),
        ),
    ];
    println!(
        "{:<20} {:>9} {:<15} {:>12} {:>10} {:>8}",
        "family", "reduction", "method", "log2 slices", "overhead", "seconds"
    );
    for (name, make) in &families {
        if !which.is_empty() && !which.iter().any(|w| name.contains(w.as_str())) {
            continue;
        }
        let net = make();
        let t = Instant::now();
        let found = find_tree(&net, &SearchOptions::trials(64, 1)).expect("search runs");
        let search_s = t.elapsed().as_secs_f64();
        eprintln!(
            "{name}: {} tensors, tree 2^{:.2} ops, width {:.1} ({search_s:.1} s search)",
            net.num_tensors(),
            found.metrics.total_ops.log2,
            found.metrics.width
        );
        for reduction in [5u32, 10, 15] {
            for row in run_family(name, &net, &found.tree, reduction) {
                println!(
                    "{:<20} {:>9} {:<15} {:>12} {:>10} {:>8.2}",
                    row.family,
                    format!("2^{}", row.reduction),
                    row.method,
                    row.slices_log2
                        .map(|s| format!("{s:.1}"))
                        .unwrap_or_else(|| "-".into()),
                    row.overhead
                        .map(|o| format!("{o:.3}x"))
                        .unwrap_or_else(|| "no fit".into()),
                    row.seconds
                );
            }
        }
    }
    println!("\nTarget: overhead <= 1.5x at a 2^10 reduction on the 6x6 depth-16 circuits.");
}

fn run_family(family: &str, net: &Network, tree: &Tree, reduction: u32) -> Vec<Row> {
    let sets = NodeSets::new(net, tree);
    let probe = SliceOptions::new(u64::MAX, DTYPE);
    let unsliced = Point::evaluate(&sets, net, &[], &probe);
    let fixed = inputs_bytes(net, DTYPE) + output_bytes(net, DTYPE);
    let target = unsliced.need.per_slice_peak_bytes / 2f64.powi(reduction as i32);
    let budget = (fixed + target).ceil() as u64;
    let overhead = |p: &Point| (p.total_ops.log2 - unsliced.total_ops.log2).exp2();
    let mut rows = Vec::new();
    let mut push = |method, point: Option<&Point>, seconds| {
        rows.push(Row {
            family: family.to_string(),
            reduction,
            method,
            slices_log2: point.map(|p| p.slices.log2),
            overhead: point.map(overhead),
            seconds,
        })
    };
    // Greedy only, with each rule.
    let mut opts = SliceOptions::new(budget, DTYPE);
    opts.cover = false;
    opts.frontier_extra = 0;
    opts.rule = GreedyRule::LeastOps;
    let t = Instant::now();
    let least = find_slices(net, tree, &opts, None, 0);
    push(
        "greedy least",
        least.chosen.as_ref().map(|c| &c.0),
        t.elapsed().as_secs_f64(),
    );
    opts.rule = GreedyRule::OpsPerHalving;
    let t = Instant::now();
    let greedy = find_slices(net, tree, &opts, None, 0);
    push(
        "greedy",
        greedy.chosen.as_ref().map(|c| &c.0),
        t.elapsed().as_secs_f64(),
    );
    // Greedy with tree re-planning.
    let mut refit = |n: &Network, sliced: &[usize], max_width: f64| -> Option<Tree> {
        let mut reduced = n.clone();
        for &e in sliced {
            reduced.indices[e].dim = 1;
        }
        let opts = SearchOptions {
            objective: Objective::OpsWithinWidth { max_width },
            ..SearchOptions::trials(16, 2)
        };
        find_tree(&reduced, &opts).ok().map(|r| r.tree)
    };
    let t = Instant::now();
    let co = find_slices(net, tree, &opts, Some(&mut refit), 24);
    push(
        "greedy+replan",
        co.chosen.as_ref().map(|c| &c.0),
        t.elapsed().as_secs_f64(),
    );
    // The cover programme's own candidate on the searched tree.
    let mut copts = SliceOptions::new(budget, DTYPE);
    copts.cover_seconds = 10.0;
    let t = Instant::now();
    let (_, candidate) = cover::cover(&sets, net, &copts);
    push("cover", candidate.as_ref(), t.elapsed().as_secs_f64());
    rows
}
