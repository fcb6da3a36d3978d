#!/usr/bin/env bash
# Tree search on graphs of known exact treewidth (PACE 2017 exact track, 94
# graphs in ../shared/benchmarks/pace2017-tw): each vertex an index of
# dimension 2, each edge a tensor, so the least op width is treewidth + 1.
# Prints per graph the op width minus (treewidth + 1) for min-fill and for
# the search, total ops against the min-fill tree, and the seconds taken,
# then a summary with the targets (never asserted).
#
# Takes about 16 minutes at the default 10 s per graph after the release
# build; run it with nothing else heavy on the machine (see `uptime`), as
# the search uses every core for its whole budget.
#
# Usage: scripts/bench-treewidth.sh [--seconds S] [--threads T]
#            [--objective OBJ] [--dir DIR] [INSTANCE ...]
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet --bin bench-treewidth
exec target/release/bench-treewidth "$@"
