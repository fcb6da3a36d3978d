//! Running slices of a plan: chunk after chunk, slices in parallel when the
//! budget allows several at once, one partial written atomically per chunk.
//!
//! # Memory
//!
//! The plan's per-slice prediction ([`predicted_slice_peak_bytes`], the cost
//! model under [`PeakModel::EXECUTOR`]) covers everything one slice
//! allocates: inputs copied because the kernel needs another layout,
//! intermediates, the operand copies of each multiply, and the final
//! permuted output. Every such buffer counts on the slice's own meter, and a
//! slice that holds more than predicted fails the run. Not covered, and
//! reported separately: the full input tensors (held once per process and
//! shared by all slices), the chunk's running sum, faer's small packing
//! buffers, and the program itself; with `k` slices at once the process
//! holds up to `k` slices' working sets.
//!
//! # Arithmetic
//!
//! [`Numerics::for_network`] chooses it: floating point with power-of-two
//! exponents, or, for a counting network whose bound passes the mantissa,
//! residues modulo several primes. A modular slice is contracted once per
//! prime, one prime after the other, in f64 (8 bytes, as much as c64 and
//! less than c128; f32 plans are never run modular), so its peak is that of
//! one f64 slice and within the prediction. The chunk's residue sums (4
//! bytes per element and prime) are held beside the slices, like the float
//! running sum.

use std::collections::BTreeMap;
use std::path::PathBuf;
use std::sync::Arc;
use std::time::Instant;

use rayon::prelude::*;
use serde::Serialize;

use super::accumulate::Accumulator;
use super::chunks::ChunkJob;
use super::dense::Dense;
use super::exact::Numerics;
use super::matmul::{FaerMatMul, MatMul};
use super::memory::{max_resident_bytes, Meter};
use super::modular::{Prime, ResidueSum};
use super::output::OutputLayout;
use super::pairwise::{Context, Kernel};
use super::scalar::{lanes_per_element, Scalar};
use super::slice::Prepared;
use crate::cost::{NodeSets, PeakModel};
use crate::error::{Error, Result};
use crate::network::{Dtype, IndexId, Network};
use crate::num::{product, Count};
use crate::partial::{read_partial, write_partial, Arithmetic, Partial, PartialHeader};
use crate::plan::Plan;
use crate::tree::Tree;

/// How to run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RunOptions {
    /// Threads to use in all.
    pub threads: usize,
    /// Re-run chunks whose valid partial already exists.
    pub force: bool,
}

/// What the runner reports while it works.
#[derive(Debug, Clone, Copy)]
pub enum Progress<'a> {
    /// About to run `slices` slices in `chunks` chunks (skipped ones included).
    Begin {
        /// Slices in all selected chunks.
        slices: u64,
        /// Chunks selected.
        chunks: usize,
    },
    /// `n` more slices are done (or were skipped with their chunk).
    Slices(u64),
    /// A chunk's partial was written, or already existed and was kept.
    ChunkDone {
        /// The chunk.
        job: &'a ChunkJob,
        /// True when it was skipped because a valid partial existed.
        skipped: bool,
    },
}

/// Memory figures of a run (bytes).
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct MemoryFigures {
    /// Per-slice peak predicted by the cost model for this plan's tree, order
    /// and slice set under the executor's rule.
    pub predicted_per_slice: u64,
    /// The figure stored in the plan file.
    pub plan_predicted_per_slice: String,
    /// The most any slice held, by the executor's own count.
    pub measured_per_slice: u64,
    /// The full input tensors, held once per process.
    pub inputs: u64,
    /// The chunk's running sum at its largest.
    pub accumulator: u64,
    /// The most the process held by the executor's count (inputs, held
    /// intermediates and the slices running at once).
    pub tracked_process_peak: u64,
    /// The process's maximum resident size at the end (VmHWM), when known.
    pub max_resident: Option<u64>,
    /// Slice-invariant intermediates computed once and held (0 without
    /// reuse).
    pub held_intermediates: usize,
    /// Their bytes by the cost model.
    pub predicted_reused: u64,
    /// The most the setup (computing them) may hold by the cost model.
    pub predicted_setup: u64,
    /// The most the setup held, by the executor's own count.
    pub measured_setup: u64,
}

/// What a run did.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunReport {
    /// The plan's arithmetic fingerprint.
    pub plan_fingerprint: String,
    /// Slices in the plan.
    pub slices_total: u64,
    /// Slices contracted in this run.
    pub slices_run: u64,
    /// Chunks contracted and written.
    pub chunks_run: usize,
    /// Chunks skipped because their valid partial existed.
    pub chunks_skipped: usize,
    /// The partial files of the selected chunks.
    pub partials: Vec<PathBuf>,
    /// Threads used.
    pub threads: usize,
    /// Slices run at the same time.
    pub slices_at_once: usize,
    /// Wall time of the contraction, seconds.
    pub seconds: f64,
    /// Memory.
    pub memory: MemoryFigures,
    /// The arithmetic used, and whether the result is exact.
    pub numerics: Numerics,
}

/// The cost model's per-slice peak in bytes for running `tree` in `order`
/// with `sliced` fixed, under [`PeakModel::EXECUTOR`]; `None` beyond 2^64.
pub fn predicted_slice_peak_bytes(
    net: &Network,
    tree: &Tree,
    order: &[usize],
    sliced: &[IndexId],
    dtype: Dtype,
) -> Option<u64> {
    let sets = NodeSets::new(net, tree);
    let dims: Vec<u64> = net
        .dims()
        .iter()
        .enumerate()
        .map(|(e, &d)| if sliced.contains(&e) { 1 } else { d })
        .collect();
    let sizes: Vec<Count> = sets
        .indices
        .iter()
        .map(|s| match product(s.iter().map(|&e| dims[e])) {
            Some(v) => Count::from_u128(v),
            None => Count::from_log2(f64::INFINITY),
        })
        .collect();
    let peak = sets.live_peak(&sizes, order, PeakModel::EXECUTOR).exact?;
    u64::try_from(peak.checked_mul(dtype.bytes() as u128)?).ok()
}

/// Slices a run with `threads` threads keeps in memory at once.
pub fn slices_at_once(plan: &Plan, threads: usize) -> usize {
    plan.slices_at_once.max(1).min(threads.max(1) as u64) as usize
}

/// Bytes a process running `plan` with `threads` threads is predicted to
/// hold at most: the full inputs once, the output accumulator, and the
/// per-slice peak (for the plan's own order) for each slice running at
/// once; with reuse, also the held intermediates, or the setup that
/// computes them when that is more. `None` beyond 2^64.
pub fn predicted_process_bytes(plan: &Plan, net: &Network, threads: usize) -> Option<u64> {
    let tree = plan.tree().ok()?;
    let sliced = plan.sliced_ids(net).ok()?;
    // A network the executor refuses (no values, say) is refused with its
    // own message by the run; price it as floating point meanwhile.
    let float = Numerics::for_network(net, plan.dtype)
        .map_or(true, |n| matches!(n.arithmetic, Arithmetic::Float));
    let (split, _) = split_for(plan, net, &tree, &sliced, float).ok()?;
    let per_slice = super::reuse::slice_peak_bytes(net, &tree, &split, &sliced, plan.dtype)?;
    let held = super::reuse::held_bytes(net, &tree, &split, plan.dtype)?;
    let setup = super::reuse::setup_peak_bytes(net, &tree, &split, plan.dtype)?;
    let fixed = crate::cost::memory::inputs_bytes(net, plan.dtype)
        + crate::cost::memory::output_bytes(net, plan.dtype);
    let fixed = if fixed < u64::MAX as f64 {
        fixed.ceil() as u64
    } else {
        return None;
    };
    let slices = per_slice
        .checked_mul(slices_at_once(plan, threads) as u64)?
        .checked_add(held)?;
    slices.max(setup).checked_add(fixed)
}

/// How a run splits the plan's traversal: with reuse (the plan's held
/// intermediates, floating-point arithmetic), setup and per-slice parts of
/// the plan's order; otherwise every merge per slice, in the plan's order,
/// or, for a plan with held intermediates run without them (modular
/// arithmetic keeps nothing across primes), in the order of least
/// per-slice peak. Returns the split and the whole order.
fn split_for(
    plan: &Plan,
    net: &Network,
    tree: &Tree,
    sliced: &[IndexId],
    float: bool,
) -> Result<(super::reuse::Split, Vec<usize>)> {
    if plan.reuse && !plan.held.is_empty() {
        if float {
            let split = super::reuse::Split::new(net, tree, &plan.order, sliced, &plan.held)?;
            return Ok((split, plan.order.clone()));
        }
        let order = NodeSets::new(net, tree)
            .evaluate_sliced(net, sliced, PeakModel::EXECUTOR)
            .per_slice
            .order;
        return Ok((super::reuse::Split::none(tree, &order), order));
    }
    Ok((
        super::reuse::Split::none(tree, &plan.order),
        plan.order.clone(),
    ))
}

/// Runs `jobs` of `plan` on `net` with faer's multiply.
pub fn run_plan(
    plan: &Plan,
    net: &Network,
    jobs: &[ChunkJob],
    options: &RunOptions,
    progress: &(dyn Fn(Progress<'_>) + Sync),
) -> Result<RunReport> {
    run_plan_with(&FaerMatMul, plan, net, jobs, options, progress)
}

/// Runs `jobs` of `plan` on `net` with the given multiply back end, in the
/// arithmetic [`Numerics::for_network`] chooses.
pub fn run_plan_with<K: MatMul>(
    mm: &K,
    plan: &Plan,
    net: &Network,
    jobs: &[ChunkJob],
    options: &RunOptions,
    progress: &(dyn Fn(Progress<'_>) + Sync),
) -> Result<RunReport> {
    check_runnable(plan, net)?;
    let numerics = Numerics::for_network(net, plan.dtype)?;
    run_plan_numerics(mm, plan, net, jobs, options, &numerics, progress)
}

/// Runs `jobs` in the given arithmetic (benchmarks compare arithmetics on
/// one plan with it; `gather` accepts only the partials of the arithmetic
/// [`Numerics::for_network`] chooses).
pub fn run_plan_numerics<K: MatMul>(
    mm: &K,
    plan: &Plan,
    net: &Network,
    jobs: &[ChunkJob],
    options: &RunOptions,
    numerics: &Numerics,
    progress: &(dyn Fn(Progress<'_>) + Sync),
) -> Result<RunReport> {
    let n = numerics;
    if matches!(n.arithmetic, Arithmetic::Modular { .. }) {
        if plan.dtype.bytes() < 8 {
            return Err(Error::Cannot(format!(
                "modular arithmetic computes in 8-byte elements, more than the plan's {} predicts",
                plan.dtype
            )));
        }
        return run_typed::<f64, K>(mm, plan, net, jobs, options, n, progress);
    }
    match plan.dtype {
        Dtype::F32 => run_typed::<f32, K>(mm, plan, net, jobs, options, n, progress),
        Dtype::F64 => run_typed::<f64, K>(mm, plan, net, jobs, options, n, progress),
        Dtype::C64 => {
            run_typed::<num_complex::Complex32, K>(mm, plan, net, jobs, options, n, progress)
        }
        Dtype::C128 => {
            run_typed::<num_complex::Complex64, K>(mm, plan, net, jobs, options, n, progress)
        }
    }
}

/// Checks that `plan` fits `net` and that `net` has values to contract.
pub fn check_runnable(plan: &Plan, net: &Network) -> Result<()> {
    if plan.tensors != net.num_tensors() {
        return Err(Error::in_source(
            "plan",
            format!(
                "the plan's tree is over {} tensors, the network has {}",
                plan.tensors,
                net.num_tensors()
            ),
        ));
    }
    plan.check_against(net)?;
    if let Some(t) = net.tensors.iter().find(|t| t.values.is_none()) {
        return Err(Error::in_source(
            &net.name,
            format!("tensor '{}' has no values, so the network cannot be contracted; give `values`, `npy` or `fill` for every tensor", t.name),
        ));
    }
    Ok(())
}

struct Setup<'p, T, K> {
    mm: &'p K,
    plan: &'p Plan,
    prepared: Prepared<T>,
    layout: OutputLayout,
    process: Arc<Meter>,
    limit: u64,
    numerics: &'p Numerics,
    /// The primes of modular arithmetic (empty for float).
    primes: Vec<Prime>,
}

/// One slice's output block.
enum SliceValue<T> {
    /// Floating point, with its exponent.
    Float(Dense<T>),
    /// Residues, prime-major (all elements for the first prime, then the next).
    Residues(Vec<f64>),
}

/// A chunk's running sum of one output block.
enum BlockSum {
    Float(Accumulator),
    Modular(ResidueSum),
}

impl BlockSum {
    fn bytes(&self) -> u64 {
        match self {
            BlockSum::Float(a) => a.bytes(),
            BlockSum::Modular(r) => r.bytes(),
        }
    }
}

impl<T: Scalar, K: MatMul> Setup<'_, T, K> {
    /// Runs slice `s`; returns its block number, block and tracked peak.
    fn slice(&self, s: u64, threads: usize) -> Result<(u64, SliceValue<T>, u64)> {
        let values = self.plan.slice_assignment(s);
        let meter = Meter::child(&self.process);
        let mut ctx = Context {
            mm: self.mm,
            meter: &meter,
            threads,
            kernel: if self.numerics.scaled {
                Kernel::Scaled
            } else {
                Kernel::Unscaled
            },
        };
        let out = if self.primes.is_empty() {
            SliceValue::Float(self.prepared.run_slice(&ctx, &values))
        } else {
            // One prime after the other: each one's buffers are gone before
            // the next starts, so the peak is that of one contraction.
            let mut residues = Vec::with_capacity(self.primes.len() * self.prepared.block_len());
            for prime in &self.primes {
                ctx.kernel = Kernel::Modular(*prime);
                let block = self.prepared.run_slice(&ctx, &values);
                residues.extend(block.data().iter().map(|x| x.to_lanes()[0]));
            }
            SliceValue::Residues(residues)
        };
        let peak = meter.peak();
        if peak > self.limit {
            return Err(Error::Cannot(format!(
                "slice {s} held {peak} bytes, more than the {} bytes the cost model predicts per slice; the executor broke its memory rule (a bug: please report it with the plan)",
                self.limit
            )));
        }
        Ok((self.layout.block_of(&values), out, peak))
    }
}

/// What one chunk did.
struct JobStats {
    skipped: bool,
    slices_run: u64,
    peak: u64,
    accumulator: u64,
}

/// Everything a chunk needs besides its own range.
struct JobContext<'a, 'p, T, K> {
    setup: &'a Setup<'p, T, K>,
    fingerprint: &'a str,
    force: bool,
    progress: &'a (dyn Fn(Progress<'_>) + Sync),
}

impl<T: Scalar, K: MatMul> JobContext<'_, '_, T, K> {
    /// Runs one chunk, `at_once` slices at a time (in the current thread
    /// pool) with `gemm_threads` threads per multiply, and writes its partial.
    fn run(&self, job: &ChunkJob, at_once: usize, gemm_threads: usize) -> Result<JobStats> {
        let setup = self.setup;
        let plan = setup.plan;
        let len = job.slices.end - job.slices.start;
        if !self.force
            && existing_is_valid(
                job,
                self.fingerprint,
                plan.dtype,
                &setup.layout,
                &setup.numerics.arithmetic,
            )
        {
            (self.progress)(Progress::Slices(len));
            (self.progress)(Progress::ChunkDone { job, skipped: true });
            return Ok(JobStats {
                skipped: true,
                slices_run: 0,
                peak: 0,
                accumulator: 0,
            });
        }
        let w = lanes_per_element(plan.dtype);
        let block_len = setup.prepared.block_len();
        let primes: Vec<u64> = setup.primes.iter().map(|p| p.p).collect();
        let mut blocks: BTreeMap<u64, BlockSum> = BTreeMap::new();
        let (mut peak, mut acc_bytes) = (0u64, 0u64);
        let mut s = job.slices.start;
        while s < job.slices.end {
            let e = (s + at_once as u64).min(job.slices.end);
            // Results are added in slice order, so the sum does not depend on
            // which thread finished first.
            let results: Vec<Result<(u64, SliceValue<T>, u64)>> = if e - s > 1 {
                (s..e)
                    .into_par_iter()
                    .map(|x| setup.slice(x, gemm_threads))
                    .collect()
            } else {
                vec![setup.slice(s, gemm_threads)]
            };
            for r in results {
                let (key, out, p) = r?;
                peak = peak.max(p);
                let sum = blocks.entry(key).or_insert_with(|| {
                    if primes.is_empty() {
                        BlockSum::Float(Accumulator::new(block_len, w))
                    } else {
                        BlockSum::Modular(ResidueSum::new(block_len, &primes))
                    }
                });
                match (sum, out) {
                    (BlockSum::Float(acc), SliceValue::Float(d)) => acc.add_scaled(d.data(), d.exp),
                    (BlockSum::Modular(sum), SliceValue::Residues(r)) => sum.add_lanes(&r),
                    _ => unreachable!("one arithmetic per run"),
                }
            }
            acc_bytes = acc_bytes.max(blocks.values().map(BlockSum::bytes).sum());
            (self.progress)(Progress::Slices(e - s));
            s = e;
        }
        let mut lanes = Vec::with_capacity(blocks.len() * block_len * w * primes.len().max(1));
        let mut exponents = Vec::new();
        for sum in blocks.values() {
            match sum {
                BlockSum::Float(acc) => {
                    let (l, exp) = acc.finish_normalized();
                    if l.iter().any(|x| !x.is_finite()) {
                        return Err(Error::Cannot(format!(
                            "slices {}..{} sum to NaN or an infinite value; nothing was written (the inputs are finite, so this is a bug: please report it with the plan)",
                            job.slices.start, job.slices.end
                        )));
                    }
                    lanes.extend(l);
                    exponents.push(exp);
                }
                BlockSum::Modular(sum) => {
                    for r in sum.lanes() {
                        lanes.push(r);
                        if w == 2 {
                            lanes.push(0.0);
                        }
                    }
                }
            }
        }
        let partial = Partial {
            header: PartialHeader {
                plan_fingerprint: self.fingerprint.to_string(),
                chunk: job.chunk,
                first_slice: job.slices.start,
                end_slice: job.slices.end,
                slices_summed: len,
                dtype: plan.dtype,
                shape: setup.layout.shape.clone(),
                block_shape: setup.layout.block_shape.clone(),
                blocks: blocks.keys().copied().collect(),
                arithmetic: setup.numerics.arithmetic.clone(),
                exponents,
            },
            lanes,
        };
        write_partial(&job.path, &partial)?;
        (self.progress)(Progress::ChunkDone {
            job,
            skipped: false,
        });
        Ok(JobStats {
            skipped: false,
            slices_run: len,
            peak,
            accumulator: acc_bytes,
        })
    }
}

fn run_typed<T: Scalar, K: MatMul>(
    mm: &K,
    plan: &Plan,
    net: &Network,
    jobs: &[ChunkJob],
    options: &RunOptions,
    numerics: &Numerics,
    progress: &(dyn Fn(Progress<'_>) + Sync),
) -> Result<RunReport> {
    check_runnable(plan, net)?;
    let total = plan
        .slice_count()
        .ok_or_else(|| Error::Cannot("the plan has more than 2^64 slices".into()))?;
    let tree = plan.tree()?;
    let sliced = plan.sliced_ids(net)?;
    let float = matches!(numerics.arithmetic, Arithmetic::Float);
    let (split, order) = split_for(plan, net, &tree, &sliced, float)?;
    let too_big = || {
        Error::Cannot("one slice of this plan needs more than 2^64 bytes; it cannot be run".into())
    };
    let limit = super::reuse::slice_peak_bytes(net, &tree, &split, &sliced, plan.dtype)
        .ok_or_else(too_big)?;
    let setup_limit =
        super::reuse::setup_peak_bytes(net, &tree, &split, plan.dtype).ok_or_else(too_big)?;
    let predicted_reused =
        super::reuse::held_bytes(net, &tree, &split, plan.dtype).ok_or_else(too_big)?;
    let fingerprint = plan.fingerprint();
    let layout = OutputLayout::new(net, &sliced);
    let started = Instant::now();
    let process = Meter::new();
    let mut prepared = Prepared::<T>::new(net, &tree, &order, &sliced, &process)?;
    // The slice-invariant intermediates: computed once, before any slice,
    // on their own meter (a child of the process's), and kept.
    let measured_setup = if split.held.is_empty() {
        0
    } else {
        let meter = Meter::child(&process);
        let ctx = Context {
            mm,
            meter: &meter,
            threads: options.threads.max(1),
            kernel: if numerics.scaled {
                Kernel::Scaled
            } else {
                Kernel::Unscaled
            },
        };
        let peak = prepared.hold(&ctx, &split);
        if peak > setup_limit {
            return Err(Error::Cannot(format!(
                "computing the held intermediates took {peak} bytes, more than the {setup_limit} bytes the cost model predicts; the executor broke its memory rule (a bug: please report it with the plan)"
            )));
        }
        peak
    };
    let setup = Setup {
        mm,
        plan,
        prepared,
        layout,
        process,
        limit,
        numerics,
        primes: match &numerics.arithmetic {
            Arithmetic::Float => Vec::new(),
            Arithmetic::Modular { primes } => primes.iter().map(|&p| Prime::new(p)).collect(),
        },
    };
    let threads = options.threads.max(1);
    let at_once = slices_at_once(plan, threads);
    let per_slice_threads = (threads / at_once).max(1);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| Error::Cannot(format!("cannot start {threads} threads: {e}")))?;
    progress(Progress::Begin {
        slices: jobs.iter().map(|j| j.slices.end - j.slices.start).sum(),
        chunks: jobs.len(),
    });
    let ctx = JobContext {
        setup: &setup,
        fingerprint: &fingerprint,
        force: options.force,
        progress,
    };
    let stats: Vec<JobStats> = if at_once > 1 && jobs.len() > 1 {
        // Several chunks at once, each one slice at a time: chunks are dealt
        // round-robin to `at_once` lanes so partials appear in about the
        // order of their chunk numbers.
        let lanes: Vec<Vec<&ChunkJob>> = (0..at_once)
            .map(|l| jobs.iter().skip(l).step_by(at_once).collect())
            .collect();
        let per_lane: Vec<Result<Vec<JobStats>>> = pool.install(|| {
            lanes
                .par_iter()
                .map(|lane| {
                    lane.iter()
                        .map(|job| ctx.run(job, 1, per_slice_threads))
                        .collect()
                })
                .collect()
        });
        per_lane
            .into_iter()
            .collect::<Result<Vec<_>>>()?
            .into_iter()
            .flatten()
            .collect()
    } else {
        let gemm_threads = if at_once > 1 {
            per_slice_threads
        } else {
            threads
        };
        jobs.iter()
            .map(|job| pool.install(|| ctx.run(job, at_once, gemm_threads)))
            .collect::<Result<_>>()?
    };
    let slices_run: u64 = stats.iter().map(|s| s.slices_run).sum();
    let measured = stats.iter().map(|s| s.peak).max().unwrap_or(0);
    let acc_bytes = stats.iter().map(|s| s.accumulator).max().unwrap_or(0);
    let skipped = stats.iter().filter(|s| s.skipped).count();
    let chunks_run = stats.len() - skipped;
    debug_assert!(total >= slices_run);
    Ok(RunReport {
        plan_fingerprint: fingerprint,
        slices_total: total,
        slices_run,
        chunks_run,
        chunks_skipped: skipped,
        partials: jobs.iter().map(|j| j.path.clone()).collect(),
        threads,
        slices_at_once: at_once,
        seconds: started.elapsed().as_secs_f64(),
        memory: MemoryFigures {
            predicted_per_slice: limit,
            plan_predicted_per_slice: plan.predicted.per_slice_peak_bytes.clone(),
            measured_per_slice: measured,
            inputs: setup.prepared.input_bytes(),
            accumulator: acc_bytes,
            tracked_process_peak: setup.process.peak(),
            max_resident: max_resident_bytes(),
            held_intermediates: split.held.len(),
            predicted_reused,
            predicted_setup: setup_limit,
            measured_setup,
        },
        numerics: numerics.clone(),
    })
}

/// True when the job's partial exists, passes its checksum and belongs to
/// this plan, slice range, output and arithmetic.
fn existing_is_valid(
    job: &ChunkJob,
    fingerprint: &str,
    dtype: Dtype,
    layout: &OutputLayout,
    arithmetic: &Arithmetic,
) -> bool {
    match read_partial(&job.path) {
        Ok(p) => {
            let h = &p.header;
            h.plan_fingerprint == fingerprint
                && h.slices() == job.slices
                && h.dtype == dtype
                && h.shape == layout.shape
                && h.block_shape == layout.block_shape
                && &h.arithmetic == arithmetic
        }
        Err(_) => false,
    }
}
