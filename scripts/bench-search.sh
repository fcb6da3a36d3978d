#!/usr/bin/env bash
# Benchmark of the contraction-tree search (release build, fixed seeds).
# Each family runs in its own process so peak memory is measured per family.
# Takes about 5 minutes after the build on a 2-core machine; prints tables
# with the targets beside the figures (never asserted).
#
# Usage: scripts/bench-search.sh [FAMILY ...]
#   families: lattice2d lattice3d regular brickwork random12 scale10k scale100k rate500
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
