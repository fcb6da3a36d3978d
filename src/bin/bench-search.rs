//! Benchmark of the contraction-tree search on fixed-seed network families;
//! prints one table per family. Run through `scripts/bench-search.sh` (a
//! release build); targets are printed beside the figures, never asserted.
//!
//! Usage: `bench-search FAMILY` with FAMILY one of lattice2d, lattice3d,
//! regular, brickwork, random12, scale10k, scale100k, rate500, lattices
//! (L = 100, 316, 1000 with 10 s, 60 s, 120 s), circuits (brickwork and
//! random circuits of 50 to 100 qubits, depth 20), regular100k (3-regular,
//! 10^5 vertices, 10 s), refine100k (subtree reconfiguration passes on
//! trees of 10^5 tensors), `files SECS PATH...` (any input files the
//! command line reads: circuits, formulas, graphs, networks; objective ops,
//! SECS seconds each), or `all` (the first eight).
//!
//! Every search is the library's `find_tree` with `SearchOptions`, as users
//! run it; the references are the library's `file_order_tree` and
//! `min_fill_tree`, priced by `tree_metrics` (the cost model without
//! per-node tables, which a left-deep tree of 10^6 tensors would not fit).

use std::time::{Duration, Instant};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sliceplan::cost::metrics;
use sliceplan::generate::{brickwork, graph_network, lattice, random_regular_graph};
use sliceplan::network::{Network, NetworkBuilder};
use sliceplan::report::Table;
use sliceplan::search::{
    exact_tree, file_order_tree, find_tree, min_fill_tree, tree_metrics, ExactGoal, Finders,
    Objective, Problem, SearchOptions, SearchResult, Simplified,
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
    let mut extra = |name: &str, f: &dyn Fn()| {
        if family == name {
            known = true;
            f();
        }
    };
    extra("lattices", &lattices);
    extra("circuits", &circuits);
    extra("regular100k", &regular100k);
    extra("finders", &finders_timing);
    extra("refine100k", &refine100k);
    if family == "files" {
        known = true;
        files();
    }
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
        "Random 12-tensor networks: heuristics only (every finder but the exact one), 1 s each\n  reached the exact optimum total ops on {hits} of {cases} ({}%); slowest time to best {slowest:.3} s; excess total ops mean {mean_gap:.3}%, worst {worst_gap:.3}%\n  target >= 95% within 1 s: {}\n",
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
        orders: false,
        candidates: false,
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
        orders: false,
        candidates: false,
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

/// One search against the file order and min-fill references.
struct Versus {
    name: String,
    tensors: usize,
    budget: f64,
    ours: sliceplan::cost::Metrics,
    secs: f64,
    finder: String,
    phases: String,
    file: sliceplan::cost::Metrics,
    fill: Option<(sliceplan::cost::Metrics, f64)>,
}

fn versus(net: &Network, opts: &SearchOptions, with_fill: bool) -> Versus {
    let file = tree_metrics(net, &file_order_tree(net));
    let fill = with_fill.then(|| {
        let began = Instant::now();
        let tree = min_fill_tree(net);
        (tree_metrics(net, &tree), began.elapsed().as_secs_f64())
    });
    let began = Instant::now();
    let r = find_tree(net, opts).expect("search runs");
    let secs = began.elapsed().as_secs_f64();
    let p = r.phases;
    Versus {
        name: net.name.clone(),
        tensors: net.num_tensors(),
        budget: opts.time.map_or(0.0, |t| t.as_secs_f64()),
        ours: r.metrics,
        secs,
        finder: r.finder,
        phases: format!(
            "{:.2}/{:.2}/{:.2}/{:.2}/{:.2}",
            p.simplify, p.candidates, p.trials, p.refine, p.pricing
        ),
        file,
        fill,
    }
}

fn versus_table(rows: &[(Versus, String)]) -> String {
    let mut t = Table::new([
        "network",
        "tensors",
        "budget s",
        "took s",
        "width",
        "ops log2",
        "file width",
        "file ops",
        "min-fill width",
        "min-fill ops",
        "best from",
        "phases s (simplify/cand/trials/refine/price)",
        "targets",
    ]);
    for (v, targets) in rows {
        let (fw, fo) = match &v.fill {
            Some((m, _)) => (
                format!("{:.0}", m.width),
                format!("{:.2}", m.total_ops.log2),
            ),
            None => ("-".into(), "-".into()),
        };
        t.row([
            v.name.clone(),
            v.tensors.to_string(),
            format!("{:.0}", v.budget),
            format!("{:.1}", v.secs),
            format!("{:.0}", v.ours.width),
            format!("{:.2}", v.ours.total_ops.log2),
            format!("{:.0}", v.file.width),
            format!("{:.2}", v.file.total_ops.log2),
            fw,
            fo,
            v.finder.clone(),
            v.phases.clone(),
            targets.clone(),
        ]);
    }
    t.render(2)
}

fn lattices() {
    let mut rows = Vec::new();
    for (l, secs) in [(100usize, 10.0), (316, 60.0), (1000, 120.0)] {
        let began = Instant::now();
        let net = lattice(&[l, l], 2, false).expect("lattice");
        let built = began.elapsed().as_secs_f64();
        let opts = timed(Objective::TotalOps, secs, 1);
        let v = versus(&net, &opts, l <= 316);
        eprintln!(
            "{}: built in {built:.1} s, searched in {:.1} s",
            net.name, v.secs
        );
        let targets = format!(
            "width <= {}: {}; ops <= file order's: {}; within budget +10%: {}",
            l + 1,
            met(v.ours.width <= (l + 1) as f64 + 1e-9),
            met(v.ours.total_ops.log2 <= v.file.total_ops.log2 + 1e-9),
            met(v.secs <= v.budget * 1.1),
        );
        rows.push((v, targets));
    }
    println!(
        "Large 2D lattices, bond 2, objective ops (min-fill not run at 10^6)\n{}  peak memory {}\n",
        versus_table(&rows),
        rss()
    );
}

/// The amplitude network of a random circuit of our own: every layer pairs
/// the qubits at random (a shuffled perfect matching) and puts a two-qubit
/// gate on each pair; one-index input and output tensors per qubit.
fn random_circuit(qubits: usize, depth: usize, seed: u64) -> Network {
    use rand::seq::SliceRandom;
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut b = NetworkBuilder::new(format!("random-circuit-{qubits}q-d{depth}"));
    let mut wire = Vec::with_capacity(qubits);
    let mut version = vec![0usize; qubits];
    for q in 0..qubits {
        let e = b.index(&format!("q{q}_0"), 2).expect("index");
        b.tensor_by_ids(&format!("init{q}"), vec![e], None)
            .expect("tensor");
        wire.push(e);
    }
    let mut order: Vec<usize> = (0..qubits).collect();
    for layer in 0..depth {
        order.shuffle(&mut rng);
        for pair in order.chunks(2) {
            let [a, c] = pair else { continue };
            let mut legs = vec![wire[*a], wire[*c]];
            for &q in [a, c] {
                version[q] += 1;
                let e = b.index(&format!("q{q}_{}", version[q]), 2).expect("index");
                legs.push(e);
                wire[q] = e;
            }
            b.tensor_by_ids(&format!("g{layer}_{a}_{c}"), legs, None)
                .expect("tensor");
        }
    }
    for (q, &e) in wire.iter().enumerate() {
        b.tensor_by_ids(&format!("out{q}"), vec![e], None)
            .expect("tensor");
    }
    b.build().expect("network")
}

fn circuits() {
    let mut rows = Vec::new();
    for (r, c) in [(5usize, 10usize), (7, 10), (10, 10)] {
        let net = brickwork(r, c, 20, 3).expect("circuit");
        rows.push(versus(&net, &timed(Objective::TotalOps, 10.0, 1), true));
    }
    for q in [50usize, 70, 100] {
        let net = random_circuit(q, 20, 5);
        rows.push(versus(&net, &timed(Objective::TotalOps, 10.0, 1), true));
    }
    let rows: Vec<(Versus, String)> = rows
        .into_iter()
        .map(|v| {
            let fill = v
                .fill
                .as_ref()
                .map_or(f64::INFINITY, |f| f.0.total_ops.log2);
            let targets = format!(
                "ops <= file order's: {}; ops <= min-fill's: {}; within budget +10%: {}",
                met(v.ours.total_ops.log2 <= v.file.total_ops.log2 + 1e-9),
                met(v.ours.total_ops.log2 <= fill + 1e-9),
                met(v.secs <= v.budget * 1.1),
            );
            (v, targets)
        })
        .collect();
    println!(
        "Circuits of our own (brickwork on a grid, random pairings), depth 20, objective ops, 10 s\n{}",
        versus_table(&rows)
    );
}

/// `files SECS PATH...`: each file read as `sliceplan plan` reads it (the
/// format from the extension), searched for SECS seconds (objective ops),
/// against its file order and min-fill.
fn files() {
    let args: Vec<String> = std::env::args().skip(2).collect();
    let Some((secs, paths)) = args.split_first() else {
        eprintln!("usage: bench-search files SECS PATH...");
        std::process::exit(2);
    };
    let Ok(secs) = secs.parse::<f64>() else {
        eprintln!("files: SECS must be a number of seconds, not '{secs}'");
        std::process::exit(2);
    };
    let mut rows = Vec::new();
    for path in paths {
        let net = match sliceplan::formats::load(std::path::Path::new(path), &Default::default()) {
            Ok(n) => n,
            Err(e) => {
                eprintln!("{path}: {e}");
                std::process::exit(2);
            }
        };
        let v = versus(&net, &timed(Objective::TotalOps, secs, 1), true);
        let fill = v.fill.as_ref().map_or((f64::INFINITY, f64::INFINITY), |f| {
            (f.0.total_ops.log2, f.0.width)
        });
        let targets = format!(
            "ops <= file order's: {}; ops <= min-fill's: {}; width <= min-fill's: {}; within budget +10%: {}",
            met(v.ours.total_ops.log2 <= v.file.total_ops.log2 + 1e-9),
            met(v.ours.total_ops.log2 <= fill.0 + 1e-9),
            met(v.ours.width <= fill.1 + 1e-9),
            met(v.secs <= v.budget * 1.1),
        );
        eprintln!("{path}: {:.1} s", v.secs);
        rows.push((v, targets));
    }
    println!(
        "Input files, objective ops, {secs} s each\n{}",
        versus_table(&rows)
    );
}

fn regular100k() {
    let began = Instant::now();
    let edges = random_regular_graph(100_000, 3, 11).expect("graph");
    let net = graph_network(100_000, &edges, 2).expect("network");
    let built = began.elapsed().as_secs_f64();
    let opts = timed(Objective::TotalOps, 10.0, 1);
    let began = Instant::now();
    let r = find_tree(&net, &opts).expect("search runs");
    let secs = began.elapsed().as_secs_f64();
    let valid = sliceplan::tree::Tree::new(net.num_tensors(), r.tree.merges().to_vec()).is_ok();
    let mut t = header();
    row(
        &mut t,
        &net,
        &opts,
        &r,
        format!(
            "valid tree within 10 s of search: {} ({secs:.1} s; building the network took {built:.1} s, not counted)",
            met(valid && secs <= 11.0)
        ),
    );
    let p = r.phases;
    println!(
        "100,000 tensors (random 3-regular graph, graph seed 11), 10 s budget\n{}  phases s: simplify {:.2}, candidates {:.2}, trials {:.2}, refine {:.2}, pricing {:.2}; candidates: {}\n  peak memory {}\n",
        t.render(2),
        p.simplify,
        p.candidates,
        p.trials,
        p.refine,
        p.pricing,
        r.candidates
            .iter()
            .map(|c| format!("{} 2^{:.1} ({:.1} s)", c.finder, c.total_ops_log2, c.seconds))
            .collect::<Vec<_>>()
            .join(", "),
        rss()
    );
}

/// Linear passes of subtree reconfiguration (`refine_tree`, one pass per
/// row, window size k growing) on greedy trees of 10^5 tensors: the total
/// ops after each pass and its time.
fn refine100k() {
    use sliceplan::search::{greedy_tree, refine_tree, GreedyParams, RefineParams};
    let nets = [
        lattice(&[316, 316], 2, false).expect("lattice"),
        graph_network(
            100_000,
            &random_regular_graph(100_000, 3, 11).expect("graph"),
            2,
        )
        .expect("network"),
    ];
    let mut t = Table::new(["network", "pass", "k", "total ops log2", "width", "s"]);
    for net in &nets {
        let p = Simplified::new(net, false).problem;
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let params = GreedyParams {
            alpha: 0.5,
            temperature: 0.3,
        };
        let mut merges = greedy_tree(&p, &params, &mut rng);
        let e = p.evaluate(&merges);
        t.row([
            net.name.clone(),
            "greedy".into(),
            "-".into(),
            format!("{:.2}", e.total_ops_log2),
            format!("{:.0}", e.width),
            "-".into(),
        ]);
        for (pass, k) in [5usize, 6, 7, 8, 8].into_iter().enumerate() {
            let began = Instant::now();
            let params = RefineParams {
                k,
                goal: ExactGoal::TotalOps,
                passes: 1,
                random_frontier: (pass % 2 == 1).then_some(pass as u64),
            };
            merges = refine_tree(&p, &merges, &params, None).0;
            let secs = began.elapsed().as_secs_f64();
            let e = p.evaluate(&merges);
            t.row([
                String::new(),
                (pass + 1).to_string(),
                k.to_string(),
                format!("{:.2}", e.total_ops_log2),
                format!("{:.0}", e.width),
                format!("{secs:.1}"),
            ]);
        }
    }
    println!(
        "Subtree reconfiguration on 10^5-tensor trees (a warm greedy tree, then linear passes)\n{}",
        t.render(2)
    );
}

/// How long each simple order takes on the large networks (diagnostic).
fn finders_timing() {
    use sliceplan::search::{
        dissection_tree, elimination_tree, greedy_tree, sweep_order, DissectParams, GreedyParams,
        OrderParams, OrderRule,
    };
    let nets = [
        (
            "lattice 316",
            lattice(&[316, 316], 2, false).expect("lattice"),
        ),
        (
            "3-regular 1e5",
            graph_network(
                100_000,
                &random_regular_graph(100_000, 3, 11).expect("graph"),
                2,
            )
            .expect("network"),
        ),
        ("random circuit 100q", random_circuit(100, 20, 5)),
    ];
    for (name, net) in &nets {
        let p = Simplified::new(net, false).problem;
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let deadline = Some(Instant::now() + Duration::from_secs(60));
        let time = |what: &str, f: &mut dyn FnMut() -> Option<Vec<[usize; 2]>>| {
            let began = Instant::now();
            let m = f();
            let secs = began.elapsed().as_secs_f64();
            let e = m.map(|m| p.evaluate(&m));
            eprintln!(
                "{name}: {what} {secs:.2} s: {}",
                e.map_or("cut".to_string(), |e| format!(
                    "width {:.0}, ops 2^{:.1}",
                    e.width, e.total_ops_log2
                ))
            );
        };
        time("sweep", &mut || {
            Some(sliceplan::search::left_deep(p.len(), &sweep_order(&p)))
        });
        time("greedy", &mut || {
            Some(greedy_tree(&p, &GreedyParams::default(), &mut rng.clone()))
        });
        for rule in [OrderRule::MinDegree, OrderRule::MinFill] {
            time(&format!("{rule:?}"), &mut || {
                elimination_tree(&p, &OrderParams::plain(rule), &mut rng, deadline)
            });
        }
        time("dissection", &mut || {
            dissection_tree(&p, &DissectParams::default())
        });
    }
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
