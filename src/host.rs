//! What this machine can give a run: the memory available now.
//!
//! The figure is the smaller of the kernel's estimate of memory available
//! without swapping (`MemAvailable` in `/proc/meminfo`) and the room left
//! under this process's control-group limit (cgroup v2 `memory.max` minus
//! `memory.current`, or v1 `memory.limit_in_bytes` minus
//! `memory.usage_in_bytes`), which is what a batch scheduler such as Slurm
//! enforces. Where neither can be read (not Linux), it is unknown.
//!
//! `SLICEPLAN_AVAILABLE_MEMORY` (a size such as `512MiB`) replaces the
//! reading, for tests and for machines whose limit the files do not show.

use std::path::Path;

use crate::cost::bytes::parse_bytes;

/// The environment variable that overrides the reading.
pub const AVAILABLE_MEMORY_VAR: &str = "SLICEPLAN_AVAILABLE_MEMORY";

/// Memory available to this process, and where the figure came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Available {
    /// Bytes.
    pub bytes: u64,
    /// Where the figure was read, for messages.
    pub source: String,
}

/// The memory available to this process now; `None` when unknown.
pub fn available_memory() -> Option<Available> {
    if let Ok(text) = std::env::var(AVAILABLE_MEMORY_VAR) {
        return parse_bytes(text.trim()).ok().map(|bytes| Available {
            bytes,
            source: format!("{AVAILABLE_MEMORY_VAR}={}", text.trim()),
        });
    }
    let meminfo = std::fs::read_to_string("/proc/meminfo")
        .ok()
        .and_then(|t| meminfo_available(&t))
        .map(|bytes| Available {
            bytes,
            source: "MemAvailable in /proc/meminfo".into(),
        });
    let cgroup = cgroup_room();
    match (meminfo, cgroup) {
        (Some(m), Some(c)) => Some(if c.bytes < m.bytes { c } else { m }),
        (m, c) => m.or(c),
    }
}

/// `MemAvailable` from `/proc/meminfo` text, in bytes.
fn meminfo_available(text: &str) -> Option<u64> {
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let mut parts = line["MemAvailable:".len()..].split_whitespace();
    let kib: u64 = parts.next()?.parse().ok()?;
    (parts.next() == Some("kB")).then(|| kib.saturating_mul(1024))
}

/// Room left under this process's cgroup memory limit, when it has one.
fn cgroup_room() -> Option<Available> {
    let own = std::fs::read_to_string("/proc/self/cgroup").ok()?;
    for line in own.lines() {
        // v2: "0::/path"; v1: "N:memory:/path" (controllers may be joined).
        let mut parts = line.splitn(3, ':');
        let (_, controllers, path) = (parts.next()?, parts.next()?, parts.next()?);
        let path = path.trim_start_matches('/');
        if controllers.is_empty() {
            let dir = Path::new("/sys/fs/cgroup").join(path);
            if let Some(room) = room(&dir.join("memory.max"), &dir.join("memory.current")) {
                return Some(Available {
                    bytes: room,
                    source: format!("cgroup limit {}", dir.join("memory.max").display()),
                });
            }
        } else if controllers.split(',').any(|c| c == "memory") {
            let dir = Path::new("/sys/fs/cgroup/memory").join(path);
            let limit = dir.join("memory.limit_in_bytes");
            if let Some(room) = room(&limit, &dir.join("memory.usage_in_bytes")) {
                return Some(Available {
                    bytes: room,
                    source: format!("cgroup limit {}", limit.display()),
                });
            }
        }
    }
    None
}

/// Limit minus usage, when a finite limit is set.
fn room(limit: &Path, usage: &Path) -> Option<u64> {
    let limit: u64 = std::fs::read_to_string(limit).ok()?.trim().parse().ok()?;
    // v1 reports "no limit" as a number near 2^63.
    if limit >= 1 << 62 {
        return None;
    }
    let usage: u64 = std::fs::read_to_string(usage)
        .ok()
        .and_then(|t| t.trim().parse().ok())
        .unwrap_or(0);
    Some(limit.saturating_sub(usage))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_mem_available() {
        // The layout of /proc/meminfo (proc(5)): "Key:   value kB".
        let text = "MemTotal:       24558852 kB\nMemFree:        16000000 kB\nMemAvailable:   22000000 kB\n";
        assert_eq!(meminfo_available(text), Some(22_000_000 * 1024));
        assert_eq!(meminfo_available("MemTotal: 1 kB\n"), None);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn this_machine_reports_something() {
        let a = available_memory().expect("Linux has /proc/meminfo");
        assert!(a.bytes > 0, "{a:?}");
    }
}
