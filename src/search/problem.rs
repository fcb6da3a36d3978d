//! The compact hypergraph every finder works on, and the fast pricing of a
//! merge list over it.
//!
//! A [`Problem`] is a network stripped to what the search needs: each tensor
//! is a sorted list of index numbers, each index has a log2 weight (log2 of
//! its dimension) and an open flag. Finders return merge lists in the same
//! single-assignment form as [`crate::tree::Tree`] (nodes `0..n` are the
//! problem's tensors, merge `k` makes node `n + k`).
//!
//! Pricing follows DESIGN §3 exactly: a leaf keeps all its indices; a merged
//! node keeps an index when it is open or some node not yet merged into it
//! still carries it; ops of a merge is the weight of the union of its
//! operands' indices.

use crate::network::Network;
use crate::num::log2_add;

/// Tensors as index lists, with index weights and open flags.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Sorted index numbers of every tensor.
    pub tensors: Vec<Vec<u32>>,
    /// log2 of the dimension of every index.
    pub weight: Vec<f64>,
    /// Whether each index is open (kept to the root).
    pub open: Vec<bool>,
    /// For every index, the tensors carrying it, in increasing order.
    pub incidence: Vec<Vec<u32>>,
}

/// The metrics of a merge list over a problem, in log2 terms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Eval {
    /// log2 of the total ops.
    pub total_ops_log2: f64,
    /// Largest log2 node size, leaves and root included.
    pub width: f64,
    /// Largest log2 ops of one merge.
    pub op_width: f64,
}

impl Problem {
    /// A problem from index lists (sorted and deduplicated here), weights and
    /// open flags.
    pub fn new(mut tensors: Vec<Vec<u32>>, weight: Vec<f64>, open: Vec<bool>) -> Problem {
        let mut incidence = vec![Vec::new(); weight.len()];
        for (t, list) in tensors.iter_mut().enumerate() {
            list.sort_unstable();
            list.dedup();
            for &e in list.iter() {
                incidence[e as usize].push(t as u32);
            }
        }
        Problem {
            tensors,
            weight,
            open,
            incidence,
        }
    }

    /// The network as it is, without simplification.
    pub fn from_network(net: &Network) -> Problem {
        let tensors = net
            .tensors
            .iter()
            .map(|t| t.indices.iter().map(|&e| e as u32).collect())
            .collect();
        Problem::new(tensors, net.log2_dims(), net.open_mask())
    }

    /// Number of tensors.
    pub fn len(&self) -> usize {
        self.tensors.len()
    }

    /// True when there are no tensors.
    pub fn is_empty(&self) -> bool {
        self.tensors.is_empty()
    }

    /// Sum of the weights of a list of indices.
    pub fn weight_of(&self, list: &[u32]) -> f64 {
        list.iter().map(|&e| self.weight[e as usize]).sum()
    }

    /// The sub-problem made of some nodes, each given by its index list in
    /// this problem's numbering. An index is open in the sub-problem when
    /// `is_open(index, holders)` says so, `holders` being how many of the
    /// given nodes carry it. Indices are renumbered densely; the returned
    /// vector maps new numbers back to this problem's.
    pub fn induced(
        &self,
        nodes: &[&[u32]],
        is_open: impl Fn(u32, usize) -> bool,
    ) -> (Problem, Vec<u32>) {
        let mut local: Vec<u32> = Vec::new();
        let mut count: Vec<usize> = Vec::new();
        let mut map = std::collections::HashMap::new();
        let mut tensors = Vec::with_capacity(nodes.len());
        for list in nodes {
            let mut out = Vec::with_capacity(list.len());
            for &e in list.iter() {
                let id = *map.entry(e).or_insert_with(|| {
                    local.push(e);
                    count.push(0);
                    local.len() as u32 - 1
                });
                count[id as usize] += 1;
                out.push(id);
            }
            tensors.push(out);
        }
        let weight = local.iter().map(|&e| self.weight[e as usize]).collect();
        let open = local
            .iter()
            .zip(&count)
            .map(|(&e, &c)| is_open(e, c))
            .collect();
        (Problem::new(tensors, weight, open), local)
    }

    /// The sub-problem on a subset of tensors: an index is open there when it
    /// is open here or also touches a tensor outside the subset.
    pub fn subset(&self, tensors: &[u32]) -> (Problem, Vec<u32>) {
        let lists: Vec<&[u32]> = tensors
            .iter()
            .map(|&t| self.tensors[t as usize].as_slice())
            .collect();
        self.induced(&lists, |e, c| {
            self.open[e as usize] || c < self.incidence[e as usize].len()
        })
    }

    /// The index list of every node of a merge list (leaves first), by the
    /// rule of DESIGN §3.
    pub fn node_indices(&self, merges: &[[usize; 2]]) -> Vec<Vec<u32>> {
        let mut holders: Vec<u32> = self.incidence.iter().map(|h| h.len() as u32).collect();
        let mut nodes: Vec<Vec<u32>> = self.tensors.clone();
        nodes.reserve(merges.len());
        for &[a, b] in merges {
            let kept = self.merge_lists(&nodes[a], &nodes[b], &mut holders);
            nodes.push(kept);
        }
        nodes
    }

    /// The indices kept when two alive nodes merge, updating the count of
    /// alive holders per index.
    fn merge_lists(&self, a: &[u32], b: &[u32], holders: &mut [u32]) -> Vec<u32> {
        let mut out = Vec::with_capacity(a.len() + b.len());
        let (mut i, mut j) = (0, 0);
        while i < a.len() || j < b.len() {
            let (e, both) = if j >= b.len() || (i < a.len() && a[i] < b[j]) {
                i += 1;
                (a[i - 1], false)
            } else if i >= a.len() || b[j] < a[i] {
                j += 1;
                (b[j - 1], false)
            } else {
                i += 1;
                j += 1;
                (a[i - 1], true)
            };
            let h = &mut holders[e as usize];
            *h -= if both { 2 } else { 1 };
            if self.open[e as usize] || *h > 0 {
                *h += 1;
                out.push(e);
            }
        }
        out
    }

    /// Prices a merge list: total ops, width and op width in log2.
    pub fn evaluate(&self, merges: &[[usize; 2]]) -> Eval {
        self.evaluate_counted(merges).0
    }

    /// Prices a merge list and counts the index entries of all its nodes
    /// (the memory a per-node table would take). Operand lists are dropped
    /// as they are consumed, so memory stays O(lists alive at once) even for
    /// a left-deep tree of 10^6 tensors whose nodes hold 10^9 entries in all;
    /// time is O(sum over merges of both operands' list lengths).
    pub fn evaluate_counted(&self, merges: &[[usize; 2]]) -> (Eval, u64) {
        let mut holders: Vec<u32> = self.incidence.iter().map(|h| h.len() as u32).collect();
        let mut nodes: Vec<Vec<u32>> = self.tensors.clone();
        let mut entries: u64 = nodes.iter().map(|l| l.len() as u64).sum();
        let mut width = nodes
            .iter()
            .map(|l| self.weight_of(l))
            .fold(f64::NEG_INFINITY, f64::max);
        let mut total = f64::NEG_INFINITY;
        let mut op_width = 0.0f64;
        nodes.reserve(merges.len());
        for &[a, b] in merges {
            let (la, lb) = (std::mem::take(&mut nodes[a]), std::mem::take(&mut nodes[b]));
            let ops = self.union_weight(&la, &lb);
            total = log2_add(total, ops);
            op_width = op_width.max(ops);
            let kept = self.merge_lists(&la, &lb, &mut holders);
            width = width.max(self.weight_of(&kept));
            entries += kept.len() as u64;
            nodes.push(kept);
        }
        let eval = Eval {
            total_ops_log2: total,
            width,
            op_width,
        };
        (eval, entries)
    }

    /// Prices the left-deep tree that merges the tensors in `order` (a
    /// permutation of all tensors) one by one into a running result, in
    /// O(total index-list length) time and O(indices) memory whatever the
    /// size of the running result; also returns the index entries its nodes
    /// would hold. Equal to `evaluate(&left_deep(order))`.
    pub fn evaluate_sequence(&self, order: &[u32]) -> (Eval, u64) {
        let mut remaining: Vec<u32> = self.incidence.iter().map(|h| h.len() as u32).collect();
        let mut inside = vec![false; self.weight.len()];
        let leaf_width = self
            .tensors
            .iter()
            .map(|l| self.weight_of(l))
            .fold(f64::NEG_INFINITY, f64::max);
        let mut entries: u64 = self.tensors.iter().map(|l| l.len() as u64).sum();
        let (mut total, mut op_width, mut width) = (f64::NEG_INFINITY, 0.0f64, leaf_width);
        let Some(&first) = order.first() else {
            return (
                Eval {
                    total_ops_log2: total,
                    width,
                    op_width,
                },
                entries,
            );
        };
        // The running result starts as the first tensor, all its indices
        // kept (a leaf keeps even an index no other tensor has).
        let (mut live_w, mut live_n) = (0.0, 0u64);
        for &e in &self.tensors[first as usize] {
            inside[e as usize] = true;
            live_w += self.weight[e as usize];
            live_n += 1;
            remaining[e as usize] -= 1;
        }
        for (k, &t) in order.iter().enumerate().skip(1) {
            let list = &self.tensors[t as usize];
            let mut ops = live_w;
            for &e in list {
                if !inside[e as usize] {
                    ops += self.weight[e as usize];
                }
            }
            total = log2_add(total, ops);
            op_width = op_width.max(ops);
            for &e in list {
                let e = e as usize;
                remaining[e] -= 1;
                if !inside[e] {
                    inside[e] = true;
                    live_w += self.weight[e];
                    live_n += 1;
                }
            }
            // An index leaves the result once no unmerged tensor holds it
            // (and it is not open): those of this tensor, and at the first
            // merge any the first tensor alone carried.
            let first_list: &[u32] = if k == 1 {
                &self.tensors[first as usize]
            } else {
                &[]
            };
            for &e in list.iter().chain(first_list) {
                let e = e as usize;
                if inside[e] && remaining[e] == 0 && !self.open[e] {
                    inside[e] = false;
                    live_w -= self.weight[e];
                    live_n -= 1;
                }
            }
            width = width.max(live_w);
            entries += live_n;
        }
        let eval = Eval {
            total_ops_log2: total,
            width,
            op_width,
        };
        (eval, entries)
    }

    /// Like [`Problem::evaluate`], with the node index lists already known.
    pub fn evaluate_nodes(&self, nodes: &[Vec<u32>], merges: &[[usize; 2]]) -> Eval {
        let mut total = f64::NEG_INFINITY;
        let mut op_width = 0.0f64;
        for &[a, b] in merges {
            let ops = self.union_weight(&nodes[a], &nodes[b]);
            total = log2_add(total, ops);
            op_width = op_width.max(ops);
        }
        let width = nodes
            .iter()
            .map(|n| self.weight_of(n))
            .fold(f64::NEG_INFINITY, f64::max);
        Eval {
            total_ops_log2: total,
            width,
            op_width,
        }
    }

    /// Weight of the union of two sorted index lists.
    pub fn union_weight(&self, a: &[u32], b: &[u32]) -> f64 {
        let mut w = self.weight_of(a);
        let mut i = 0;
        for &e in b {
            while i < a.len() && a[i] < e {
                i += 1;
            }
            if i >= a.len() || a[i] != e {
                w += self.weight[e as usize];
            }
        }
        w
    }
}

/// The left-deep merge list that merges the tensors in `order` (all of
/// them, each once) one by one into a running result.
pub fn left_deep(n: usize, order: &[u32]) -> Vec<[usize; 2]> {
    let mut merges = Vec::with_capacity(order.len().saturating_sub(1));
    for (k, &t) in order.iter().enumerate().skip(1) {
        let acc = if k == 1 { order[0] as usize } else { n + k - 2 };
        merges.push([acc, t as usize]);
    }
    merges
}

/// Replaces the nodes of a finder's merge list for a sub-problem by the
/// caller's node ids: `leaf_node[i]` is the caller's id of local leaf `i`;
/// new merges are appended to `out` and the caller's id of the local root is
/// returned (ids of new merges are `base + position in out`).
pub fn splice(
    local: &[[usize; 2]],
    leaf_node: &[usize],
    base: usize,
    out: &mut Vec<[usize; 2]>,
) -> usize {
    let n = leaf_node.len();
    let mut id = leaf_node.to_vec();
    for &[a, b] in local {
        out.push([id[a], id[b]]);
        id.push(base + out.len() - 1);
    }
    id[n + local.len() - 1]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matrix_chain_prices_like_the_textbook() {
        // Cormen et al. §15.2: A1 (30x35) A2 (35x15): 30*35*15 = 15,750
        // scalar multiplications; the result is 30x15.
        let p = Problem::new(
            vec![vec![0, 1], vec![1, 2]],
            vec![30f64.log2(), 35f64.log2(), 15f64.log2()],
            vec![true, false, true],
        );
        let e = p.evaluate(&[[0, 1]]);
        assert!((e.total_ops_log2.exp2() - 15750.0).abs() < 1e-6);
        assert_eq!(p.node_indices(&[[0, 1]])[2], vec![0, 2]);
    }

    #[test]
    fn sequence_pricing_equals_the_general_pricing() {
        // A ring with a dangling index on one tensor, an open index, a
        // hyperedge and a scalar: the O(n) sequence pricing must agree
        // with pricing the left-deep merge list node by node.
        let p = Problem::new(
            vec![
                vec![0, 1, 5],
                vec![1, 2, 4],
                vec![2, 3],
                vec![3, 0, 4],
                vec![],
                vec![4, 6],
            ],
            vec![1.0, 2.0, 1.5, 1.0, 0.5, 3.0, 1.0],
            vec![false, false, false, false, false, false, true],
        );
        for order in [
            [0u32, 1, 2, 3, 4, 5],
            [5, 3, 1, 0, 4, 2],
            [4, 2, 0, 5, 1, 3],
        ] {
            let merges = left_deep(6, &order);
            let (a, ea) = p.evaluate_counted(&merges);
            let (b, eb) = p.evaluate_sequence(&order);
            assert!(
                (a.total_ops_log2 - b.total_ops_log2).abs() < 1e-12,
                "{order:?}"
            );
            assert_eq!(
                (a.width, a.op_width, ea),
                (b.width, b.op_width, eb),
                "{order:?}"
            );
            let nodes = p.node_indices(&merges);
            assert_eq!(p.evaluate_nodes(&nodes, &merges), a);
        }
    }

    #[test]
    fn dangling_index_is_summed_at_the_first_merge() {
        // A(i, x) with x on A only; B(i). DESIGN §3: the leaf keeps x, the
        // merge sums it: ops = 2 * 3 = 6, the result is a scalar.
        let p = Problem::new(
            vec![vec![0, 1], vec![0]],
            vec![1.0, 3f64.log2()],
            vec![false, false],
        );
        let nodes = p.node_indices(&[[0, 1]]);
        assert!(nodes[2].is_empty());
        assert!((p.evaluate(&[[0, 1]]).total_ops_log2.exp2() - 6.0).abs() < 1e-9);
    }
}
