//! What `run` and `gather` print: the run's figures, the gathered value, or
//! what is missing, as text for people and as JSON for scripts.

use std::fmt::Write as _;
use std::path::PathBuf;

use serde::Serialize;

use super::gather::{Gathered, Incomplete};
use super::runner::RunReport;
use super::verify::Verification;
use crate::cost::bytes::bytes_human;
use crate::network::Dtype;

/// A complex number for JSON.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ComplexValue {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

/// The scalar value of a result, real or complex.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(untagged)]
pub enum ScalarValue {
    /// A real value.
    Real(f64),
    /// A complex value.
    Complex(ComplexValue),
}

/// The gathered result, for printing.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResultReport {
    /// Always true here (see [`IncompleteReport`]).
    pub complete: bool,
    /// Element type.
    pub dtype: Dtype,
    /// Output shape (empty for a scalar).
    pub shape: Vec<u64>,
    /// The value, for a scalar output.
    pub value: Option<ScalarValue>,
    /// Frobenius norm of the output.
    pub norm: f64,
    /// Partials summed.
    pub partials: usize,
    /// Slices they cover.
    pub slices: u64,
    /// Where the `.npy` was written, if asked.
    pub result_file: Option<PathBuf>,
}

impl ResultReport {
    /// The report of a gathered result.
    pub fn new(g: &Gathered, result_file: Option<PathBuf>) -> ResultReport {
        let value = (g.shape.iter().product::<u64>() == 1).then(|| {
            if g.dtype.is_complex() {
                ScalarValue::Complex(ComplexValue {
                    re: g.lanes[0],
                    im: g.lanes[1],
                })
            } else {
                ScalarValue::Real(g.lanes[0])
            }
        });
        ResultReport {
            complete: true,
            dtype: g.dtype,
            shape: g.shape.clone(),
            value,
            norm: g.lanes.iter().map(|x| x * x).sum::<f64>().sqrt(),
            partials: g.partials,
            slices: g.slices,
            result_file,
        }
    }

    /// Text for people.
    pub fn to_text(&self) -> String {
        let mut s = String::new();
        match self.value {
            Some(ScalarValue::Real(x)) => {
                let _ = writeln!(s, "value: {x} ({})", self.dtype);
            }
            Some(ScalarValue::Complex(z)) => {
                let sign = if z.im < 0.0 { '-' } else { '+' };
                let _ = writeln!(s, "value: {} {sign} {}i ({})", z.re, z.im.abs(), self.dtype);
            }
            None => {}
        }
        if self.value.is_none() || !self.shape.is_empty() {
            let _ = writeln!(
                s,
                "shape: {:?}, norm (Frobenius): {}",
                self.shape, self.norm
            );
        }
        let _ = writeln!(
            s,
            "summed {} partials covering all {} slices",
            self.partials, self.slices
        );
        if let Some(f) = &self.result_file {
            let _ = writeln!(s, "result written to {}", f.display());
        }
        s
    }
}

/// Why gather stopped, for printing.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct IncompleteReport {
    /// Always false.
    pub complete: bool,
    /// The details.
    #[serde(flatten)]
    pub details: Incomplete,
    /// The command that re-runs the missing chunks, when they are known.
    pub resubmit: Vec<String>,
    /// The Slurm resubmission script written for the missing chunks, when
    /// the partials belong to a job directory of `sliceplan jobs`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub resubmit_script: Option<PathBuf>,
}

impl IncompleteReport {
    /// The report for `plan_path` with partials in `dir`.
    pub fn new(details: &Incomplete, plan_path: &str, dir: &str) -> IncompleteReport {
        let resubmit = match details.chunks_of {
            Some(of) => details
                .missing_chunks
                .iter()
                .map(|i| format!("sliceplan run {plan_path} --chunk {i} --of {of} --out {dir}"))
                .collect(),
            None => details
                .missing
                .iter()
                .map(|r| {
                    format!(
                        "sliceplan run {plan_path} --slices {}..{} --out {dir}",
                        r.start, r.end
                    )
                })
                .collect(),
        };
        IncompleteReport {
            complete: false,
            details: details.clone(),
            resubmit,
            resubmit_script: None,
        }
    }

    /// Text for people.
    pub fn to_text(&self) -> String {
        let d = &self.details;
        let ranges = |rs: &[std::ops::Range<u64>]| {
            rs.iter()
                .map(|r| format!("{}..{}", r.start, r.end))
                .collect::<Vec<_>>()
                .join(", ")
        };
        let mut s =
            String::from("incomplete: the partials do not cover every slice exactly once\n");
        if !d.missing.is_empty() {
            let _ = writeln!(s, "missing slices: {}", ranges(&d.missing));
        }
        if let Some(of) = d.chunks_of {
            if !d.missing_chunks.is_empty() {
                let list: Vec<String> = d.missing_chunks.iter().map(u64::to_string).collect();
                let _ = writeln!(s, "missing chunks (of {of}): {}", list.join(", "));
            }
        }
        if !d.duplicated.is_empty() {
            let _ = writeln!(
                s,
                "slices covered more than once: {} (remove the extra partials)",
                ranges(&d.duplicated)
            );
        }
        for r in &d.rejected {
            let _ = writeln!(s, "rejected {}: {}", r.file.display(), r.reason);
        }
        if let Some(script) = &self.resubmit_script {
            let _ = writeln!(s, "resubmission written: sbatch {}", script.display());
        }
        if !self.resubmit.is_empty() {
            s.push_str("to complete it, run:\n");
            for c in &self.resubmit {
                let _ = writeln!(s, "  {c}");
            }
        }
        s
    }
}

/// Text for people about a run.
pub fn run_text(r: &RunReport, dir: &str) -> String {
    let m = &r.memory;
    let mut s = String::new();
    let rate = if r.seconds > 0.0 {
        r.slices_run as f64 / r.seconds
    } else {
        0.0
    };
    let _ = writeln!(
        s,
        "ran {} chunk(s), skipped {} with a valid partial; {} of {} slices in {:.2} s ({rate:.1} slices/s), {} thread(s), {} slice(s) at once",
        r.chunks_run, r.chunks_skipped, r.slices_run, r.slices_total, r.seconds, r.threads, r.slices_at_once
    );
    let _ = writeln!(s, "partials in {dir}");
    let _ = writeln!(
        s,
        "memory per slice: predicted {} (cost model, executor rule; plan file says {} bytes), measured {} (bytes the executor held)",
        bytes_human(m.predicted_per_slice as f64),
        m.plan_predicted_per_slice,
        bytes_human(m.measured_per_slice as f64)
    );
    let _ = writeln!(
        s,
        "process: inputs {} (held once, not in the per-slice figure), running sum {}, tracked peak {}, maximum resident size {}",
        bytes_human(m.inputs as f64),
        bytes_human(m.accumulator as f64),
        bytes_human(m.tracked_process_peak as f64),
        m.max_resident
            .map_or_else(|| "unknown".to_string(), |b| bytes_human(b as f64))
    );
    s
}

/// Text for people about `--verify`.
pub fn verify_text(v: &Verification) -> String {
    format!(
        "verify: unsliced contraction {} (relative difference {:.3e}, tolerance {:.0e}); unsliced peak predicted {}, measured {}\n",
        if v.agrees { "agrees" } else { "DISAGREES" },
        v.relative_difference,
        v.tolerance,
        bytes_human(v.unsliced_predicted_peak_bytes as f64),
        bytes_human(v.unsliced_measured_peak_bytes as f64)
    )
}
