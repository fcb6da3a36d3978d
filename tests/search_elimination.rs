//! Elimination orders and the trees they give, against treewidths known
//! from outside: closed forms for grids, complete graphs, cycles and trees,
//! and the published exact treewidths of the PACE 2017 graphs.
//!
//! A graph is read as a network with its vertices as indices of dimension
//! 2 and its edges as tensors (tests/search_support). An elimination order
//! of width w (largest clique w vertices) gives a tree whose largest
//! contraction has w indices, and no order beats treewidth + 1.

mod search_support;

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use search_support::*;
use sliceplan::cost::metrics;
use sliceplan::search::{
    elimination_order, find_tree, min_fill_tree, op_width_lower_bound, Objective, OrderParams,
    OrderRule, Problem, SearchOptions, Simplified,
};

/// The width (largest clique, in vertices) of the min-fill and min-degree
/// orders of a graph read as a network.
fn order_widths(net: &sliceplan::network::Network) -> Vec<f64> {
    let p: Problem = Simplified::new(net, false).problem;
    [OrderRule::MinFill, OrderRule::MinDegree]
        .iter()
        .map(|&rule| {
            let mut rng = ChaCha8Rng::seed_from_u64(0);
            elimination_order(&p, &OrderParams::plain(rule), &mut rng, None)
                .unwrap()
                .width
        })
        .collect()
}

#[test]
fn complete_graphs_have_treewidth_n_minus_1() {
    // K_n has treewidth n - 1 (some bag of every tree decomposition holds
    // a whole clique; Diestel, Graph Theory, 5th ed., §12.3), so every
    // order has a clique of n vertices and the proven op-width bound (the
    // degeneracy n - 1, plus the vertex itself) is tight.
    for n in 3..=9 {
        let edges: Vec<(usize, usize)> = (0..n)
            .flat_map(|u| (u + 1..n).map(move |v| (u, v)))
            .collect();
        let net = graph_as_indices("complete", n, &edges);
        for w in order_widths(&net) {
            assert_eq!(w, n as f64, "K_{n}");
        }
        assert_eq!(metrics(&net, &min_fill_tree(&net)).op_width, n as f64);
        assert_eq!(op_width_lower_bound(&net), n as f64);
    }
}

#[test]
fn cycles_have_treewidth_2() {
    // A cycle has treewidth 2 (graphs of treewidth 1 are the forests;
    // Diestel, Graph Theory, 5th ed., §12.3), so op width 3 is optimal and
    // min-fill reaches it; the bound (degeneracy 2, plus one) is tight.
    for n in [3usize, 4, 7, 20, 101] {
        let edges: Vec<(usize, usize)> = (0..n).map(|u| (u, (u + 1) % n)).collect();
        let net = graph_as_indices("cycle", n, &edges);
        assert_eq!(order_widths(&net)[0], 3.0, "C_{n}");
        assert_eq!(metrics(&net, &min_fill_tree(&net)).op_width, 3.0, "C_{n}");
        assert_eq!(op_width_lower_bound(&net), 3.0);
    }
}

#[test]
fn trees_have_treewidth_1() {
    // A tree (the graph) has treewidth 1 (Diestel §12.3): min-fill removes
    // leaves, cliques of 2 vertices. As a network the tree's largest
    // contraction has 3 indices, not 2: a leaf vertex is an index on one
    // tensor only, which DESIGN §3 sums at that tensor's first merge, whose
    // operands already hold two other indices. (The PACE graphs all have
    // treewidth 6 or more, where this does not arise.)
    use rand::Rng;
    let mut rng = ChaCha8Rng::seed_from_u64(9);
    for n in [3usize, 10, 50, 200] {
        let edges: Vec<(usize, usize)> = (1..n).map(|v| (rng.random_range(0..v), v)).collect();
        let net = graph_as_indices("tree", n, &edges);
        for w in order_widths(&net) {
            assert_eq!(w, 2.0, "tree on {n} vertices");
        }
        assert_eq!(metrics(&net, &min_fill_tree(&net)).op_width, 3.0);
    }
}

#[test]
fn grids_have_treewidth_k() {
    // The k x k grid has treewidth k (Bodlaender, "A partial k-arboretum
    // of graphs with bounded treewidth", Theor. Comput. Sci. 209, 1998;
    // quoted from memory). No order beats k + 1; the search with the
    // op-width objective reaches it on small grids (deterministic with a
    // trial budget), and the proven bound never exceeds it.
    for k in 3..=6 {
        let net = graph_as_indices("grid", k * k, &grid_edges(k));
        for w in order_widths(&net) {
            assert!(w >= (k + 1) as f64, "{k}x{k}: order width {w}");
        }
        let bound = op_width_lower_bound(&net);
        assert!(bound <= (k + 1) as f64, "{k}x{k}: bound {bound}");
        let opts = SearchOptions {
            objective: Objective::OpWidth,
            threads: 1,
            ..SearchOptions::trials(16, 1)
        };
        let found = find_tree(&net, &opts).unwrap();
        assert_eq!(found.metrics.op_width, (k + 1) as f64, "{k}x{k}");
    }
}

/// The published treewidths (PACE 2017 exact track) bound every order from
/// below; the proven op-width bound stays below them.
#[test]
fn pace_graphs_respect_their_published_treewidth() {
    let dir = std::path::Path::new("../shared/benchmarks/pace2017-tw");
    let Ok(listing) = std::fs::read_to_string(dir.join("treewidths.tsv")) else {
        eprintln!("skipped: {} is not on this machine", dir.display());
        return;
    };
    let mut checked = 0;
    for line in listing.lines().skip(1) {
        let f: Vec<&str> = line.split('\t').collect();
        let [name, _, edges, tw] = f.as_slice() else {
            continue;
        };
        // Small graphs only: this runs in the debug build.
        if edges.parse::<usize>().unwrap() > 700 {
            continue;
        }
        let tw: f64 = tw.parse().unwrap();
        let text = std::fs::read_to_string(dir.join(format!("{name}.gr"))).unwrap();
        let mut n = 0;
        let mut list = Vec::new();
        for l in text.lines() {
            let w: Vec<&str> = l.split_whitespace().collect();
            match w.as_slice() {
                ["p", "tw", v, _] => n = v.parse().unwrap(),
                [u, v] => list.push((
                    u.parse::<usize>().unwrap() - 1,
                    v.parse::<usize>().unwrap() - 1,
                )),
                _ => {}
            }
        }
        let net = graph_as_indices(name, n, &list);
        for w in order_widths(&net) {
            assert!(
                w >= tw + 1.0,
                "{name}: order width {w} below tw + 1 = {}",
                tw + 1.0
            );
        }
        assert!(op_width_lower_bound(&net) <= tw + 1.0, "{name}");
        checked += 1;
    }
    assert!(checked >= 20, "only {checked} graphs checked");
}
