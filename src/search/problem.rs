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
        let nodes = self.node_indices(merges);
        self.evaluate_nodes(&nodes, merges)
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
