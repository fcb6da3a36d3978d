//! What one scheduler task asks for: memory (`--mem`) and time (`--time`).
//!
//! Memory: a task is one `sliceplan run` process, which holds the inputs,
//! the output accumulator and `slices_at_once` slices at their peak (see
//! [`crate::cost::memory`]). The request is that need plus a margin of
//! [`MEM_MARGIN_PERCENT`] percent (allocator slack, fragmentation) plus
//! [`MEM_PROGRAM_MIB`] MiB for the program itself (code, stacks, buffers),
//! rounded up to whole MiB (Slurm's `M` is 2^20 bytes). An explicit size
//! below the need is refused: such a task would be killed.
//!
//! Time: the plan's model estimate per slice *for the threads each slice of
//! the task gets* (`--cpus-per-task` over the slices it runs at once; see
//! [`slice_seconds_for_task`]), times the rounds one task runs (its slice
//! count over the slices it runs at once), times [`TIME_SAFETY_FACTOR`],
//! plus [`TIME_STARTUP_SECONDS`] for reading the network and writing the
//! partial, rounded up to whole minutes (Slurm's granularity). Without an
//! estimate the user must give the time.

use serde::{Deserialize, Serialize};

use crate::cost::bytes::bytes_human;
use crate::cost::bytes::parse_bytes;
use crate::cost::memory::{inputs_bytes, output_bytes, MemoryNeed};
use crate::error::{Error, Result};
use crate::network::Network;
use crate::plan::Plan;

/// Percent added to the process's predicted need.
pub const MEM_MARGIN_PERCENT: u64 = 10;
/// MiB added for the program itself.
pub const MEM_PROGRAM_MIB: u64 = 128;
/// Factor applied to the model time of a task.
pub const TIME_SAFETY_FACTOR: f64 = 2.0;
/// Seconds added to every task for start-up and writing the partial.
pub const TIME_STARTUP_SECONDS: u64 = 120;

const MIB: f64 = 1_048_576.0;

/// `--mem`: derived from the plan, or given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MemChoice {
    /// From the plan's prediction with the stated margin.
    Auto,
    /// This many bytes.
    Bytes(u64),
}

impl MemChoice {
    /// Parses `auto` or a size such as `4GiB`.
    pub fn parse(text: &str) -> Result<MemChoice> {
        if text.trim().eq_ignore_ascii_case("auto") {
            return Ok(MemChoice::Auto);
        }
        match parse_bytes(text) {
            Ok(0) => Err(Error::invalid(
                "mem",
                "0 bytes cannot hold anything; give a size or 'auto'",
            )),
            Ok(b) => Ok(MemChoice::Bytes(b)),
            Err(m) => Err(Error::invalid("mem", format!("{m}, or 'auto'"))),
        }
    }
}

/// `--time-per-task`: derived from the plan's estimate, or given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TimeChoice {
    /// From the estimate with the stated safety factor.
    Auto,
    /// This many seconds.
    Seconds(u64),
}

impl TimeChoice {
    /// Parses `auto`, `HH:MM:SS` or `D-HH:MM:SS`.
    pub fn parse(text: &str) -> Result<TimeChoice> {
        if text.trim().eq_ignore_ascii_case("auto") {
            return Ok(TimeChoice::Auto);
        }
        parse_duration(text).map(TimeChoice::Seconds)
    }
}

/// The memory request and how it was made.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MemRequest {
    /// The `--mem` value in MiB.
    pub mib: u64,
    /// What the process needs by the plan's prediction, bytes.
    pub need_bytes: u64,
    /// Inputs held once, bytes.
    pub inputs_bytes: u64,
    /// Output accumulator, bytes.
    pub output_bytes: u64,
    /// Peak of one slice, bytes.
    pub per_slice_peak_bytes: u64,
    /// Slices at once in the process.
    pub slices_at_once: u64,
    /// How the request was made from the need.
    pub basis: String,
}

/// The memory request for a process with `need`.
pub fn mem_request(need: &MemoryNeed, choice: MemChoice) -> Result<MemRequest> {
    let total = need.total_bytes();
    let too_big = || {
        Error::Cannot(format!(
            "one task needs {} by the plan's prediction, more than any scheduler can grant; plan with a smaller budget",
            bytes_human(total)
        ))
    };
    if !total.is_finite() || total > 2f64.powi(62) {
        return Err(too_big());
    }
    let need_bytes = total.ceil() as u64;
    let held = if need.reused_bytes > 0.0 {
        format!(" + held {}", bytes_human(need.reused_bytes))
    } else {
        String::new()
    };
    let breakdown = format!(
        "inputs {} + output {}{held} + {} x {} per-slice peak = {}",
        bytes_human(need.inputs_bytes),
        bytes_human(need.output_bytes),
        need.slices_at_once,
        bytes_human(need.per_slice_peak_bytes),
        bytes_human(total)
    );
    let (mib, basis) = match choice {
        MemChoice::Auto => {
            let with_margin = total * (100 + MEM_MARGIN_PERCENT) as f64 / 100.0;
            let mib = (with_margin / MIB).ceil() as u64 + MEM_PROGRAM_MIB;
            (
                mib,
                format!(
                    "{breakdown}, +{MEM_MARGIN_PERCENT}% +{MEM_PROGRAM_MIB} MiB for the program"
                ),
            )
        }
        MemChoice::Bytes(b) => {
            if (b as f64) < total {
                return Err(Error::invalid(
                    "mem",
                    format!(
                        "{} is below what one task needs ({breakdown}); give at least that, or 'auto'",
                        bytes_human(b as f64)
                    ),
                ));
            }
            (
                (b as f64 / MIB).ceil() as u64,
                format!("given; the task needs {breakdown}"),
            )
        }
    };
    Ok(MemRequest {
        mib: mib.max(1),
        need_bytes,
        inputs_bytes: need.inputs_bytes.ceil() as u64,
        output_bytes: need.output_bytes.ceil() as u64,
        per_slice_peak_bytes: need.per_slice_peak_bytes.ceil() as u64,
        slices_at_once: need.slices_at_once,
        basis,
    })
}

/// What one `sliceplan run` process of `plan` needs: the network's inputs
/// and output in the plan's dtype, the plan's predicted per-slice peak
/// times its slices at once and, with reuse, its held intermediates (or
/// the setup computing them, when more; the rule of `cost::memory`).
pub fn process_need(plan: &Plan, net: &Network) -> Result<MemoryNeed> {
    let byte_count = |field: &str, text: &str| -> Result<f64> {
        text.trim()
            .parse::<f64>()
            .ok()
            .filter(|b| b.is_finite() && *b >= 0.0)
            .ok_or_else(|| {
                Error::in_source(
                    "plan",
                    format!(
                        "predicted.{field} = '{text}' is not a byte count; write the plan again"
                    ),
                )
            })
    };
    let peak = byte_count("per_slice_peak_bytes", &plan.predicted.per_slice_peak_bytes)?;
    // Held slice-invariant intermediates: plans with reuse record them
    // ("0" when nothing is held); without reuse nothing is held.
    let (reused, setup) = if plan.reuse {
        (
            byte_count("reused_bytes", &plan.predicted.reused_bytes)?,
            byte_count("setup_bytes", &plan.predicted.setup_bytes)?,
        )
    } else {
        (0.0, 0.0)
    };
    Ok(MemoryNeed {
        reused_bytes: reused,
        setup_bytes: setup,
        ..MemoryNeed::plain(
            inputs_bytes(net, plan.dtype),
            output_bytes(net, plan.dtype),
            peak,
            plan.slices_at_once.max(1),
        )
    })
}

/// The model's seconds per slice for the slices of one task.
#[derive(Debug, Clone, PartialEq)]
pub struct SliceSeconds {
    /// Model seconds for one slice.
    pub seconds: f64,
    /// The threads per slice the figure is for (0: the plan's estimate
    /// predates per-thread figures and is for the machine's whole node).
    pub threads: u64,
    /// The machine profile's name.
    pub machine: String,
}

/// The plan's model seconds per slice when a task with `cpus` CPUs runs
/// `parallel` slices at once, so each slice has `cpus / parallel` threads:
/// the estimate's figure for the largest listed thread count not above
/// that (fewer threads are never faster, so this errs long).
pub fn slice_seconds_for_task(plan: &Plan, cpus: u64, parallel: u64) -> Option<SliceSeconds> {
    let e = plan.estimate.as_ref()?;
    let threads = (cpus / parallel.max(1)).max(1);
    let (seconds, threads) = e.seconds_for_threads(threads);
    Some(SliceSeconds {
        seconds,
        threads,
        machine: e.machine.clone(),
    })
}

/// The time request and how it was made.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TimeRequest {
    /// Seconds per task (whole minutes when derived).
    pub seconds: u64,
    /// How it was made.
    pub basis: String,
}

/// The time request for a task of at most `slices` slices running
/// `parallel` at once, with the model's seconds per slice when known.
pub fn time_request(
    choice: TimeChoice,
    per_slice: Option<&SliceSeconds>,
    slices: u64,
    parallel: u64,
) -> Result<TimeRequest> {
    match choice {
        TimeChoice::Seconds(s) => Ok(TimeRequest {
            seconds: s,
            basis: "given".into(),
        }),
        TimeChoice::Auto => {
            let given = per_slice.ok_or_else(|| {
                Error::invalid(
                    "time_per_task",
                    "the plan has no time estimate and this host has no calibrated machine profile: give the time per task as HH:MM:SS, run `sliceplan calibrate` on a node of the cluster, or plan again with a machine profile to get an estimate",
                )
            })?;
            let per = given.seconds;
            if !(per.is_finite() && per >= 0.0) {
                return Err(Error::invalid(
                    "time_per_task",
                    format!(
                        "the plan's estimate of {per} s per slice is not usable; give the time as HH:MM:SS"
                    ),
                ));
            }
            let rounds = slices.div_ceil(parallel.max(1));
            let model = rounds as f64 * per;
            let raw = model * TIME_SAFETY_FACTOR + TIME_STARTUP_SECONDS as f64;
            if raw > 365.0 * 86_400.0 {
                return Err(Error::Cannot(format!(
                    "one task would need {} by the model; use more chunks so each task is shorter",
                    format_duration(raw as u64)
                )));
            }
            let seconds = (raw / 60.0).ceil() as u64 * 60;
            Ok(TimeRequest {
                seconds,
                basis: format!(
                    "{rounds} round(s) x {} s per slice ({}) x {TIME_SAFETY_FACTOR} safety + {TIME_STARTUP_SECONDS} s start-up, rounded up to minutes",
                    seconds_text(per),
                    match given.threads {
                        0 => format!("model estimate on {}, for its whole node", given.machine),
                        t => format!("model estimate on {} with {t} thread(s) per slice", given.machine),
                    }
                ),
            })
        }
    }
}

/// Seconds for people: three decimals, or three significant digits below
/// a hundredth (model estimates of small slices are microseconds).
fn seconds_text(s: f64) -> String {
    if s > 0.0 && s < 0.01 {
        format!("{s:.2e}")
    } else {
        format!("{s:.3}")
    }
}

/// Parses `HH:MM:SS` or `D-HH:MM:SS` into seconds (at least one).
///
/// ```
/// use sliceplan::jobs::resources::parse_duration;
/// assert_eq!(parse_duration("01:30:00").unwrap(), 5400);
/// assert_eq!(parse_duration("2-00:00:01").unwrap(), 172_801);
/// assert!(parse_duration("90").is_err());
/// ```
pub fn parse_duration(text: &str) -> Result<u64> {
    let bad = || {
        Error::invalid(
            "time_per_task",
            format!(
                "'{text}' is not a time; write HH:MM:SS (e.g. 02:30:00) or D-HH:MM:SS (e.g. 1-12:00:00), or 'auto'"
            ),
        )
    };
    let t = text.trim();
    let (days, hms) = match t.split_once('-') {
        Some((d, rest)) => (d.parse::<u64>().map_err(|_| bad())?, rest),
        None => (0, t),
    };
    let parts: Vec<&str> = hms.split(':').collect();
    if parts.len() != 3 || parts.iter().any(|p| p.is_empty() || p.len() > 4) {
        return Err(bad());
    }
    let n: Vec<u64> = parts
        .iter()
        .map(|p| p.parse::<u64>().map_err(|_| bad()))
        .collect::<Result<_>>()?;
    if n[1] >= 60 || n[2] >= 60 || (days > 0 && n[0] >= 24) || days > 3650 {
        return Err(bad());
    }
    let s = days * 86_400 + n[0] * 3600 + n[1] * 60 + n[2];
    if s == 0 {
        return Err(Error::invalid(
            "time_per_task",
            "a time of zero cannot run anything; give HH:MM:SS",
        ));
    }
    Ok(s)
}

/// Formats seconds for `--time`: `HH:MM:SS`, or `D-HH:MM:SS` from a day on.
///
/// ```
/// use sliceplan::jobs::resources::format_duration;
/// assert_eq!(format_duration(5400), "01:30:00");
/// assert_eq!(format_duration(172_801), "2-00:00:01");
/// ```
pub fn format_duration(seconds: u64) -> String {
    let (d, r) = (seconds / 86_400, seconds % 86_400);
    let hms = format!("{:02}:{:02}:{:02}", r / 3600, r % 3600 / 60, r % 60);
    if d > 0 {
        format!("{d}-{hms}")
    } else {
        hms
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn need(peak: f64, at_once: u64) -> MemoryNeed {
        MemoryNeed::plain(1000.0, 8.0, peak, at_once)
    }

    #[test]
    fn auto_memory_adds_the_stated_margin() {
        // Closed form: need = 1000 + 8 + 2 x 10 MiB = 20,972,528 B; x 1.1 =
        // 23,069,780.8 B = 22.0012 MiB -> 23 MiB, + 128 = 151 MiB.
        let r = mem_request(&need(10.0 * MIB, 2), MemChoice::Auto).unwrap();
        assert_eq!(r.need_bytes, 20_972_528);
        assert_eq!(r.mib, 151);
        assert!(r.mib as f64 * MIB >= 2.0 * 10.0 * MIB);
    }

    #[test]
    fn explicit_memory_below_the_need_is_refused() {
        let e = mem_request(&need(10.0 * MIB, 2), MemChoice::Bytes(20 << 20)).unwrap_err();
        assert_eq!(e.exit_code(), 2);
        assert!(e.to_string().contains("below what one task needs"), "{e}");
        // 21 MiB = 22,020,096 B >= 20,972,528 B: accepted as given.
        let r = mem_request(&need(10.0 * MIB, 2), MemChoice::Bytes(21 << 20)).unwrap();
        assert_eq!(r.mib, 21);
    }

    fn per(seconds: f64) -> SliceSeconds {
        SliceSeconds {
            seconds,
            threads: 1,
            machine: "m".into(),
        }
    }

    #[test]
    fn auto_time_needs_an_estimate() {
        let e = time_request(TimeChoice::Auto, None, 4, 1).unwrap_err();
        assert!(e.to_string().contains("no time estimate"), "{e}");
        // Closed form: ceil(5 / 2) = 3 rounds x 100 s x 2 + 120 s = 720 s.
        let r = time_request(TimeChoice::Auto, Some(&per(100.0)), 5, 2).unwrap();
        assert_eq!(r.seconds, 720);
        // 1 round x 0.5 s x 2 + 120 = 121 s -> 180 s (whole minutes).
        let r = time_request(TimeChoice::Auto, Some(&per(0.5)), 1, 1).unwrap();
        assert_eq!(r.seconds, 180);
        let r = time_request(TimeChoice::Auto, Some(&per(1.2036e-7)), 1, 1).unwrap();
        assert!(r.basis.contains("1.20e-7 s per slice"), "{}", r.basis);
        assert!(
            r.basis.contains("with 1 thread(s) per slice"),
            "{}",
            r.basis
        );
    }

    #[test]
    fn tasks_get_the_time_of_their_own_threads() {
        // A plan estimated on a 64-core node: 1 s per slice with 64
        // threads, 64 s with 1 thread (a rate that scales with threads).
        use crate::cost::machine::{Estimate, ThreadSeconds};
        let mut plan = crate::plan::Plan::for_tree(
            &crate::formats::einsum::network_from_einsum("ab,bc->ac", Some(2), &[]).unwrap(),
            "n.toml",
            &crate::tree::Tree::left_deep(2),
            &[],
            crate::network::Dtype::F64,
            0,
        );
        plan.estimate = Some(Estimate {
            machine: "node".into(),
            seconds_per_slice: 1.0,
            wall_seconds: 1.0,
            nodes_used: 1,
            node_hours: 1.0 / 3600.0,
            method: String::new(),
            threads_per_slice: 64,
            by_threads: [1, 2, 4, 8, 16, 32, 64]
                .map(|t| ThreadSeconds {
                    threads: t,
                    seconds_per_slice: 64.0 / t as f64,
                })
                .to_vec(),
        });
        // --cpus-per-task 1: 64 s per slice, not the node's 1 s.
        let s = slice_seconds_for_task(&plan, 1, 1).unwrap();
        assert_eq!((s.seconds, s.threads), (64.0, 1));
        // 6 CPUs, 2 slices at once: 3 threads each -> the 2-thread figure.
        let s = slice_seconds_for_task(&plan, 6, 2).unwrap();
        assert_eq!((s.seconds, s.threads), (32.0, 2));
        // 10 slices of 64 s, 2 x + 120 s = 1400 s -> 1440 s = 00:24:00,
        // where the node's rate would have asked for 00:03:00.
        let r = time_request(
            TimeChoice::Auto,
            slice_seconds_for_task(&plan, 1, 1).as_ref(),
            10,
            1,
        )
        .unwrap();
        assert_eq!(format_duration(r.seconds), "00:24:00");
    }

    #[test]
    fn durations_parse_and_print() {
        for (text, s) in [
            ("00:00:01", 1),
            ("100:00:00", 360_000),
            ("1-00:00:00", 86_400),
        ] {
            assert_eq!(parse_duration(text).unwrap(), s, "{text}");
        }
        for bad in [
            "",
            "1:2",
            "00:60:00",
            "00:00:00",
            "x-01:00:00",
            "1-24:00:00",
            "-1:00:00",
        ] {
            assert!(parse_duration(bad).is_err(), "{bad}");
        }
        assert_eq!(format_duration(360_000), "4-04:00:00");
    }
}
