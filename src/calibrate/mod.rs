//! Measuring this node for a machine profile (`sliceplan calibrate`).
//!
//! # What it measures
//!
//! For each thread count `t` in 1, 2, 4, ... below the cores, and the
//! cores, all with the executor's own kernel ([`crate::exec::pairwise::contract`],
//! faer's multiply) in a thread pool of `t` threads:
//!
//! * **rate** per dtype: multiply-adds per second of a large product
//!   (512 x 512 by 512 x 512, larger for many threads), the mean time of
//!   the operands stored in matrix layout and stored permuted (so the
//!   kernel copies them first);
//! * **efficiency** per dtype: the share of that rate one product of
//!   2^x multiply-adds reaches, x = 0, 3, ..., 24, each a batch of nearly
//!   cubic products over dimension-2 indices (as in circuits, lattices and
//!   formulas; batch indices shared by both operands) of 2^22
//!   multiply-adds in all, stored in matrix order and permuted (so the
//!   copies through many small axes count);
//! * **bandwidth**: bytes of operands and result per second for gate-like
//!   contractions whose time is memory traffic (an operand of 2^m elements
//!   over dimension-2 indices times a 2 x 2 tensor on one of them, stored
//!   permuted, as the large operands of plans mostly are): the figure at
//!   m = 22, and its share at m = 10, 14, 18, 25, at most 1 (very large
//!   tensors lose more to scattered copies; the speed-up caches give a
//!   repeated timing is not taken, as a plan's sequence of different
//!   tensors does not get it).
//!
//! Once: the **overhead** of one contraction: the mean of the small
//! contractions of [`Shape::small`], or, when larger, what whole slices of
//! a small lattice run by the executor's slice walk take per contraction
//! beyond the model's other terms,
//! and from the operating system the cores and memory this process may use
//! ([`node`]). Each figure is the median of a few repetitions of at least
//! [`Settings::min_seconds`].
//!
//! # Complexity
//!
//! About 80 timings per thread count, each around 0.1 s: about 8 s per
//! thread count, so a minute for a 64-core node (7 thread counts).
//!
//! # Example
//!
//! ```no_run
//! use sliceplan::calibrate::{calibrate, Settings};
//! let c = calibrate(&Settings::full("this-node"), &|_| {}, &Default::default()).unwrap();
//! println!("{}", c.profile_text);
//! ```

pub mod kernel;
pub mod node;
mod profile;

use std::sync::atomic::{AtomicBool, Ordering};

use num_complex::{Complex32, Complex64};

use crate::cost::machine::{Efficiency, Machine, MemoryShare, Rates, ThreadFigures};
use crate::error::{Error, Result};
use crate::exec::scalar::Scalar;
use crate::network::Dtype;
use kernel::{time_shape, Shape};
pub use node::{read_node, NodeFacts};

/// log2 sizes of one product at which the efficiency is measured.
pub const EFFICIENCY_POINTS: [u32; 9] = [0, 3, 6, 9, 12, 15, 18, 21, 24];
/// Indices of the large operand of the bandwidth timings (2^m elements).
pub const MEMORY_POINTS: [u32; 5] = [10, 14, 18, 22, 25];
/// The timing whose bandwidth is the profile's figure (share 1).
const MEMORY_REFERENCE: usize = 3;
/// log2 of the multiply-adds of each efficiency batch.
const BATCH_OPS_LOG2: u32 = 22;

/// How to calibrate.
#[derive(Debug, Clone, PartialEq)]
pub struct Settings {
    /// The profile's name.
    pub name: String,
    /// Measure at most this many threads (default: the cores).
    pub max_threads: Option<u64>,
    /// Each timing lasts at least this long, seconds.
    pub min_seconds: f64,
    /// Timings per figure; the fastest counts.
    pub reps: usize,
    /// Edge of the large square product (grown with the thread count).
    pub large_edge: usize,
}

impl Settings {
    /// The full measurement (about 8 s per thread count).
    pub fn full(name: &str) -> Settings {
        Settings {
            name: name.to_string(),
            max_threads: None,
            min_seconds: 0.02,
            reps: 3,
            large_edge: 512,
        }
    }

    /// A fast, rough measurement for tests (well under a second).
    pub fn quick(name: &str) -> Settings {
        Settings {
            name: name.to_string(),
            max_threads: Some(1),
            min_seconds: 0.0,
            reps: 1,
            large_edge: 64,
        }
    }
}

/// Progress of a calibration.
#[derive(Debug, Clone, Copy)]
pub struct Progress<'a> {
    /// Timings done.
    pub done: usize,
    /// Timings in all.
    pub total: usize,
    /// What is being measured.
    pub what: &'a str,
}

/// A finished calibration.
#[derive(Debug, Clone)]
pub struct Calibrated {
    /// The profile as TOML, with comments.
    pub profile_text: String,
    /// The same, parsed.
    pub machine: Machine,
    /// What the operating system said.
    pub node: NodeFacts,
}

/// The thread counts measured for `cores`: 1, 2, 4, ... below it, and it.
pub fn thread_counts(cores: u64) -> Vec<u64> {
    let mut t: Vec<u64> = std::iter::successors(Some(1u64), |x| x.checked_mul(2))
        .take_while(|&x| x < cores)
        .collect();
    t.push(cores.max(1));
    t
}

/// Measures this node and returns its profile. `stop` ends the work early
/// with an error.
pub fn calibrate(
    settings: &Settings,
    progress: &(dyn Fn(Progress<'_>) + Sync),
    stop: &AtomicBool,
) -> Result<Calibrated> {
    let started = std::time::Instant::now();
    let node = read_node();
    let cores = settings
        .max_threads
        .map_or(node.cores, |m| m.min(node.cores))
        .max(1);
    let counts = thread_counts(cores);
    let per_count = Dtype::ALL.len() * 2 * (1 + EFFICIENCY_POINTS.len()) + MEMORY_POINTS.len();
    let total = 4 + counts.len() * per_count;
    let mut m = Timer {
        settings,
        progress,
        stop,
        done: 0,
        total,
    };
    let small = Shape::small();
    let mut overhead: f64 = 0.0;
    for shape in &small {
        overhead += m.time::<f64>("overhead of one contraction", shape, 1)? / small.len() as f64;
    }
    let mut threads = Vec::with_capacity(counts.len());
    for &t in &counts {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(t as usize)
            .build()
            .map_err(|e| Error::Cannot(format!("cannot start {t} threads: {e}")))?;
        threads.push(pool.install(|| m.thread_figures(t))?);
    }
    // The overhead as a slice meets it: whole slices of a small lattice,
    // less what the model's other terms account for, per contraction.
    if let Some(in_slices) = m.slice_overhead(&threads[0])? {
        overhead = overhead.max(in_slices);
    }
    let node_figures = threads.last().expect("at least one thread count").clone();
    let machine = Machine {
        name: settings.name.clone(),
        description: String::new(),
        memory_bytes: node.memory_bytes.unwrap_or(1 << 30),
        usable_fraction: profile::USABLE_FRACTION,
        slices_per_node: 1,
        nodes: 1,
        cores,
        bandwidth: node_figures.bandwidth,
        rate: node_figures.rate,
        limits: Default::default(),
        overhead_seconds: overhead,
        threads,
        calibration: None,
        version: crate::cost::machine::MACHINE_VERSION,
    };
    let profile_text = profile::render(&machine, &node, settings, started.elapsed().as_secs_f64());
    let machine = Machine::parse(&profile_text, "the calibrated profile")?;
    Ok(Calibrated {
        profile_text,
        machine,
        node,
    })
}

/// Runs the timings and counts them for the progress report.
struct Timer<'a> {
    settings: &'a Settings,
    progress: &'a (dyn Fn(Progress<'_>) + Sync),
    stop: &'a AtomicBool,
    done: usize,
    total: usize,
}

impl Timer<'_> {
    /// Seconds per call of `shape` in `T`.
    fn time<T: Scalar>(&mut self, what: &str, shape: &Shape, threads: u64) -> Result<f64> {
        self.time_reps::<T>(what, shape, threads, self.settings.reps)
    }

    /// [`Timer::time`] with its own number of repetitions (more for the
    /// noisier memory-bound timings).
    fn time_reps<T: Scalar>(
        &mut self,
        what: &str,
        shape: &Shape,
        threads: u64,
        reps: usize,
    ) -> Result<f64> {
        if self.stop.load(Ordering::SeqCst) {
            return Err(Error::Cannot(
                "calibration stopped before it finished; nothing written".into(),
            ));
        }
        (self.progress)(Progress {
            done: self.done,
            total: self.total,
            what,
        });
        let s = self.settings;
        let t = time_shape::<T>(shape, threads as usize, reps, s.min_seconds);
        self.done += 1;
        Ok(t)
    }

    /// Mean seconds of a shape stored in matrix layout and permuted.
    fn both<T: Scalar>(
        &mut self,
        what: &str,
        batch: usize,
        m: usize,
        k: usize,
        n: usize,
        threads: u64,
    ) -> Result<f64> {
        let a = self.time::<T>(what, &Shape::batched(batch, m, k, n, false), threads)?;
        let b = self.time::<T>(what, &Shape::batched(batch, m, k, n, true), threads)?;
        Ok((a + b) / 2.0)
    }

    /// Seconds per contraction that whole slices take beyond the model's
    /// compute and memory terms: slices of a 6 x 6 lattice of bond
    /// dimension 2 (random f64 values, contracted row by row, 35
    /// contractions of at most a few hundred elements) run by the
    /// executor's own slice walk, one thread. `None` when the terms
    /// already cover the time.
    fn slice_overhead(&mut self, one_thread: &ThreadFigures) -> Result<Option<f64>> {
        use crate::cost::time::{slice_seconds, Speeds};
        use crate::exec::matmul::FaerMatMul;
        use crate::exec::memory::Meter as Bytes;
        use crate::exec::pairwise::Context;
        use crate::exec::slice::Prepared;
        if self.stop.load(Ordering::SeqCst) {
            return Err(Error::Cannot(
                "calibration stopped before it finished; nothing written".into(),
            ));
        }
        (self.progress)(Progress {
            done: self.done,
            total: self.total,
            what: "overhead within whole slices",
        });
        let net = crate::generate::values::fill(
            crate::generate::lattice(&[6, 6], 2, false)?,
            crate::generate::values::Filler::Random { seed: 1 },
        );
        let tree = crate::tree::Tree::left_deep(net.num_tensors());
        let merges = tree.merges().len();
        let order: Vec<usize> = (0..merges).collect();
        let bytes = Bytes::new();
        let prepared = Prepared::<f64>::new(&net, &tree, &order, &[], &bytes)?;
        let ctx = Context {
            mm: &FaerMatMul,
            meter: &bytes,
            threads: 1,
            kernel: crate::exec::pairwise::Kernel::Scaled,
        };
        let slice = || std::hint::black_box(prepared.run_slice(&ctx, &[]).data().len());
        slice();
        let t0 = std::time::Instant::now();
        slice();
        let once = t0.elapsed().as_secs_f64().max(1e-9);
        let calls = ((self.settings.min_seconds / once).ceil() as usize).clamp(1, 1 << 20);
        let mut times: Vec<f64> = (0..self.settings.reps.max(1))
            .map(|_| {
                let t = std::time::Instant::now();
                for _ in 0..calls {
                    slice();
                }
                t.elapsed().as_secs_f64() / calls as f64
            })
            .collect();
        times.sort_by(f64::total_cmp);
        let measured = times[times.len() / 2];
        self.done += 1;
        let speeds = Speeds {
            threads: 1,
            rate: one_thread.rate.f64,
            bandwidth: one_thread.bandwidth,
            overhead: 0.0,
            efficiency: one_thread.efficiency.as_ref().map(|e| e.points(Dtype::F64)),
            memory: one_thread.memory.as_ref().map(|m| m.points()),
        };
        let sets = crate::cost::NodeSets::new(&net, &tree);
        let terms = slice_seconds(&sets, &crate::cost::Dims::of(&net), Dtype::F64, &speeds);
        let per = (measured - terms) / merges as f64;
        Ok((per > 0.0).then_some(per))
    }

    /// Rate and efficiency curve of one dtype.
    fn dtype<T: Scalar>(&mut self, threads: u64) -> Result<(f64, Vec<f64>)> {
        let edge = self.large_edge(threads);
        let what = format!("{} rate, {threads} thread(s)", T::DTYPE);
        let large = self.both::<T>(&what, 1, edge, edge, edge, threads)?;
        let rate = (edge as f64).powi(3) / large;
        let mut shares = Vec::with_capacity(EFFICIENCY_POINTS.len());
        for &x in &EFFICIENCY_POINTS {
            let (m, k, n) = cubic_bits(x);
            let batch = BATCH_OPS_LOG2.saturating_sub(x).min(self.batch_cap()) as usize;
            let what = format!(
                "{} products of 2^{x} multiply-adds, {threads} thread(s)",
                T::DTYPE
            );
            let mut t = 0.0;
            for permuted in [false, true] {
                t +=
                    self.time::<T>(&what, &Shape::binary(batch, m, k, n, permuted), threads)? / 2.0;
            }
            let ops = ((batch + m + k + n) as f64).exp2();
            shares.push((ops / t / rate).clamp(1e-6, 4.0));
        }
        Ok((rate, shares))
    }

    /// Largest log2 batch: small in quick runs.
    fn batch_cap(&self) -> u32 {
        if self.settings.large_edge < 512 {
            6
        } else {
            BATCH_OPS_LOG2
        }
    }

    /// The edge of the large product for `threads` threads: 512 x the cube
    /// root of the threads, so each thread has about as much work.
    fn large_edge(&self, threads: u64) -> usize {
        let e = self.settings.large_edge as f64 * (threads as f64).cbrt();
        ((e / 64.0).ceil() as usize * 64).max(64)
    }

    /// Everything measured for one thread count.
    fn thread_figures(&mut self, threads: u64) -> Result<ThreadFigures> {
        let (f32r, f32e) = self.dtype::<f32>(threads)?;
        let (f64r, f64e) = self.dtype::<f64>(threads)?;
        let (c64r, c64e) = self.dtype::<Complex32>(threads)?;
        let (c128r, c128e) = self.dtype::<Complex64>(threads)?;
        let what = format!("bandwidth, {threads} thread(s)");
        let shift = if self.settings.large_edge < 512 { 8 } else { 0 };
        // Gate-like: an operand of m dimension-2 indices times a 2 x 2
        // tensor on one of them, stored permuted (the large operands of
        // plans mostly need a copy); the reference size is the last but one.
        let mut points = Vec::with_capacity(MEMORY_POINTS.len());
        for &m in &MEMORY_POINTS {
            let shape = Shape::binary(0, (m as usize).saturating_sub(shift), 1, 1, true);
            let [a, b, v] = shape.elements();
            let t = self.time_reps::<f64>(&what, &shape, threads, 2 * self.settings.reps - 1)?;
            points.push(((a + b + v).log2(), (a + b + v) * 8.0 / t));
        }
        let bandwidth = points[MEMORY_REFERENCE].1;
        Ok(ThreadFigures {
            threads,
            bandwidth,
            memory: Some(MemoryShare {
                elements_log2: points
                    .iter()
                    .map(|p| (p.0 * 100.0).round() / 100.0)
                    .collect(),
                // At most 1: a timing loop repeats one contraction, so its
                // data stays in cache as a plan's sequence of different
                // tensors does not; only the slowdown of very large
                // tensors is taken from the small sizes' timings.
                share: points.iter().map(|p| (p.1 / bandwidth).min(1.0)).collect(),
            }),
            rate: Rates {
                f32: f32r,
                f64: f64r,
                c64: c64r,
                c128: c128r,
            },
            efficiency: Some(Efficiency {
                ops_log2: EFFICIENCY_POINTS.iter().map(|&x| x as f64).collect(),
                f32: f32e,
                f64: f64e,
                c64: c64e,
                c128: c128e,
            }),
        })
    }
}

/// Index counts of a nearly cubic product of 2^x multiply-adds over
/// dimension-2 indices: (m, k, n) with m + k + n = x, m >= k >= n.
fn cubic_bits(x: u32) -> (usize, usize, usize) {
    let n = x / 3;
    let k = (x - n) / 2;
    let m = x - n - k;
    (m as usize, k as usize, n as usize)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thread_counts_and_cubes() {
        assert_eq!(thread_counts(1), vec![1]);
        assert_eq!(thread_counts(6), vec![1, 2, 4, 6]);
        assert_eq!(thread_counts(8), vec![1, 2, 4, 8]);
        // 2^7 = 8 x 4 x 4: 3 + 2 + 2 indices; 2^0: none (by hand).
        assert_eq!(cubic_bits(7), (3, 2, 2));
        assert_eq!(cubic_bits(0), (0, 0, 0));
    }

    #[test]
    fn a_quick_calibration_writes_a_readable_profile() {
        let c = calibrate(
            &Settings::quick("quick-test"),
            &|_| {},
            &AtomicBool::new(false),
        )
        .unwrap();
        let m = &c.machine;
        assert_eq!(
            (m.name.as_str(), m.version, m.threads.len()),
            ("quick-test", 2, 1)
        );
        assert!(m.rate.f64 > 0.0 && m.bandwidth > 0.0 && m.overhead_seconds > 0.0);
        let cal = m.calibration.as_ref().expect("calibrated profiles say so");
        assert_eq!(cal.host, c.node.host);
        assert!(cal.method.contains_key("rate") && cal.method.contains_key("bandwidth"));
    }
}
