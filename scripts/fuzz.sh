#!/bin/bash
# Fuzzes every parser with libFuzzer (cargo fuzz, nightly toolchain) for a
# given number of minutes per target, one target after another. Not part of
# CI. Seeds come from demo-data/, the tests (tests/bad-inputs/ and saved
# crashes) and ../shared/corpus; the corpus
# each run grows is kept under fuzz/corpus/ (not committed).
#
# Usage: scripts/fuzz.sh [-j LANES] MINUTES [TARGET...]   (default: every target)
#
# -j 2 runs two targets at a time (each fuzzer uses one core); the fuzzers
# run under `nice` so the machine stays usable.
#
# Prints one line per target: executions, seconds, and crashes found. A
# crash leaves its input under fuzz/artifacts/TARGET/; copy it to
# tests/fuzz-regressions/TARGET/ once fixed, and tests/integration/fuzz_regressions.rs
# replays it in every test run. The table is also appended to
# fuzz/results.tsv.
set -euo pipefail
cd "$(dirname "$0")/.."
root=$(pwd)

lanes=1
if [ "${1:-}" = "-j" ]; then
    lanes=${2:-}
    shift 2 || true
fi
case "$lanes" in
    '' | *[!0-9]* | 0) echo "scripts/fuzz.sh: -j needs a whole number of lanes, at least 1" >&2; exit 2 ;;
esac
if [ $# -lt 1 ]; then
    echo "usage: scripts/fuzz.sh [-j LANES] MINUTES [TARGET...]" >&2
    exit 2
fi
minutes=$1
shift
case "$minutes" in
    '' | *[!0-9]*) echo "scripts/fuzz.sh: MINUTES must be a whole number, got '$minutes'" >&2; exit 2 ;;
esac
all_targets=(native_network einsum_equation qasm_circuit cnf_formula graph_file tree_file plan_file partial_file npy_array)
if [ $# -eq 0 ]; then
    set -- "${all_targets[@]}"
fi

if ! rustup run nightly rustc --version >/dev/null 2>&1; then
    echo "scripts/fuzz.sh: needs the nightly toolchain (rustup toolchain install nightly)" >&2
    exit 2
fi
if ! cargo fuzz --version >/dev/null 2>&1; then
    cargo install cargo-fuzz --locked
fi

corpus_dir=""
for c in "${SLICEPLAN_CORPUS:-}" ../shared/corpus ../../shared/corpus; do
    if [ -n "$c" ] && [ -d "$c" ]; then corpus_dir=$c; break; fi
done

# Seeds of our own formats (plans, partials, trees) come from a small run of
# the release binary on demo data.
seed_run() {
    local out=fuzz/seed-run
    if [ -d "$out/partials" ]; then return; fi
    local bin=target/release/sliceplan
    if [ ! -x "$bin" ]; then
        cargo build --release --quiet
    fi
    rm -rf "$out" && mkdir -p "$out"
    "$bin" plan demo-data/ising-6x6.toml --time 2s --seed 1 -o "$out/ising.tree.toml" >/dev/null
    "$bin" plan demo-data/ising-6x6.toml --budget 6KiB --time 2s --seed 1 \
        -o "$out/ising.plan.toml" >/dev/null
    "$bin" run "$out/ising.plan.toml" --chunk 1 --of 4 --out "$out/partials" >/dev/null
    "$bin" import demo-data/circuits/phase-kickback.qasm --inline-max 0 -o "$out/kickback.toml" >/dev/null
}

seed() {
    local target=$1 dir=fuzz/corpus/$1
    mkdir -p "$dir"
    local -a files=()
    case "$target" in
        native_network) files=(demo-data/*.toml) ;;
        qasm_circuit) files=(demo-data/circuits/*.qasm ${corpus_dir:+$corpus_dir/qasm/*.qasm}) ;;
        cnf_formula) files=(demo-data/formulas/*.cnf ${corpus_dir:+$corpus_dir/cnf/*.cnf}) ;;
        graph_file)
            # The first byte picks the problem; one seed per problem.
            local k=0
            for f in demo-data/graphs/*; do
                for p in 0 1 2 3; do
                    { printf "\\x$(printf %02x $((p + 8)))"; cat "$f"; } >"$dir/seed-$k-$p"
                done
                k=$((k + 1))
            done
            ;;
        einsum_equation)
            printf 'ab,bc->ac|a=3,b=4|2' >"$dir/seed-0"
            printf 'ij,jk,kl->il||2' >"$dir/seed-1"
            printf 'abc,cd,de,ea->b|c=5|3' >"$dir/seed-2"
            printf 'ii->i||2' >"$dir/seed-3"
            ;;
        tree_file)
            printf 'format = "sliceplan-tree"\nversion = 1\ntensors = 5\nmerges = [[0, 1], [5, 2], [6, 3], [7, 4]]\n' >"$dir/seed-0"
            printf 'format = "sliceplan-tree"\nversion = 1\nnested = "((T0,T1),((T2,T3),T4))"\n' >"$dir/seed-1"
            seed_run
            cp demo-data/trees/*.toml fuzz/seed-run/*.tree.toml "$dir/"
            ;;
        plan_file) seed_run; cp fuzz/seed-run/*.plan.toml "$dir/" ;;
        partial_file) seed_run; cp fuzz/seed-run/partials/* "$dir/" ;;
        npy_array)
            seed_run
            cp fuzz/seed-run/kickback.data/*.npy "$dir/"
            ;;
    esac
    # The bad-input corpus of the tests, by format.
    local bad=tests/bad-inputs
    case "$target" in
        native_network) files+=("$bad"/native/*.toml) ;;
        qasm_circuit) files+=("$bad"/qasm/*.qasm) ;;
        cnf_formula) files+=("$bad"/cnf/*) ;;
        tree_file) files+=("$bad"/tree/*.toml) ;;
        plan_file) files+=("$bad"/plan/*.toml) ;;
        partial_file) files+=("$bad"/partial/*/*) ;;
        npy_array) files+=("$bad"/npy/*.npy) ;;
    esac
    for f in "${files[@]}"; do
        # Named after the path: partials of different cases share names.
        [ -f "$f" ] && cp "$f" "$dir/$(printf '%s' "$f" | tr '/' '_')" || true
    done
    # Inputs that once crashed a target stay in its corpus.
    if [ -d "tests/fuzz-regressions/$target" ]; then
        cp tests/fuzz-regressions/"$target"/* "$dir/" 2>/dev/null || true
    fi
}

cargo +nightly fuzz build --release >/dev/null
for target in "$@"; do
    seed "$target"
done
date_now=$(date -u +%Y-%m-%d)

fuzz_one() {
    local target=$1
    local log=fuzz/logs/$target.log
    mkdir -p fuzz/logs "fuzz/artifacts/$target"
    local before after execs
    before=$(find "fuzz/artifacts/$target" -type f | wc -l)
    # Limits: 30 s per input (inputs that declare 10^5 variables in a few
    # bytes take seconds under the sanitizer), 2 GiB resident and per allocation; -fork keeps
    # going after a crash so one run can find several.
    nice -n 10 cargo +nightly fuzz run --release "$target" "fuzz/corpus/$target" -- \
        -max_total_time=$((minutes * 60)) -timeout=30 -rss_limit_mb=2048 \
        -max_len=65536 -print_final_stats=1 -fork=1 -ignore_crashes=1 \
        -ignore_timeouts=1 -ignore_ooms=1 \
        -artifact_prefix="$root/fuzz/artifacts/$target/" >"$log" 2>&1 || true
    # Fork mode prints progress lines "#N: cov: ..." with the running total
    # of executions; the last one is the run's count.
    execs=$({ grep -Eo '^#[0-9]+' "$log" || true; } | tail -1 | tr -d '#')
    after=$(find "fuzz/artifacts/$target" -type f | wc -l)
    printf '%-16s %12s %8s %8s\n' "$target" "${execs:-0}" $((minutes * 60)) $((after - before))
    printf '%s\t%s\t%s\t%s\t%s\n' "$date_now" "$target" "${execs:-0}" $((minutes * 60)) $((after - before)) >>fuzz/results.tsv
}

printf '%-16s %12s %8s %8s\n' target executions seconds crashes
targets=("$@")
for ((lane = 0; lane < lanes; lane++)); do
    (
        for ((k = lane; k < ${#targets[@]}; k += lanes)); do
            fuzz_one "${targets[$k]}"
        done
    ) &
done
wait
