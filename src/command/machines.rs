//! Finding machine profiles by name or path, from any directory.
//!
//! A machine is named by a path to a profile file, or by a bare name looked
//! up in order: each directory of `SLICEPLAN_MACHINES` (separated by `:`),
//! the user's profile directory (`$XDG_CONFIG_HOME/sliceplan/machines`, else
//! `~/.config/sliceplan/machines`), then the profiles shipped inside the
//! binary (the files of `configs/machines/`). So `--machine cpu-64g` works
//! from any directory.

use std::path::{Path, PathBuf};

use crate::cost::machine::Machine;
use crate::error::{Error, Result};

/// The profiles built into the binary: (name, text).
pub const SHIPPED: [(&str, &str); 2] = [
    (
        "cpu-64g",
        include_str!("../../configs/machines/cpu-64g.toml"),
    ),
    (
        "accel-80g",
        include_str!("../../configs/machines/accel-80g.toml"),
    ),
];

/// The directories searched for `NAME.toml`, in order.
pub fn profile_dirs() -> Vec<PathBuf> {
    let mut dirs: Vec<PathBuf> = std::env::var_os("SLICEPLAN_MACHINES")
        .map(|v| std::env::split_paths(&v).collect())
        .unwrap_or_default();
    if let Some(d) = user_profile_dir() {
        dirs.push(d);
    }
    dirs
}

/// The user's profile directory (where `calibrate` suggests writing).
pub fn user_profile_dir() -> Option<PathBuf> {
    let config = std::env::var_os("XDG_CONFIG_HOME")
        .map(PathBuf::from)
        .filter(|p| p.is_absolute())
        .or_else(|| std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".config")))?;
    Some(config.join("sliceplan").join("machines"))
}

/// True when `spec` reads as a bare profile name (not a path).
pub fn is_name(spec: &str) -> bool {
    !spec.is_empty()
        && !spec.ends_with(".toml")
        && spec
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_' || c == '.')
}

/// Reads the machine profile `spec` names: a file path, or a profile name
/// (see the module docs). The error lists the names that are known.
pub fn resolve_machine(spec: &str) -> Result<Machine> {
    let path = Path::new(spec);
    if path.is_file() || !is_name(spec) {
        return Machine::read(path);
    }
    for dir in profile_dirs() {
        let candidate = dir.join(format!("{spec}.toml"));
        if candidate.is_file() {
            return Machine::read(&candidate);
        }
    }
    if let Some((name, text)) = SHIPPED.iter().find(|(n, _)| *n == spec) {
        return Machine::parse(text, &format!("shipped profile {name}"));
    }
    Err(Error::invalid(
        "machines",
        format!(
            "no machine profile named '{spec}': known names are {}; or give the path of a profile file",
            known_names().join(", ")
        ),
    ))
}

/// The newest calibrated profile of this host in the profile directories
/// (its `[calibration] host` is this host's name), and its file.
pub fn this_host_profile() -> Option<(Machine, PathBuf)> {
    let host = crate::calibrate::read_node().host;
    let mut best: Option<(Machine, PathBuf)> = None;
    for dir in profile_dirs() {
        let Ok(entries) = std::fs::read_dir(&dir) else {
            continue;
        };
        let mut files: Vec<PathBuf> = entries.filter_map(|e| e.ok()).map(|e| e.path()).collect();
        files.sort();
        for p in files {
            if p.extension().and_then(|x| x.to_str()) != Some("toml") {
                continue;
            }
            let Ok(m) = Machine::read(&p) else { continue };
            let Some(date) = m
                .calibration
                .as_ref()
                .filter(|c| c.host == host)
                .map(|c| c.date.clone())
            else {
                continue;
            };
            let newer = best
                .as_ref()
                .and_then(|(b, _)| b.calibration.as_ref())
                .is_none_or(|c| date > c.date);
            if newer {
                best = Some((m, p));
            }
        }
    }
    best
}

/// Every profile name that [`resolve_machine`] finds, shipped ones last.
pub fn known_names() -> Vec<String> {
    let mut names = Vec::new();
    for dir in profile_dirs() {
        let Ok(entries) = std::fs::read_dir(&dir) else {
            continue;
        };
        let mut found: Vec<String> = entries
            .filter_map(|e| e.ok())
            .filter_map(|e| {
                let p = e.path();
                (p.extension().and_then(|x| x.to_str()) == Some("toml"))
                    .then(|| p.file_stem()?.to_str().map(String::from))
                    .flatten()
            })
            .collect();
        found.sort();
        names.extend(found);
    }
    names.extend(SHIPPED.iter().map(|(n, _)| n.to_string()));
    names.dedup();
    names
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shipped_profiles_parse_and_resolve_by_name() {
        for (name, text) in SHIPPED {
            let m = Machine::parse(text, name).unwrap();
            assert_eq!(m.name, name);
        }
        assert_eq!(resolve_machine("cpu-64g").unwrap().name, "cpu-64g");
        let e = resolve_machine("no-such-node").unwrap_err().to_string();
        assert!(e.contains("cpu-64g") && e.contains("accel-80g"), "{e}");
    }
}
