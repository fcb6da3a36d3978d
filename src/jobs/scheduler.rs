//! Submitting scripts to a batch scheduler, behind a small trait: [`Slurm`]
//! calls `sbatch` and `squeue`; [`StandIn`] records what would be submitted
//! and can run each array task itself, in order, with the environment Slurm
//! would give it, so tests check submissions without a cluster.

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

use super::array::parse_array_spec;
use super::directives::{option, options};
use crate::error::{Error, Result};

/// A batch scheduler that takes job-array scripts.
pub trait Scheduler {
    /// Submits the script; returns the scheduler's job id.
    fn submit(&mut self, script: &Path) -> Result<String>;
    /// True while any task of the job is queued or running.
    fn active(&mut self, job: &str) -> Result<bool>;
    /// The array tasks of jobs named `job_name` that are queued or
    /// running now; `Err` with the reason when the scheduler cannot be
    /// asked (its tools are not on this machine).
    fn tasks(&mut self, job_name: &str) -> std::result::Result<Vec<QueuedTask>, String>;
}

/// An array task the scheduler holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct QueuedTask {
    /// The array task id (the chunk id).
    pub task: u64,
    /// True when running (or completing), false when pending.
    pub running: bool,
}

/// Parses `squeue --format "%i %t"` lines of array jobs: `176_3 R` (one
/// task) or `176_[4-7,9%2] PD` (pending tasks grouped). Lines of other jobs
/// (no `_`) are skipped.
pub fn parse_squeue(text: &str) -> Vec<QueuedTask> {
    let mut out = Vec::new();
    for line in text.lines() {
        let mut words = line.split_whitespace();
        let (Some(id), Some(state)) = (words.next(), words.next()) else {
            continue;
        };
        let Some((_, tasks)) = id.split_once('_') else {
            continue;
        };
        let running = matches!(state, "R" | "CG" | "CF" | "S" | "ST");
        let tasks = tasks.trim_start_matches('[').trim_end_matches(']');
        let tasks = tasks.split('%').next().unwrap_or("");
        for part in tasks.split(',') {
            let range = match part.split_once('-') {
                Some((a, b)) => a.parse::<u64>().ok().zip(b.parse::<u64>().ok()),
                None => part.parse::<u64>().ok().map(|a| (a, a)),
            };
            if let Some((a, b)) = range {
                out.extend(
                    (a..=b.min(a.saturating_add(10_000_000)))
                        .map(|task| QueuedTask { task, running }),
                );
            }
        }
    }
    out
}

/// Waits until `job` has left the queue, polling every `poll`; after
/// `timeout` the error says how long it waited (exit code 1).
pub fn wait_until_done(
    scheduler: &mut dyn Scheduler,
    job: &str,
    timeout: Duration,
    poll: Duration,
) -> Result<()> {
    let start = Instant::now();
    while scheduler.active(job)? {
        if start.elapsed() >= timeout {
            return Err(Error::Cannot(format!(
                "job {job} is still queued or running after {} s",
                timeout.as_secs()
            )));
        }
        std::thread::sleep(poll);
    }
    Ok(())
}

/// Slurm through its command-line tools.
#[derive(Debug, Clone)]
pub struct Slurm {
    /// The `sbatch` command.
    pub sbatch: PathBuf,
    /// The `squeue` command.
    pub squeue: PathBuf,
}

impl Default for Slurm {
    fn default() -> Self {
        Slurm {
            sbatch: "sbatch".into(),
            squeue: "squeue".into(),
        }
    }
}

fn tool_error(tool: &Path, e: std::io::Error) -> Error {
    if e.kind() == std::io::ErrorKind::NotFound {
        Error::Cannot(format!(
            "{} is not on this machine's PATH: submit from a machine where Slurm is installed, or use run-local.sh",
            tool.display()
        ))
    } else {
        Error::Cannot(format!("cannot run {}: {e}", tool.display()))
    }
}

impl Scheduler for Slurm {
    fn submit(&mut self, script: &Path) -> Result<String> {
        let out = Command::new(&self.sbatch)
            .arg("--parsable")
            .arg(script)
            .output()
            .map_err(|e| tool_error(&self.sbatch, e))?;
        let stdout = String::from_utf8_lossy(&out.stdout);
        if !out.status.success() {
            return Err(Error::Cannot(format!(
                "sbatch refused {}: {}",
                script.display(),
                String::from_utf8_lossy(&out.stderr).trim()
            )));
        }
        // `--parsable` prints "id" or "id;cluster".
        let id = stdout.trim().split(';').next().unwrap_or("").to_string();
        if id.is_empty() || !id.chars().all(|c| c.is_ascii_digit()) {
            return Err(Error::Cannot(format!(
                "sbatch accepted {} but printed no job id ({:?})",
                script.display(),
                stdout.trim()
            )));
        }
        Ok(id)
    }

    fn active(&mut self, job: &str) -> Result<bool> {
        let out = Command::new(&self.squeue)
            .args(["--noheader", "--jobs", job, "--format", "%i"])
            .output()
            .map_err(|e| tool_error(&self.squeue, e))?;
        if out.status.success() {
            return Ok(!String::from_utf8_lossy(&out.stdout).trim().is_empty());
        }
        let err = String::from_utf8_lossy(&out.stderr);
        // A job purged from the controller's memory is no longer active.
        if err.contains("Invalid job id") {
            return Ok(false);
        }
        Err(Error::Cannot(format!("squeue failed: {}", err.trim())))
    }

    fn tasks(&mut self, job_name: &str) -> std::result::Result<Vec<QueuedTask>, String> {
        let out = Command::new(&self.squeue)
            .args([
                "--noheader",
                "--array",
                "--name",
                job_name,
                "--format",
                "%i %t",
            ])
            .output()
            .map_err(|e| tool_error(&self.squeue, e).to_string())?;
        if !out.status.success() {
            return Err(format!(
                "squeue failed: {}",
                String::from_utf8_lossy(&out.stderr).trim()
            ));
        }
        Ok(parse_squeue(&String::from_utf8_lossy(&out.stdout)))
    }
}

/// One submission seen by the [`StandIn`].
#[derive(Debug, Clone, PartialEq)]
pub struct Submission {
    /// The job id it was given.
    pub job: String,
    /// The script's path.
    pub script: PathBuf,
    /// The script's text.
    pub text: String,
    /// The array task ids of its `--array`.
    pub array: Vec<u64>,
    /// The `%` limit of its `--array`.
    pub max_running: Option<u64>,
    /// Exit code of each task it ran (empty unless `run_tasks`).
    pub exit_codes: Vec<(u64, i32)>,
}

/// A deterministic scheduler for tests: job ids count up from 1; with
/// `run_tasks`, each submission runs its array tasks one after another with
/// bash, `SLURM_ARRAY_TASK_ID`, `SLURM_ARRAY_JOB_ID` and `SLURM_JOB_ID` set
/// (every task has its own job id, as in Slurm), in the `--chdir`
/// directory, appending to the `--output` and `--error` files.
#[derive(Debug, Clone, Default)]
pub struct StandIn {
    /// Run the tasks at submission (else only record).
    pub run_tasks: bool,
    /// Everything submitted so far.
    pub submissions: Vec<Submission>,
    /// What [`Scheduler::tasks`] answers: tasks it holds, or the reason it
    /// cannot be asked (`None` answers "nothing queued").
    pub queued: Option<std::result::Result<Vec<QueuedTask>, String>>,
}

impl Scheduler for StandIn {
    fn submit(&mut self, script: &Path) -> Result<String> {
        let text = std::fs::read_to_string(script).map_err(|e| Error::read(script, e))?;
        let opts = options(&text);
        let spec = option(&opts, "array").ok_or_else(|| {
            Error::in_source(script.display().to_string(), "no #SBATCH --array line")
        })?;
        let (array, max_running) = parse_array_spec(spec)?;
        let job = (self.submissions.len() + 1).to_string();
        let mut exit_codes = Vec::new();
        if self.run_tasks {
            for &task in &array {
                let log = |name: &str| option(&opts, name).map(|p| expand_pattern(p, &job, task));
                let mut cmd = Command::new("bash");
                cmd.arg(script)
                    .env("SLURM_ARRAY_TASK_ID", task.to_string())
                    .env("SLURM_ARRAY_JOB_ID", &job)
                    .env("SLURM_JOB_ID", format!("{job}{task:03}"));
                if let Some(d) = option(&opts, "chdir") {
                    cmd.current_dir(d);
                }
                for (name, set) in [("output", true), ("error", false)] {
                    if let Some(path) = log(name) {
                        let f = std::fs::OpenOptions::new()
                            .create(true)
                            .append(true)
                            .open(&path)
                            .map_err(|e| Error::write(Path::new(&path), e))?;
                        if set {
                            cmd.stdout(f);
                        } else {
                            cmd.stderr(f);
                        }
                    }
                }
                let status = cmd.status().map_err(|e| tool_error(Path::new("bash"), e))?;
                exit_codes.push((task, status.code().unwrap_or(-1)));
            }
        }
        self.submissions.push(Submission {
            job: job.clone(),
            script: script.to_path_buf(),
            text,
            array,
            max_running,
            exit_codes,
        });
        Ok(job)
    }

    fn active(&mut self, _job: &str) -> Result<bool> {
        Ok(false)
    }

    fn tasks(&mut self, _job_name: &str) -> std::result::Result<Vec<QueuedTask>, String> {
        self.queued.clone().unwrap_or(Ok(Vec::new()))
    }
}

/// Expands a Slurm file-name pattern: `%a` task id, `%A` and `%j` job id,
/// `%%` a percent sign.
pub fn expand_pattern(pattern: &str, job: &str, task: u64) -> String {
    let mut out = String::new();
    let mut chars = pattern.chars();
    while let Some(c) = chars.next() {
        if c != '%' {
            out.push(c);
            continue;
        }
        match chars.next() {
            Some('a') => out.push_str(&task.to_string()),
            Some('A') | Some('j') => out.push_str(job),
            Some('%') => out.push('%'),
            Some(other) => {
                out.push('%');
                out.push(other);
            }
            None => out.push('%'),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A scheduler whose job never leaves the queue.
    struct Stuck(usize);

    impl Scheduler for Stuck {
        fn submit(&mut self, _script: &Path) -> Result<String> {
            Ok("7".into())
        }
        fn active(&mut self, _job: &str) -> Result<bool> {
            self.0 += 1;
            Ok(true)
        }
        fn tasks(&mut self, _job_name: &str) -> std::result::Result<Vec<QueuedTask>, String> {
            Ok(Vec::new())
        }
    }

    #[test]
    fn squeue_lines_give_tasks() {
        // squeue's manual: array tasks print as JOBID_TASK, or pending
        // tasks grouped as JOBID_[1-3,5%2]; %t is the short state.
        let tasks = parse_squeue("176_3 R\n176_[4-6,9%4] PD\n177 PD\n");
        let running: Vec<u64> = tasks.iter().filter(|t| t.running).map(|t| t.task).collect();
        let pending: Vec<u64> = tasks
            .iter()
            .filter(|t| !t.running)
            .map(|t| t.task)
            .collect();
        assert_eq!(running, vec![3]);
        assert_eq!(pending, vec![4, 5, 6, 9]);
    }

    #[test]
    fn waiting_is_bounded() {
        let mut s = Stuck(0);
        let e = wait_until_done(&mut s, "7", Duration::ZERO, Duration::ZERO).unwrap_err();
        assert_eq!(e.exit_code(), 1);
        assert!(
            e.to_string().contains("job 7 is still queued or running"),
            "{e}"
        );
        assert_eq!(s.0, 1);
    }

    #[test]
    fn the_stand_in_records_without_running() {
        let dir = tempfile::tempdir().unwrap();
        let script = dir.path().join("a.sbatch");
        std::fs::write(&script, "#!/bin/bash\n#SBATCH --array=3,17,42%2\nexit 9\n").unwrap();
        let mut s = StandIn::default();
        assert_eq!(s.submit(&script).unwrap(), "1");
        assert_eq!(s.submit(&script).unwrap(), "2");
        assert_eq!(s.submissions[1].array, vec![3, 17, 42]);
        assert_eq!(s.submissions[1].max_running, Some(2));
        assert!(s.submissions[1].exit_codes.is_empty());
        std::fs::write(&script, "#!/bin/bash\necho no array\n").unwrap();
        assert!(s.submit(&script).is_err());
    }

    #[test]
    fn patterns_expand_like_slurm() {
        // Slurm's sbatch manual, "filename pattern": %a task, %A job, %% percent.
        assert_eq!(
            expand_pattern("/r/100%%/c-%a-%A.out", "12", 3),
            "/r/100%/c-3-12.out"
        );
        assert_eq!(expand_pattern("x%", "1", 0), "x%");
    }
}
