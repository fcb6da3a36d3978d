#!/bin/sh
# Executor benchmarks: the pairwise kernel against a plain faer multiply of
# the same size, the memory one slice really takes against the prediction,
# and slice throughput on a random-circuit plan. Prints figures and ratios;
# nothing about time is asserted. About 5 minutes on 2 cores (plus the first
# release build); --quick shrinks every case.
# Usage: scripts/bench-exec.sh [all|kernel|copies|memory|throughput] [--quick]
set -eu
cd "$(dirname "$0")/.."
export CARGO_BUILD_JOBS="${CARGO_BUILD_JOBS:-1}"
if [ $# -eq 0 ]; then
    set -- all
fi
exec cargo bench --bench exec -- "$@"
