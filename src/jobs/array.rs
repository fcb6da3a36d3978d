//! Job-array index lists in Slurm's `--array` syntax: `0-7`, `3,17,42`,
//! `0-99%10` (at most ten tasks at once).
//!
//! [`array_spec`] writes sorted ids with runs of three or more as ranges;
//! [`parse_array_spec`] reads the syntax back (used by the scheduler
//! stand-in and by tests).

use crate::error::{Error, Result};

/// The `--array` value for `ids` (sorted and deduplicated here), with
/// `%max_running` when given.
///
/// ```
/// use sliceplan::jobs::array::array_spec;
/// assert_eq!(array_spec(&[42, 3, 17], None), "3,17,42");
/// assert_eq!(array_spec(&[0, 1, 2, 3, 9, 10], Some(2)), "0-3,9-10%2");
/// ```
pub fn array_spec(ids: &[u64], max_running: Option<u64>) -> String {
    let mut ids = ids.to_vec();
    ids.sort_unstable();
    ids.dedup();
    let mut parts = Vec::new();
    let mut k = 0;
    while k < ids.len() {
        let mut end = k;
        while end + 1 < ids.len() && ids[end + 1] == ids[end] + 1 {
            end += 1;
        }
        if end > k {
            parts.push(format!("{}-{}", ids[k], ids[end]));
        } else {
            parts.push(ids[k].to_string());
        }
        k = end + 1;
    }
    let mut spec = parts.join(",");
    if let Some(m) = max_running {
        spec.push_str(&format!("%{m}"));
    }
    spec
}

/// The ids and the `%` limit of an `--array` value (ranges may carry a
/// `:step`, as Slurm allows).
///
/// ```
/// use sliceplan::jobs::array::parse_array_spec;
/// assert_eq!(parse_array_spec("0-3,9%2").unwrap(), (vec![0, 1, 2, 3, 9], Some(2)));
/// assert_eq!(parse_array_spec("0-6:3").unwrap(), (vec![0, 3, 6], None));
/// ```
pub fn parse_array_spec(spec: &str) -> Result<(Vec<u64>, Option<u64>)> {
    let bad = || {
        Error::usage(format!(
            "'{spec}' is not a job-array index list; write e.g. 0-7, 3,17,42 or 0-99%10"
        ))
    };
    let num = |s: &str| s.trim().parse::<u64>().map_err(|_| bad());
    let (list, limit) = match spec.split_once('%') {
        Some((l, m)) => (l, Some(num(m)?)),
        None => (spec, None),
    };
    let mut ids = Vec::new();
    for part in list.split(',') {
        let (range, step) = match part.split_once(':') {
            Some((r, s)) => (r, num(s)?),
            None => (part, 1),
        };
        let (a, b) = match range.split_once('-') {
            Some((a, b)) => (num(a)?, num(b)?),
            None => {
                let a = num(range)?;
                (a, a)
            }
        };
        if b < a || step == 0 || b - a > 10_000_000 {
            return Err(bad());
        }
        ids.extend((a..=b).step_by(step as usize));
    }
    ids.sort_unstable();
    ids.dedup();
    Ok((ids, limit))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn specs_round_trip() {
        // Brute force over every subset of 0..10: writing then reading gives
        // the subset back.
        for mask in 1u32..1024 {
            let ids: Vec<u64> = (0..10).filter(|b| mask & (1 << b) != 0).collect();
            let spec = array_spec(&ids, Some(3));
            assert_eq!(parse_array_spec(&spec).unwrap(), (ids, Some(3)), "{spec}");
        }
    }

    #[test]
    fn junk_is_refused() {
        for bad in ["", "a", "3-1", "1-", "0-4:0", "1,,2", "5%x"] {
            assert!(parse_array_spec(bad).is_err(), "{bad}");
        }
    }
}
