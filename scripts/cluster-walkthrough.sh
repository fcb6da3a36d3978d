#!/usr/bin/env bash
# Runs the walkthrough of docs/cluster.md as written, in /tmp/cluster-demo,
# against the local single-node Slurm (scripts/local-slurm.sh start), and
# prints every command with its output and exit code, so the page's
# outputs can be refreshed from a real run rather than edited by hand.
# Uses the release binary (built if missing). About a minute.
#
# Usage: scripts/cluster-walkthrough.sh > walkthrough-output.txt
set -uo pipefail
root=$(cd "$(dirname "$0")/.." && pwd)
cargo build --release --quiet --bin sliceplan --manifest-path "$root/Cargo.toml" >&2 || exit 1
bin="$root/target/release/sliceplan"
demo=/tmp/cluster-demo
rm -rf "$demo"
mkdir -p "$demo/bin"
ln -s "$bin" "$demo/bin/sliceplan"
cp -r "$root/demo-data" "$demo/"
cd "$demo" || exit 1
export PATH="$demo/bin:$PATH"
# No profiles of the user's or this host's: the page shows the shipped one.
export XDG_CONFIG_HOME="$demo/config"

show() {
    printf '$ %s\n' "$*"
    eval "$@" 2>&1
    local code=$?
    [ "$code" -eq 0 ] || printf '(exit %s)\n' "$code"
    return 0
}

# Waits until the scheduler holds no job of ours (at most two minutes).
drain() {
    for _ in $(seq 1 120); do
        [ -z "$(squeue --noheader --me 2>/dev/null)" ] && return 0
        sleep 1
    done
    echo "walkthrough: jobs still queued after two minutes" >&2
}

echo "=== import"
show sliceplan import demo-data/circuits/grid20-rotations.qasm --bitstring 01100101001110100101 -o grid20.toml
echo "=== fit"
show sliceplan fit grid20.toml --budget 256KiB --machine cpu-64g --trials 200
echo "=== plan"
show sliceplan plan grid20.toml --budget 256KiB --machine cpu-64g --trials 200 -o grid20.plan.toml
echo "=== jobs"
show sliceplan jobs grid20.plan.toml --out runs/grid20 --chunks 8 --max-running 4
echo "=== submit"
show sbatch runs/grid20/submit.sbatch
sleep 1
show sliceplan jobs --status runs/grid20
drain
show sliceplan jobs --status runs/grid20
echo "=== gather"
show sliceplan gather grid20.plan.toml runs/grid20/partials -o amplitude.npy
echo "=== missing"
show rm runs/grid20/partials/chunk-5-of-8.partial
show sliceplan gather grid20.plan.toml runs/grid20/partials
show sbatch runs/grid20/resubmit.sbatch
drain
show sliceplan gather grid20.plan.toml runs/grid20/partials
show sliceplan run grid20.plan.toml --all --verify --out local-partials
