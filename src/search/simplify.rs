//! Simplification before search: drop dimension-1 indices, merge parallel
//! indices, absorb small tensors into a neighbour that does not grow.
//!
//! The search then runs on a smaller [`Problem`]; [`Simplified::expand`]
//! turns its merge list back into a [`Tree`] over the network's own tensors,
//! with the absorptions done first.
//!
//! * Dropping indices of dimension 1 changes no cost (their log2 weight is 0).
//! * Indices carried by exactly the same tensors and equally open or closed
//!   always appear together in every node, so one index of the summed log2
//!   weight prices every tree the same way.
//! * Absorbing a tensor t with at most two indices into a neighbour u, when
//!   the merged tensor is no larger than u, fixes the merge (t, u) at the
//!   bottom of the tree. This is a heuristic reduction (it can exclude the
//!   optimum), so the driver also searches the unabsorbed problem. A tensor
//!   with no index left (a scalar) goes into the smallest tensor.

use std::collections::HashMap;

use super::problem::Problem;
use crate::network::Network;
use crate::num::log2_add;
use crate::tree::Tree;

/// A simplified problem and the way back to the network's tensors.
#[derive(Debug, Clone)]
pub struct Simplified {
    /// The problem the finders work on.
    pub problem: Problem,
    /// Merges fixed before the search, over the network's node ids.
    pub pre: Vec<[usize; 2]>,
    /// The network node id that each problem tensor stands for.
    pub node: Vec<usize>,
    /// Number of tensors of the network.
    pub leaves: usize,
    /// log2 of the total ops of the fixed merges (`-inf` when none).
    pub fixed_ops_log2: f64,
    /// Largest log2 size of the network's tensors and the fixed merges.
    pub fixed_width: f64,
    /// Largest log2 ops of one fixed merge (0 when none).
    pub fixed_op_width: f64,
}

impl Simplified {
    /// Simplifies a network; `absorb` enables the absorption of small tensors.
    pub fn new(net: &Network, absorb: bool) -> Simplified {
        let weight = net.log2_dims();
        let open = net.open_mask();
        let lists: Vec<Vec<u32>> = net
            .tensors
            .iter()
            .map(|t| {
                t.indices
                    .iter()
                    .filter(|&&e| weight[e] > 0.0)
                    .map(|&e| e as u32)
                    .collect()
            })
            .collect();
        let fixed_width = (0..net.num_tensors())
            .map(|t| net.tensor_size_log2(t))
            .fold(f64::NEG_INFINITY, f64::max);
        let mut s = Simplified {
            problem: merge_parallel(lists, &weight, &open),
            pre: Vec::new(),
            node: (0..net.num_tensors()).collect(),
            leaves: net.num_tensors(),
            fixed_ops_log2: f64::NEG_INFINITY,
            fixed_width,
            fixed_op_width: 0.0,
        };
        if absorb {
            s.absorb();
        }
        s
    }

    /// The tree over the network's tensors for a merge list over the problem.
    pub fn expand(&self, merges: &[[usize; 2]]) -> Tree {
        let mut out = self.pre.clone();
        let mut id = self.node.clone();
        for &[a, b] in merges {
            out.push([id[a], id[b]]);
            id.push(self.leaves + out.len() - 1);
        }
        Tree::new(self.leaves, out).expect("expanded merges form a tree")
    }

    fn absorb(&mut self) {
        let p = &self.problem;
        let n = p.len();
        let mut lists = p.tensors.clone();
        let mut holders: Vec<Vec<u32>> = p.incidence.clone();
        let mut alive = vec![true; n];
        let mut node = self.node.clone();
        let mut queue: Vec<usize> = (0..n).filter(|&t| lists[t].len() <= 2).collect();
        queue.reverse();
        let size = |l: &[u32]| p.weight_of(l);
        let mut count = n;
        let mut scalars: std::collections::BTreeSet<usize> =
            (0..n).filter(|&t| lists[t].is_empty()).collect();
        let mut deferred: Vec<usize> = Vec::new();
        let mut last_round = false;
        loop {
            let Some(t) = queue.pop() else {
                if last_round || deferred.is_empty() {
                    break;
                }
                last_round = true;
                queue.append(&mut deferred);
                continue;
            };
            if !alive[t] || lists[t].len() > 2 || count <= 1 {
                continue;
            }
            // The neighbour whose merge with t is smallest and not larger
            // than the neighbour; ties to the lower number.
            let mut best: Option<(f64, f64, usize)> = None;
            let mut candidates: Vec<usize> = lists[t]
                .iter()
                .flat_map(|&e| holders[e as usize].iter().map(|&u| u as usize))
                .filter(|&u| u != t)
                .collect();
            if lists[t].is_empty() {
                // A scalar joins another scalar when there is one (a
                // product of numbers, no cost); a lone scalar waits until
                // the queue is done, so only the last one scans every
                // tensor. Scanning for each of 60,000 scalars (a wide
                // circuit without gates) was quadratic.
                candidates = match scalars.iter().find(|&&u| u != t) {
                    Some(&u) => vec![u],
                    None if !last_round => {
                        deferred.push(t);
                        continue;
                    }
                    None => (0..n).filter(|&u| alive[u] && u != t).collect(),
                };
            }
            candidates.sort_unstable();
            candidates.dedup();
            for u in candidates {
                let (kept, ops) = merged(p, &lists[t], &lists[u], &holders, t, u);
                let (ks, us) = (size(&kept), size(&lists[u]));
                if ks <= us && best.is_none_or(|b| (ks, ops) < (b.0, b.1)) {
                    best = Some((ks, ops, u));
                }
            }
            let Some((_, ops, u)) = best else { continue };
            let (kept, _) = merged(p, &lists[t], &lists[u], &holders, t, u);
            for &e in lists[t].iter().chain(lists[u].iter()) {
                holders[e as usize].retain(|&h| h as usize != t);
            }
            for &e in &lists[u] {
                if kept.binary_search(&e).is_err() {
                    holders[e as usize].retain(|&h| h as usize != u);
                }
            }
            for &e in &kept {
                if !holders[e as usize].contains(&(u as u32)) {
                    holders[e as usize].push(u as u32);
                }
            }
            self.pre.push([node[t], node[u]]);
            node[u] = self.leaves + self.pre.len() - 1;
            self.fixed_ops_log2 = log2_add(self.fixed_ops_log2, ops);
            self.fixed_op_width = self.fixed_op_width.max(ops);
            self.fixed_width = self.fixed_width.max(size(&kept));
            alive[t] = false;
            lists[t].clear();
            scalars.remove(&t);
            if kept.is_empty() {
                scalars.insert(u);
            } else {
                scalars.remove(&u);
            }
            lists[u] = kept;
            count -= 1;
            if lists[u].len() <= 2 {
                queue.push(u);
            }
        }
        let keep: Vec<usize> = (0..n).filter(|&t| alive[t]).collect();
        let new_lists: Vec<Vec<u32>> = keep.iter().map(|&t| lists[t].clone()).collect();
        let (weight, open) = (p.weight.clone(), p.open.clone());
        self.problem = merge_parallel(new_lists, &weight, &open);
        self.node = keep.iter().map(|&t| node[t]).collect();
    }
}

/// The kept indices and log2 ops of merging alive tensors t and u.
fn merged(
    p: &Problem,
    a: &[u32],
    b: &[u32],
    holders: &[Vec<u32>],
    t: usize,
    u: usize,
) -> (Vec<u32>, f64) {
    let mut union: Vec<u32> = a.iter().chain(b.iter()).copied().collect();
    union.sort_unstable();
    union.dedup();
    let ops = p.weight_of(&union);
    let kept = union
        .into_iter()
        .filter(|&e| {
            p.open[e as usize]
                || holders[e as usize]
                    .iter()
                    .any(|&h| h as usize != t && h as usize != u)
        })
        .collect();
    (kept, ops)
}

/// One index per class of indices with the same tensors and open flag,
/// weighted by the class's summed log2 dimensions.
pub fn merge_parallel(lists: Vec<Vec<u32>>, weight: &[f64], open: &[bool]) -> Problem {
    let raw = Problem::new(lists, weight.to_vec(), open.to_vec());
    let mut class_of: HashMap<(&[u32], bool), u32> = HashMap::new();
    let mut new_weight = Vec::new();
    let mut new_open = Vec::new();
    let mut map = vec![u32::MAX; weight.len()];
    for (e, holders) in raw.incidence.iter().enumerate() {
        if holders.is_empty() {
            continue;
        }
        let id = *class_of
            .entry((holders.as_slice(), open[e]))
            .or_insert_with(|| {
                new_weight.push(0.0);
                new_open.push(open[e]);
                new_weight.len() as u32 - 1
            });
        new_weight[id as usize] += weight[e];
        map[e] = id;
    }
    let tensors = raw
        .tensors
        .iter()
        .map(|l| {
            let mut v: Vec<u32> = l.iter().map(|&e| map[e as usize]).collect();
            v.sort_unstable();
            v.dedup();
            v
        })
        .collect();
    Problem::new(tensors, new_weight, new_open)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::formats::einsum::network_from_einsum;

    #[test]
    fn parallel_and_unit_indices_collapse() {
        // A(i,j,k) B(i,j) with k of dimension 1: i and j are parallel.
        let dims = [("i".to_string(), 2), ("j".to_string(), 3), ("k".into(), 1)];
        let net = network_from_einsum("ijk,ij->", None, &dims).unwrap();
        let s = Simplified::new(&net, false);
        assert_eq!(s.problem.weight.len(), 1);
        assert!((s.problem.weight[0] - 6f64.log2()).abs() < 1e-12);
        assert_eq!(s.problem.tensors, vec![vec![0], vec![0]]);
    }

    #[test]
    fn vectors_are_absorbed_and_expanded_back() {
        // v(a) M(a,b) w(b) N(b,c) with c open: both vectors absorb.
        let net = network_from_einsum("a,ab,b,bc->c", Some(4), &[]).unwrap();
        let s = Simplified::new(&net, true);
        assert!(s.problem.len() < 4);
        let merges = crate::search::greedy_tree(
            &s.problem,
            &Default::default(),
            &mut <rand_chacha::ChaCha8Rng as rand::SeedableRng>::seed_from_u64(0),
        );
        assert_eq!(s.expand(&merges).leaves(), 4);
    }
}
