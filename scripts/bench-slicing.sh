#!/usr/bin/env bash
# Benchmark of the slicing search (release build, fixed seeds): overhead at
# per-slice peak reductions of 2^5, 2^10 and 2^15 for greedy, greedy with
# tree re-planning, and the cover programme. Prints a table; asserts nothing.
#
# Usage: scripts/bench-slicing.sh [FAMILY-SUBSTRING ...]
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet --bin bench-slicing
target/release/bench-slicing "$@"
