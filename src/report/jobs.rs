//! The text of `jobs` (what was written, what to do next) and of `jobs
//! --status` (what is done, what is missing and why).

use std::path::Path;

use crate::jobs::array::array_spec;
use crate::jobs::quote::shell_word;
use crate::jobs::resources::format_duration;
use crate::jobs::status::{ChunkState, JobStatus, SchedulerAnswer};
use crate::jobs::{WrittenJobs, LOCAL_FILE, SUBMIT_FILE};

/// What `jobs` wrote, the task settings and the commands to run next.
pub fn written_text(w: &WrittenJobs, submitted: Option<&str>) -> String {
    let m = &w.manifest;
    let t = &m.task;
    let sizes: Vec<u64> = m
        .chunk_list
        .iter()
        .map(|c| c.end_slice - c.first_slice)
        .collect();
    let (lo, hi) = (
        sizes.iter().min().copied().unwrap_or(0),
        sizes.iter().max().copied().unwrap_or(0),
    );
    let size = if lo == hi {
        format!("{hi}")
    } else {
        format!("{lo} or {hi}")
    };
    let dir = w.dir.display().to_string();
    let mut s = format!(
        "jobs for plan {} (fingerprint {})\n  {} slices in {} chunks of {size} slice{}; array {}\n",
        m.plan,
        m.plan_fingerprint,
        m.slices,
        m.chunks,
        if hi == 1 { "" } else { "s" },
        w.array
    );
    s.push_str(&format!(
        "  --mem={}M      {}\n  --time={}   {}\n  --cpus-per-task={} (each run uses {} thread(s))\n",
        t.mem.mib,
        t.mem.basis,
        format_duration(t.time.seconds),
        t.time.basis,
        t.cpus_per_task,
        t.cpus_per_task
    ));
    s.push_str("wrote\n");
    for f in &w.files {
        s.push_str(&format!("  {}\n", f.display()));
    }
    for n in &w.notes {
        s.push_str(&format!("note: {n}\n"));
    }
    let partials = format!("{dir}/{}", m.partials_dir);
    match submitted {
        Some(job) => s.push_str(&format!("submitted job {job}\nnext\n")),
        None => s.push_str(&format!(
            "next\n  submit:       sbatch {}\n  or run here:  {} -j 2\n",
            shell_word(&format!("{dir}/{SUBMIT_FILE}")),
            shell_word(&format!("{dir}/{LOCAL_FILE}"))
        )),
    }
    s.push_str(&format!(
        "  progress:     sliceplan jobs --status {}\n  result:       sliceplan gather {} {}\n",
        shell_word(&dir),
        shell_word(&m.plan),
        shell_word(&partials)
    ));
    s
}

/// Lines of detail shown before "... and N more".
const DETAIL_LINES: usize = 20;

/// What `jobs --status` found and what to resubmit.
pub fn status_text(st: &JobStatus, resubmit: Option<&Path>, submitted: Option<&str>) -> String {
    let mut s = format!(
        "job directory {}: plan {} (fingerprint {})\n",
        st.dir.display(),
        st.plan,
        st.plan_fingerprint
    );
    if st.missing.is_empty() {
        s.push_str(&format!(
            "  all {} chunks done\n  result: sliceplan gather {} {}\n",
            st.chunks,
            shell_word(&st.plan),
            shell_word(&format!("{}/partials", st.dir.display()))
        ));
        return s;
    }
    let held: Vec<u64> = st
        .missing_detail
        .iter()
        .filter(|c| c.state.active())
        .map(|c| c.id)
        .collect();
    let list = |ids: &[u64]| {
        if ids.is_empty() {
            "none".to_string()
        } else {
            array_spec(ids, None)
        }
    };
    s.push_str(&format!(
        "  {} of {} chunks done; to resubmit {}: {}",
        st.done,
        st.chunks,
        st.resubmit.len(),
        list(&st.resubmit)
    ));
    if !held.is_empty() {
        s.push_str(&format!(
            "; queued or running {}: {}",
            held.len(),
            list(&held)
        ));
    }
    s.push('\n');
    if let SchedulerAnswer::Unknown { reason } = &st.scheduler {
        s.push_str(&format!(
            "  the scheduler could not be asked ({reason}): chunks shown as not started or started may still be queued or running; check with squeue before resubmitting\n"
        ));
    }
    for c in st.missing_detail.iter().take(DETAIL_LINES) {
        let what = match c.state {
            ChunkState::Done => "done".to_string(),
            ChunkState::Failed { exit_code } => {
                format!("failed with exit code {exit_code} (see logs/chunk-{}.err)", c.id)
            }
            ChunkState::Lost => "ran (exit code 0) but its partial is gone".into(),
            ChunkState::Started => {
                "started, no exit code yet: still running, or killed by the scheduler (time or memory limit; see logs)".into()
            }
            ChunkState::NotStarted => "not started".into(),
            ChunkState::Queued => "queued (the scheduler holds it; do not resubmit)".into(),
            ChunkState::Running => "running now".into(),
        };
        s.push_str(&format!(
            "    chunk {} (slices {}..{}): {what}\n",
            c.id, c.first_slice, c.end_slice
        ));
    }
    if st.missing_detail.len() > DETAIL_LINES {
        s.push_str(&format!(
            "    ... and {} more (--json lists all)\n",
            st.missing_detail.len() - DETAIL_LINES
        ));
    }
    if let Some(r) = resubmit {
        s.push_str(&format!("  wrote {}\n", r.display()));
        match (submitted, &st.scheduler) {
            (Some(job), _) => s.push_str(&format!("  submitted job {job}\n")),
            (None, SchedulerAnswer::Asked { .. }) => s.push_str(&format!(
                "  resubmit with: sbatch {}\n",
                shell_word(&r.display().to_string())
            )),
            (None, SchedulerAnswer::Unknown { .. }) => s.push_str(&format!(
                "  if none of those chunks is queued or running, resubmit with: sbatch {}\n",
                shell_word(&r.display().to_string())
            )),
        }
    } else if !held.is_empty() {
        s.push_str("  nothing to resubmit: wait for the queued and running chunks\n");
    }
    s
}
