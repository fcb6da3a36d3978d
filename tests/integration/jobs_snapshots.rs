//! Snapshots of the generated job files for one fixed plan, with the
//! temporary directory, the tool version and the plan fingerprint
//! normalised to `<BASE>`, `<VERSION>` and `<FP>`.
//!
//! The fixture: the 6 x 6 grid network (96 tensors, f64), 4 bonds sliced
//! (16 slices), the plan's per-slice peak set to exactly 1 MiB and its model
//! estimate to 30 s per slice, 8 chunks, at most 3 running, one slice at once.

use crate::support::jobs as jobs_support;

use std::path::{Path, PathBuf};

use jobs_support::*;
use sliceplan::plan::{read_plan, write_plan};

/// Writes the fixture's job directory; returns (base dir, job dir, plan fingerprint).
fn fixture(tmp: &Path) -> (String, PathBuf, String) {
    let base = tmp.canonicalize().unwrap();
    let plan_path = write_grid_plan(&base.join("in"), 6, 4, Some(30.0));
    let mut plan = read_plan(&plan_path).unwrap();
    plan.predicted.per_slice_peak_bytes = "1048576".into();
    write_plan(&plan_path, &plan).unwrap();
    let out = base.join("job");
    let (code, stdout, stderr) = sliceplan(&[
        "jobs".as_ref(),
        plan_path.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
        "--chunks".as_ref(),
        "8".as_ref(),
        "--max-running".as_ref(),
        "3".as_ref(),
        "--partition".as_ref(),
        "compute".as_ref(),
        "--account".as_ref(),
        "proj-7".as_ref(),
        "--binary".as_ref(),
        "/opt/sliceplan/bin/sliceplan".as_ref(),
    ]);
    assert_eq!(code, Some(0), "{stdout}{stderr}");
    (base.display().to_string(), out, plan.fingerprint())
}

fn normalised(text: &str, base: &str, fp: &str) -> String {
    text.replace(base, "<BASE>")
        .replace(fp, "<FP>")
        .replace(&fp[..8], "<FP8>")
        .replace(env!("CARGO_PKG_VERSION"), "<VERSION>")
}

fn read(dir: &Path, file: &str) -> String {
    std::fs::read_to_string(dir.join(file)).unwrap()
}

// --mem: inputs = 36 copy tensors (4 corners x 4 + 16 edge sites x 8 + 16
// inner sites x 16 = 400 elements) + 60 edge matrices x 4 = 640 elements x 8
// bytes = 5,120 B; output: a real scalar, accumulated in one f64 lane and
// its compensation, 16 B; peak 1 MiB. Need = 1,053,712 B; x 1.10 =
// 1,159,083.2 B = 1.105 MiB -> 2 MiB, + 128 MiB = 130M (closed form).
// --time: 16 slices / 8 chunks = 2 slices a task, 1 at once: 2 x 30 s x 2 +
// 120 s = 240 s = 00:04:00 (closed form).
const SUBMIT: &str = r#"#!/bin/bash
#SBATCH --job-name="sliceplan-<FP8>"
#SBATCH --array=0-7%3
#SBATCH --cpus-per-task=1
#SBATCH --mem=130M
#SBATCH --time=00:04:00
#SBATCH --partition="compute"
#SBATCH --account="proj-7"
#SBATCH --chdir="<BASE>/job"
#SBATCH --output="<BASE>/job/logs/chunk-%a.out"
#SBATCH --error="<BASE>/job/logs/chunk-%a.err"
#SBATCH --open-mode=append
#
# Written by `sliceplan jobs` <VERSION>: all chunks of plan <FP>
# (16 slices in 8 chunks; see manifest.toml beside this file).
# Submit with: sbatch '<BASE>/job/submit.sbatch'
# Task I runs chunk I and writes partials/chunk-I-of-8.partial; it exits
# with `sliceplan run`'s code, so the scheduler records a failed chunk as FAILED.
# --mem: inputs 5.00 KiB + output 16 B + 1 x 1.00 MiB per-slice peak = 1.00 MiB, +10% +128 MiB for the program.
# --time: 2 round(s) x 30.000 s per slice (model estimate on test-node with 1 thread(s) per slice) x 2 safety + 120 s start-up, rounded up to minutes.
set -u
bin='/opt/sliceplan/bin/sliceplan'
plan='<BASE>/in/grid.plan.toml'
partials='<BASE>/job/partials'
logs='<BASE>/job/logs'
chunks=8
threads=1
chunk=${SLURM_ARRAY_TASK_ID:?this script is a Slurm job array: submit it with sbatch}
rm -f "$logs/chunk-$chunk.exit"
echo "== chunk $chunk of $chunks: job ${SLURM_ARRAY_JOB_ID:-?}_$chunk on $(hostname) at $(date -u +%Y-%m-%dT%H:%M:%SZ)"
status=0
"$bin" run "$plan" --chunk "$chunk" --of "$chunks" --threads "$threads" --out "$partials" || status=$?
printf '%s\n' "$status" >"$logs/chunk-$chunk.exit.tmp" && mv -f "$logs/chunk-$chunk.exit.tmp" "$logs/chunk-$chunk.exit"
echo "== chunk $chunk finished with exit code $status at $(date -u +%Y-%m-%dT%H:%M:%SZ)"
exit "$status"
"#;

const LOCAL: &str = r#"#!/usr/bin/env bash
# Runs the chunks of plan <FP> on this machine without a scheduler: the same
# command per chunk as submit.sbatch, the same partial and log files.
# Written by `sliceplan jobs` <VERSION>; paths are absolute.
#
# usage: run-local.sh [-j PARALLEL] [CHUNK ...]
#   -j P    run P chunks at once (default 1: one after another); each uses 1 thread(s)
#   CHUNK   chunk ids to run (default: all, 0 to 7)
# Exit code 0 when every chunk ran, 1 when some failed (listed), 2 on bad usage.
set -u
bin='/opt/sliceplan/bin/sliceplan'
plan='<BASE>/in/grid.plan.toml'
partials='<BASE>/job/partials'
logs='<BASE>/job/logs'
chunks=8
threads=1
parallel=1
usage="usage: run-local.sh [-j PARALLEL] [CHUNK ...]"
while getopts 'j:h' opt; do
    case $opt in
    j) parallel=$OPTARG ;;
    h) echo "$usage"; exit 0 ;;
    *) echo "$usage" >&2; exit 2 ;;
    esac
done
shift $((OPTIND - 1))
if ! [[ $parallel =~ ^[1-9][0-9]*$ ]]; then
    echo "run-local.sh: -j takes a whole number from 1 up, not '$parallel'" >&2
    exit 2
fi
ids=("$@")
if ((${#ids[@]} == 0)); then
    for ((i = 0; i < chunks; i++)); do ids+=("$i"); done
fi
for i in "${ids[@]}"; do
    if ! [[ $i =~ ^(0|[1-9][0-9]{0,17})$ ]] || ((i >= chunks)); then
        echo "run-local.sh: '$i' is not a chunk id; ids run from 0 to $((chunks - 1))" >&2
        exit 2
    fi
done
mkdir -p "$partials" "$logs" || exit 1

run_chunk() {
    local chunk=$1 status=0
    rm -f "$logs/chunk-$chunk.exit"
    echo "== chunk $chunk of $chunks: local run on $(hostname) at $(date -u +%Y-%m-%dT%H:%M:%SZ)" >>"$logs/chunk-$chunk.out"
    "$bin" run "$plan" --chunk "$chunk" --of "$chunks" --threads "$threads" --out "$partials" >>"$logs/chunk-$chunk.out" 2>>"$logs/chunk-$chunk.err" || status=$?
    printf '%s\n' "$status" >"$logs/chunk-$chunk.exit"
    if ((status == 0)); then
        echo "chunk $chunk: done"
    else
        echo "chunk $chunk: failed with exit code $status (see $logs/chunk-$chunk.err)"
    fi
}

for chunk in "${ids[@]}"; do
    while (($(jobs -rp | wc -l) >= parallel)); do wait -n; done
    run_chunk "$chunk" &
done
wait
failed=()
for chunk in "${ids[@]}"; do
    [[ $(cat "$logs/chunk-$chunk.exit" 2>/dev/null) == 0 ]] || failed+=("$chunk")
done
if ((${#failed[@]} > 0)); then
    echo "run-local.sh: ${#failed[@]} of ${#ids[@]} chunks failed: ${failed[*]}" >&2
    exit 1
fi
echo "run-local.sh: all ${#ids[@]} chunks done"
"#;

// Chunk k of 8 over 16 slices is 2k..2k+2 (chunk_range: 16 / 8 = 2, no
// remainder; closed form).
const MANIFEST_HEAD: &str = r#"# sliceplan job manifest (our own format, version 1), written by `sliceplan jobs`.
# Chunk k runs slices first_slice..end_slice (end excluded) and writes its partial;
# partial and log paths are relative to this file's directory.
format = "sliceplan-jobs"
version = 1
tool_version = "<VERSION>"
plan = "<BASE>/in/grid.plan.toml"
plan_fingerprint = "<FP>"
slices = 16
chunks = 8
partials_dir = "partials"
logs_dir = "logs"

[task]
binary = "/opt/sliceplan/bin/sliceplan"
job_name = "sliceplan-<FP8>"
cpus_per_task = 1
max_running = 3
partition = "compute"
account = "proj-7"

[task.mem]
mib = 130
need_bytes = 1053712
inputs_bytes = 5120
output_bytes = 16
per_slice_peak_bytes = 1048576
slices_at_once = 1
basis = "inputs 5.00 KiB + output 16 B + 1 x 1.00 MiB per-slice peak = 1.00 MiB, +10% +128 MiB for the program"

[task.time]
seconds = 240
basis = "2 round(s) x 30.000 s per slice (model estimate on test-node with 1 thread(s) per slice) x 2 safety + 120 s start-up, rounded up to minutes"
"#;

#[test]
fn submit_script_snapshot() {
    let tmp = tempfile::tempdir().unwrap();
    let (base, dir, fp) = fixture(tmp.path());
    assert_eq!(normalised(&read(&dir, "submit.sbatch"), &base, &fp), SUBMIT);
}

#[test]
fn local_script_snapshot() {
    let tmp = tempfile::tempdir().unwrap();
    let (base, dir, fp) = fixture(tmp.path());
    assert_eq!(normalised(&read(&dir, "run-local.sh"), &base, &fp), LOCAL);
}

#[test]
fn manifest_snapshot() {
    let tmp = tempfile::tempdir().unwrap();
    let (base, dir, fp) = fixture(tmp.path());
    let mut expected = MANIFEST_HEAD.to_string();
    for k in 0..8 {
        expected.push_str(&format!(
            "\n[[chunk]]\nid = {k}\nfirst_slice = {}\nend_slice = {}\npartial = \"partials/chunk-{k}-of-8.partial\"\n",
            2 * k,
            2 * k + 2
        ));
    }
    assert_eq!(
        normalised(&read(&dir, "manifest.toml"), &base, &fp),
        expected
    );
}

#[test]
fn resubmit_script_is_the_array_restricted_to_the_given_ids() {
    let tmp = tempfile::tempdir().unwrap();
    let (base, dir, fp) = fixture(tmp.path());
    let path = sliceplan::jobs::write_resubmit(&dir, &[5, 1, 2, 3]).unwrap();
    assert_eq!(path, dir.join("resubmit.sbatch"));
    let expected = SUBMIT
        .replace("--array=0-7%3", "--array=1-3,5%3")
        .replace("all chunks of plan", "resubmission of 4 chunk(s) of plan")
        .replace("job/submit.sbatch", "job/resubmit.sbatch");
    assert_eq!(
        normalised(&read(&dir, "resubmit.sbatch"), &base, &fp),
        expected
    );
}
