//! Executor benchmarks (run with `scripts/bench-exec.sh`): the pairwise
//! kernel against a plain faer multiply of the same size, the memory a slice
//! really takes against the cost model's prediction, and slice throughput on
//! a random-circuit plan. Prints figures and ratios; asserts nothing about
//! time.
//!
//! Usage: `exec [all|kernel|copies|memory|throughput] [--quick]`.

use std::hint::black_box;
use std::process::Command;
use std::sync::Arc;
use std::time::Instant;

use faer::{Accum, MatMut, MatRef, Par};
use num_complex::{Complex32, Complex64};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use sliceplan::cost::bytes::bytes_human;
use sliceplan::exec::dense::{row_major_strides, View};
use sliceplan::exec::matmul::FaerMatMul;
use sliceplan::exec::memory::{max_resident_bytes, resident_bytes, Meter};
use sliceplan::exec::pairwise::{contract, Context, Kernel, Operand};
use sliceplan::exec::scalar::Scalar;
use sliceplan::exec::{chunk_jobs, run_plan, RunOptions, Selection};
use sliceplan::network::{Dtype, Fill, Network, NetworkBuilder, Values};
use sliceplan::plan::Plan;
use sliceplan::tree::Tree;

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let quick = args.iter().any(|a| a == "--quick");
    let what = args
        .iter()
        .find(|a| !a.starts_with("--"))
        .map_or("all", String::as_str);
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    match what {
        "memory-child" => memory_child(&args[1..]),
        "kernel" => kernel(threads, quick),
        "copies" => copies(quick),
        "memory" => memory(quick),
        "throughput" => throughput(quick),
        "all" => {
            kernel(threads, quick);
            copies(quick);
            memory(quick);
            throughput(quick);
        }
        other => {
            eprintln!("unknown benchmark '{other}'; use all, kernel, copies, memory or throughput")
        }
    }
}

/// The shortest of `reps` timings of `f`, in seconds.
fn best(reps: usize, mut f: impl FnMut()) -> f64 {
    (0..reps)
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

fn random<T: Scalar>(len: usize, seed: u64) -> Vec<T> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    (0..len)
        .map(|_| {
            T::from_complex(Complex64::new(
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
            ))
        })
        .collect()
}

/// Seconds for `batch` plain faer multiplies of row-major m x k by k x n.
fn plain<T: Scalar>(m: usize, k: usize, n: usize, batch: usize, threads: usize) -> impl FnMut() {
    let a = random::<T>(m * k, 1);
    let b = random::<T>(k * n, 2);
    let mut c = vec![T::default(); m * n];
    let one = T::from_complex(Complex64::new(1.0, 0.0));
    move || {
        for _ in 0..batch {
            let (ma, mb) = (
                MatRef::from_row_major_slice(&a, m, k),
                MatRef::from_row_major_slice(&b, k, n),
            );
            let mc = MatMut::from_row_major_slice_mut(&mut c, m, n);
            faer::linalg::matmul::matmul(mc, Accum::Replace, ma, mb, one, Par::rayon(threads));
        }
        black_box(&c);
    }
}

/// Our kernel on tensors `a` and `b` given as (index id, dim) in storage order.
fn ours<T: Scalar>(
    a: &[(usize, usize)],
    b: &[(usize, usize)],
    keep: &[usize],
    threads: usize,
) -> impl FnMut() {
    let make = |t: &[(usize, usize)], seed| {
        let dims: Vec<usize> = t.iter().map(|x| x.1).collect();
        (
            t.iter().map(|x| x.0).collect::<Vec<_>>(),
            random::<T>(dims.iter().product(), seed),
            dims,
        )
    };
    let (ai, ad, adims) = make(a, 3);
    let (bi, bd, bdims) = make(b, 4);
    let keep = keep.to_vec();
    let meter: Arc<Meter> = Meter::new();
    move || {
        let view = |idx: &Vec<usize>, data, dims: &Vec<usize>| View {
            data,
            offset: 0,
            indices: idx.clone(),
            dims: dims.clone(),
            strides: row_major_strides(dims),
            exp: 0,
        };
        let ctx = Context {
            mm: &FaerMatMul,
            meter: &meter,
            threads,
            kernel: Kernel::Scaled,
        };
        let v = contract(
            &ctx,
            Operand::Borrowed(view(&ai, &ad, &adims)),
            Operand::Borrowed(view(&bi, &bd, &bdims)),
            &keep,
        );
        black_box(v.data()[0]);
    }
}

fn row(label: &str, reps: usize, mut base: impl FnMut(), mut kern: impl FnMut()) {
    let (mut tb, mut tk) = (f64::INFINITY, f64::INFINITY);
    // Interleaved so that load from other processes hits both alike.
    for _ in 0..reps {
        tb = tb.min(best(1, &mut base));
        tk = tk.min(best(1, &mut kern));
    }
    println!(
        "  {label:<52} plain {tb:>7.3} s   kernel {tk:>7.3} s   ratio {:.2}",
        tb / tk
    );
}

fn kernel(threads: usize, quick: bool) {
    let (s, reps): (usize, usize) = if quick { (1024, 3) } else { (4096, 5) };
    let bits = s.trailing_zeros() as usize;
    println!("kernel: pairwise contraction vs a plain faer multiply of the same size ({threads} threads; ratio = plain / kernel, target >= 0.8)");
    // Index ids: 0 i, 1 k, 2 j, 3.. split and batch indices.
    let label = |t: &str| format!("{t} [{s}^3]");
    row(
        &label("f64 A[i,k] B[k,j] (matrix layout, no copy)"),
        reps,
        plain::<f64>(s, s, s, 1, threads),
        ours::<f64>(&[(0, s), (1, s)], &[(1, s), (2, s)], &[0, 2], threads),
    );
    row(
        &label("f64 A[k,i] B[j,k] (transposed views, no copy)"),
        reps,
        plain::<f64>(s, s, s, 1, threads),
        ours::<f64>(&[(1, s), (0, s)], &[(2, s), (1, s)], &[0, 2], threads),
    );
    let h = 1 << (bits / 2);
    row(
        &label("f64 A[k1,i,k2] B[k2,j,k1] (both permuted)"),
        reps,
        plain::<f64>(s, s, s, 1, threads),
        ours::<f64>(
            &[(3, h), (0, s), (4, s / h)],
            &[(4, s / h), (2, s), (3, h)],
            &[0, 2],
            threads,
        ),
    );
    // 2 * bits binary indices per operand, in a scrambled order.
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    let mut a: Vec<(usize, usize)> = (0..2 * bits).map(|x| (10 + x, 2)).collect();
    let mut b: Vec<(usize, usize)> = (bits..3 * bits).map(|x| (10 + x, 2)).collect();
    for t in [&mut a, &mut b] {
        for k in (1..t.len()).rev() {
            t.swap(k, rng.random_range(0..=k));
        }
    }
    let keep: Vec<usize> = (0..bits)
        .chain(2 * bits..3 * bits)
        .map(|x| 10 + x)
        .collect();
    row(
        &label(&format!("f64 {} binary indices each, scrambled", 2 * bits)),
        reps,
        plain::<f64>(s, s, s, 1, threads),
        ours::<f64>(&a, &b, &keep, threads),
    );
    let (q, x) = (s / 4, 16);
    row(
        &format!("f64 A[x,i,k] B[x,k,j], batch x = {x} [{x} x {q}^3]"),
        reps,
        plain::<f64>(q, q, q, x, threads),
        ours::<f64>(
            &[(5, x), (0, q), (1, q)],
            &[(5, x), (1, q), (2, q)],
            &[5, 0, 2],
            threads,
        ),
    );
    let c = s;
    let hc = 1 << ((c.trailing_zeros() as usize) / 2);
    row(
        &format!("c64 A[k1,i,k2] B[k2,j,k1] (both permuted) [{c}^3]"),
        reps,
        plain::<Complex32>(c, c, c, 1, threads),
        ours::<Complex32>(
            &[(3, hc), (0, c), (4, c / hc)],
            &[(4, c / hc), (2, c), (3, hc)],
            &[0, 2],
            threads,
        ),
    );
}

/// Permuting copies alone, in GB/s of elements read and written.
fn copies(quick: bool) {
    let s: usize = if quick { 1024 } else { 4096 };
    let h = 1 << (s.trailing_zeros() / 2);
    println!("copies: permute_sum of {s}x{s} f64 tensors (read + write bandwidth)");
    let data = random::<f64>(s * s, 9);
    let meter = Meter::new();
    // (label, source indices, source dims, output order)
    type Case = (&'static str, Vec<usize>, Vec<usize>, Vec<usize>);
    let cases: [Case; 4] = [
        (
            "contiguous [i,k] -> [i,k]",
            vec![0, 1],
            vec![s, s],
            vec![0, 1],
        ),
        (
            "transpose [i,k] -> [k,i]",
            vec![0, 1],
            vec![s, s],
            vec![1, 0],
        ),
        (
            "[k1,i,k2] -> [i,k1,k2]",
            vec![3, 0, 4],
            vec![h, s, s / h],
            vec![0, 3, 4],
        ),
        (
            "[k2,j,k1] -> [k1,k2,j]",
            vec![4, 2, 3],
            vec![s / h, s, h],
            vec![3, 4, 2],
        ),
    ];
    let mut first = None;
    for (label, idx, dims, out) in cases {
        let v = View {
            data: &data,
            offset: 0,
            indices: idx,
            strides: row_major_strides(&dims),
            dims,
            exp: 0,
        };
        let t = best(7, || {
            black_box(sliceplan::exec::permute::permute_sum(&v, &out, &meter).data()[0]);
        });
        let base = *first.get_or_insert(t);
        println!(
            "  {label:<32} {:>7.3} s  {:>6.2} GB/s  ({:.2} x the plain copy)",
            t,
            2.0 * (s * s * 8) as f64 / t / 1e9,
            t / base
        );
    }
}

/// User plus system CPU time of this process so far.
fn cpu_seconds() -> f64 {
    // SAFETY: getrusage only writes the struct it is given.
    let mut u: libc::rusage = unsafe { std::mem::zeroed() };
    unsafe { libc::getrusage(libc::RUSAGE_SELF, &mut u) };
    let t = |v: libc::timeval| v.tv_sec as f64 + v.tv_usec as f64 * 1e-6;
    t(u.ru_utime) + t(u.ru_stime)
}

/// A brickwork circuit on rows x cols qubits with random gate values.
fn circuit(rows: usize, cols: usize, depth: usize, seed: u64) -> Network {
    let s = sliceplan::generate::brickwork(rows, cols, depth, seed).unwrap();
    let mut b = NetworkBuilder::new("circuit");
    for i in &s.indices {
        b.declare(&i.name, i.dim, None).unwrap();
    }
    for (t, tensor) in s.tensors.iter().enumerate() {
        let names: Vec<&str> = tensor
            .indices
            .iter()
            .map(|&e| s.indices[e].name.as_str())
            .collect();
        let fill = Values::Fill(Fill::Random {
            seed: seed * 100_000 + t as u64,
        });
        b.tensor(&tensor.name, &names, Some(fill), None).unwrap();
    }
    b.dtype(Dtype::C64);
    b.build().unwrap()
}

/// Plan: merge in file order (state-vector style), slice the first qubits'
/// initial legs.
fn circuit_plan(net: &Network, sliced_qubits: usize, slices_at_once: u64) -> Plan {
    let sliced: Vec<usize> = (0..sliced_qubits)
        .map(|q| net.index_id(&format!("q{q}_0")).unwrap())
        .collect();
    let tree = Tree::left_deep(net.num_tensors());
    let probe = Plan::for_tree(net, "circuit", &tree, &sliced, Dtype::C64, 0);
    let peak: u64 = probe.predicted.per_slice_peak_bytes.parse().unwrap();
    Plan::for_tree(
        net,
        "circuit",
        &tree,
        &sliced,
        Dtype::C64,
        peak * slices_at_once,
    )
}

fn memory_shape(quick: bool) -> (usize, usize, usize) {
    if quick {
        (4, 5, 4)
    } else {
        (5, 5, 4)
    }
}

/// Child process: run slice 0 of the memory plan and print the figures.
fn memory_child(args: &[String]) {
    let quick = args.iter().any(|a| a == "--quick");
    let (r, c, d) = memory_shape(quick);
    let net = circuit(r, c, d, 7);
    let plan = circuit_plan(&net, 1, 1);
    let before = resident_bytes().unwrap_or(0);
    let dir = tempfile::tempdir().unwrap();
    let jobs = chunk_jobs(
        plan.slice_count().unwrap(),
        &Selection::Slices(0..1),
        dir.path(),
    )
    .unwrap();
    let t = Instant::now();
    let report = run_plan(
        &plan,
        &net,
        &jobs,
        &RunOptions {
            threads: 2,
            force: true,
        },
        &|_| {},
    )
    .unwrap();
    let m = &report.memory;
    println!(
        "{} {} {} {} {} {:.2}",
        m.predicted_per_slice,
        m.measured_per_slice,
        max_resident_bytes().unwrap_or(0),
        before,
        m.inputs,
        t.elapsed().as_secs_f64()
    );
}

fn memory(quick: bool) {
    let (r, c, d) = memory_shape(quick);
    println!("memory: one slice of a {r}x{c} brickwork circuit, depth {d}, c64, merged in file order (fresh process)");
    let exe = std::env::current_exe().unwrap();
    let mut cmd = Command::new(exe);
    cmd.arg("memory-child");
    if quick {
        cmd.arg("--quick");
    }
    let out = cmd.output().unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    let f: Vec<f64> = text
        .split_whitespace()
        .filter_map(|x| x.parse().ok())
        .collect();
    if !out.status.success() || f.len() != 6 {
        println!(
            "  child failed: {text} {}",
            String::from_utf8_lossy(&out.stderr)
        );
        return;
    }
    let (pred, tracked, hwm, before, inputs, secs) = (f[0], f[1], f[2], f[3], f[4], f[5]);
    let limit = 1.1 * pred + 64.0 * 1024.0 * 1024.0;
    println!("  predicted per-slice peak     {:>12}", bytes_human(pred));
    println!(
        "  tracked by the executor      {:>12}  ({:.3} of predicted)",
        bytes_human(tracked),
        tracked / pred
    );
    println!(
        "  maximum resident size        {:>12}  ({:.3} of predicted; before the run {}, inputs {})",
        bytes_human(hwm),
        hwm / pred,
        bytes_human(before),
        bytes_human(inputs)
    );
    println!(
        "  check: resident <= 1.1 x predicted + 64 MiB = {}: {}   ({secs:.1} s)",
        bytes_human(limit),
        if hwm <= limit { "yes" } else { "NO" }
    );
}

fn throughput(quick: bool) {
    let (r, c, d, k) = if quick { (3, 4, 8, 4) } else { (4, 4, 12, 7) };
    let net = circuit(r, c, d, 11);
    let plan = circuit_plan(&net, k, 2);
    let total = plan.slice_count().unwrap();
    println!(
        "throughput: {r}x{c} brickwork circuit, depth {d}, c64, {total} slices of predicted peak {} each",
        bytes_human(plan.predicted.per_slice_peak_bytes.parse::<f64>().unwrap())
    );
    let mut rates = Vec::new();
    for threads in [1, 2] {
        let dir = tempfile::tempdir().unwrap();
        let jobs = chunk_jobs(total, &Selection::AllChunks { of: 1 }, dir.path()).unwrap();
        let cpu = cpu_seconds();
        let report = run_plan(
            &plan,
            &net,
            &jobs,
            &RunOptions {
                threads,
                force: true,
            },
            &|_| {},
        )
        .unwrap();
        let cpu = cpu_seconds() - cpu;
        let rate = total as f64 / report.seconds;
        rates.push(rate);
        println!(
            "  {threads} thread(s), {} slice(s) at once: {rate:>8.2} slices/s  ({:.2} s wall, {cpu:.2} s cpu)",
            report.slices_at_once, report.seconds
        );
    }
    println!(
        "  speed-up 2 threads / 1 thread: {:.2}",
        rates[1] / rates[0]
    );
}
