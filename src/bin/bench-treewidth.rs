//! Benchmark of the tree search on graphs of known exact treewidth (PACE
//! 2017, exact track): each vertex an index of dimension 2, each edge a
//! tensor on its two end points, so the least op width of any tree is the
//! treewidth + 1 (see the README beside the graphs). Prints one row per
//! graph and a summary with the targets; nothing is asserted.
//!
//! Usage: `bench-treewidth [--dir DIR] [--seconds S] [--threads T]
//! [--objective OBJ] [INSTANCE ...]`; run through
//! `scripts/bench-treewidth.sh` (release build).
//!
//! The search is the library's `find_tree` with `SearchOptions::time`, as
//! users run it; the reference is the library's deterministic min-fill tree
//! (`min_fill_tree`), priced by the cost model.
//!
//! Diagnostic: with `SP_ILS=SECONDS` set, each named graph instead gets one
//! long local search on its min-fill order (`improve_order`) and prints the
//! order widths before and after.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use sliceplan::cost::metrics;
use sliceplan::network::{Network, NetworkBuilder};
use sliceplan::report::Table;
use sliceplan::search::{find_tree, min_fill_tree, Objective, SearchOptions};

struct Args {
    dir: PathBuf,
    seconds: f64,
    threads: usize,
    objective: Objective,
    only: Vec<String>,
}

fn parse_args() -> Args {
    let mut args = Args {
        dir: PathBuf::from("../shared/benchmarks/pace2017-tw"),
        seconds: 10.0,
        threads: 0,
        objective: Objective::OpWidth,
        only: Vec::new(),
    };
    let mut it = std::env::args().skip(1);
    while let Some(a) = it.next() {
        let mut value = |what: &str| {
            it.next().unwrap_or_else(|| {
                eprintln!("{a} needs {what}");
                std::process::exit(2)
            })
        };
        match a.as_str() {
            "--dir" => args.dir = PathBuf::from(value("a directory")),
            "--seconds" => args.seconds = value("seconds").parse().unwrap_or(10.0),
            "--threads" => args.threads = value("a count").parse().unwrap_or(0),
            "--objective" => {
                args.objective = value("an objective").parse().unwrap_or_else(|m| {
                    eprintln!("{m}");
                    std::process::exit(2)
                })
            }
            _ => args.only.push(a),
        }
    }
    args
}

/// Reads a PACE `.gr` file: `p tw N M`, then one `u v` line per edge.
fn read_gr(path: &Path) -> (usize, Vec<(usize, usize)>) {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| {
        eprintln!("{}: {e}", path.display());
        std::process::exit(2)
    });
    let mut n = 0;
    let mut edges = Vec::new();
    for line in text.lines() {
        let f: Vec<&str> = line.split_whitespace().collect();
        match f.as_slice() {
            [] | ["c", ..] => {}
            ["p", "tw", nv, _] => n = nv.parse().expect("vertex count"),
            [u, v] => {
                let (u, v): (usize, usize) =
                    (u.parse().expect("vertex"), v.parse().expect("vertex"));
                edges.push((u - 1, v - 1));
            }
            _ => panic!("{}: unexpected line '{line}'", path.display()),
        }
    }
    (n, edges)
}

/// Vertices as indices of dimension 2, edges as tensors.
fn network(name: &str, n: usize, edges: &[(usize, usize)]) -> Network {
    let mut b = NetworkBuilder::new(name);
    let mut id = vec![usize::MAX; n];
    for (k, &(u, v)) in edges.iter().enumerate() {
        for x in [u, v] {
            if id[x] == usize::MAX {
                id[x] = b.index(&format!("v{}", x + 1), 2).expect("index");
            }
        }
        b.tensor_by_ids(&format!("e{k}"), vec![id[u], id[v]], None)
            .expect("tensor");
    }
    b.build().expect("network")
}

/// Diagnostic: one long order search per graph from a min-fill start
/// (`SP_ILS=SECONDS`).
fn ils_only(args: &Args, secs: f64) {
    use rand::SeedableRng;
    use sliceplan::search::{
        elimination_order, improve_order, ExactGoal, OrderParams, OrderRule, Simplified,
    };
    for name in &args.only {
        let (n, edges) = read_gr(&args.dir.join(format!("{name}.gr")));
        let net = network(name, n, &edges);
        let p = Simplified::new(&net, false).problem;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(1);
        let start = elimination_order(&p, &OrderParams::plain(OrderRule::MinFill), &mut rng, None)
            .expect("order");
        let began = Instant::now();
        let deadline = Some(began + Duration::from_secs_f64(secs));
        let best = improve_order(
            &p,
            &start.order,
            ExactGoal::Width,
            usize::MAX,
            deadline,
            &mut rng,
        )
        .expect("order");
        println!(
            "{name}: min-fill width {}, after {secs} s of order search {}",
            start.width, best.width
        );
    }
}

fn main() {
    let args = parse_args();
    if let Some(secs) = std::env::var("SP_ILS").ok().and_then(|s| s.parse().ok()) {
        ils_only(&args, secs);
        return;
    }
    let table_path = args.dir.join("treewidths.tsv");
    let listing = std::fs::read_to_string(&table_path).unwrap_or_else(|e| {
        eprintln!("{}: {e}", table_path.display());
        std::process::exit(2)
    });
    let mut t = Table::new([
        "graph",
        "vertices",
        "edges",
        "tw",
        "min-fill gap",
        "our gap",
        "ops - min-fill (log2)",
        "ops log2",
        "s",
        "finder",
    ]);
    let (mut total, mut exact, mut within_one, mut above_fill, mut ops_above) = (0, 0, 0, 0, 0);
    let mut gap_sum = 0.0;
    let mut fill_exact = 0;
    for line in listing.lines().skip(1) {
        let f: Vec<&str> = line.split('\t').collect();
        let [name, _, _, tw] = f.as_slice() else {
            continue;
        };
        if !args.only.is_empty() && !args.only.iter().any(|o| o == name) {
            continue;
        }
        let tw: f64 = tw.parse().expect("treewidth");
        let (n, edges) = read_gr(&args.dir.join(format!("{name}.gr")));
        let net = network(name, n, &edges);
        let fill = metrics(&net, &min_fill_tree(&net));
        let opts = SearchOptions {
            objective: args.objective,
            threads: args.threads,
            ..SearchOptions::time(Duration::from_secs_f64(args.seconds), 1)
        };
        let began = Instant::now();
        let r = find_tree(&net, &opts).expect("search runs");
        let secs = began.elapsed().as_secs_f64();
        let gap = r.metrics.op_width - (tw + 1.0);
        let fill_gap = fill.op_width - (tw + 1.0);
        let ops_diff = r.metrics.total_ops.log2 - fill.total_ops.log2;
        total += 1;
        exact += usize::from(gap.abs() < 1e-9);
        fill_exact += usize::from(fill_gap.abs() < 1e-9);
        within_one += usize::from(gap < 1.0 + 1e-9);
        above_fill += usize::from(r.metrics.op_width > fill.op_width + 1e-9);
        ops_above += usize::from(ops_diff > 1e-9);
        gap_sum += gap;
        t.row([
            name.to_string(),
            n.to_string(),
            edges.len().to_string(),
            format!("{tw}"),
            format!("{fill_gap:+.0}"),
            format!("{gap:+.0}"),
            format!("{ops_diff:+.2}"),
            format!("{:.2}", r.metrics.total_ops.log2),
            format!("{secs:.1}"),
            r.finder.clone(),
        ]);
        eprintln!(
            "{name}: tw {tw}, op width {} (gap {gap:+}), min-fill gap {fill_gap:+}, {secs:.1} s, {} trials, phases {:?}, candidates {:?}",
            r.metrics.op_width,
            r.trials,
            r.phases,
            r.candidates
                .iter()
                .map(|c| format!("{} {:.3}s", c.finder, c.seconds))
                .collect::<Vec<_>>()
        );
    }
    println!(
        "Graphs of known treewidth (PACE 2017 exact track), objective {}, {} s per graph\n{}",
        args.objective,
        args.seconds,
        t.render(2)
    );
    let pct = |k: usize| 100.0 * k as f64 / total.max(1) as f64;
    println!(
        "summary over {total} graphs:\n  op width = tw + 1: {exact} ({:.0}%; target >= 80%: {})\n  op width <= tw + 2: {within_one} ({:.0}%; target >= 95%: {})\n  op width above min-fill's: {above_fill} (target 0: {})\n  total ops above min-fill's: {ops_above} (target 0: {})\n  mean gap {:.2}; min-fill alone reaches tw + 1 on {fill_exact} ({:.0}%)",
        pct(exact),
        met(pct(exact) >= 80.0),
        pct(within_one),
        met(pct(within_one) >= 95.0),
        met(above_fill == 0),
        met(ops_above == 0),
        gap_sum / total.max(1) as f64,
        pct(fill_exact),
    );
}

fn met(ok: bool) -> &'static str {
    if ok {
        "met"
    } else {
        "MISSED"
    }
}
