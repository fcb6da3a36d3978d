#!/usr/bin/env bash
# Runs the test suite (the README's test command; CI runs it too).
set -euo pipefail
cd "$(dirname "$0")/.."
cargo test --quiet
