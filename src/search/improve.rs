//! Local improvement of an elimination order: iterated local search that
//! moves the vertices of the largest cliques, for a smaller width or total
//! cost.
//!
//! # What it computes
//!
//! [`improve_order`] starts from an elimination order of the closed
//! indices and repeatedly moves one index to another position, keeping the
//! move when the order's score does not get worse. The score is, for the
//! width goals, (largest clique weight, number of eliminations reaching
//! it, log2 of the sum of 2^clique), and for total ops (log2 of the sum of
//! 2^clique, largest clique). Moves pick, half of the time, an index whose
//! elimination reaches the largest clique; after a run of moves without
//! progress the current order is perturbed by a few random moves taken
//! whatever their score (iterated local search). The best order seen is
//! returned, so it is never worse than the start. [`order_of_tree`] gives
//! the order in which a tree sums the indices, a start no worse than the
//! tree (every index is summed inside the union of the merge that sums it).
//!
//! # Arguments and result
//!
//! The problem, a start order, the [`ExactGoal`] the score serves, a step
//! budget, an optional deadline and a random generator. Returns the best
//! [`Order`] seen, or `None` above [`crate::search::DENSE_MAX`] indices.
//!
//! # Method and complexity
//!
//! Local search over elimination orders for treewidth, with moves that
//! target the largest bags, as in Musliu, "An iterative heuristic algorithm
//! for tree decomposition" (in Recent Advances in Evolutionary Computation
//! for Combinatorial Optimization, Springer 2008) and Clautiaux et al.,
//! "Heuristic and metaheuristic methods for computing graph treewidth",
//! RAIRO Oper. Res. 38 (2004). Each evaluation eliminates on a copy of the
//! bit rows: O(sum over vertices of degree at elimination x m/64), and stops
//! as soon as the order is worse than the current one.
//!
//! # Example
//!
//! ```
//! use rand::SeedableRng;
//! use sliceplan::search::{improve_order, ExactGoal, Problem};
//! // A 5-cycle eliminated in a bad order (alternate vertices first) still
//! // reaches the cycle's treewidth 2: cliques of weight 3.
//! let tensors = (0..5u32).map(|k| vec![k, (k + 1) % 5]).collect();
//! let p = Problem::new(tensors, vec![1.0; 5], vec![false; 5]);
//! let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(2);
//! let best = improve_order(&p, &[0, 2, 4, 1, 3], ExactGoal::Width, 200, None, &mut rng).unwrap();
//! assert_eq!(best.width, 3.0);
//! ```

use std::time::Instant;

use rand::Rng;

use super::exact::ExactGoal;
use super::order::{Dense, Order};
use super::problem::Problem;
use crate::num::log2_add;

/// The order in which a tree over `p` sums its closed indices (each at the
/// merge where its last holder joins; an index on one tensor at that
/// tensor's first merge).
pub fn order_of_tree(p: &Problem, merges: &[[usize; 2]]) -> Vec<u32> {
    let mut holders: Vec<u32> = p.incidence.iter().map(|h| h.len() as u32).collect();
    let mut nodes: Vec<Vec<u32>> = p.tensors.clone();
    let mut order = Vec::new();
    for &[a, b] in merges {
        let (la, lb) = (std::mem::take(&mut nodes[a]), std::mem::take(&mut nodes[b]));
        let mut union: Vec<u32> = la.iter().chain(lb.iter()).copied().collect();
        union.sort_unstable();
        let mut kept = Vec::with_capacity(union.len());
        let mut i = 0;
        while i < union.len() {
            let e = union[i];
            let both = i + 1 < union.len() && union[i + 1] == e;
            i += if both { 2 } else { 1 };
            let h = &mut holders[e as usize];
            *h -= if both { 2 } else { 1 };
            if p.open[e as usize] || *h > 0 {
                *h += 1;
                kept.push(e);
            } else {
                order.push(e);
            }
        }
        nodes.push(kept);
    }
    order
}

/// The graph left after the safe reductions, renumbered densely, as bit
/// rows; the order search works on it.
struct Local {
    words: usize,
    rows: Vec<u64>,
    weight: Vec<f64>,
    /// Problem index of each local vertex.
    index: Vec<u32>,
    /// Local number of each problem index (`u32::MAX` when gone).
    local: Vec<u32>,
}

/// Eliminates, for good, the indices the safe reduction rules of
/// Bodlaender, Koster and van den Eijkhof ("Preprocessing rules for
/// triangulation of probabilistic networks", Computational Intelligence
/// 21(3), 2005; weighted form in Bodlaender and Koster, "Safe separators
/// for treewidth", Discrete Math. 306, 2006) allow: a simplicial index (its
/// neighbours already a clique) always, an almost simplicial one (a clique
/// but for one neighbour) when its clique weighs at most the lower bound
/// `low`. Returns them in order, with the largest clique they make.
fn reduce(g: &mut Dense, eligible: &[bool], mut low: f64) -> (Vec<u32>, f64) {
    let m = eligible.len();
    let mut done = vec![false; m];
    let mut queued = vec![true; m];
    let mut work: Vec<usize> = (0..m).rev().filter(|&v| eligible[v]).collect();
    let (mut prefix, mut width) = (Vec::new(), 0.0f64);
    while let Some(v) = work.pop() {
        queued[v] = false;
        if done[v] {
            continue;
        }
        let simplicial = g.fill[v] == 0;
        let almost = !simplicial && g.degree[v] <= low + 1e-9 && {
            let nb = g.neighbours(v);
            nb.iter().any(|&u| {
                let missing: u32 = g
                    .row(v)
                    .iter()
                    .zip(g.row(u))
                    .map(|(x, y)| (x & !y).count_ones())
                    .sum::<u32>()
                    - 1;
                i64::from(missing) == g.fill[v]
            })
        };
        if !(simplicial || almost) {
            continue;
        }
        let nb = g.neighbours(v);
        let c = g.eliminate(v, &mut |_| {});
        done[v] = true;
        prefix.push(v as u32);
        width = width.max(c);
        if simplicial {
            low = low.max(c);
        }
        for u in nb {
            if eligible[u] && !done[u] && !queued[u] {
                queued[u] = true;
                work.push(u);
            }
        }
    }
    (prefix, width)
}

/// A lower bound on the largest clique weight of every elimination order:
/// the weighted minor-min-width (contract a vertex of least clique weight
/// into its neighbour of least degree, keeping the smaller weight; record
/// the largest least clique weight seen). Bodlaender, Koster and Wolle,
/// J. Graph Algorithms Appl. 10(1), 2006 (see also bound.rs).
fn minor_min_width(g: &Dense, present: &[bool]) -> f64 {
    let mut g = g.clone();
    let m = present.len();
    let mut alive = present.to_vec();
    let mut best = 0.0f64;
    let clique = |g: &Dense, v: usize| {
        g.weight[v] + g.neighbours(v).iter().map(|&u| g.weight[u]).sum::<f64>()
    };
    let mut f: Vec<f64> = (0..m)
        .map(|v| if alive[v] { clique(&g, v) } else { 0.0 })
        .collect();
    while let Some(v) = (0..m)
        .filter(|&v| alive[v])
        .min_by(|&a, &b| f[a].total_cmp(&f[b]))
    {
        best = best.max(f[v]);
        alive[v] = false;
        let nb = g.neighbours(v);
        let Some(&u) = nb.iter().min_by_key(|&&x| g.neighbours(x).len()) else {
            continue;
        };
        // Contract v into u.
        let words = g.words;
        for &x in &nb {
            g.rows[x * words + v / 64] &= !(1 << (v % 64));
            if x != u {
                g.rows[x * words + u / 64] |= 1 << (u % 64);
                g.rows[u * words + x / 64] |= 1 << (x % 64);
            }
        }
        for w in &mut g.rows[v * words..(v + 1) * words] {
            *w = 0;
        }
        g.weight[u] = g.weight[u].min(g.weight[v]);
        f[u] = clique(&g, u);
        for &x in &nb {
            if alive[x] {
                f[x] = clique(&g, x);
            }
        }
        for x in g.neighbours(u) {
            if alive[x] {
                f[x] = clique(&g, x);
            }
        }
    }
    best
}

/// The remaining graph of `g` on the vertices `keep`, renumbered.
fn local_graph(g: &Dense, keep: &[usize], m: usize) -> Local {
    let r = keep.len();
    let words = r.div_ceil(64).max(1);
    let mut local = vec![u32::MAX; m];
    for (i, &v) in keep.iter().enumerate() {
        local[v] = i as u32;
    }
    let mut rows = vec![0u64; r * words];
    for (i, &v) in keep.iter().enumerate() {
        for u in g.neighbours(v) {
            let j = local[u];
            if j != u32::MAX {
                rows[i * words + j as usize / 64] |= 1 << (j % 64);
            }
        }
    }
    Local {
        words,
        rows,
        weight: keep.iter().map(|&v| g.weight[v]).collect(),
        index: keep.iter().map(|&v| v as u32).collect(),
        local,
    }
}

/// Scores orders of local vertices (smaller is better).
struct Scorer<'a> {
    g: &'a Local,
    rows: Vec<u64>,
    unit: bool,
    goal: ExactGoal,
    /// Largest clique of the fixed prefix.
    floor: f64,
    /// For the width goals: the clique weight the search tries to reach;
    /// the score is then the summed excess of the cliques over it.
    target: f64,
}

/// A comparable score (smaller is better), with the order's width and
/// log2 cost.
type Score = (f64, f64, f64);

fn by_ops(goal: ExactGoal) -> bool {
    matches!(goal, ExactGoal::TotalOps | ExactGoal::OpsWithin(_))
}

impl Scorer<'_> {
    /// Evaluates `order`; stops early (returning `None`) once it is sure to
    /// score worse than `bound`. Fills `clique` per position.
    fn score(
        &mut self,
        order: &[u32],
        bound: Option<Score>,
        clique: &mut Vec<f64>,
    ) -> Option<Score> {
        let words = self.g.words;
        self.rows.copy_from_slice(&self.g.rows);
        clique.clear();
        let (mut width, mut cost, mut excess) = (self.floor, f64::NEG_INFINITY, 0.0);
        let ops = by_ops(self.goal);
        let mut nb: Vec<usize> = Vec::new();
        let mut mask = vec![0u64; words];
        for &v in order {
            let v = v as usize;
            mask.copy_from_slice(&self.rows[v * words..(v + 1) * words]);
            nb.clear();
            for (k, &w) in mask.iter().enumerate() {
                let mut w = w;
                while w != 0 {
                    nb.push(64 * k + w.trailing_zeros() as usize);
                    w &= w - 1;
                }
            }
            let c = if self.unit {
                1.0 + nb.len() as f64
            } else {
                self.g.weight[v] + nb.iter().map(|&u| self.g.weight[u]).sum::<f64>()
            };
            clique.push(c);
            width = width.max(c);
            cost = log2_add(cost, c);
            excess += (c - self.target).max(0.0);
            if let Some(b) = bound {
                let worse = if ops {
                    cost > b.0 + 1e-9
                } else {
                    excess > b.0 + 1e-9
                };
                if worse {
                    return None;
                }
            }
            for &u in &nb {
                let row = &mut self.rows[u * words..(u + 1) * words];
                for (r, m) in row.iter_mut().zip(&mask) {
                    *r |= m;
                }
                row[u / 64] &= !(1 << (u % 64));
                row[v / 64] &= !(1 << (v % 64));
            }
        }
        Some(if ops {
            (cost, width, cost)
        } else {
            (excess, width, cost)
        })
    }
}

/// Iterated local search from `start` (see the module docs); `None` above
/// [`crate::search::DENSE_MAX`] indices.
pub fn improve_order<R: Rng>(
    p: &Problem,
    start: &[u32],
    goal: ExactGoal,
    steps: usize,
    deadline: Option<Instant>,
    rng: &mut R,
) -> Option<Order> {
    let mut g = Dense::new(p)?;
    let m = p.weight.len();
    let eligible: Vec<bool> = (0..m)
        .map(|e| !p.open[e] && !p.incidence[e].is_empty())
        .collect();
    // The almost-simplicial rule needs a lower bound valid for orders of
    // the closed indices; with open indices only the simplicial rule runs.
    let low = if p.open.iter().any(|&o| o) {
        0.0
    } else {
        minor_min_width(&g, &eligible)
    };
    let (prefix, floor) = reduce(&mut g, &eligible, low);
    let mut gone = vec![false; m];
    for &v in &prefix {
        gone[v as usize] = true;
    }
    let keep: Vec<usize> = (0..m)
        .filter(|&v| !gone[v] && !p.incidence[v].is_empty())
        .collect();
    let local = local_graph(&g, &keep, m);
    let unit = p.weight.iter().all(|&w| w == 1.0);
    let ops = by_ops(goal);
    // The step by which the width target goes down: the least weight.
    let unit_step = local
        .weight
        .iter()
        .copied()
        .filter(|&w| w > 0.0)
        .fold(f64::INFINITY, f64::min)
        .min(1.0);
    let mut scorer = Scorer {
        rows: local.rows.clone(),
        g: &local,
        unit,
        goal,
        floor,
        target: f64::INFINITY,
    };
    let mut current: Vec<u32> = start
        .iter()
        .filter(|&&v| eligible[v as usize] && !gone[v as usize])
        .map(|&v| local.local[v as usize])
        .collect();
    let mut clique = Vec::new();
    let first = scorer.score(&current, None, &mut clique)?;
    // Best by (width, cost) for the width goals, (cost, width) for ops.
    let rank = |s: &Score| if ops { (s.2, s.1) } else { (s.1, s.2) };
    let mut best = (rank(&first), current.clone(), clique.clone());
    if !ops {
        scorer.target = first.1 - unit_step;
    }
    let mut cur = scorer.score(&current, None, &mut clique)?;
    let mut cur_clique = clique.clone();
    let n = current.len();
    let mut stale = 0usize;
    for step in 0..if n < 3 || floor >= first.1 { 0 } else { steps } {
        if step % 32 == 0 && deadline.is_some_and(|d| Instant::now() >= d) {
            break;
        }
        // Perturb after a long run without progress.
        if stale > 40 * n.min(200) {
            for _ in 0..rng.random_range(2..=6) {
                let (i, j) = (rng.random_range(0..n), rng.random_range(0..n));
                let v = current.remove(i);
                current.insert(j, v);
            }
            if let Some(s) = scorer.score(&current, None, &mut clique) {
                cur = s;
                cur_clique.clone_from(&clique);
            }
            stale = 0;
        }
        // Half the moves take an index whose clique is too large.
        let limit = if ops {
            cur_clique.iter().copied().fold(0.0, f64::max) - 1e-9
        } else {
            scorer.target + 1e-9
        };
        let i = if rng.random_bool(0.5) {
            let critical: Vec<usize> = (0..n).filter(|&k| cur_clique[k] >= limit).collect();
            if critical.is_empty() {
                rng.random_range(0..n)
            } else {
                critical[rng.random_range(0..critical.len())]
            }
        } else {
            rng.random_range(0..n)
        };
        let j = rng.random_range(0..n);
        if i == j {
            continue;
        }
        let v = current.remove(i);
        current.insert(j, v);
        match scorer.score(&current, Some(cur), &mut clique) {
            Some(s) if s.0 <= cur.0 => {
                if s.0 < cur.0 {
                    stale = 0;
                } else {
                    stale += 1;
                }
                cur = s;
                cur_clique.clone_from(&clique);
                if rank(&s) < best.0 {
                    best = (rank(&s), current.clone(), cur_clique.clone());
                }
                // Target reached: aim one step lower.
                if !ops && cur.0 <= 0.0 && scorer.target - unit_step >= floor - 1e-9 {
                    scorer.target = cur.1 - unit_step;
                    if let Some(s) = scorer.score(&current, None, &mut clique) {
                        cur = s;
                        cur_clique.clone_from(&clique);
                    }
                }
            }
            _ => {
                let v = current.remove(j);
                current.insert(i, v);
                stale += 1;
            }
        }
    }
    let (_, order, clique) = best;
    let mut full = prefix;
    full.extend(order.iter().map(|&v| local.index[v as usize]));
    Some(Order {
        width: clique.iter().copied().fold(floor, f64::max),
        cost_log2: clique
            .iter()
            .fold(f64::NEG_INFINITY, |a, &c| log2_add(a, c)),
        order: full,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::search::buckets::order_tree;
    use rand::SeedableRng;

    #[test]
    fn the_order_of_a_tree_is_no_worse_than_the_tree() {
        // A 5 x 5 grid read as a network, any tree: its summation order's
        // cliques fit inside the tree's merges, so the order's tree has an
        // op width no larger.
        let l = 5u32;
        let mut tensors = Vec::new();
        for x in 0..l {
            for y in 0..l {
                if x + 1 < l {
                    tensors.push(vec![x * l + y, (x + 1) * l + y]);
                }
                if y + 1 < l {
                    tensors.push(vec![x * l + y, x * l + y + 1]);
                }
            }
        }
        let p = Problem::new(tensors, vec![1.0; 25], vec![false; 25]);
        let n = p.len();
        let tree = crate::search::problem::left_deep(n, &(0..n as u32).collect::<Vec<_>>());
        let order = order_of_tree(&p, &tree);
        assert_eq!(order.len(), 25);
        let again = order_tree(&p, &order);
        assert!(p.evaluate(&again).op_width <= p.evaluate(&tree).op_width);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(4);
        let better = improve_order(&p, &order, ExactGoal::Width, 3000, None, &mut rng).unwrap();
        // A 5 x 5 grid has treewidth 5 (closed form for k x k grids):
        // no order has cliques below 6.
        assert!(better.width >= 6.0);
        assert!(better.width <= p.evaluate(&again).op_width);
    }
}
