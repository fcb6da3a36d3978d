//! The integration tests, one binary: every module below tests the
//! library or the `sliceplan` binary from outside, with values from outside
//! sources named beside each check. `support` holds what they share (the
//! one binary runner among it).
//!
//! Long tests are `#[ignore]`d and run by `scripts/long-tests.sh` (and the
//! Slurm ones by `scripts/slurm-e2e.sh`); select one module with
//! `cargo test --test integration MODULE::`.

mod support;

mod bad_inputs;
mod cli_bad_input;
mod cli_fit;
mod cli_plan;
mod command_checks;
mod cost_model;
mod dimension_overflow;
mod docs_examples;
mod end_to_end_values;
mod exec_end_to_end;
mod exec_exact;
mod exec_kernel;
mod exec_kill;
mod exec_numerics;
mod exec_property;
mod formats_cnf;
mod formats_demo;
mod formats_graph;
mod formats_import;
mod formats_qasm;
mod fuzz_regressions;
mod generate_models;
mod jobs_cli;
mod jobs_scripts;
mod jobs_snapshots;
mod jobs_status;
mod report_charts;
mod reuse;
mod run_memory_check;
mod search_baseline;
mod search_cli;
mod search_elimination;
mod search_exact;
mod search_finders;
mod search_guarantees;
mod search_large;
mod slicing;
mod slurm_e2e;
mod stale_results;
mod steps_file;
mod time_model;
