//! The simple orders: the file order (and the baseline `inspect` prices),
//! and the breadth-first sweep.

mod search_support;

use search_support::*;
use sliceplan::cost::metrics;
use sliceplan::network::NetworkBuilder;
use sliceplan::search::{
    baseline_tree, file_order_entries, file_order_tree, sweep_tree, BaselineKind,
};

#[test]
fn file_order_entries_of_a_matrix_chain() {
    // A1..A6 with both outer indices open: after each tensor the running
    // result holds the open i0 and the next bond (DESIGN §3: an index
    // leaves once all its tensors are merged, unless open), so 2 entries
    // after each of the 6 tensors: 12 (counted by hand).
    let net = chain(&[30, 35, 15, 5, 10, 20, 25]);
    assert_eq!(file_order_entries(&net), 12);
    let (tree, kind) = baseline_tree(&net).unwrap();
    assert_eq!(kind, BaselineKind::FileOrder);
    assert_eq!(tree, file_order_tree(&net));
    assert!(kind.describe().contains("file order"));
    let greedy = BaselineKind::Greedy {
        file_order_entries: 7,
    };
    assert!(greedy.describe().contains("7 index entries"));
}

#[test]
fn the_sweep_follows_a_scrambled_chain() {
    // A chain of 12 matrices (bond 2, ends open) listed in a scrambled
    // order: merged in file order the running result keeps many loose
    // bonds; the sweep starts at an end (the farthest tensor) and walks
    // the chain, so its running result holds one open end and one bond:
    // width 2 (log2 of 2 x 2), the least any tree of this chain has.
    let perm = [5usize, 0, 9, 3, 11, 7, 1, 10, 2, 8, 4, 6];
    let mut b = NetworkBuilder::new("scrambled chain");
    for k in 0..=12 {
        b.declare(&format!("i{k}"), 2, None).unwrap();
    }
    for &k in &perm {
        b.tensor(
            &format!("A{k}"),
            &[&format!("i{k}"), &format!("i{}", k + 1)],
            None,
            None,
        )
        .unwrap();
    }
    b.open("i0", None).unwrap();
    b.open("i12", None).unwrap();
    let net = b.build().unwrap();
    let sweep = metrics(&net, &sweep_tree(&net));
    let file = metrics(&net, &file_order_tree(&net));
    assert_eq!(sweep.width, 2.0);
    assert!(file.width > 2.0, "{}", file.width);
}

#[test]
fn the_sweep_covers_every_component() {
    // Two rings and two scalars: four components, all in the sweep.
    let net = from_edges(
        "rings",
        8,
        &[(0, 1), (1, 2), (2, 0), (3, 4), (4, 5), (5, 3)],
        2,
    );
    let tree = sweep_tree(&net);
    assert_eq!(tree.leaves(), 8);
    assert!(sliceplan::tree::Tree::new(8, tree.merges().to_vec()).is_ok());
}
