//! The exact finder: an optimal tree by dynamic programming over subsets of
//! tensors.
//!
//! # What it computes
//!
//! For a [`Problem`] of at most [`EXACT_MAX`] tensors, [`exact_tree`] returns
//! a tree that is optimal for one [`ExactGoal`]:
//!
//! * `TotalOps`: the least total ops;
//! * `Width`: the least width, and among the trees of that width the least
//!   total ops (two passes: the width first, then total ops under it);
//! * `OpWidth`: the least op width (log2 of the largest single
//!   contraction), and among the trees of that op width the least total
//!   ops (two passes, as for `Width`);
//! * `OpsWithin(w)`: the least total ops over trees whose every node has
//!   log2 size at most `w` (`None` when no tree qualifies).
//!
//! With up to [`ALL_SUBSETS_MAX`] tensors every split of every subset is
//! tried, outer products included, so the result is optimal over all trees.
//! Above that only connected subsets are split into connected halves (the
//! network's components are then joined by outer products, smallest first):
//! optimal over the trees that take an outer product only where the network
//! is disconnected.
//!
//! # Method
//!
//! The cost of a subset S depends only on S: its indices are those touching S
//! and open or touching a tensor outside S. So `best(S) = min over splits
//! S = S1 + S2 of best(S1) + best(S2) + ops(S1, S2)` (with `max` for width),
//! the recurrence of the matrix-chain problem (Cormen et al., *Introduction
//! to Algorithms*, 3rd ed., §15.2) generalised to arbitrary networks, as in
//! Pfeifer, Haegeman and Verstraete, "Faster identification of optimal
//! contraction sequences for tensor networks", Phys. Rev. E 90, 033315
//! (2014). Indices with the same tensors and open flag are merged into one
//! weighted class first; index sets are then 128-bit masks priced by table.
//!
//! # Complexity
//!
//! Time O(3^n) splits in the worst case (each costing 16 table look-ups),
//! much less on sparse networks in connected mode; memory O(2^n) (about
//! 40 bytes per subset: 40 MiB at n = 20).
//!
//! # Example
//!
//! ```
//! use sliceplan::search::{exact_tree, ExactGoal, Problem};
//! // The matrix chain of Cormen et al. §15.2, dims 30,35,15,5,10,20,25.
//! let d = [30f64, 35., 15., 5., 10., 20., 25.];
//! let tensors = (0..6).map(|k| vec![k as u32, k as u32 + 1]).collect();
//! let mut open = vec![false; 7];
//! open[0] = true;
//! open[6] = true;
//! let p = Problem::new(tensors, d.iter().map(|x| x.log2()).collect(), open);
//! let merges = exact_tree(&p, ExactGoal::TotalOps).unwrap();
//! let ops = p.evaluate(&merges).total_ops_log2.exp2();
//! assert!((ops - 15125.0).abs() < 1e-6);
//! ```

use super::problem::Problem;
use crate::num::log2_add;

/// The largest problem [`exact_tree`] accepts.
pub const EXACT_MAX: usize = 20;
/// Up to this many tensors, outer products are tried everywhere.
pub const ALL_SUBSETS_MAX: usize = 12;
/// The most distinct index classes (indices with the same tensors and open
/// flag) the exact finder handles.
pub const CLASSES_MAX: usize = 128;

/// What the exact finder optimises.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ExactGoal {
    /// Least total ops.
    TotalOps,
    /// Least width, then least total ops.
    Width,
    /// Least op width (largest single-contraction ops), then least total
    /// ops.
    OpWidth,
    /// Least total ops with every node at most this log2 size.
    OpsWithin(f64),
}

/// An optimal merge list for `goal`, or `None` when the problem is too large
/// (more than [`EXACT_MAX`] tensors or [`CLASSES_MAX`] index classes) or,
/// for `OpsWithin`, when no tree keeps to the cap.
pub fn exact_tree(p: &Problem, goal: ExactGoal) -> Option<Vec<[usize; 2]>> {
    let n = p.len();
    if n == 0 || n > EXACT_MAX {
        return None;
    }
    if n == 1 {
        return Some(Vec::new());
    }
    let table = Table::new(p)?;
    if let ExactGoal::OpsWithin(cap) = goal {
        if (0..n).any(|t| p.weight_of(&p.tensors[t]) > cap) {
            return None;
        }
    }
    match goal {
        ExactGoal::TotalOps => table.solve(Mode::Ops {
            cap: f64::INFINITY,
            op_cap: f64::INFINITY,
        }),
        ExactGoal::OpsWithin(cap) => table.solve(Mode::Ops {
            cap,
            op_cap: f64::INFINITY,
        }),
        ExactGoal::Width => {
            let by_width = table.solve(Mode::Width)?;
            let best = table.best_width();
            // Among the trees of least width, the least total ops; the
            // tolerance absorbs float differences between the two passes.
            let cap = best + 1e-9 * (1.0 + best.abs());
            Some(
                table
                    .solve(Mode::Ops {
                        cap,
                        op_cap: f64::INFINITY,
                    })
                    .unwrap_or(by_width),
            )
        }
        ExactGoal::OpWidth => {
            let by_op_width = table.solve(Mode::OpWidth)?;
            let best = table.best_width();
            let op_cap = best + 1e-9 * (1.0 + best.abs());
            Some(
                table
                    .solve(Mode::Ops {
                        cap: f64::INFINITY,
                        op_cap,
                    })
                    .unwrap_or(by_op_width),
            )
        }
    }
}

#[derive(Debug, Clone, Copy)]
enum Mode {
    /// Sum of ops, with nodes above `cap` and merges above `op_cap`
    /// forbidden.
    Ops { cap: f64, op_cap: f64 },
    /// Largest node size.
    Width,
    /// Largest ops of one merge.
    OpWidth,
}

/// Subset bookkeeping shared by the passes.
struct Table {
    n: usize,
    /// Index classes: tensor mask, open flag, weight.
    classes: Vec<(u32, bool, f64)>,
    /// Weight look-up: `bytes[k][v]` = weight of the classes in byte `k`
    /// whose bits are set in `v`.
    bytes: Vec<[f64; 256]>,
    /// Per tensor, the mask of tensors sharing an index with it.
    adjacent: Vec<u32>,
    /// Split every subset (otherwise only connected ones).
    all: bool,
    /// Result of the width or op-width pass, kept for `best_width`.
    width_cache: std::cell::Cell<f64>,
}

impl Table {
    fn new(p: &Problem) -> Option<Table> {
        let n = p.len();
        let mut classes: Vec<(u32, bool, f64)> = Vec::new();
        for (e, holders) in p.incidence.iter().enumerate() {
            if holders.is_empty() || p.weight[e] == 0.0 {
                continue;
            }
            let mask = holders.iter().fold(0u32, |m, &t| m | (1 << t));
            let open = p.open[e];
            match classes.iter_mut().find(|c| c.0 == mask && c.1 == open) {
                Some(c) => c.2 += p.weight[e],
                None => classes.push((mask, open, p.weight[e])),
            }
        }
        if classes.len() > CLASSES_MAX {
            return None;
        }
        let mut bytes = vec![[0.0f64; 256]; classes.len().div_ceil(8).max(1)];
        for (k, table) in bytes.iter_mut().enumerate() {
            for (v, slot) in table.iter_mut().enumerate() {
                *slot = (0..8)
                    .filter(|b| v & (1 << b) != 0)
                    .filter_map(|b| classes.get(8 * k + b))
                    .map(|c| c.2)
                    .sum();
            }
        }
        let mut adjacent = vec![0u32; n];
        for e in &p.incidence {
            let mask = e.iter().fold(0u32, |m, &t| m | (1 << t));
            for &t in e {
                adjacent[t as usize] |= mask & !(1 << t);
            }
        }
        Some(Table {
            n,
            classes,
            bytes,
            adjacent,
            all: n <= ALL_SUBSETS_MAX,
            width_cache: std::cell::Cell::new(f64::INFINITY),
        })
    }

    fn weight(&self, set: u128) -> f64 {
        let mut w = 0.0;
        let mut s = set;
        let mut k = 0;
        while s != 0 {
            w += self.bytes[k][(s & 0xff) as usize];
            s >>= 8;
            k += 1;
        }
        w
    }

    /// The classes a subset keeps (a single tensor keeps all its own).
    fn keep(&self, s: u32) -> u128 {
        let single = s.is_power_of_two();
        let mut out = 0u128;
        for (c, &(mask, open, _)) in self.classes.iter().enumerate() {
            if mask & s != 0 && (open || single || mask & !s != 0) {
                out |= 1 << c;
            }
        }
        out
    }

    /// Which subsets may be split (all, or the connected ones).
    fn splittable(&self) -> Vec<bool> {
        let full = 1usize << self.n;
        if self.all {
            return vec![true; full];
        }
        let mut conn = vec![false; full];
        for s in 1..full {
            let s32 = s as u32;
            if s32.is_power_of_two() {
                conn[s] = true;
                continue;
            }
            let mut rest = s32;
            while rest != 0 {
                let v = rest.trailing_zeros();
                rest &= rest - 1;
                let without = s32 & !(1 << v);
                if conn[without as usize] && self.adjacent[v as usize] & without != 0 {
                    conn[s] = true;
                    break;
                }
            }
        }
        conn
    }

    /// Runs the recurrence; returns the best split and value per subset.
    fn dp(&self, mode: Mode) -> (Vec<u32>, Vec<f64>) {
        let full = 1usize << self.n;
        let ok = self.splittable();
        let mut keep = vec![0u128; full];
        let mut size = vec![0.0f64; full];
        let mut best = vec![f64::INFINITY; full];
        let mut split = vec![0u32; full];
        for s in 1..full {
            if !ok[s] {
                continue;
            }
            let s32 = s as u32;
            keep[s] = self.keep(s32);
            size[s] = self.weight(keep[s]);
            if s32.is_power_of_two() {
                best[s] = match mode {
                    Mode::Ops { .. } | Mode::OpWidth => f64::NEG_INFINITY,
                    Mode::Width => size[s],
                };
                continue;
            }
            if let Mode::Ops { cap, .. } = mode {
                if size[s] > cap {
                    continue;
                }
            }
            let low = s32 & s32.wrapping_neg();
            let rest = s32 ^ low;
            // Every proper subset s1 of s that contains the lowest tensor.
            let mut sub = (rest.wrapping_sub(1)) & rest;
            loop {
                let s1 = sub | low;
                let s2 = s32 ^ s1;
                if s2 != 0 && ok[s1 as usize] && ok[s2 as usize] {
                    let (b1, b2) = (best[s1 as usize], best[s2 as usize]);
                    if b1 < f64::INFINITY && b2 < f64::INFINITY {
                        let value = match mode {
                            Mode::Ops { op_cap, .. } => {
                                let ops = self.weight(keep[s1 as usize] | keep[s2 as usize]);
                                if ops > op_cap {
                                    f64::INFINITY
                                } else {
                                    log2_add(log2_add(b1, b2), ops)
                                }
                            }
                            Mode::Width => b1.max(b2).max(size[s]),
                            Mode::OpWidth => {
                                let ops = self.weight(keep[s1 as usize] | keep[s2 as usize]);
                                b1.max(b2).max(ops)
                            }
                        };
                        if value < best[s] {
                            best[s] = value;
                            split[s] = s1;
                        }
                    }
                }
                if sub == 0 {
                    break;
                }
                sub = (sub - 1) & rest;
            }
        }
        match mode {
            Mode::Width => self.width_cache.set(self.components_width(&best)),
            Mode::OpWidth => self.width_cache.set(self.components_op_width(&best)),
            Mode::Ops { .. } => {}
        }
        (split, best)
    }

    fn best_width(&self) -> f64 {
        self.width_cache.get()
    }

    /// Connected components of the whole network (one when splitting all).
    fn components(&self) -> Vec<u32> {
        let full = ((1u64 << self.n) - 1) as u32;
        if self.all {
            return vec![full];
        }
        let mut left = full;
        let mut out = Vec::new();
        while left != 0 {
            let mut comp = left & left.wrapping_neg();
            loop {
                let mut grow = comp;
                let mut bits = comp;
                while bits != 0 {
                    let v = bits.trailing_zeros();
                    bits &= bits - 1;
                    grow |= self.adjacent[v as usize];
                }
                grow &= left;
                if grow == comp {
                    break;
                }
                comp = grow;
            }
            out.push(comp);
            left &= !comp;
        }
        out
    }

    /// Width of joining the components (smallest first) after their best trees.
    fn components_width(&self, best: &[f64]) -> f64 {
        let comps = self.order_components();
        let mut w = comps
            .iter()
            .map(|&c| best[c as usize])
            .fold(f64::NEG_INFINITY, f64::max);
        let mut acc = 0u32;
        for &c in &comps {
            acc |= c;
            w = w.max(self.weight(self.keep(acc)));
        }
        w
    }

    /// Op width of joining the components (smallest first) after their
    /// best trees: each join multiplies over both sides' kept indices.
    fn components_op_width(&self, best: &[f64]) -> f64 {
        let comps = self.order_components();
        let mut w = comps
            .iter()
            .map(|&c| best[c as usize])
            .fold(f64::NEG_INFINITY, f64::max);
        let mut acc = 0u32;
        for &c in &comps {
            if acc != 0 {
                w = w.max(self.weight(self.keep(acc) | self.keep(c)));
            }
            acc |= c;
        }
        w
    }

    fn order_components(&self) -> Vec<u32> {
        let mut comps = self.components();
        comps.sort_by(|&a, &b| {
            let (wa, wb) = (self.weight(self.keep(a)), self.weight(self.keep(b)));
            wa.total_cmp(&wb).then(a.cmp(&b))
        });
        comps
    }

    fn solve(&self, mode: Mode) -> Option<Vec<[usize; 2]>> {
        let (split, best) = self.dp(mode);
        let comps = self.order_components();
        if comps.iter().any(|&c| best[c as usize] == f64::INFINITY) {
            return None;
        }
        let mut merges = Vec::with_capacity(self.n - 1);
        let mut acc: Option<(u32, usize)> = None;
        for &c in &comps {
            let root = self.emit(c, &split, &mut merges);
            acc = Some(match acc {
                None => (c, root),
                Some((set, node)) => {
                    let joined = set | c;
                    if let Mode::Ops { cap, op_cap } = mode {
                        if self.weight(self.keep(joined)) > cap
                            || self.weight(self.keep(set) | self.keep(c)) > op_cap
                        {
                            return None;
                        }
                    }
                    merges.push([node, root]);
                    (joined, self.n + merges.len() - 1)
                }
            });
        }
        Some(merges)
    }

    /// Appends the merges of the best tree of `s`; returns its node id.
    fn emit(&self, s: u32, split: &[u32], merges: &mut Vec<[usize; 2]>) -> usize {
        if s.is_power_of_two() {
            return s.trailing_zeros() as usize;
        }
        let s1 = split[s as usize];
        let a = self.emit(s1, split, merges);
        let b = self.emit(s ^ s1, split, merges);
        merges.push([a, b]);
        self.n + merges.len() - 1
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn chain(dims: &[f64]) -> Problem {
        let m = dims.len() - 1;
        let tensors = (0..m).map(|k| vec![k as u32, k as u32 + 1]).collect();
        let mut open = vec![false; dims.len()];
        open[0] = true;
        open[m] = true;
        Problem::new(tensors, dims.iter().map(|d| d.log2()).collect(), open)
    }

    #[test]
    fn cormen_matrix_chain() {
        // Cormen et al., Introduction to Algorithms 3rd ed. §15.2, Figure
        // 15.5: m[1,6] = 15,125 with ((A1(A2A3))((A4A5)A6)).
        let p = chain(&[30., 35., 15., 5., 10., 20., 25.]);
        let merges = exact_tree(&p, ExactGoal::TotalOps).unwrap();
        let ops = p.evaluate(&merges).total_ops_log2.exp2();
        assert!((ops - 15125.0).abs() < 1e-6, "{ops}");
    }

    #[test]
    fn width_goal_and_cap() {
        // Same chain: the 30x25 output (log2 750) and the 30x35 / 35x15
        // inputs bound the width from below; the cap below every input
        // size is infeasible.
        let p = chain(&[30., 35., 15., 5., 10., 20., 25.]);
        let merges = exact_tree(&p, ExactGoal::Width).unwrap();
        let w = p.evaluate(&merges).width;
        assert!((w - 1050f64.log2()).abs() < 1e-9, "{w}");
        assert!(exact_tree(&p, ExactGoal::OpsWithin(5.0)).is_none());
    }

    #[test]
    fn op_width_goal_matches_a_brute_force() {
        // Every tree of the chain by the independent brute force below:
        // the least op width and, under it, the least total ops.
        let p = chain(&[30., 35., 15., 5., 10., 20., 25.]);
        let merges = exact_tree(&p, ExactGoal::OpWidth).unwrap();
        let got = p.evaluate(&merges);
        let (best_op, best_ops) = brute(&p);
        assert!(
            (got.op_width - best_op).abs() < 1e-9,
            "{} {best_op}",
            got.op_width
        );
        assert!((got.total_ops_log2 - best_ops).abs() < 1e-9);
    }

    /// The least (op width, total ops) over every tree, by enumerating all
    /// merge sequences (fine for six tensors).
    fn brute(p: &Problem) -> (f64, f64) {
        fn go(p: &Problem, alive: Vec<usize>, merges: &mut Vec<[usize; 2]>, best: &mut (f64, f64)) {
            if alive.len() == 1 {
                let e = p.evaluate(merges);
                if (e.op_width, e.total_ops_log2) < *best {
                    *best = (e.op_width, e.total_ops_log2);
                }
                return;
            }
            for i in 0..alive.len() {
                for j in i + 1..alive.len() {
                    let node = p.len() + merges.len();
                    merges.push([alive[i], alive[j]]);
                    let mut next: Vec<usize> = alive
                        .iter()
                        .enumerate()
                        .filter(|&(k, _)| k != i && k != j)
                        .map(|(_, &x)| x)
                        .collect();
                    next.push(node);
                    go(p, next, merges, best);
                    merges.pop();
                }
            }
        }
        let mut best = (f64::INFINITY, f64::INFINITY);
        go(p, (0..p.len()).collect(), &mut Vec::new(), &mut best);
        best
    }
}
