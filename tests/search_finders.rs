//! One tester for every finder (STYLE §11): each runs on the same fixtures
//! and each result goes through the same validator. Also: determinism of the
//! driver across thread counts, and property tests (exact ≤ heuristic,
//! refinement never worse, the search's own pricing equal to the cost
//! model's).

mod search_support;

use proptest::prelude::*;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use search_support::*;
use sliceplan::cost::metrics;
use sliceplan::network::Network;
use sliceplan::search::{
    anneal_tree, dissection_tree, elimination_tree, exact_tree, find_tree, greedy_tree,
    improve_order, left_deep, order_of_tree, order_tree, partition_tree, quotient_tree,
    refine_tree, sweep_order, tree_metrics, AnnealParams, DissectParams, ExactGoal, Finders,
    GreedyParams, Objective, OrderParams, OrderRule, PartitionParams, Problem, RefineParams,
    SearchOptions, Simplified,
};
use sliceplan::tree::{tree_file_text, Tree};

fn fixtures() -> Vec<Network> {
    vec![
        chain(&[30, 35, 15, 5, 10, 20, 25]),
        random_network(11, 1),
        random_network(12, 2),
        random_network(13, 7),
        random_network(14, 12),
        random_network(15, 30),
        lattice_2d(4, 2),
        lattice_2d(7, 2),
        lattice_3d(3, 2),
        random_regular(40, 5),
        // Two separate rings: the network is disconnected.
        from_edges(
            "two-rings",
            6,
            &[(0, 1), (1, 2), (2, 0), (3, 4), (4, 5), (5, 3)],
            3,
        ),
        // Tensors with no index at all.
        from_edges("scalars", 4, &[(0, 1)], 2),
    ]
}

/// The validator every finder's output goes through: a binary tree over
/// the network's tensors using each exactly once, priced by the cost model
/// as the finder's own pricing said (the search pricing is a separate
/// implementation of DESIGN §3, so agreement checks both).
fn validate(net: &Network, what: &str, tree: &Tree, claimed: Option<(f64, f64)>) {
    let n = net.num_tensors();
    assert_eq!(tree.leaves(), n, "{what}");
    let again = Tree::new(n, tree.merges().to_vec()).expect("valid merges");
    let root = &again.leaf_sets()[again.root()];
    assert_eq!(
        root,
        &(0..n).collect::<Vec<_>>(),
        "{what}: covers every tensor once"
    );
    let m = metrics(net, tree);
    // The search's lean pricing (no per-node tables) is a third
    // implementation of DESIGN §3; it must agree with the cost model.
    let lean = tree_metrics(net, tree);
    let close = |a: f64, b: f64| a == b || (a - b).abs() < 1e-9;
    assert_eq!(lean.total_ops.exact, m.total_ops.exact, "{what}");
    assert!(close(lean.total_ops.log2, m.total_ops.log2), "{what}");
    assert!(close(lean.width, m.width), "{what}");
    assert!(close(lean.op_width, m.op_width), "{what}");
    assert!(close(lean.peak.log2, m.peak.log2), "{what}");
    assert_eq!(lean.peak.exact, m.peak.exact, "{what}");
    assert_eq!(lean.height, m.height, "{what}");
    if let Some((ops, width)) = claimed {
        let tol = 1e-9 * (1.0 + ops.abs());
        if n > 1 {
            assert!(
                (m.total_ops.log2 - ops).abs() < tol,
                "{what}: ops {} vs {ops}",
                m.total_ops.log2
            );
        }
        assert!(
            (m.width - width).abs() < 1e-9,
            "{what}: width {} vs {width}",
            m.width
        );
    }
}

type Finder = Box<dyn Fn(&Problem) -> Option<Vec<[usize; 2]>>>;

fn finders() -> Vec<(&'static str, Finder)> {
    let rng = || ChaCha8Rng::seed_from_u64(99);
    vec![
        (
            "exact-ops",
            Box::new(|p: &Problem| exact_tree(p, ExactGoal::TotalOps)),
        ),
        (
            "exact-width",
            Box::new(|p: &Problem| exact_tree(p, ExactGoal::Width)),
        ),
        (
            "greedy",
            Box::new(move |p: &Problem| Some(greedy_tree(p, &GreedyParams::default(), &mut rng()))),
        ),
        (
            "greedy-hot",
            Box::new(move |p: &Problem| {
                let params = GreedyParams {
                    alpha: 0.3,
                    temperature: 0.5,
                };
                Some(greedy_tree(p, &params, &mut rng()))
            }),
        ),
        (
            "partition",
            Box::new(move |p: &Problem| {
                let params = PartitionParams {
                    leaf_size: 4,
                    ..Default::default()
                };
                Some(partition_tree(p, &params, &mut rng()))
            }),
        ),
        (
            "greedy+refine",
            Box::new(move |p: &Problem| {
                let m = greedy_tree(p, &GreedyParams::default(), &mut rng());
                let params = RefineParams {
                    k: 6,
                    goal: ExactGoal::TotalOps,
                    passes: 2,
                    random_frontier: Some(5),
                };
                Some(refine_tree(p, &m, &params, None).0)
            }),
        ),
        (
            "file-order",
            Box::new(|p: &Problem| {
                let order: Vec<u32> = (0..p.len() as u32).collect();
                Some(left_deep(p.len(), &order))
            }),
        ),
        (
            "sweep",
            Box::new(|p: &Problem| Some(left_deep(p.len(), &sweep_order(p)))),
        ),
        (
            "min-fill",
            Box::new(move |p: &Problem| {
                let params = OrderParams::plain(OrderRule::MinFill);
                elimination_tree(p, &params, &mut rng(), None)
            }),
        ),
        (
            "min-degree",
            Box::new(move |p: &Problem| {
                let params = OrderParams::plain(OrderRule::MinDegree);
                elimination_tree(p, &params, &mut rng(), None)
            }),
        ),
        (
            "min-fill-noisy",
            Box::new(move |p: &Problem| {
                let params = OrderParams {
                    rule: OrderRule::MinFill,
                    random_ties: true,
                    noise: 2.0,
                };
                elimination_tree(p, &params, &mut rng(), None)
            }),
        ),
        (
            "quotient-min-degree",
            Box::new(move |p: &Problem| {
                let params = OrderParams {
                    rule: OrderRule::MinDegree,
                    random_ties: true,
                    noise: 0.0,
                };
                quotient_tree(p, &params, &mut rng(), None)
            }),
        ),
        (
            "quotient-min-fill",
            Box::new(move |p: &Problem| {
                let params = OrderParams::plain(OrderRule::MinFill);
                quotient_tree(p, &params, &mut rng(), None)
            }),
        ),
        (
            "dissection",
            Box::new(|p: &Problem| dissection_tree(p, &DissectParams::default())),
        ),
        (
            "order-search",
            Box::new(move |p: &Problem| {
                let start = order_of_tree(p, &greedy_tree(p, &GreedyParams::default(), &mut rng()));
                let better = improve_order(p, &start, ExactGoal::Width, 300, None, &mut rng())?;
                Some(order_tree(p, &better.order))
            }),
        ),
        (
            "reversed-order",
            Box::new(|p: &Problem| {
                let order: Vec<u32> = (0..p.weight.len() as u32).rev().collect();
                Some(order_tree(p, &order))
            }),
        ),
        (
            "greedy+anneal",
            Box::new(move |p: &Problem| {
                let m = greedy_tree(p, &GreedyParams::default(), &mut rng());
                let params = AnnealParams {
                    steps: 500,
                    ..AnnealParams::default()
                };
                Some(anneal_tree(p, &m, &params, &mut rng()).0)
            }),
        ),
    ]
}

#[test]
fn every_finder_gives_valid_trees_on_every_fixture() {
    for net in fixtures() {
        for absorb in [false, true] {
            let s = Simplified::new(&net, absorb);
            for (name, finder) in finders() {
                let Some(merges) = finder(&s.problem) else {
                    assert!(
                        name.starts_with("exact") && s.problem.len() > 16,
                        "{name} declined"
                    );
                    continue;
                };
                let tree = s.expand(&merges);
                let what = format!("{name} on {} (absorb {absorb})", net.name);
                let claimed = if absorb {
                    None
                } else {
                    let e = s.problem.evaluate(&merges);
                    Some((e.total_ops_log2, e.width))
                };
                validate(&net, &what, &tree, claimed);
            }
        }
        let found = find_tree(&net, &SearchOptions::trials(12, 3)).unwrap();
        validate(&net, &format!("driver on {}", net.name), &found.tree, None);
        assert!(found.lower_bound.width <= found.metrics.width + 1e-9);
    }
}

#[test]
fn cormen_chain_from_scratch() {
    // Cormen et al., Introduction to Algorithms 3rd ed. §15.2: 15,125 scalar
    // multiplications for dims 30,35,15,5,10,20,25.
    let net = chain(&[30, 35, 15, 5, 10, 20, 25]);
    for finders in [
        Finders::default(),
        Finders {
            exact: false,
            ..Finders::default()
        },
    ] {
        let opts = SearchOptions {
            finders,
            ..SearchOptions::trials(200, 1)
        };
        let found = find_tree(&net, &opts).unwrap();
        assert_eq!(found.metrics.total_ops.exact, Some(15125), "{finders:?}");
    }
}

#[test]
fn same_seed_same_tree_with_one_or_two_threads() {
    for net in [
        lattice_2d(6, 2),
        random_regular(60, 2),
        random_network(5, 14),
    ] {
        let text = |threads| {
            let opts = SearchOptions {
                threads,
                ..SearchOptions::trials(30, 17)
            };
            let found = find_tree(&net, &opts).unwrap();
            tree_file_text(&found.tree, &net)
        };
        assert_eq!(text(1), text(2), "{}", net.name);
    }
}

#[test]
fn width_objectives_keep_to_the_cap() {
    // A 6x6 lattice with bond 2 has a tree of width 7 (a row-by-row sweep
    // keeps one row of 6 bonds plus one, from memory of the sweep argument).
    let net = lattice_2d(6, 2);
    let opts = SearchOptions {
        objective: Objective::OpsWithinWidth { max_width: 7.0 },
        ..SearchOptions::trials(40, 4)
    };
    let found = find_tree(&net, &opts).unwrap();
    assert!(found.metrics.width <= 7.0, "width {}", found.metrics.width);
    let opts = SearchOptions {
        objective: Objective::Peak,
        ..SearchOptions::trials(10, 4)
    };
    let peak = find_tree(&net, &opts).unwrap();
    validate(&net, "peak objective", &peak.tree, None);
}

#[test]
fn sliced_search_prices_one_slice() {
    // Slicing both bonds of A(a,b) B(b,c) C(c,a) (dims 4): each slice is a
    // product of scalars and vectors; by hand, the ring with b and c fixed
    // is A(a) B() C(a): best total ops 4 (A with C over a) + 1 = 5.
    let net = sliceplan::formats::einsum::network_from_einsum("ab,bc,ca->", Some(4), &[]).unwrap();
    let ids = net.parse_index_list("b,c", "test").unwrap();
    let r = sliceplan::search::find_tree_sliced(&net, &ids, &SearchOptions::trials(5, 1)).unwrap();
    assert_eq!(r.metrics.total_ops.exact, Some(5));
    assert!(sliceplan::search::find_tree_sliced(&net, &[9], &SearchOptions::trials(5, 1)).is_err());
}

#[test]
fn stopping_keeps_the_best_so_far() {
    // As Ctrl-C does: the progress callback raises the stop flag after the
    // third trial of a budget of 10,000; the search returns a valid tree.
    use std::sync::atomic::{AtomicBool, Ordering};
    let net = lattice_2d(6, 2);
    let stop = AtomicBool::new(false);
    let on_progress = |p: &sliceplan::search::Progress| {
        assert!(p.best.is_some());
        if p.trials_done >= 3 {
            stop.store(true, Ordering::SeqCst);
        }
    };
    let opts = SearchOptions {
        threads: 1,
        ..SearchOptions::trials(10_000, 2)
    };
    let r = sliceplan::search::find_tree_with(&net, &opts, &on_progress, &stop).unwrap();
    assert!(r.interrupted);
    assert_eq!(r.trials, 3);
    validate(&net, "interrupted search", &r.tree, None);
}

#[test]
fn bad_options_are_refused() {
    let net = chain(&[2, 3, 4]);
    let mut opts = SearchOptions::trials(0, 1);
    assert!(find_tree(&net, &opts)
        .unwrap_err()
        .to_string()
        .contains("at least 1"));
    opts.trials = None;
    // Library errors name the option's field, not a command-line flag.
    match find_tree(&net, &opts).unwrap_err() {
        sliceplan::Error::Invalid { field, .. } => assert_eq!(field, "time"),
        other => panic!("expected an invalid-option error, got {other}"),
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, .. ProptestConfig::default() })]

    #[test]
    fn exact_is_no_worse_than_heuristics(seed in 0u64..10_000, n in 2usize..=9) {
        let net = random_network(seed, n);
        let p = Problem::from_network(&net);
        let exact = p.evaluate(&exact_tree(&p, ExactGoal::TotalOps).unwrap());
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        for t in [0.0, 0.3] {
            let g = p.evaluate(&greedy_tree(&p, &GreedyParams { alpha: 1.0, temperature: t }, &mut rng));
            prop_assert!(exact.total_ops_log2 <= g.total_ops_log2 + 1e-9);
        }
        let part = p.evaluate(&partition_tree(&p, &PartitionParams { leaf_size: 3, ..Default::default() }, &mut rng));
        prop_assert!(exact.total_ops_log2 <= part.total_ops_log2 + 1e-9);
    }

    #[test]
    fn refinement_and_annealing_are_never_worse(seed in 0u64..10_000, n in 3usize..=14, k in 3usize..=7) {
        let net = random_network(seed, n);
        let p = Problem::from_network(&net);
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let start = greedy_tree(&p, &GreedyParams { alpha: 0.5, temperature: 1.0 }, &mut rng);
        let before = p.evaluate(&start);
        for goal in [ExactGoal::TotalOps, ExactGoal::Width] {
            let (after, _) = refine_tree(&p, &start, &RefineParams { k, goal, passes: 3, random_frontier: (seed % 2 == 0).then_some(seed) }, None);
            let after = p.evaluate(&after);
            let hot = AnnealParams { steps: 300, t_start: 0.5, ..AnnealParams::default() };
            let (annealed, _) = anneal_tree(&p, &start, &hot, &mut rng);
            prop_assert!(p.evaluate(&annealed).total_ops_log2 <= before.total_ops_log2 + 1e-9);
            match goal {
                ExactGoal::TotalOps => prop_assert!(after.total_ops_log2 <= before.total_ops_log2 + 1e-9),
                _ => prop_assert!(after.width <= before.width + 1e-9),
            }
        }
    }
}
