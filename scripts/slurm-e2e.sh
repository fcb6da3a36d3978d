#!/usr/bin/env bash
# Runs the Slurm end-to-end tests (tests/integration/slurm_e2e.rs) against the local
# single-node Slurm of scripts/local-slurm.sh. Starts Slurm when it is not
# running, and then stops it again at the end (also on failure); a Slurm
# that was already running is left running. Extra arguments go to the test
# binary (e.g. a test name).
set -euo pipefail
cd "$(dirname "$0")/.."
if ! scripts/local-slurm.sh status >/dev/null 2>&1; then
    trap 'scripts/local-slurm.sh stop' EXIT
    scripts/local-slurm.sh start
fi
scripts/local-slurm.sh check
SLICEPLAN_SLURM_E2E=1 cargo test --test integration -- --ignored --test-threads=1 --nocapture slurm_e2e:: "$@"
