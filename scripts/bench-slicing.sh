#!/usr/bin/env bash
# Benchmark of slicing through `fit` (release build): brickwork circuits on
# 6x6 and 8x8 grids (five seeds each) and 2D lattices 16x16 and 24x24,
# per-slice peak 2^5, 2^10 and 2^15 below unsliced, 60 s per case by
# default. Prints overheads with reuse, plain, and the floor; asserts
# nothing. About 70 cases: a full run takes over an hour.
#
# Usage: scripts/bench-slicing.sh [--time SECONDS] [--seeds N] [--reductions 5,10,15] [--no-reuse] [FAMILY-SUBSTRING ...]
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet --bin bench-slicing
uptime
target/release/bench-slicing "$@"
