#!/bin/sh
# Numerics benchmark: plain f64 against power-of-two rescaling on a random
# lattice, and against exact counting modulo primes on the independent sets
# of a grid. Prints times and ratios; nothing about time is asserted. About
# a minute on 2 cores after the release build; --quick shrinks both cases.
# Usage: scripts/bench-numerics.sh [--quick]
set -eu
cd "$(dirname "$0")/.."
export CARGO_BUILD_JOBS="${CARGO_BUILD_JOBS:-1}"
exec cargo bench --bench numerics -- "$@"
