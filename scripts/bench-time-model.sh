#!/bin/sh
# The time model against the executor: calibrates this machine (about
# 30 s on 2 cores), then plans and runs 16 networks (circuits, lattices,
# formulas, random networks, a matrix chain; per-slice times from about a
# millisecond to tens of seconds) and prints predicted against measured
# seconds per slice with their ratio. Nothing about time is asserted.
# Figures depend on what else runs on the machine: the load average is
# printed at the start and the end. About 2-4 minutes after the build.
# Usage: scripts/bench-time-model.sh [--threads T] [--profile FILE] [--only NAME]
set -eu
cd "$(dirname "$0")/.."
export CARGO_BUILD_JOBS="${CARGO_BUILD_JOBS:-1}"
cargo build --release --bin bench-time-model
exec target/release/bench-time-model "$@"
