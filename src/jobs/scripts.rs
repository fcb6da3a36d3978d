//! The text of the generated scripts: the Slurm job array (`submit.sbatch`,
//! `resubmit.sbatch`) and the scheduler-free runner (`run-local.sh`).
//!
//! Both run the same command per chunk,
//! `sliceplan run PLAN --chunk I --of N --threads C --out DIR/partials`,
//! append its output to `DIR/logs/chunk-I.out` and `.err`, and record its
//! exit code in `DIR/logs/chunk-I.exit` (removed when the chunk starts), so
//! `sliceplan jobs --status` can tell a failed chunk from one that never ran
//! or was killed by the scheduler. Every path is absolute and quoted for the
//! language it appears in (see [`super::quote`]).

use super::manifest::Manifest;
use super::quote::{directive_value, pattern_literal, shell_word};
use super::resources::format_duration;
use super::{LOGS_DIR, PARTIALS_DIR};

/// Absolute paths the scripts use, as text already checked by
/// [`super::quote`].
#[derive(Debug, Clone)]
pub struct ScriptPaths {
    /// The job directory.
    pub dir: String,
    /// The plan file.
    pub plan: String,
    /// The `sliceplan` binary.
    pub binary: String,
}

impl ScriptPaths {
    fn partials(&self) -> String {
        format!("{}/{PARTIALS_DIR}", self.dir.trim_end_matches('/'))
    }

    fn logs(&self) -> String {
        format!("{}/{LOGS_DIR}", self.dir.trim_end_matches('/'))
    }
}

/// The shell variables both scripts start from.
fn variables(m: &Manifest, p: &ScriptPaths) -> String {
    format!(
        "bin={}\nplan={}\npartials={}\nlogs={}\nchunks={}\nthreads={}\n",
        shell_word(&p.binary),
        shell_word(&p.plan),
        shell_word(&p.partials()),
        shell_word(&p.logs()),
        m.chunks,
        m.task.cpus_per_task
    )
}

/// The command that runs chunk `$chunk`, appending to its logs when `redirect`.
const RUN_CHUNK: &str =
    r#""$bin" run "$plan" --chunk "$chunk" --of "$chunks" --threads "$threads" --out "$partials""#;
const STAMP: &str = "$(date -u +%Y-%m-%dT%H:%M:%SZ)";

/// A job-array script over the chunk ids in `array` (Slurm `--array`
/// syntax, with `%M` already applied), to be saved as `file` in the job
/// directory; `what` says which chunks it runs.
pub fn sbatch_script(m: &Manifest, p: &ScriptPaths, array: &str, what: &str, file: &str) -> String {
    let t = &m.task;
    let logs_pattern = pattern_literal(&p.logs());
    let mut s = String::from("#!/bin/bash\n");
    let mut directive = |name: &str, value: String| {
        s.push_str(&format!("#SBATCH --{name}={value}\n"));
    };
    directive("job-name", directive_value(&t.job_name));
    directive("array", array.to_string());
    directive("cpus-per-task", t.cpus_per_task.to_string());
    directive("mem", format!("{}M", t.mem.mib));
    directive("time", format_duration(t.time.seconds));
    if let Some(part) = &t.partition {
        directive("partition", directive_value(part));
    }
    if let Some(acct) = &t.account {
        directive("account", directive_value(acct));
    }
    directive("chdir", directive_value(&p.dir));
    directive(
        "output",
        directive_value(&format!("{logs_pattern}/chunk-%a.out")),
    );
    directive(
        "error",
        directive_value(&format!("{logs_pattern}/chunk-%a.err")),
    );
    directive("open-mode", "append".into());
    s.push_str(&format!(
        "#\n\
         # Written by `sliceplan jobs` {version}: {what} of plan {fp}\n\
         # ({slices} slices in {chunks} chunks; see manifest.toml beside this file).\n\
         # Submit with: sbatch {me}\n\
         # Task I runs chunk I and writes partials/chunk-I-of-{chunks}.partial; it exits\n\
         # with `sliceplan run`'s code, so the scheduler records a failed chunk as FAILED.\n\
         # --mem: {mem}.\n\
         # --time: {time}.\n\
         set -u\n",
        version = env!("CARGO_PKG_VERSION"),
        fp = m.plan_fingerprint,
        slices = m.slices,
        chunks = m.chunks,
        me = shell_word(&format!("{}/{file}", p.dir.trim_end_matches('/'))),
        mem = t.mem.basis,
        time = t.time.basis,
    ));
    s.push_str(&variables(m, p));
    s.push_str(&format!(
        "chunk=${{SLURM_ARRAY_TASK_ID:?this script is a Slurm job array: submit it with sbatch}}\n\
         rm -f \"$logs/chunk-$chunk.exit\"\n\
         echo \"== chunk $chunk of $chunks: job ${{SLURM_ARRAY_JOB_ID:-?}}_$chunk on $(hostname) at {STAMP}\"\n\
         status=0\n\
         {RUN_CHUNK} || status=$?\n\
         printf '%s\\n' \"$status\" >\"$logs/chunk-$chunk.exit.tmp\" && mv -f \"$logs/chunk-$chunk.exit.tmp\" \"$logs/chunk-$chunk.exit\"\n\
         echo \"== chunk $chunk finished with exit code $status at {STAMP}\"\n\
         exit \"$status\"\n"
    ));
    s
}

/// The scheduler-free runner: `run-local.sh [-j PARALLEL] [CHUNK ...]`.
pub fn local_script(m: &Manifest, p: &ScriptPaths) -> String {
    let mut s = format!(
        "#!/usr/bin/env bash\n\
         # Runs the chunks of plan {fp} on this machine without a scheduler: the same\n\
         # command per chunk as submit.sbatch, the same partial and log files.\n\
         # Written by `sliceplan jobs` {version}; paths are absolute.\n\
         #\n\
         # usage: run-local.sh [-j PARALLEL] [CHUNK ...]\n\
         #   -j P    run P chunks at once (default 1: one after another); each uses {cpus} thread(s)\n\
         #   CHUNK   chunk ids to run (default: all, 0 to {last})\n\
         # Exit code 0 when every chunk ran, 1 when some failed (listed), 2 on bad usage.\n\
         set -u\n",
        fp = m.plan_fingerprint,
        version = env!("CARGO_PKG_VERSION"),
        cpus = m.task.cpus_per_task,
        last = m.chunks - 1,
    );
    s.push_str(&variables(m, p));
    s.push_str(&format!(
        r#"parallel=1
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
if ((${{#ids[@]}} == 0)); then
    for ((i = 0; i < chunks; i++)); do ids+=("$i"); done
fi
for i in "${{ids[@]}}"; do
    if ! [[ $i =~ ^(0|[1-9][0-9]{{0,17}})$ ]] || ((i >= chunks)); then
        echo "run-local.sh: '$i' is not a chunk id; ids run from 0 to $((chunks - 1))" >&2
        exit 2
    fi
done
mkdir -p "$partials" "$logs" || exit 1

run_chunk() {{
    local chunk=$1 status=0
    rm -f "$logs/chunk-$chunk.exit"
    echo "== chunk $chunk of $chunks: local run on $(hostname) at {STAMP}" >>"$logs/chunk-$chunk.out"
    {RUN_CHUNK} >>"$logs/chunk-$chunk.out" 2>>"$logs/chunk-$chunk.err" || status=$?
    printf '%s\n' "$status" >"$logs/chunk-$chunk.exit"
    if ((status == 0)); then
        echo "chunk $chunk: done"
    else
        echo "chunk $chunk: failed with exit code $status (see $logs/chunk-$chunk.err)"
    fi
}}

for chunk in "${{ids[@]}}"; do
    while (($(jobs -rp | wc -l) >= parallel)); do wait -n; done
    run_chunk "$chunk" &
done
wait
failed=()
for chunk in "${{ids[@]}}"; do
    [[ $(cat "$logs/chunk-$chunk.exit" 2>/dev/null) == 0 ]] || failed+=("$chunk")
done
if ((${{#failed[@]}} > 0)); then
    echo "run-local.sh: ${{#failed[@]}} of ${{#ids[@]}} chunks failed: ${{failed[*]}}" >&2
    exit 1
fi
echo "run-local.sh: all ${{#ids[@]}} chunks done"
"#
    ));
    s
}
