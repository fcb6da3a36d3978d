//! Exhaustive slicing for small networks: every slice set of up to a few
//! indices, for a fixed tree.
//!
//! # What it computes
//!
//! Among all slice sets of at most `max_size` indices (dimension > 1), the
//! ones that fit the budget; returns the one with the fewest slices, ties
//! broken by total ops. Run only when the number of sets is small
//! ([`MAX_SETS`]), so it complements the greedy on small networks, where its
//! answer is exact within that size.
//!
//! # Complexity
//!
//! O(C(m, <= max_size) x n log n) for m indices and n tensors.

use super::{Point, SliceOptions};
use crate::cost::NodeSets;
use crate::network::{IndexId, Network};

/// Largest number of slice sets priced.
pub const MAX_SETS: usize = 5000;

/// The best fitting slice set of at most `max_size` indices, when the search
/// is small enough to run and one fits.
pub fn exhaustive(
    sets: &NodeSets,
    net: &Network,
    opts: &SliceOptions,
    max_size: usize,
) -> Option<Point> {
    let pool: Vec<IndexId> = (0..net.num_indices())
        .filter(|&e| net.indices[e].dim > 1)
        .collect();
    if count_sets(pool.len(), max_size) > MAX_SETS {
        return None;
    }
    let mut best: Option<Point> = None;
    let mut chosen: Vec<IndexId> = Vec::new();
    visit(&pool, 0, max_size, &mut chosen, &mut |set| {
        let p = Point::evaluate(sets, net, set, opts);
        if !p.fits(opts) || p.slices.log2 > opts.max_slices_log2 {
            return;
        }
        let better = match &best {
            None => true,
            Some(b) => {
                (p.slices.log2, p.total_ops.log2) < (b.slices.log2 - 1e-12, f64::INFINITY)
                    || ((p.slices.log2 - b.slices.log2).abs() <= 1e-12
                        && p.total_ops.log2 < b.total_ops.log2 - 1e-12)
            }
        };
        if better {
            best = Some(p);
        }
    });
    best
}

fn visit(
    pool: &[IndexId],
    from: usize,
    left: usize,
    chosen: &mut Vec<IndexId>,
    f: &mut dyn FnMut(&[IndexId]),
) {
    f(chosen);
    if left == 0 {
        return;
    }
    for i in from..pool.len() {
        chosen.push(pool[i]);
        visit(pool, i + 1, left - 1, chosen, f);
        chosen.pop();
    }
}

/// Number of subsets of an m-set with at most k elements (saturating).
fn count_sets(m: usize, k: usize) -> usize {
    let mut total = 0usize;
    let mut c = 1usize; // C(m, 0)
    for j in 0..=k.min(m) {
        total = total.saturating_add(c);
        c = c.saturating_mul(m - j) / (j + 1);
    }
    total
}

#[cfg(test)]
mod tests {
    #[test]
    fn subset_counts() {
        // C(5,0)+C(5,1)+C(5,2)+C(5,3) = 1 + 5 + 10 + 10 = 26.
        assert_eq!(super::count_sets(5, 3), 26);
        assert_eq!(super::count_sets(2, 3), 4);
    }
}
