//! The exact finder against an independent brute force over every tree, and
//! the width lower bound against the true optimum width.

use crate::support::search as search_support;

use search_support::random_network;
use sliceplan::cost::metrics;
use sliceplan::network::Network;
use sliceplan::search::{exact_tree, width_lower_bound, ExactGoal, Problem, Simplified};

/// A tree as nested pairs of leaves, for the brute force.
#[derive(Clone, Debug)]
enum Node {
    Leaf(usize),
    Pair(Box<Node>, Box<Node>),
}

/// Every rooted binary tree on leaves 0..n: insert leaf k above any node of
/// every tree on 0..k ((2n-3)!! trees).
fn all_trees(n: usize) -> Vec<Node> {
    fn insert(t: &Node, leaf: usize, out: &mut Vec<Node>) {
        out.push(Node::Pair(Box::new(t.clone()), Box::new(Node::Leaf(leaf))));
        if let Node::Pair(a, b) = t {
            let mut left = Vec::new();
            insert(a, leaf, &mut left);
            for x in left {
                out.push(Node::Pair(Box::new(x), b.clone()));
            }
            let mut right = Vec::new();
            insert(b, leaf, &mut right);
            for x in right {
                out.push(Node::Pair(a.clone(), Box::new(x)));
            }
        }
    }
    let mut trees = vec![Node::Leaf(0)];
    for k in 1..n {
        let mut next = Vec::new();
        for t in &trees {
            insert(t, k, &mut next);
        }
        trees = next;
    }
    trees
}

/// Direct pricing by DESIGN §3: a node's indices are its tensors' indices
/// that are open or touch a tensor outside it (a lone leaf keeps all of its
/// own); ops = product of the union of the children's indices. Returns the
/// leaf mask, index mask, total ops, largest node size and that size's log2.
struct Priced {
    leaves: u32,
    indices: u64,
    total: u128,
    width: f64,
}

fn price(t: &Node, net: &Network) -> Priced {
    let dims = net.dims();
    let open = net.open_mask();
    let inc = net.incidence();
    let size_log2 = |mask: u64| -> f64 {
        (0..dims.len())
            .filter(|&e| mask >> e & 1 == 1)
            .map(|e| (dims[e] as f64).log2())
            .sum()
    };
    let product = |mask: u64| -> u128 {
        (0..dims.len())
            .filter(|&e| mask >> e & 1 == 1)
            .map(|e| dims[e] as u128)
            .product()
    };
    match t {
        Node::Leaf(x) => {
            let mask = net.tensors[*x]
                .indices
                .iter()
                .fold(0u64, |m, &e| m | 1 << e);
            Priced {
                leaves: 1 << x,
                indices: mask,
                total: 0,
                width: size_log2(mask),
            }
        }
        Node::Pair(a, b) => {
            let (pa, pb) = (price(a, net), price(b, net));
            let leaves = pa.leaves | pb.leaves;
            let union = pa.indices | pb.indices;
            let mut kept = 0u64;
            for e in 0..dims.len() {
                if union >> e & 1 == 1 {
                    let outside = inc[e].iter().any(|&t| leaves >> t & 1 == 0);
                    if open[e] || outside {
                        kept |= 1 << e;
                    }
                }
            }
            Priced {
                leaves,
                indices: kept,
                total: pa.total + pb.total + product(union),
                width: pa.width.max(pb.width).max(size_log2(kept)),
            }
        }
    }
}

/// (least total ops, least width, least total ops among least-width trees).
fn brute_force(net: &Network) -> (u128, f64, u128) {
    let priced: Vec<Priced> = all_trees(net.num_tensors())
        .iter()
        .map(|t| price(t, net))
        .collect();
    let ops = priced.iter().map(|p| p.total).min().unwrap();
    let width = priced.iter().map(|p| p.width).fold(f64::INFINITY, f64::min);
    let ops_at_width = priced
        .iter()
        .filter(|p| p.width <= width + 1e-9)
        .map(|p| p.total)
        .min()
        .unwrap();
    (ops, width, ops_at_width)
}

#[test]
fn brute_force_counts_every_tree() {
    // (2n-3)!! rooted binary trees on n labelled leaves: 1, 3, 15, 105, 945,
    // 10395 for n = 2..7 (OEIS A001147).
    let counts: Vec<usize> = (2..=7).map(|n| all_trees(n).len()).collect();
    assert_eq!(counts, vec![1, 3, 15, 105, 945, 10395]);
}

#[test]
fn exact_equals_brute_force_on_random_networks() {
    // 300 seeded random networks of 2..=7 tensors; the reference is the
    // brute force above, the finder's tree is priced by the cost model.
    for seed in 0..300u64 {
        let n = 2 + (seed % 6) as usize;
        let net = random_network(seed, n);
        let p = Problem::from_network(&net);
        let expand = |m: Vec<[usize; 2]>| Simplified::new(&net, false).expand(&m);
        let (ops, width, ops_at_width) = brute_force(&net);

        let tree = expand(exact_tree(&p, ExactGoal::TotalOps).unwrap());
        let m = metrics(&net, &tree);
        assert_eq!(m.total_ops.exact, Some(ops), "seed {seed}, total ops");

        let tree = expand(exact_tree(&p, ExactGoal::Width).unwrap());
        let m = metrics(&net, &tree);
        assert!(
            (m.width - width).abs() < 1e-9,
            "seed {seed}: width {} vs {width}",
            m.width
        );
        assert_eq!(
            m.total_ops.exact,
            Some(ops_at_width),
            "seed {seed}, ops at width"
        );

        // The cap just at the optimum width is feasible; below it is not.
        assert!(exact_tree(&p, ExactGoal::OpsWithin(width + 1e-9)).is_some());
        assert!(
            exact_tree(&p, ExactGoal::OpsWithin(width - 0.01)).is_none(),
            "seed {seed}"
        );

        // The proven bound never exceeds the optimum (float tolerance).
        let lb = width_lower_bound(&net);
        assert!(
            lb.width <= width + 1e-9,
            "seed {seed}: bound {} > optimum {width}",
            lb.width
        );
    }
}

#[test]
fn connected_mode_matches_on_connected_chains() {
    // Above ALL_SUBSETS_MAX the finder splits only connected subsets; on a
    // chain, whose optimal trees never need outer products, it must still
    // reach the textbook recurrence. Reference: the O(n^3) matrix-chain DP of
    // Cormen et al. §15.2, written here.
    let dims: Vec<u64> = (0..15).map(|k| [7u64, 3, 11, 2, 9, 5, 13][k % 7]).collect();
    let net = search_support::chain(&dims);
    let n = dims.len() - 1;
    let mut m = vec![vec![0u128; n]; n];
    for len in 2..=n {
        for i in 0..=n - len {
            let j = i + len - 1;
            m[i][j] = (i..j)
                .map(|k| m[i][k] + m[k + 1][j] + (dims[i] * dims[k + 1] * dims[j + 1]) as u128)
                .min()
                .unwrap();
        }
    }
    let p = Problem::from_network(&net);
    let tree = Simplified::new(&net, false).expand(&exact_tree(&p, ExactGoal::TotalOps).unwrap());
    assert_eq!(metrics(&net, &tree).total_ops.exact, Some(m[0][n - 1]));
}
