//! What the operating system says about this node: cores, memory, host
//! name, load and today's date, each with where it was read.
//!
//! A batch scheduler confines a job with control groups and CPU affinity:
//! the cores are the CPUs this process may run on (the affinity mask and a
//! cgroup CPU quota, as `std::thread::available_parallelism` reads them),
//! and the memory is the smaller of the node's `MemTotal` and the job's
//! cgroup memory limit (`memory.max` in v2, `memory.limit_in_bytes` in v1).

use std::path::Path;

/// Facts about this node.
#[derive(Debug, Clone, PartialEq)]
pub struct NodeFacts {
    /// CPUs this process may use.
    pub cores: u64,
    /// Where `cores` came from.
    pub cores_source: String,
    /// Memory this process may use, bytes (`None` when unknown).
    pub memory_bytes: Option<u64>,
    /// Where `memory_bytes` came from.
    pub memory_source: String,
    /// The host name.
    pub host: String,
    /// The 1-minute load average, when known.
    pub load: Option<f64>,
    /// Today's date (UTC), `YYYY-MM-DD`.
    pub date: String,
}

/// Reads the facts of this node.
pub fn read_node() -> NodeFacts {
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get() as u64);
    let online = std::fs::read_to_string("/proc/cpuinfo")
        .map(|t| t.lines().filter(|l| l.starts_with("processor")).count())
        .unwrap_or(0);
    let cores_source = if online > 0 && online as u64 != cores {
        format!(
            "CPUs this process may use (affinity mask and cgroup CPU quota); the node has {online}"
        )
    } else {
        "CPUs this process may use (affinity mask and cgroup CPU quota)".to_string()
    };
    let total = std::fs::read_to_string("/proc/meminfo")
        .ok()
        .and_then(|t| meminfo_field(&t, "MemTotal:"));
    let limit = cgroup_memory_limit();
    let (memory_bytes, memory_source) = match (total, limit) {
        (Some(t), Some((l, path))) if l < t => (Some(l), format!("cgroup limit {path}")),
        (Some(t), _) => (Some(t), "MemTotal in /proc/meminfo".to_string()),
        (None, Some((l, path))) => (Some(l), format!("cgroup limit {path}")),
        (None, None) => (None, "unknown on this system".to_string()),
    };
    NodeFacts {
        cores,
        cores_source,
        memory_bytes,
        memory_source,
        host: host_name(),
        load: std::fs::read_to_string("/proc/loadavg")
            .ok()
            .and_then(|t| t.split_whitespace().next()?.parse().ok()),
        date: today(),
    }
}

/// A `KEY: value kB` field of `/proc/meminfo` text, in bytes.
fn meminfo_field(text: &str, key: &str) -> Option<u64> {
    let line = text.lines().find(|l| l.starts_with(key))?;
    let mut parts = line[key.len()..].split_whitespace();
    let kib: u64 = parts.next()?.parse().ok()?;
    (parts.next() == Some("kB")).then(|| kib.saturating_mul(1024))
}

/// This process's cgroup memory limit and the file it was read from.
fn cgroup_memory_limit() -> Option<(u64, String)> {
    let own = std::fs::read_to_string("/proc/self/cgroup").ok()?;
    for line in own.lines() {
        let mut parts = line.splitn(3, ':');
        let (_, controllers, path) = (parts.next()?, parts.next()?, parts.next()?);
        let path = path.trim_start_matches('/');
        let file = if controllers.is_empty() {
            Path::new("/sys/fs/cgroup").join(path).join("memory.max")
        } else if controllers.split(',').any(|c| c == "memory") {
            Path::new("/sys/fs/cgroup/memory")
                .join(path)
                .join("memory.limit_in_bytes")
        } else {
            continue;
        };
        // "max" (v2) or a number near 2^63 (v1) mean no limit.
        if let Some(limit) = std::fs::read_to_string(&file)
            .ok()
            .and_then(|t| t.trim().parse::<u64>().ok())
            .filter(|&l| l < 1 << 62)
        {
            return Some((limit, file.display().to_string()));
        }
    }
    None
}

/// The host name (kernel's, else `$HOSTNAME`, else "unknown").
fn host_name() -> String {
    std::fs::read_to_string("/proc/sys/kernel/hostname")
        .ok()
        .map(|t| t.trim().to_string())
        .filter(|h| !h.is_empty())
        .or_else(|| std::env::var("HOSTNAME").ok())
        .unwrap_or_else(|| "unknown".into())
}

/// Today's date in UTC as `YYYY-MM-DD`.
fn today() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    let (y, m, d) = civil_from_days((secs / 86_400) as i64);
    format!("{y:04}-{m:02}-{d:02}")
}

/// The proleptic Gregorian date of a day count since 1970-01-01 (Howard
/// Hinnant's `civil_from_days`, "chrono-Compatible Low-Level Date
/// Algorithms").
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (yoe + era * 400 + i64::from(m <= 2), m, d)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_from_day_counts() {
        // Day 0 is 1970-01-01 (Unix epoch); the other two day counts were
        // computed with Python's datetime.date subtraction. 11,016 is 2000-02-29 (a leap
        // day: 30 years of 365 days plus 7 leap days to 2000-01-01, then
        // 31 + 28 days); 19,723 is 2024-01-01 (Unix time 1704067200 / 86400).
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(11_016), (2000, 2, 29));
        assert_eq!(civil_from_days(19_723), (2024, 1, 1));
    }

    #[test]
    fn reads_meminfo_and_this_node() {
        // The layout of /proc/meminfo (proc(5)): "Key:   value kB".
        assert_eq!(
            meminfo_field("MemTotal:  1024 kB\n", "MemTotal:"),
            Some(1 << 20)
        );
        let n = read_node();
        assert!(n.cores >= 1 && n.date.len() == 10, "{n:?}");
    }
}
