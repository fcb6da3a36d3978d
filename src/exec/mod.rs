//! The CPU executor: dense tensors, the pairwise kernel, memory accounting,
//! the slice runner, partial files and gather.
//!
//! A plan runs as chunks of slices ([`runner::run_plan`]). Each slice walks
//! the plan's traversal order ([`slice::Prepared::run_slice`]), contracting
//! pairs by permuting copies and one matrix multiply
//! ([`pairwise::contract`]) while a [`memory::Meter`] counts every byte it
//! holds against the cost model's prediction. A chunk's slices are summed
//! with compensated summation and written as one checksummed
//! [`crate::partial`] file; [`gather::gather`] checks coverage and sums the
//! partials into the result, which [`npy_out`] writes as `.npy`.
//!
//! Numbers never overflow silently: floating point carries power-of-two
//! exponents ([`scale`]), counting networks are contracted exactly by
//! residues modulo primes ([`exact`], [`modular`]), and [`render`] prints
//! values of any size.

pub mod accumulate;
pub mod chunks;
pub mod dense;
pub mod exact;
pub mod gather;
pub mod matmul;
pub mod memory;
pub mod modular;
pub mod npy_out;
pub mod output;
pub mod pairwise;
pub mod permute;
pub mod render;
pub mod report;
pub mod reuse;
pub mod runner;
pub mod scalar;
pub mod scale;
pub mod slice;
pub mod verify;

pub use chunks::{chunk_jobs, ChunkJob, Selection};
pub use gather::{gather, GatherOutcome, Gathered, Incomplete};
pub use runner::{run_plan, run_plan_with, Progress, RunOptions, RunReport};
