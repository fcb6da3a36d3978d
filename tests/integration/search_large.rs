//! Tree search at the scale limit: a 1000x1000 lattice (10^6 tensors).
//! Ignored in the normal run (about a minute and 4.4 GB in a release
//! build); `scripts/long-tests.sh` runs it in CI.

use std::time::Duration;

use sliceplan::cost::metrics;
use sliceplan::search::{file_order_tree, find_tree, SearchOptions};

#[test]
#[ignore = "10^6 tensors: run by scripts/long-tests.sh in a release build"]
fn a_million_tensor_lattice_gets_a_tree_within_its_time_budget() {
    let net = sliceplan::generate::lattice(&[1000, 1000], 2, false).unwrap();
    assert_eq!(net.num_tensors(), 1_000_000);
    let opts = SearchOptions {
        threads: 1,
        ..SearchOptions::time(Duration::from_secs(20), 0)
    };
    let result = find_tree(&net, &opts).unwrap();
    assert_eq!(result.tree.leaves(), 1_000_000);
    // The search's guarantee: never worse than the file order it prices
    // first (at this size it may spend the budget on the simple orders and
    // run no random trial at all).
    let file_order = metrics(&net, &file_order_tree(&net));
    assert!(
        result.metrics.total_ops.log2 <= file_order.total_ops.log2 + 1e-9,
        "{} > {}",
        result.metrics.total_ops.log2,
        file_order.total_ops.log2
    );
    // Every tree of an L x L grid with bond dimension 2 has width at least
    // L = 1000 (the grid's treewidth is L, a standard fact of graph minors
    // theory, quoted from memory), and the counts stay finite far past
    // 2^1024.
    assert!(result.metrics.width >= 1000.0, "{}", result.metrics.width);
    assert!(result.metrics.peak.log2.is_finite());
    assert!(result.metrics.total_ops.log2.is_finite());
    eprintln!(
        "10^6 tensors: {} trial(s) in {:.1} s, width {}, peak 2^{:.2}, total ops 2^{:.2}",
        result.trials,
        result.seconds,
        result.metrics.width,
        result.metrics.peak.log2,
        result.metrics.total_ops.log2
    );
}
