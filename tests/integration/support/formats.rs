//! A plain reference contraction for the format tests, independent of the
//! library's tree search and executor: dense pairwise contraction by
//! explicit loops, either in a fixed order or by variable elimination.
//! Also the path of the shared corpus.

use std::path::PathBuf;

use num_complex::Complex64 as C;
use sliceplan::network::{values::materialize, Network};

/// A dense tensor: index ids (into the network) and row-major values.
#[derive(Debug, Clone)]
pub struct Dense {
    pub idx: Vec<usize>,
    pub data: Vec<C>,
}

/// The shared corpus of public circuits and formulas with reference values
/// (read-only): `$SLICEPLAN_CORPUS`, else `../shared/corpus` beside the
/// checkout (or beside the folder of a git worktree).
pub fn find_corpus() -> Option<PathBuf> {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    let candidates = [
        std::env::var_os("SLICEPLAN_CORPUS").map(PathBuf::from),
        Some(root.join("../shared/corpus")),
        Some(root.join("../../shared/corpus")),
    ];
    candidates
        .into_iter()
        .flatten()
        .find(|p| p.join("qasm/reference-amplitudes.json").is_file())
}

/// The corpus folder. A missing corpus fails the test: the corpus checks
/// are part of what CI proves, so they must not pass by skipping.
pub fn corpus() -> PathBuf {
    find_corpus().expect(
        "the shared corpus was not found (../shared/corpus beside the checkout); set SLICEPLAN_CORPUS to its folder",
    )
}

/// Contracts `a` and `b`, summing every index of theirs that `keep` rejects.
/// Cost: the product of the dimensions of the union of their indices.
pub fn contract_pair(a: &Dense, b: &Dense, dims: &[usize], keep: &dyn Fn(usize) -> bool) -> Dense {
    let mut union: Vec<usize> = a.idx.clone();
    for &e in &b.idx {
        if !union.contains(&e) {
            union.push(e);
        }
    }
    let out_idx: Vec<usize> = union.iter().copied().filter(|&e| keep(e)).collect();
    let strides = |idx: &[usize]| -> Vec<usize> {
        let mut s = vec![0usize; idx.len()];
        let mut acc = 1;
        for k in (0..idx.len()).rev() {
            s[k] = acc;
            acc *= dims[idx[k]];
        }
        union
            .iter()
            .map(|e| idx.iter().position(|x| x == e).map_or(0, |p| s[p]))
            .collect()
    };
    let (sa, sb, so) = (strides(&a.idx), strides(&b.idx), strides(&out_idx));
    let d: Vec<usize> = union.iter().map(|&e| dims[e]).collect();
    let out_len: usize = out_idx.iter().map(|&e| dims[e]).product();
    let mut out = vec![C::new(0.0, 0.0); out_len];
    let n = union.len();
    let mut ctr = vec![0usize; n];
    let (mut oa, mut ob, mut oo) = (0usize, 0usize, 0usize);
    loop {
        out[oo] += a.data[oa] * b.data[ob];
        let mut k = n;
        loop {
            if k == 0 {
                return Dense {
                    idx: out_idx,
                    data: out,
                };
            }
            k -= 1;
            ctr[k] += 1;
            oa += sa[k];
            ob += sb[k];
            oo += so[k];
            if ctr[k] < d[k] {
                break;
            }
            oa -= sa[k] * d[k];
            ob -= sb[k] * d[k];
            oo -= so[k] * d[k];
            ctr[k] = 0;
        }
    }
}

fn dims(net: &Network) -> Vec<usize> {
    net.dims().iter().map(|&d| d as usize).collect()
}

fn leaves(net: &Network, values: &[Vec<C>]) -> Vec<Dense> {
    net.tensors
        .iter()
        .zip(values)
        .map(|(t, v)| Dense {
            idx: t.indices.clone(),
            data: v.clone(),
        })
        .collect()
}

/// Every tensor's values.
pub fn values_of(net: &Network) -> Vec<Vec<C>> {
    (0..net.num_tensors())
        .map(|t| materialize(net, t).expect("values"))
        .collect()
}

/// Sums leftover indices and puts the open ones in the network's order.
fn finish(net: &Network, t: Dense, dims: &[usize]) -> Vec<C> {
    let one = Dense {
        idx: vec![],
        data: vec![C::new(1.0, 0.0)],
    };
    let open = net.open_mask();
    let t = contract_pair(&t, &one, dims, &|e| open[e]);
    // Permute to net.open order.
    let target = Dense {
        idx: net.open.clone(),
        data: vec![],
    };
    let n: usize = net.open.iter().map(|&e| dims[e]).product();
    let mut out = vec![C::new(0.0, 0.0); n];
    for (pos, slot) in out.iter_mut().enumerate() {
        // Multi-index of `pos` over target.idx, then offset in t.
        let mut rem = pos;
        let mut coord = vec![0usize; target.idx.len()];
        for k in (0..target.idx.len()).rev() {
            coord[k] = rem % dims[target.idx[k]];
            rem /= dims[target.idx[k]];
        }
        let mut off = 0;
        for &e in &t.idx {
            let k = target.idx.iter().position(|&x| x == e).unwrap();
            off = off * dims[e] + coord[k];
        }
        *slot = t.data[off];
    }
    out
}

/// The network's value, contracting tensors left to right in `order`.
pub fn contract_in_order(net: &Network, values: &[Vec<C>], order: &[usize]) -> Vec<C> {
    let dims = dims(net);
    let open = net.open_mask();
    let ts = leaves(net, values);
    let mut remaining = vec![0usize; dims.len()];
    for t in &net.tensors {
        for &e in &t.indices {
            remaining[e] += 1;
        }
    }
    let mut acc = Dense {
        idx: vec![],
        data: vec![C::new(1.0, 0.0)],
    };
    let mut absorbed = vec![0usize; dims.len()];
    for &t in order {
        for &e in &ts[t].idx {
            absorbed[e] += 1;
        }
        let keep = |e: usize| open[e] || absorbed[e] < remaining[e];
        acc = contract_pair(&acc, &ts[t], &dims, &keep);
    }
    finish(net, acc, &dims)
}

/// The network's value by variable elimination: repeatedly pick the summed
/// index whose tensors, multiplied together, make the smallest tensor;
/// multiply them and sum the index out (the min-size heuristic of bucket
/// elimination, Dechter 1999). Open indices are never summed.
pub fn contract_by_elimination(net: &Network, values: &[Vec<C>]) -> Vec<C> {
    let dims = dims(net);
    let open = net.open_mask();
    let mut ts: Vec<Dense> = leaves(net, values);
    loop {
        let mut best: Option<(f64, usize)> = None;
        let mut candidates: Vec<usize> = ts.iter().flat_map(|t| t.idx.iter().copied()).collect();
        candidates.sort_unstable();
        candidates.dedup();
        for e in candidates.into_iter().filter(|&e| !open[e]) {
            let mut union: Vec<usize> = Vec::new();
            for t in ts.iter().filter(|t| t.idx.contains(&e)) {
                for &x in &t.idx {
                    if x != e && !union.contains(&x) {
                        union.push(x);
                    }
                }
            }
            let size: f64 = union.iter().map(|&x| dims[x] as f64).product();
            assert!(
                size <= (1u64 << 24) as f64,
                "too wide for the test contraction"
            );
            if best.is_none_or(|(s, _)| size < s) {
                best = Some((size, e));
            }
        }
        let Some((_, e)) = best else { break };
        let (bucket, rest): (Vec<Dense>, Vec<Dense>) =
            ts.into_iter().partition(|t| t.idx.contains(&e));
        ts = rest;
        let mut acc = Dense {
            idx: vec![],
            data: vec![C::new(1.0, 0.0)],
        };
        let last = bucket.len() - 1;
        for (k, t) in bucket.iter().enumerate() {
            acc = contract_pair(&acc, t, &dims, &|x| x != e || k < last);
        }
        ts.push(acc);
    }
    let one = Dense {
        idx: vec![],
        data: vec![C::new(1.0, 0.0)],
    };
    let acc = ts
        .iter()
        .fold(one, |acc, t| contract_pair(&acc, t, &dims, &|_| true));
    finish(net, acc, &dims)
}

/// log2 of the largest tensor the min-size elimination would build.
fn elimination_width(ts: &[Dense], dims: &[usize]) -> f64 {
    let mut sets: Vec<Vec<usize>> = ts.iter().map(|t| t.idx.clone()).collect();
    let mut width: f64 = 0.0;
    loop {
        let mut all: Vec<usize> = sets.iter().flatten().copied().collect();
        all.sort_unstable();
        all.dedup();
        let union_without = |e: usize, sets: &[Vec<usize>]| -> Vec<usize> {
            let mut u: Vec<usize> = Vec::new();
            for s in sets.iter().filter(|s| s.contains(&e)) {
                for &x in s {
                    if x != e && !u.contains(&x) {
                        u.push(x);
                    }
                }
            }
            u
        };
        let log = |u: &[usize]| u.iter().map(|&x| (dims[x] as f64).log2()).sum::<f64>();
        let Some(e) = all.iter().copied().min_by(|&a, &b| {
            log(&union_without(a, &sets)).total_cmp(&log(&union_without(b, &sets)))
        }) else {
            return width;
        };
        let u = union_without(e, &sets);
        width = width.max(log(&u));
        sets.retain(|s| !s.contains(&e));
        sets.push(u);
    }
}

/// Fixes index `e` to value `v` in every tensor that has it.
fn condition(ts: &[Dense], e: usize, v: usize, dims: &[usize]) -> Vec<Dense> {
    ts.iter()
        .map(|t| match t.idx.iter().position(|&x| x == e) {
            None => t.clone(),
            Some(p) => {
                let inner: usize = t.idx[p + 1..].iter().map(|&x| dims[x]).product();
                let d = dims[e];
                let data = (0..t.data.len() / d)
                    .map(|k| t.data[(k / inner * d + v) * inner + k % inner])
                    .collect();
                let mut idx = t.idx.clone();
                idx.remove(p);
                Dense { idx, data }
            }
        })
        .collect()
}

/// The scalar value of a network with no open indices by branching on
/// indices (fixing each to each of its values, as in slicing) until the
/// rest is narrow enough to contract by elimination. A branch stops as soon
/// as some tensor is all zeros, and an index that a one-index tensor allows
/// only one nonzero value for is fixed without branching (the unit
/// propagation of Davis, Logemann and Loveland 1962). For networks whose
/// width is too large to contract densely but whose value has few nonzero
/// terms, such as hard random 3-SAT instances.
pub fn scalar_by_branching(net: &Network, max_width: f64) -> C {
    assert!(net.open.is_empty());
    let dims = dims(net);
    branch(leaves(net, &values_of(net)), &dims, max_width)
}

fn branch(mut ts: Vec<Dense>, dims: &[usize], max_width: f64) -> C {
    let zero = C::new(0.0, 0.0);
    let mut factor = C::new(1.0, 0.0);
    loop {
        // Scalars multiply out; an all-zero tensor ends the branch.
        let mut kept = Vec::with_capacity(ts.len());
        for t in ts {
            if t.data.iter().all(|z| *z == zero) {
                return zero;
            }
            if t.idx.is_empty() {
                factor *= t.data[0];
            } else {
                kept.push(t);
            }
        }
        ts = kept;
        let forced = ts.iter().find_map(|t| {
            let nonzero: Vec<usize> = (0..t.data.len()).filter(|&k| t.data[k] != zero).collect();
            (t.idx.len() == 1 && nonzero.len() == 1).then(|| (t.idx[0], nonzero[0]))
        });
        match forced {
            Some((e, v)) => ts = condition(&ts, e, v, dims),
            None => break,
        }
    }
    if ts.is_empty() {
        return factor;
    }
    let mut live: Vec<usize> = ts.iter().flat_map(|t| t.idx.iter().copied()).collect();
    live.sort_unstable();
    live.dedup();
    // Estimating the width is costly; with many indices left, just branch.
    if live.len() <= 2 * max_width as usize && elimination_width(&ts, dims) <= max_width {
        let net_like = ts;
        return factor * eliminate_all(net_like, dims);
    }
    // Branch on the index shared by most tensors.
    let mut count = vec![0usize; dims.len()];
    for t in &ts {
        for &e in &t.idx {
            count[e] += 1;
        }
    }
    let e = (0..dims.len()).max_by_key(|&e| count[e]).unwrap();
    let mut sum = zero;
    for v in 0..dims[e] {
        sum += branch(condition(&ts, e, v, dims), dims, max_width);
    }
    factor * sum
}

/// Sums every index of `ts` by min-size elimination; the scalar result.
fn eliminate_all(ts: Vec<Dense>, dims: &[usize]) -> C {
    let mut ts = ts;
    loop {
        let mut all: Vec<usize> = ts.iter().flat_map(|t| t.idx.iter().copied()).collect();
        all.sort_unstable();
        all.dedup();
        let size = |e: usize| -> f64 {
            let mut u: Vec<usize> = Vec::new();
            for t in ts.iter().filter(|t| t.idx.contains(&e)) {
                for &x in &t.idx {
                    if !u.contains(&x) {
                        u.push(x);
                    }
                }
            }
            u.iter().map(|&x| dims[x] as f64).product()
        };
        let Some(e) = all
            .iter()
            .copied()
            .min_by(|&a, &b| size(a).total_cmp(&size(b)))
        else {
            break;
        };
        let (bucket, rest): (Vec<Dense>, Vec<Dense>) =
            ts.into_iter().partition(|t| t.idx.contains(&e));
        ts = rest;
        let last = bucket.len() - 1;
        let mut acc = Dense {
            idx: vec![],
            data: vec![C::new(1.0, 0.0)],
        };
        for (k, t) in bucket.iter().enumerate() {
            acc = contract_pair(&acc, t, dims, &|x| x != e || k < last);
        }
        ts.push(acc);
    }
    ts.iter().map(|t| t.data[0]).product()
}

/// The scalar value of a network with no open indices.
pub fn scalar(net: &Network) -> C {
    assert!(net.open.is_empty());
    contract_by_elimination(net, &values_of(net))[0]
}

/// Kaufman (1949), exact partition function of the m x n periodic Ising
/// model with coupling 1 and no field, at K = beta, in the form of Beale,
/// Phys. Rev. Lett. 76, 78 (1996), eqs. (2)-(4) (transcribed from memory,
/// checked below against a direct spin sum):
/// Z = 1/2 (2 sinh 2K)^{mn/2} (Z1 + Z2 + Z3 + Z4),
/// Z1 = prod_r 2 cosh(m g_{2r+1} / 2), Z2 = prod_r 2 sinh(m g_{2r+1} / 2),
/// Z3 = prod_r 2 cosh(m g_{2r} / 2),   Z4 = prod_r 2 sinh(m g_{2r} / 2),
/// r = 0..n-1, cosh g_l = cosh 2K coth 2K - cos(l pi / n), g_0 = 2K + ln tanh K.
pub fn kaufman(m: usize, n: usize, k: f64) -> f64 {
    let gamma = |l: usize| -> f64 {
        if l == 0 {
            2.0 * k + k.tanh().ln()
        } else {
            let c = (2.0 * k).cosh() / (2.0 * k).tanh()
                - (l as f64 * std::f64::consts::PI / n as f64).cos();
            c.acosh()
        }
    };
    let half_m = m as f64 / 2.0;
    let (mut z1, mut z2, mut z3, mut z4) = (1.0, 1.0, 1.0, 1.0);
    for r in 0..n {
        let (odd, even) = (gamma(2 * r + 1), gamma(2 * r));
        z1 *= 2.0 * (half_m * odd).cosh();
        z2 *= 2.0 * (half_m * odd).sinh();
        z3 *= 2.0 * (half_m * even).cosh();
        z4 *= 2.0 * (half_m * even).sinh();
    }
    0.5 * (2.0 * (2.0 * k).sinh()).powf((m * n) as f64 / 2.0) * (z1 + z2 + z3 + z4)
}
