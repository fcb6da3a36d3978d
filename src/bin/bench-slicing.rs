//! Benchmark of slicing through the command users run: `fit` (tree search,
//! slice-aware search, reuse of slice-invariant work, the overhead floor)
//! on our brickwork circuits and 2D lattices, with the per-slice peak 2^5,
//! 2^10 and 2^15 below unsliced, one time budget per case. Prints one row
//! per case as it finishes (with the total ops unsliced, `ops 1`, and
//! sliced, `ops S`, so overheads over different baselines compare), then
//! the targets; asserts nothing. Run with
//! `scripts/bench-slicing.sh`.
//!
//! Usage: `bench-slicing [--time SECONDS] [--seeds N] [--threads T] [--no-reuse]
//! [--reductions 5,10,15] [FAMILY-SUBSTRING ...]`.
//!
//! The budget of a case is the process's fixed part (inputs, output
//! accumulator) plus the unsliced per-slice peak of a reference tree (a
//! 16-trial search, seed 1) divided by 2^r. The overheads are `fit`'s own:
//! total ops of the chosen plan over the unsliced total ops of `fit`'s
//! searched tree, with reuse (the figure in force) and plain (the same
//! slice set with every slice repeating the invariant work); the floor is
//! the lower bound on the chosen tree. `cut` is how deep the budget really
//! cuts: log2 of the peak of `fit`'s own searched tree (bytes) over the
//! per-slice room (budget less the fixed part); the reference tree is often
//! several bits wider than `fit`'s, so `cut` is often well below `r`.

use std::io::Write;
use std::time::{Duration, Instant};

use sliceplan::command::fit::{fit, FitOptions};
use sliceplan::command::{Hooks, NetworkSource, TreeChoice};
use sliceplan::cost::memory::{inputs_bytes, output_bytes};
use sliceplan::cost::{NodeSets, PeakModel};
use sliceplan::generate::{brickwork, lattice};
use sliceplan::network::{Dtype, Network};
use sliceplan::search::{find_tree, SearchOptions};

const DTYPE: Dtype = Dtype::C64;

struct Case {
    family: String,
    seed: u64,
    net: Network,
}

struct Row {
    family: String,
    reduction: u32,
    fits: bool,
    slices_log2: f64,
    overhead: f64,
    plain: f64,
    floor: Option<f64>,
}

fn main() {
    let mut time = 60.0f64;
    let mut seeds = 5u64;
    let mut reductions: Vec<u32> = vec![5, 10, 15];
    let mut threads = 0usize;
    let mut reuse = true;
    let mut which: Vec<String> = Vec::new();
    let mut args = std::env::args().skip(1);
    while let Some(a) = args.next() {
        match a.as_str() {
            "--time" => {
                time = args
                    .next()
                    .and_then(|v| v.parse().ok())
                    .expect("--time SECONDS")
            }
            "--seeds" => seeds = args.next().and_then(|v| v.parse().ok()).expect("--seeds N"),
            "--reductions" => {
                reductions = args
                    .next()
                    .map(|v| {
                        v.split(',')
                            .map(|r| r.parse().expect("--reductions R,R,..."))
                            .collect()
                    })
                    .expect("--reductions R,R,...")
            }
            "--no-reuse" => reuse = false,
            "--threads" => {
                threads = args
                    .next()
                    .and_then(|v| v.parse().ok())
                    .expect("--threads T")
            }
            _ => which.push(a),
        }
    }
    let mut cases: Vec<Case> = Vec::new();
    let wanted = |name: &str| which.is_empty() || which.iter().any(|w| name.contains(w.as_str()));
    for (rows, cols, depth) in [(6, 6, 12), (6, 6, 16), (6, 6, 20), (8, 8, 12), (8, 8, 16)] {
        let family = format!("circuit {rows}x{cols} d{depth}");
        if !wanted(&family) {
            continue;
        }
        for seed in 1..=seeds {
            cases.push(Case {
                family: family.clone(),
                seed,
                net: brickwork(rows, cols, depth, seed).expect("generator"),
            });
        }
    }
    for side in [16usize, 24] {
        let family = format!("lattice {side}x{side}");
        if wanted(&family) {
            cases.push(Case {
                family,
                seed: 0,
                net: lattice(&[side, side], 2, false).expect("generator"),
            });
        }
    }
    println!(
        "{:<22} {:>4} {:>5} {:>6} {:>5} {:>9} {:>9} {:>11} {:>10} {:>10} {:>8} {:<20} {:>7}",
        "case",
        "seed",
        "red.",
        "cut",
        "fits",
        "ops 1",
        "ops S",
        "log2 slices",
        "overhead",
        "plain",
        "floor",
        "found by",
        "seconds"
    );
    let mut rows: Vec<Row> = Vec::new();
    for case in &cases {
        let reference = find_tree(&case.net, &SearchOptions::trials(16, 1)).expect("search");
        let peak = NodeSets::new(&case.net, &reference.tree)
            .evaluate_unsliced(&case.net, PeakModel::EXECUTOR)
            .peak
            .to_f64()
            * DTYPE.bytes() as f64;
        let fixed = inputs_bytes(&case.net, DTYPE) + output_bytes(&case.net, DTYPE);
        for &reduction in &reductions {
            let budget = (fixed + peak / 2f64.powi(reduction as i32)).ceil() as u64;
            eprintln!(
                "{} seed {} 2^{reduction}: reference tree peak 2^{:.2} bytes (width {:.1}), budget {budget} bytes",
                case.family,
                case.seed,
                peak.log2(),
                reference.metrics.width
            );
            let mut search = SearchOptions::time(Duration::from_secs_f64(time), 1);
            search.threads = threads;
            let mut opts = FitOptions::new(
                NetworkSource::Memory(Box::new(case.net.clone())),
                TreeChoice::Search(search),
            );
            opts.budget_bytes = Some(budget);
            opts.dtype = Some(DTYPE);
            opts.reuse = reuse;
            let began = Instant::now();
            let outcome = fit(&opts, &Hooks::quiet()).expect("fit runs");
            let seconds = began.elapsed().as_secs_f64();
            let r = &outcome.report;
            let s = r.slicing.as_ref();
            let row = Row {
                family: case.family.clone(),
                reduction,
                fits: r.fits,
                slices_log2: s.map_or(f64::NAN, |s| s.slices_log2),
                overhead: s.map_or(f64::NAN, |s| s.overhead),
                plain: s.map_or(f64::NAN, |s| s.plain_overhead),
                floor: r.overhead_lower_bound.as_ref().map(|b| b.overhead),
            };
            println!(
                "{:<22} {:>4} {:>5} {:>6.1} {:>5} {:>9} {:>9} {:>11.1} {:>9.3}x {:>9.3}x {:>8} {:<20} {:>7.1}",
                case.family,
                case.seed,
                format!("2^{reduction}"),
                r.tree.peak_log2 + (DTYPE.bytes() as f64).log2() - (budget as f64 - fixed).log2(),
                if row.fits { "yes" } else { "NO" },
                format!("2^{:.2}", r.tree.total_ops_log2),
                s.map_or("-".to_string(), |s| format!("2^{:.2}", s.total_ops_log2)),
                row.slices_log2,
                row.overhead,
                row.plain,
                row.floor.map_or("-".into(), |f| format!("{f:.3}x")),
                s.map_or("-".to_string(), |s| format!("{:?}", s.found_by)),
                seconds
            );
            std::io::stdout().flush().ok();
            rows.push(row);
        }
    }
    summary(&rows);
}

/// The targets, per family at 2^10 and overall.
fn summary(rows: &[Row]) {
    println!("\nTargets (2^10: circuits <= 1.5x on every seed and median <= 1.2x with reuse; lattices <= 10x; every case fits at 2^10 and 2^15):");
    let mut families: Vec<&str> = rows.iter().map(|r| r.family.as_str()).collect();
    families.dedup();
    for f in families {
        let mut at10: Vec<f64> = rows
            .iter()
            .filter(|r| r.family == f && r.reduction == 10 && r.fits)
            .map(|r| r.overhead)
            .collect();
        at10.sort_by(f64::total_cmp);
        let misses = rows
            .iter()
            .filter(|r| r.family == f && r.reduction >= 10 && !r.fits)
            .count();
        if at10.is_empty() {
            println!("  {f:<22} nothing fits at 2^10");
            continue;
        }
        let median = at10[at10.len() / 2];
        let max = at10[at10.len() - 1];
        let plain: Vec<f64> = rows
            .iter()
            .filter(|r| r.family == f && r.reduction == 10 && r.fits)
            .map(|r| r.plain)
            .collect();
        let (limit_max, limit_median) = if f.starts_with("lattice") {
            (10.0, f64::INFINITY)
        } else {
            (1.5, 1.2)
        };
        let ok = max <= limit_max && median <= limit_median && misses == 0;
        println!(
            "  {f:<22} 2^10 overhead with reuse: median {median:.3}x, max {max:.3}x; plain max {:.3}x; not fitting at 2^10/2^15: {misses}  {}",
            plain.iter().copied().fold(0.0, f64::max),
            if ok { "met" } else { "MISSED" }
        );
    }
}
