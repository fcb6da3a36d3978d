#!/usr/bin/env bash
# Builds sliceplan (release) and runs the main job on the demo data: will a
# 6x6 Ising lattice fit a small memory budget, with how many slices; the
# plan file; every slice run on this machine; the gathered value.
# Outputs go to target/demo/.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
bin=target/release/sliceplan
out=target/demo
rm -rf "$out"
mkdir -p "$out"

echo "== 1. Will the 6x6 Ising lattice fit 6 KiB per process?"
"$bin" fit demo-data/ising-6x6.toml --budget 6KiB --trials 32 --svg "$out/frontier.svg" --csv "$out/frontier.csv"

echo
echo "== 2. The plan: tree, slice set, predicted costs"
"$bin" plan demo-data/ising-6x6.toml --budget 6KiB --trials 32 -o "$out/ising.plan.toml" | tail -n 2

echo
echo "== 3. Every slice on this machine, then the gathered value"
"$bin" run "$out/ising.plan.toml" --all --out "$out/partials"

echo
echo "== 4. The same plan as a Slurm job array (written, not submitted)"
"$bin" jobs "$out/ising.plan.toml" --out "$out/jobs" --time-per-task 00:05:00
echo
echo "Frontier chart: $out/frontier.svg; job scripts: $out/jobs/"
