//! Benchmark of the contraction-tree search on fixed-seed network families;
//! prints one table per family. Run through `scripts/bench-search.sh` (a
//! release build); targets are printed beside the figures, never asserted.
//!
//! Usage: `bench-search FAMILY` with FAMILY one of lattice2d, lattice3d,
//! regular, brickwork, random12, scale10k, scale100k, rate500, or `all`.

use std::time::{Duration, Instant};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sliceplan::cost::metrics;
use sliceplan::generate::{brickwork, graph_network, lattice, random_regular_graph};
use sliceplan::network::{Network, NetworkBuilder};
use sliceplan::report::Table;
use sliceplan::search::{
    exact_tree, find_tree, ExactGoal, Finders, Objective, Problem, SearchOptions, SearchResult,
    Simplified,
};

fn main() {
    let family = std::env::args().nth(1).unwrap_or_else(|| "all".into());
    let all = family == "all";
    let mut known = false;
    let mut run = |name: &str, f: &dyn Fn()| {
        if all || family == name {
            known = true;
            f();
        }
    };
    run("lattice2d", &lattice2d);
    run("lattice3d", &lattice3d);
    run("regular", &regular);
    run("brickwork", &brickwork_family);
    run("random12", &random12);
    run("scale10k", &scale10k);
    run("scale100k", &scale100k);
    run("rate500", &rate500);
    if !known {
        eprintln!("unknown family '{family}'; see the file's doc comment");
        std::process::exit(2);
    }
}

fn timed(objective: Objective, secs: f64, seed: u64) -> SearchOptions {
    SearchOptions {
        objective,
        ..SearchOptions::time(Duration::from_secs_f64(secs), seed)
    }
}

fn header() -> Table {
    Table::new([
        "network",
        "objective",
        "tensors",
        "total ops log2",
        "width",
        "lower bound",
        "s to best",
        "trials/s",
        "finder",
        "target",
    ])
}

fn row(t: &mut Table, net: &Network, opts: &SearchOptions, r: &SearchResult, target: String) {
    t.row([
        net.name.clone(),
        opts.objective.to_string(),
        net.num_tensors().to_string(),
        format!("{:.2}", r.metrics.total_ops.log2),
        format!("{:.2}", r.metrics.width),
        format!("{:.2}", r.lower_bound.width),
        format!("{:.2}", r.seconds_to_best),
        format!("{:.0}", r.trials as f64 / r.seconds.max(1e-9)),
        r.finder.clone(),
        target,
    ]);
}

fn lattice2d() {
    let mut t = header();
    for l in [8usize, 12, 16, 24, 32] {
        let net = lattice(&[l, l], 2, false).expect("valid lattice");
        for objective in [Objective::TotalOps, Objective::Width] {
            let opts = timed(objective, 5.0, 1);
            let r = find_tree(&net, &opts).expect("search runs");
            let ok = r.metrics.width <= (l + 1) as f64 + 1e-9;
            let verdict = format!("width <= {} in 5 s: {}", l + 1, met(ok));
            row(&mut t, &net, &opts, &r, verdict);
        }
    }
    println!(
        "2D lattices, open boundary, closed network, bond 2\n{}",
        t.render(2)
    );
}

fn lattice3d() {
    let mut t = header();
    for l in [4usize, 5, 6] {
        let net = lattice(&[l, l, l], 2, false).expect("valid lattice");
        let opts = timed(Objective::TotalOps, 5.0, 1);
        let r = find_tree(&net, &opts).expect("search runs");
        row(&mut t, &net, &opts, &r, "-".into());
    }
    println!("3D lattices, bond 2\n{}", t.render(2));
}

fn regular() {
    let mut t = header();
    for n in [50usize, 100, 200, 500] {
        let edges = random_regular_graph(n, 3, 7).expect("graph");
        let net = graph_network(n, &edges, 2).expect("network");
        let opts = timed(Objective::TotalOps, 5.0, 1);
        let r = find_tree(&net, &opts).expect("search runs");
        row(&mut t, &net, &opts, &r, "-".into());
    }
    println!(
        "Random 3-regular graphs (counting networks), bond 2, graph seed 7\n{}",
        t.render(2)
    );
}

fn brickwork_family() {
    let mut t = header();
    for (rows, depth) in [(6usize, 12usize), (6, 20), (8, 12), (8, 20)] {
        let net = brickwork(rows, rows, depth, 3).expect("circuit");
        let opts = timed(Objective::TotalOps, 5.0, 1);
        let r = find_tree(&net, &opts).expect("search runs");
        row(&mut t, &net, &opts, &r, "-".into());
    }
    println!(
        "Random brickwork circuits (amplitude networks), circuit seed 3\n{}",
        t.render(2)
    );
}

/// A random network of `n` tensors: 1.5n to 2.5n indices of dimension 2..=5,
/// each on two tensors (one in eight on three), one in ten open.
fn random_network(seed: u64, n: usize) -> Network {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut lists: Vec<Vec<usize>> = vec![Vec::new(); n];
    let mut b = NetworkBuilder::new(format!("random-{n}-{seed}"));
    let m = rng.random_range(3 * n / 2..=5 * n / 2);
    let mut open = Vec::new();
    for e in 0..m {
        let id = b
            .index(&format!("e{e}"), rng.random_range(2..=5))
            .expect("dim");
        let deg = if rng.random_bool(0.125) { 3 } else { 2 };
        let mut chosen: Vec<usize> = Vec::new();
        while chosen.len() < deg {
            let t = rng.random_range(0..n);
            if !chosen.contains(&t) {
                chosen.push(t);
            }
        }
        for t in chosen {
            lists[t].push(id);
        }
        if rng.random_bool(0.1) {
            open.push(format!("e{e}"));
        }
    }
    for (t, l) in lists.into_iter().enumerate() {
        b.tensor_by_ids(&format!("T{t}"), l, None).expect("tensor");
    }
    for o in open {
        b.open(&o, None).expect("open");
    }
    b.build().expect("network")
}

fn random12() {
    let cases = 100;
    let mut hits = 0;
    let mut slowest = 0.0f64;
    let mut gaps = Vec::new();
    for seed in 0..cases {
        let net = random_network(seed, 12);
        let p = Problem::from_network(&net);
        let exact = exact_tree(&p, ExactGoal::TotalOps).expect("12 tensors fit");
        let exact = Simplified::new(&net, false).expand(&exact);
        let best = metrics(&net, &exact).total_ops;
        let opts = SearchOptions {
            finders: Finders {
                exact: false,
                ..Finders::default()
            },
            ..SearchOptions::time(Duration::from_secs(1), seed)
        };
        let r = find_tree(&net, &opts).expect("search runs");
        let reached = r.metrics.total_ops.exact <= best.exact;
        hits += usize::from(reached);
        slowest = slowest.max(r.seconds_to_best);
        gaps.push(100.0 * ((r.metrics.total_ops.log2 - best.log2).exp2() - 1.0));
    }
    let mean_gap = gaps.iter().sum::<f64>() / gaps.len() as f64;
    let worst_gap = gaps.iter().copied().fold(0.0, f64::max);
    println!(
        "Random 12-tensor networks: heuristics only (greedy, partition, refinement), 1 s each\n  reached the exact optimum total ops on {hits} of {cases} ({}%); slowest time to best {slowest:.3} s; excess total ops mean {mean_gap:.3}%, worst {worst_gap:.3}%\n  target >= 95% within 1 s: {}\n",
        hits * 100 / cases as usize,
        met(hits * 100 >= 95 * cases as usize)
    );
}

fn scale10k() {
    let mut t = header();
    let net = lattice(&[100, 100], 2, false).expect("lattice");
    // Time to a first valid tree: one trial.
    let first = SearchOptions::trials(1, 1);
    let start = Instant::now();
    let r = find_tree(&net, &first).expect("search runs");
    let secs = start.elapsed().as_secs_f64();
    let verdict = format!("valid tree in <= 10 s: {} ({secs:.1} s)", met(secs <= 10.0));
    row(&mut t, &net, &first, &r, verdict);
    // What a 10 s budget gives.
    let opts = timed(Objective::TotalOps, 10.0, 1);
    let start = Instant::now();
    let r = find_tree(&net, &opts).expect("search runs");
    let secs = start.elapsed().as_secs_f64();
    row(
        &mut t,
        &net,
        &opts,
        &r,
        format!("10 s budget, took {secs:.1} s"),
    );
    println!("10,000 tensors\n{}  peak memory {}\n", t.render(2), rss());
}

fn scale100k() {
    let mut t = header();
    let edges = random_regular_graph(100_000, 3, 11).expect("graph");
    let net = graph_network(100_000, &edges, 2).expect("network");
    let opts = SearchOptions {
        finders: Finders {
            exact: false,
            partition: false,
            refine: false,
            greedy: true,
        },
        ..SearchOptions::trials(1, 1)
    };
    let start = Instant::now();
    let r = find_tree(&net, &opts).expect("search runs");
    let secs = start.elapsed().as_secs_f64();
    let verdict = format!("greedy in <= 60 s: {} ({secs:.1} s)", met(secs <= 60.0));
    row(&mut t, &net, &opts, &r, verdict);
    println!(
        "100,000 tensors (random 3-regular graph, one greedy trial)\n{}  peak memory {} (target < 2 GiB)\n",
        t.render(2),
        rss()
    );
}

fn rate500() {
    let mut t = header();
    let edges = random_regular_graph(500, 3, 7).expect("graph");
    let regular = graph_network(500, &edges, 2).expect("network");
    let grid = lattice(&[25, 20], 2, false).expect("lattice");
    let opts = SearchOptions {
        finders: Finders {
            exact: false,
            partition: false,
            refine: false,
            greedy: true,
        },
        ..SearchOptions::trials(4000, 1)
    };
    let mut notes = Vec::new();
    for net in [&regular, &grid] {
        let cpu0 = cpu_seconds();
        let r = find_tree(net, &opts).expect("search runs");
        let cpu = cpu_seconds() - cpu0;
        let rate = r.trials as f64 / r.seconds;
        let verdict = format!(
            "greedy trials/s >= 1000: {} ({rate:.0}/s)",
            met(rate >= 1000.0)
        );
        row(&mut t, net, &opts, &r, verdict);
        notes.push(format!(
            "  {}: CPU time {cpu:.2} s for {} trials: {:.0} trials per CPU-second; {:.2} cores busy on average",
            net.name,
            r.trials,
            r.trials as f64 / cpu.max(1e-9),
            cpu / r.seconds
        ));
    }
    println!(
        "Greedy trial rate, 500 tensors (all cores)\n{}{}\n",
        t.render(2),
        notes.join("\n")
    );
}

fn met(ok: bool) -> &'static str {
    if ok {
        "met"
    } else {
        "MISSED"
    }
}

/// CPU seconds (user + system) this process has used, from /proc (Linux;
/// clock ticks of 1/100 s).
fn cpu_seconds() -> f64 {
    std::fs::read_to_string("/proc/self/stat")
        .ok()
        .and_then(|s| {
            let rest = s.rsplit_once(')')?.1.to_string();
            let f: Vec<&str> = rest.split_whitespace().collect();
            let ticks: f64 = f.get(11)?.parse::<f64>().ok()? + f.get(12)?.parse::<f64>().ok()?;
            Some(ticks / 100.0)
        })
        .unwrap_or(f64::NAN)
}

/// The process's peak resident memory, from /proc (Linux).
fn rss() -> String {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .map(|l| l.trim_start_matches("VmHWM:").trim().to_string())
        })
        .unwrap_or_else(|| "unknown".into())
}
