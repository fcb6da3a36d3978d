#!/usr/bin/env bash
# Builds sliceplan (release) and runs the main job on the demo data.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
bin=target/release/sliceplan
echo "== inspect: a five-stage matrix chain, priced with a hand-picked tree"
"$bin" inspect demo-data/matrix-chain.toml --tree demo-data/trees/matrix-chain.tree.toml
echo
echo "== inspect: Ising partition function on a 6x6 lattice, sliced over two bonds"
"$bin" inspect demo-data/ising-6x6.toml --slice v2_2a,v2_3a
