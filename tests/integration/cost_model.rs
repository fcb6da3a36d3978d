//! The cost model against worked examples and an independent brute force.

use crate::support::reference as common;

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sliceplan::cost::{metrics, Dims, Inputs, NodeSets, PeakModel, Workspace};
use sliceplan::formats::einsum::{network_from_einsum, parse_dims};
use sliceplan::generate::lattice;
use sliceplan::network::{Network, NetworkBuilder};
use sliceplan::tree::{parse_nested, Tree};

fn clrs_chain() -> Network {
    // Cormen, Leiserson, Rivest, Stein, Introduction to Algorithms, 3rd ed.,
    // §15.2: A1 30x35, A2 35x15, A3 15x5, A4 5x10, A5 10x20, A6 20x25.
    let dims = parse_dims("a=30,b=35,c=15,d=5,e=10,f=20,g=25").unwrap();
    network_from_einsum("ab,bc,cd,de,ef,fg->ag", None, &dims).unwrap()
}

#[test]
fn matrix_chain_costs_match_cormen() {
    let net = clrs_chain();
    // CLRS §15.2, Figure 15.5: the optimal parenthesisation
    // ((A1(A2A3))((A4A5)A6)) costs 15,125 scalar multiplications.
    let best = parse_nested("((T0,(T1,T2)),((T3,T4),T5))", &net).unwrap();
    assert_eq!(metrics(&net, &best).total_ops.exact, Some(15_125));
    // Left to right, derived by hand: 30·35·15 + 30·15·5 + 30·5·10 + 30·10·20
    // + 30·20·25 = 15,750 + 2,250 + 1,500 + 6,000 + 15,000 = 40,500.
    let left = Tree::left_deep(6);
    assert_eq!(metrics(&net, &left).total_ops.exact, Some(40_500));
    assert_eq!(metrics(&net, &left).height, 5);
    // Balanced ((A1A2)(A3A4))(A5A6) has height 3 (three rounds).
    let balanced = parse_nested("(((T0,T1),(T2,T3)),(T4,T5))", &net).unwrap();
    assert_eq!(metrics(&net, &balanced).height, 3);
}

/// Independent recomputation of a node's indices from its leaf set: the
/// indices touching the set that also touch a tensor outside it or are open.
fn brute_node_indices(net: &Network, leaves: &[usize]) -> Vec<usize> {
    let inc = net.incidence();
    let open = net.open_mask();
    (0..net.num_indices())
        .filter(|&e| {
            let inside = inc[e].iter().filter(|t| leaves.contains(t)).count();
            inside > 0 && (inside < inc[e].len() || open[e])
        })
        .collect()
}

/// A leaf keeps all of its indices (the stored tensor), so brute force uses
/// the tensor's own list there.
fn brute_sizes(net: &Network, tree: &Tree) -> Vec<u128> {
    let dims = net.dims();
    tree.leaf_sets()
        .iter()
        .enumerate()
        .map(|(v, set)| {
            let idx: Vec<usize> = if v < net.num_tensors() {
                net.tensors[v].indices.clone()
            } else {
                brute_node_indices(net, set)
            };
            idx.iter().map(|&e| dims[e] as u128).product()
        })
        .collect()
}

/// Every permutation of `0..m`.
fn permutations(m: usize) -> Vec<Vec<usize>> {
    fn extend(prefix: &mut Vec<usize>, m: usize, out: &mut Vec<Vec<usize>>) {
        if prefix.len() == m {
            out.push(prefix.clone());
            return;
        }
        for k in 0..m {
            if !prefix.contains(&k) {
                prefix.push(k);
                extend(prefix, m, out);
                prefix.pop();
            }
        }
    }
    let mut out = Vec::new();
    extend(&mut Vec::new(), m, &mut out);
    out
}

/// The live-set peak of one order, straight from DESIGN §3: inputs resident
/// from the start (or loaded at first use), each contraction writing its
/// output while its operands are live (plus, for the executor's rule, the
/// larger of its permuted operand copies and its output, and a final permute
/// of the root).
fn order_peak(tree: &Tree, sizes: &[u128], order: &[usize], model: PeakModel) -> u128 {
    let n = tree.leaves();
    let lazy = model.inputs == Inputs::OnFirstUse;
    let permute = model.workspace == Workspace::PermuteCopies;
    let mut level: u128 = if lazy { 0 } else { sizes[..n].iter().sum() };
    let mut peak = level;
    for &k in order {
        let [a, b] = tree.merges()[k];
        if lazy {
            for c in [a, b] {
                if c < n {
                    level += sizes[c];
                    peak = peak.max(level);
                }
            }
        }
        let v = n + k;
        let during = if permute {
            sizes[a].max(sizes[b]).max(sizes[v])
        } else {
            sizes[v]
        };
        peak = peak.max(level + during);
        level = level + sizes[v] - sizes[a] - sizes[b];
    }
    if lazy && order.is_empty() {
        level += sizes[0];
        peak = peak.max(level);
    }
    if permute {
        peak = peak.max(level + sizes[sizes.len() - 1]);
    }
    peak
}

/// Minimum over every topological order of the merges of the largest live
/// set, by exhaustive enumeration.
fn brute_peak(net: &Network, tree: &Tree, model: PeakModel) -> u128 {
    let sizes = brute_sizes(net, tree);
    permutations(tree.merges().len())
        .into_iter()
        .filter(|order| tree.check_order(order).is_ok())
        .map(|order| order_peak(tree, &sizes, &order, model))
        .min()
        .expect("a tree has at least one order")
}

/// Small random networks: 1-7 tensors, dims 1-4, hyperedges and open
/// indices included.
fn random_network(rng: &mut ChaCha8Rng, tensors: usize) -> Network {
    let shape = common::RandomShape {
        tensors: tensors..=tensors,
        pool: 2..=8,
        dims: 1..=4,
        legs: 1..=4,
        open: 0.2,
    };
    common::random_network(rng, &shape)
}

use common::random_tree;

#[test]
fn metrics_match_brute_force_on_random_networks() {
    let models = [
        PeakModel::default(),
        PeakModel::EXECUTOR,
        PeakModel {
            inputs: Inputs::OnFirstUse,
            workspace: Workspace::None,
        },
        PeakModel {
            inputs: Inputs::Resident,
            workspace: Workspace::PermuteCopies,
        },
    ];
    let mut rng = ChaCha8Rng::seed_from_u64(2024);
    for case in 0..400 {
        let tensors = rng.random_range(1..=7);
        let net = random_network(&mut rng, tensors);
        let tree = random_tree(&mut rng, net.num_tensors());
        let sizes = brute_sizes(&net, &tree);
        let dims = net.dims();
        let sets = tree.leaf_sets();
        let mut ops_total: u128 = 0;
        let mut op_width: f64 = 0.0;
        for (k, &[a, b]) in tree.merges().iter().enumerate() {
            let _ = k;
            // ops: product over the union of both operands' indices.
            let ia = if a < net.num_tensors() {
                net.tensors[a].indices.clone()
            } else {
                brute_node_indices(&net, &sets[a])
            };
            let ib = if b < net.num_tensors() {
                net.tensors[b].indices.clone()
            } else {
                brute_node_indices(&net, &sets[b])
            };
            let mut u = ia.clone();
            for e in ib {
                if !u.contains(&e) {
                    u.push(e);
                }
            }
            let ops: u128 = u.iter().map(|&e| dims[e] as u128).product();
            ops_total += ops;
            op_width = op_width.max((ops as f64).log2());
        }
        let width = sizes
            .iter()
            .map(|&s| (s as f64).log2())
            .fold(f64::MIN, f64::max);
        for model in models {
            let m = NodeSets::new(&net, &tree).evaluate(&Dims::of(&net), model);
            assert_eq!(m.total_ops.exact, Some(ops_total), "case {case}");
            assert!((m.width - width).abs() < 1e-9, "case {case}");
            assert!((m.op_width - op_width).abs() < 1e-9, "case {case}");
            assert_eq!(m.height, tree.height(), "case {case}");
            tree.check_order(&m.order).unwrap();
            let want = brute_peak(&net, &tree, model);
            assert_eq!(
                m.peak.exact,
                Some(want),
                "case {case} model {model:?}: tree {:?}",
                tree.merges()
            );
        }
    }
}

#[test]
fn peak_is_optimal_over_all_orders_on_trees_of_eight_leaves() {
    // Exhaustive search over all topological orders (DESIGN §3 asks for this
    // comparison); 8 leaves, 7 merges.
    let mut rng = ChaCha8Rng::seed_from_u64(77);
    for _ in 0..150 {
        let net = random_network(&mut rng, 8);
        let tree = random_tree(&mut rng, net.num_tensors());
        for model in [PeakModel::default(), PeakModel::EXECUTOR] {
            let m = NodeSets::new(&net, &tree).evaluate(&Dims::of(&net), model);
            assert_eq!(m.peak.exact, Some(brute_peak(&net, &tree, model)));
        }
    }
}

/// Row-major left-deep sweep over an L x L lattice.
fn row_sweep(l: usize) -> Tree {
    Tree::left_deep(l * l)
}

/// Each row merged left to right into a row tensor, then rows merged top to
/// bottom.
fn rows_then_columns(l: usize) -> Tree {
    let n = l * l;
    let mut merges = Vec::new();
    let mut row_nodes = Vec::new();
    for r in 0..l {
        let mut acc = r * l;
        for c in 1..l {
            merges.push([acc, r * l + c]);
            acc = n + merges.len() - 1;
        }
        row_nodes.push(acc);
    }
    let mut acc = row_nodes[0];
    for &row in &row_nodes[1..] {
        merges.push([acc, row]);
        acc = n + merges.len() - 1;
    }
    Tree::new(n, merges).unwrap()
}

#[test]
fn lattice_sweeps_have_the_derived_widths() {
    // Closed (open-boundary) L x L lattice, bond 2 (common practice: a sweep
    // keeps about L bonds open, a row-then-column order about 2L).
    // Derivation for the row-major sweep: after k sites of an interior row r
    // (0 < k < L), the open bonds are the L - k vertical bonds above the rest
    // of row r, the k vertical bonds below the first k sites, and the one
    // horizontal bond to site (r, k): L + 1. Adding an interior site unions
    // that set with its right and down bonds: L + 3.
    // For rows-then-columns: a full interior row keeps its L bonds up and L
    // down: 2L; merging it onto the rows above unions L + 2L - L... = 2L.
    for l in 4..=8 {
        let net = lattice(&[l, l], 2, false).unwrap();
        let sweep = metrics(&net, &row_sweep(l));
        assert_eq!(sweep.width, (l + 1) as f64, "L = {l}");
        assert_eq!(sweep.op_width, (l + 3) as f64, "L = {l}");
        let rows = metrics(&net, &rows_then_columns(l));
        assert_eq!(rows.width, (2 * l) as f64, "L = {l}");
    }
}

#[test]
fn hyperedge_is_summed_where_its_last_tensor_joins() {
    // Index h is shared by A, B and C (a hyperedge); x is open on A.
    // A(x,h) dims 3,2; B(h,y) 2,5; C(h,y) 2,5.
    let mut b = NetworkBuilder::new("hyper");
    b.declare("x", 3, None).unwrap();
    b.declare("h", 2, None).unwrap();
    b.declare("y", 5, None).unwrap();
    b.tensor("A", &["x", "h"], None, None).unwrap();
    b.tensor("B", &["h", "y"], None, None).unwrap();
    b.tensor("C", &["h", "y"], None, None).unwrap();
    b.open("x", None).unwrap();
    let net = b.build().unwrap();
    // (A,B) first: h must stay (C still has it): result (x,h,y), 30 elements,
    // ops over {x,h,y} = 30. Then with C: h and y summed, result (x): 3
    // elements; ops over {x,h,y} = 30. Total 60, counted by hand.
    let tree = parse_nested("((A,B),C)", &net).unwrap();
    let sets = NodeSets::new(&net, &tree);
    let h = net.index_id("h").unwrap();
    let x = net.index_id("x").unwrap();
    let y = net.index_id("y").unwrap();
    assert_eq!(sets.indices[3], vec![x, h, y]);
    assert_eq!(sets.indices[4], vec![x]);
    assert_eq!(metrics(&net, &tree).total_ops.exact, Some(60));
    // (B,C) first: h stays (A has it), y is summed: result (h), ops 2*5 = 10;
    // then with A: result (x), ops 3*2 = 6. Total 16.
    let tree = parse_nested("(A,(B,C))", &net).unwrap();
    let sets = NodeSets::new(&net, &tree);
    assert_eq!(sets.indices[3], vec![h]);
    assert_eq!(metrics(&net, &tree).total_ops.exact, Some(16));
}

#[test]
fn slicing_equals_removing_the_indices() {
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    for _ in 0..100 {
        let net = random_network(&mut rng, 6);
        let tree = random_tree(&mut rng, net.num_tensors());
        let k = rng.random_range(1..=net.num_indices().min(3));
        let sliced: Vec<usize> = (0..k)
            .map(|_| rng.random_range(0..net.num_indices()))
            .collect();
        let mut sliced_unique = sliced.clone();
        sliced_unique.sort_unstable();
        sliced_unique.dedup();
        let sets = NodeSets::new(&net, &tree);
        let s = sets.evaluate_sliced(&net, &sliced_unique, PeakModel::default());
        // The same network with those indices removed from every tensor and
        // from the open list, priced with the same tree.
        let mut b = NetworkBuilder::new("removed");
        for (t, tensor) in net.tensors.iter().enumerate() {
            let names: Vec<String> = tensor
                .indices
                .iter()
                .filter(|e| !sliced_unique.contains(e))
                .map(|&e| net.indices[e].name.clone())
                .collect();
            for &e in tensor.indices.iter().filter(|e| !sliced_unique.contains(e)) {
                b.declare(&net.indices[e].name, net.indices[e].dim, None)
                    .unwrap();
            }
            let _ = t;
            b.tensor(&tensor.name, &names, None, None).unwrap();
        }
        for &e in &net.open {
            if !sliced_unique.contains(&e) {
                b.open(&net.indices[e].name, None).unwrap();
            }
        }
        let removed = b.build().unwrap();
        let m = metrics(&removed, &tree);
        assert_eq!(s.per_slice.total_ops, m.total_ops);
        assert_eq!(s.per_slice.peak, m.peak);
        assert!((s.per_slice.width - m.width).abs() < 1e-12);
        let count: u128 = sliced_unique
            .iter()
            .map(|&e| net.indices[e].dim as u128)
            .product();
        assert_eq!(s.slices.exact, Some(count));
        assert_eq!(s.total_ops.exact, Some(count * m.total_ops.exact.unwrap()));
    }
}
