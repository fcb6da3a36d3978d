//! Graph input: counting and Ising networks against OEIS tables, the
//! chromatic polynomial of the Petersen graph, Kaufman's exact Ising
//! partition function, and brute force on small graphs.

use crate::support::formats as formats_util;

use sliceplan::formats::graph::{graph_network, parse_graph, Graph, GraphProblem};

use formats_util::{kaufman, scalar};

/// DIMACS text of the rows x cols grid graph (periodic: a torus).
fn grid_dimacs(rows: usize, cols: usize, periodic: bool) -> String {
    let v = |r: usize, c: usize| r * cols + c + 1;
    let mut edges = Vec::new();
    for r in 0..rows {
        for c in 0..cols {
            if c + 1 < cols || periodic {
                edges.push((v(r, c), v(r, (c + 1) % cols)));
            }
            if r + 1 < rows || periodic {
                edges.push((v(r, c), v((r + 1) % rows, c)));
            }
        }
    }
    let mut text = format!(
        "c grid {rows}x{cols}\np edge {} {}\n",
        rows * cols,
        edges.len()
    );
    for (a, b) in edges {
        text.push_str(&format!("e {a} {b}\n"));
    }
    text
}

fn count(g: &Graph, p: &GraphProblem) -> f64 {
    let v = scalar(&graph_network(g, p, "test", "test").unwrap());
    assert_eq!(v.im, 0.0);
    v.re
}

#[test]
fn independent_sets_of_square_grids() {
    // OEIS A006506: independent vertex sets of the n x n grid graph, n = 1..7.
    let oeis = [2.0, 7.0, 63.0, 1234.0, 55447.0, 5598861.0, 1280128950.0];
    for (k, &want) in oeis.iter().enumerate() {
        let n = k + 1;
        let g = parse_graph(&grid_dimacs(n, n, false), "grid").unwrap();
        assert_eq!(count(&g, &GraphProblem::IndependentSets), want, "n = {n}");
    }
}

#[test]
fn domino_tilings_of_square_boards() {
    // OEIS A004003 (Kasteleyn 1961; Temperley and Fisher 1961): domino
    // tilings of the 2n x 2n board = perfect matchings of its grid graph.
    let oeis = [1.0, 2.0, 36.0, 6728.0, 12988816.0];
    for (n, &want) in oeis.iter().enumerate() {
        let g = parse_graph(&grid_dimacs(2 * n, 2 * n, false), "board").unwrap();
        assert_eq!(count(&g, &GraphProblem::PerfectMatchings), want, "n = {n}");
    }
}

/// The Petersen graph: outer 5-cycle 0..4, inner pentagram 5..9, spokes.
fn petersen() -> Graph {
    let mut e = Vec::new();
    for i in 0..5 {
        e.push((i, (i + 1) % 5));
        e.push((5 + i, 5 + (i + 2) % 5));
        e.push((i, i + 5));
    }
    Graph::from_edges(10, &e)
}

fn brute_colorings(g: &Graph, q: usize) -> u64 {
    let n = g.num_vertices();
    (0..q.pow(n as u32))
        .filter(|&a| {
            let colour = |v: usize| a / q.pow(v as u32) % q;
            g.edges.iter().all(|&(u, v)| colour(u) != colour(v))
        })
        .count() as u64
}

#[test]
fn petersen_colourings() {
    // Chromatic polynomial of the Petersen graph (from memory:
    // P(3) = 120, P(4) = 12960), each confirmed by brute force here.
    let g = petersen();
    for (q, want) in [(3u64, 120.0), (4, 12960.0)] {
        assert_eq!(brute_colorings(&g, q as usize) as f64, want);
        assert_eq!(count(&g, &GraphProblem::Colorings { colors: q }), want);
    }
    // Two colours: the graph has odd cycles, so none (and brute force agrees).
    assert_eq!(count(&g, &GraphProblem::Colorings { colors: 2 }), 0.0);
}

/// Direct sum over all spin states of a graph (couplings, field).
fn brute_ising(g: &Graph, beta: f64, j: &[f64], h: f64) -> f64 {
    let n = g.num_vertices();
    (0u64..1 << n)
        .map(|a| {
            let s = |v: usize| if a >> v & 1 == 0 { 1.0 } else { -1.0 };
            let bonds: f64 = g
                .edges
                .iter()
                .zip(j)
                .map(|(&(u, v), &jj)| jj * s(u) * s(v))
                .sum();
            let spins: f64 = (0..n).map(s).sum();
            (beta * (bonds + h * spins)).exp()
        })
        .sum()
}

#[test]
fn kaufman_formula_matches_a_direct_sum() {
    let g = parse_graph(&grid_dimacs(4, 4, true), "torus").unwrap();
    let ones = vec![1.0; g.edges.len()];
    for k in [0.1, 0.3, 0.44, 0.7] {
        let (exact, direct) = (kaufman(4, 4, k), brute_ising(&g, k, &ones, 0.0));
        assert!((exact - direct).abs() < 1e-11 * direct, "K = {k}");
    }
}

#[test]
fn ising_torus_partition_functions() {
    // Kaufman (1949), via `formats_util::kaufman` (checked above against a
    // direct spin sum); relative 1e-10.
    for l in [4, 6] {
        let g = parse_graph(&grid_dimacs(l, l, true), "torus").unwrap();
        for beta in [0.1, 0.3, 0.4406868, 0.6, 1.0] {
            let p = GraphProblem::Ising {
                beta,
                coupling: None,
                field: 0.0,
            };
            let (got, want) = (count(&g, &p), kaufman(l, l, beta));
            assert!(
                (got - want).abs() < 1e-10 * want,
                "L = {l}, beta = {beta}: {got} vs {want}"
            );
        }
    }
}

#[test]
fn ising_with_couplings_and_field() {
    // Brute force over all 2^8 spin states of a small graph with per-edge
    // couplings from an edge list, and with a uniform coupling and a field.
    let text = "# couplings\n0 1 0.5\n1 2 -1.25\n2 3 0.75\n3 0 1\n0 2 -0.3\n4 5 2\n5 6 0.1\n6 7 -0.6\n7 4 0.9\n3 4 0.2\n";
    let g = parse_graph(text, "t").unwrap();
    let j = g.couplings.clone().unwrap();
    let p = GraphProblem::Ising {
        beta: 0.8,
        coupling: None,
        field: 0.0,
    };
    let want = brute_ising(&g, 0.8, &j, 0.0);
    assert!((count(&g, &p) - want).abs() < 1e-12 * want);
    let plain = Graph {
        couplings: None,
        ..g.clone()
    };
    let p = GraphProblem::Ising {
        beta: 0.5,
        coupling: Some(-0.7),
        field: 0.35,
    };
    let want = brute_ising(&plain, 0.5, &vec![-0.7; plain.edges.len()], 0.35);
    assert!((count(&plain, &p) - want).abs() < 1e-12 * want);
    // Coupling both in the file and on the command line is refused.
    let p = GraphProblem::Ising {
        beta: 0.5,
        coupling: Some(1.0),
        field: 0.0,
    };
    assert!(graph_network(&g, &p, "t", "t").is_err());
}

/// A small graph with a vertex of degree 12 (above the chain threshold),
/// an odd cycle and a pendant path; it has 3 perfect matchings.
fn star_and_friends() -> Graph {
    let mut e: Vec<(usize, usize)> = (1..=12).map(|v| (0, v)).collect();
    e.extend([(1, 2), (2, 3), (3, 1), (4, 13), (13, 14), (14, 15)]);
    e.extend([(5, 6), (7, 8), (9, 10), (11, 12)]);
    Graph::from_edges(16, &e)
}

#[test]
fn counts_agree_with_brute_force() {
    let g = star_and_friends();
    let n = g.num_vertices();
    let independent = (0u64..1 << n)
        .filter(|a| {
            g.edges
                .iter()
                .all(|&(u, v)| a >> u & 1 == 0 || a >> v & 1 == 0)
        })
        .count();
    assert_eq!(
        count(&g, &GraphProblem::IndependentSets),
        independent as f64
    );
    let matchings = (0u64..1 << g.edges.len())
        .filter(|s| {
            let mut deg = vec![0; n];
            for (k, &(u, v)) in g.edges.iter().enumerate() {
                if s >> k & 1 == 1 {
                    deg[u] += 1;
                    deg[v] += 1;
                }
            }
            deg.iter().all(|&d| d == 1)
        })
        .count();
    assert_eq!(matchings, 3);
    assert_eq!(count(&g, &GraphProblem::PerfectMatchings), matchings as f64);
    // Colourings of a seeded random graph on 10 vertices (3^10 states).
    let edges = sliceplan::generate::random_regular_graph(10, 3, 7).unwrap();
    let g = Graph::from_edges(10, &edges);
    for q in [3, 4] {
        let want = brute_colorings(&g, q) as f64;
        assert_eq!(
            count(&g, &GraphProblem::Colorings { colors: q as u64 }),
            want,
            "q = {q}"
        );
    }
}

#[test]
fn isolated_vertices_count() {
    // DIMACS vertex 4 is on no edge: independent sets double (closed form),
    // and no perfect matching can cover it.
    let g = parse_graph("p edge 4 2\ne 1 2\ne 2 3\n", "t").unwrap();
    // Path on 3 vertices: 5 independent sets (empty, 3 singletons, {1,3}).
    assert_eq!(count(&g, &GraphProblem::IndependentSets), 10.0);
    assert_eq!(count(&g, &GraphProblem::PerfectMatchings), 0.0);
    assert_eq!(
        count(&g, &GraphProblem::Colorings { colors: 3 }),
        3.0 * 12.0
    );
}
