//! The pairwise kernel on its own: values against direct summation, the
//! layouts that avoid copies, batch (hyperedge) indices, the memory rule
//! `max(size a, size b, size result)` above the level before each call, and
//! a counting stand-in for the matrix multiply.

use crate::support::exec as exec_support;
use crate::support::reference as common;

use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Arc;

use num_complex::{Complex32, Complex64};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sliceplan::exec::dense::Dense;
use sliceplan::exec::matmul::{FaerMatMul, LoopMatMul, MatMul, MatView};
use sliceplan::exec::memory::{Held, Meter};
use sliceplan::exec::pairwise::{contract, Context, Kernel, Operand};
use sliceplan::exec::permute::permute_sum;
use sliceplan::exec::scalar::Scalar;
use sliceplan::exec::slice::Prepared;
use sliceplan::network::{Network, NetworkBuilder, Values};
use sliceplan::tree::Tree;

/// Counts multiplies, then does them with the plain loop.
#[derive(Default)]
struct Counting(AtomicUsize);

impl MatMul for Counting {
    fn matmul<T: Scalar>(
        &self,
        dst: &mut [T],
        lhs: MatView<'_, T>,
        rhs: MatView<'_, T>,
        threads: usize,
    ) {
        self.0.fetch_add(1, Ordering::SeqCst);
        LoopMatMul.matmul(dst, lhs, rhs, threads);
    }
}

/// A two-tensor network `A[a..] B[b..]` with random complex values and the
/// given open indices (index names are single letters, all of one dimension
/// per letter from `dims`).
fn pair(a: &str, b: &str, open: &str, dims: &[(char, u64)], seed: u64) -> Network {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut nb = NetworkBuilder::new("pair");
    for &(c, d) in dims
        .iter()
        .filter(|(c, _)| a.contains(*c) || b.contains(*c))
    {
        nb.declare(&c.to_string(), d, None).unwrap();
    }
    for (name, idx) in [("A", a), ("B", b)] {
        let names: Vec<String> = idx.chars().map(String::from).collect();
        let len: u64 = idx
            .chars()
            .map(|c| dims.iter().find(|x| x.0 == c).unwrap().1)
            .product();
        let re = (0..len).map(|_| rng.random_range(-1.0..1.0)).collect();
        let im = Some((0..len).map(|_| rng.random_range(-1.0..1.0)).collect());
        nb.tensor(name, &names, Some(Values::Inline { re, im }), None)
            .unwrap();
    }
    for c in open.chars() {
        nb.open(&c.to_string(), None).unwrap();
    }
    nb.build().unwrap()
}

/// Tensor `t` of `net` as an owned operand counted on `meter`.
fn owned<T: Scalar>(net: &Network, t: usize, meter: &Arc<Meter>) -> Dense<T> {
    let values = sliceplan::network::values::materialize(net, t).unwrap();
    let dims = net.tensors[t]
        .indices
        .iter()
        .map(|&e| net.indices[e].dim as usize)
        .collect();
    let data: Vec<T> = values.into_iter().map(T::from_complex).collect();
    Dense::new(
        net.tensors[t].indices.clone(),
        dims,
        Held::adopt(data, meter),
    )
}

/// Contracts the pair with `mm`, checks values against direct summation, and
/// returns (peak above the starting level, sizes a, b, result in bytes).
fn check_pair<T: Scalar, K: MatMul>(mm: &K, net: &Network, tol: f64) -> (u64, u64, u64, u64) {
    let meter = Meter::new();
    let (a, b) = (owned::<T>(net, 0, &meter), owned::<T>(net, 1, &meter));
    let (sa, sb) = (a.bytes(), b.bytes());
    let start = meter.current();
    let ctx = Context {
        mm,
        meter: &meter,
        threads: 1,
        kernel: Kernel::Scaled,
    };
    let v = contract(&ctx, Operand::Owned(a), Operand::Owned(b), &net.open);
    let peak = meter.peak() - start;
    let sv = v.bytes();
    assert_eq!(
        meter.current(),
        sv,
        "operands and copies are freed; only the result remains"
    );
    let ordered = permute_sum(&v.view(), &net.open, &meter);
    // Independent reference: direct summation over all index values.
    // Real dtypes contract the real parts only.
    let mut values = common::all_values(net);
    if !T::DTYPE.is_complex() {
        values.iter_mut().flatten().for_each(|z| z.im = 0.0);
    }
    let reference = common::brute_force(net, &values);
    for (x, y) in ordered.data().iter().zip(&reference) {
        let [xr, xi] = x.to_lanes();
        assert!(
            (Complex64::new(xr, xi) - y).norm() <= tol * (1.0 + y.norm()),
            "{x:?} vs {y:?}"
        );
    }
    (peak, sa, sb, sv)
}

#[test]
fn matrix_layouts_that_need_no_copy() {
    let dims = [('i', 5), ('k', 7), ('j', 3)];
    // A[i,k] B[k,j]; A[k,i] B[j,k] (both transposed views): no copies, so the
    // peak above the start is just the result.
    for (a, b) in [("ik", "kj"), ("ki", "jk"), ("ik", "jk")] {
        let net = pair(a, b, "ij", &dims, 1);
        let counting = Counting::default();
        let (peak, _, _, sv) = check_pair::<Complex64, _>(&counting, &net, 1e-12);
        assert_eq!(peak, sv, "{a},{b}: no copy expected");
        assert_eq!(counting.0.load(Ordering::SeqCst), 1);
    }
}

#[test]
fn permutes_batches_and_sums_lone_indices() {
    let dims = [
        ('a', 2),
        ('b', 3),
        ('c', 4),
        ('d', 2),
        ('x', 3),
        ('y', 2),
        ('z', 3),
    ];
    // (A indices, B indices, kept): inner indices split around a row index;
    // a batch index x shared and kept (hyperedge / open on both sides); lone
    // indices y (on A) and z (on B) summed without a partner.
    let cases = [
        ("acb", "dca", "bd"),
        ("xab", "bxc", "xac"),
        ("ayxb", "xbzc", "cax"),
        ("xy", "zx", "x"),
        ("ab", "cd", "abcd"),
        ("abc", "cba", ""),
    ];
    for (seed, &(a, b, keep)) in cases.iter().enumerate() {
        let net = pair(a, b, keep, &dims, seed as u64);
        let counting = Counting::default();
        let (peak, sa, sb, sv) = check_pair::<Complex64, _>(&counting, &net, 1e-12);
        // The executor's memory rule (cost::Workspace::PermuteCopies).
        assert!(
            peak <= sa.max(sb).max(sv),
            "{a},{b}->{keep}: peak {peak} > max({sa}, {sb}, {sv})"
        );
        let batch: u64 = keep
            .chars()
            .filter(|c| a.contains(*c) && b.contains(*c))
            .map(|c| dims.iter().find(|x| x.0 == c).unwrap().1)
            .product();
        assert_eq!(
            counting.0.load(Ordering::SeqCst) as u64,
            batch,
            "{a},{b}->{keep}: one multiply per batch value"
        );
        // faer agrees with the loop in every dtype.
        check_pair::<Complex64, _>(&FaerMatMul, &net, 1e-12);
        check_pair::<Complex32, _>(&FaerMatMul, &net, 1e-5);
        check_pair::<f64, _>(&FaerMatMul, &net, 1e-12);
        check_pair::<f32, _>(&FaerMatMul, &net, 1e-5);
    }
}

#[test]
fn a_slice_runs_one_multiply_per_merge_and_frees_everything_else() {
    let net = exec_support::independent_set_grid(4);
    let tree = Tree::left_deep(net.num_tensors());
    let order: Vec<usize> = (0..net.num_tensors() - 1).collect();
    let process = Meter::new();
    let prepared = Prepared::<f64>::new(&net, &tree, &order, &[], &process).unwrap();
    let counting = Counting::default();
    let meter = Meter::child(&process);
    let out = prepared.run_slice(
        &Context {
            mm: &counting,
            meter: &meter,
            threads: 1,
            kernel: Kernel::Scaled,
        },
        &[],
    );
    // No bond of the grid touches three tensors, so no merge has a batch
    // index: exactly one multiply per merge.
    assert_eq!(counting.0.load(Ordering::SeqCst), net.num_tensors() - 1);
    assert_eq!(meter.current(), out.bytes());
    // OEIS A006506: the 4x4 grid graph has 1234 independent sets.
    assert_eq!(out.data(), &[1234.0]);
}
