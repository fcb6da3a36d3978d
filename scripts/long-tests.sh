#!/usr/bin/env bash
# Runs the long tests that `cargo test` skips (marked #[ignore]), in a
# release build: the corpus circuits whose reference contraction takes
# minutes, tree search on a 10^6-tensor lattice (about a minute, 4.4
# GB), and every example command of the README, the docs and --help. The Slurm end-to-end tests have
# their own script (scripts/slurm-e2e.sh).
set -euo pipefail
cd "$(dirname "$0")/.."
# One run of the integration test binary, filtered to the long modules
# (docs_examples runs every command of the README, the docs and --help as
# written).
cargo test --release --test integration -- --ignored --nocapture \
    formats_qasm::corpus_amplitudes_of_large_circuits search_large:: docs_examples::
