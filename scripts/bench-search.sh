#!/usr/bin/env bash
# Benchmark of the contraction-tree search (release build, fixed seeds).
# Each family runs in its own process so peak memory is measured per family.
# Takes about 5 minutes after the build on a 2-core machine; prints tables
# with the targets beside the figures (never asserted).
#
# Usage: scripts/bench-search.sh [FAMILY ...]
#   families: lattice2d lattice3d regular brickwork random12 scale10k scale100k rate500
#   (the default set), and on request: lattices (L = 100, 316, 1000 with
#   10 s, 60 s, 120 s; about 5 minutes and 2 GB), circuits (brickwork and
#   random circuits, 50 to 100 qubits, depth 20; 1 minute), regular100k
#   (3-regular graph of 10^5 vertices, 10 s), refine100k (subtree
#   reconfiguration passes on 10^5-tensor trees; 1 minute), finders
#   (how long each simple order takes on large networks), and
#   `files SECS PATH...` (input files against file order and min-fill)
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet --bin bench-search
families=("$@")
if [ ${#families[@]} -eq 0 ]; then
    families=(rate500 lattice2d lattice3d regular brickwork random12 scale10k scale100k)
fi
for f in "${families[@]}"; do
    start=$(date +%s)
    target/release/bench-search "$f"
    echo "  ($f took $(( $(date +%s) - start )) s)"
    echo
done
