//! sliceplan: a memory-budget slicing advisor for tensor-network contraction.
//!
//! Data flows one way (DESIGN §4): input formats build a validated
//! [`network::Network`]; a [`tree::Tree`] says how to contract it; [`cost`]
//! prices the tree (total ops, width, op width, peak, height), whole or per
//! slice; [`report`] renders the results; [`command`] holds one function per
//! command, which the `sliceplan` binary (its own `cli` module, not part of
//! this library) calls.

#![warn(missing_docs)]

pub mod calibrate;
pub mod chunk;
pub mod command;
pub mod cost;
pub mod error;
pub mod exec;
pub mod formats;
#[doc(hidden)]
pub mod fuzzing;
pub mod generate;
pub mod host;
pub(crate) mod io;
pub mod jobs;
pub mod lanes;
pub mod network;
pub mod npy;
pub mod num;
pub mod partial;
pub mod plan;
pub mod report;
pub mod search;
pub mod slicing;
pub mod tree;

pub use error::{Error, Result};
