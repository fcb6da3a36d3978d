#!/usr/bin/env bash
# Runs the long tests that `cargo test` skips (marked #[ignore]), in a
# release build: the corpus circuits whose reference contraction takes
# minutes, tree search on a 10^6-tensor lattice (about a minute, 4.4
# GB), and every example command of the README, the docs and --help. The Slurm end-to-end tests have their own script
# (scripts/slurm-e2e.sh).
set -euo pipefail
cd "$(dirname "$0")/.."
cargo test --release --test formats_qasm -- --ignored corpus_amplitudes_of_large_circuits
cargo test --release --test search_large -- --ignored --nocapture
# Every command of the README, the docs and --help, as written.
cargo test --release --test docs_examples -- --ignored
