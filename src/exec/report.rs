//! What `run` and `gather` print: the run's figures, the gathered value, or
//! what is missing, as text for people and as JSON for scripts.

use std::fmt::Write as _;
use std::path::PathBuf;

use serde::Serialize;

use super::gather::{Gathered, Incomplete};
use super::npy_out::{exponent_path, npy_mantissas};
use super::render::{binary_text, complex_text, float_text, in_range, ln_abs, scaled_text};
use super::runner::RunReport;
use super::scale::{floor_log2, ldexp};
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

/// Exact values of a tensor output are listed in JSON up to this many elements.
pub const EXACT_LIST_MAX: usize = 4096;

/// The gathered result, for printing.
///
/// JSON keys beyond the obvious ones: `value` is the value as an f64 (or
/// `{re, im}`) when it fits in one and `null` otherwise; `mantissa` and
/// `exponent2` give it always (`value = mantissa x 2^exponent2`); `ln_abs`
/// is `ln |value|` (`null` for 0) and `phase` its argument in radians
/// (complex dtypes); `exact` the exact decimal digits of a count;
/// `value_text` what the text report prints.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResultReport {
    /// Always true here (see [`IncompleteReport`]).
    pub complete: bool,
    /// Element type.
    pub dtype: Dtype,
    /// Output shape (empty for a scalar).
    pub shape: Vec<u64>,
    /// The value, for a scalar output that fits in an f64.
    pub value: Option<ScalarValue>,
    /// For a scalar output: the value's mantissa (see `exponent2`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mantissa: Option<ScalarValue>,
    /// The power of two of the result: value = mantissa x 2^exponent2 (for a
    /// tensor output, every element of the lanes; 0 when everything fits in
    /// an f64).
    pub exponent2: i64,
    /// For a scalar output: ln |value| (`None` for zero).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ln_abs: Option<f64>,
    /// For a complex scalar output: the argument of the value, radians.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub phase: Option<f64>,
    /// For a scalar output: the value as the text report writes it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub value_text: Option<String>,
    /// True when the value is exact (a count computed without rounding).
    pub exact: bool,
    /// For an exact scalar: its decimal digits.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub exact_value: Option<String>,
    /// For an exact tensor output of at most [`EXACT_LIST_MAX`] elements:
    /// the decimal digits of every element, row-major.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub exact_values: Option<Vec<String>>,
    /// Why a whole-number result is not exact (for example "not exact: f64
    /// holds 53 bits").
    #[serde(skip_serializing_if = "Option::is_none")]
    pub not_exact: Option<String>,
    /// How the result was computed, for people.
    pub arithmetic: String,
    /// Frobenius norm of the output, when it fits in an f64.
    pub norm: Option<f64>,
    /// The Frobenius norm as text (any size).
    pub norm_text: String,
    /// Partials summed.
    pub partials: usize,
    /// Slices they cover.
    pub slices: u64,
    /// Where the `.npy` of mantissas was written, if asked.
    pub result_file: Option<PathBuf>,
    /// Where its power of two was written (a 0-d int64 `.npy`), if asked.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub exponent_file: Option<PathBuf>,
    /// The power of two in that file: values = file values x 2^this.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub npy_exponent2: Option<i64>,
}

impl ResultReport {
    /// The report of a gathered result; `result_file` is where
    /// [`Gathered::write_npy`] wrote it, if it did.
    pub fn new(g: &Gathered, result_file: Option<PathBuf>) -> ResultReport {
        let scalar = g.shape.iter().product::<u64>() == 1;
        let e = g.exponent;
        let complex = g.dtype.is_complex();
        let wrap = |re: f64, im: f64| {
            if complex {
                ScalarValue::Complex(ComplexValue { re, im })
            } else {
                ScalarValue::Real(re)
            }
        };
        let (re, im) = (g.lanes[0], if complex { g.lanes[1] } else { 0.0 });
        let modulus = re.hypot(im);
        let exact_value = match (&g.exact, scalar) {
            (Some(v), true) => Some(v[0].to_string()),
            _ => None,
        };
        let value_text = scalar.then(|| match &exact_value {
            Some(digits) => digits.clone(),
            None if complex => complex_text(re, im, e),
            None => scaled_text(re, e),
        });
        let value = scalar
            .then(|| match (in_range(re, e), in_range(im, e)) {
                (Some(a), Some(b)) => Some(wrap(a, b)),
                _ => None,
            })
            .flatten();
        // The norm with the largest part brought to [1, 2) first, so that
        // squares cannot overflow: norm = mantissa_norm x 2^norm_exp.
        let largest = g.lanes.iter().fold(0.0f64, |m, x| m.max(x.abs()));
        let shift = if largest > 0.0 {
            floor_log2(largest)
        } else {
            0
        };
        let mantissa_norm = g
            .lanes
            .iter()
            .map(|&x| ldexp(x, -shift).powi(2))
            .sum::<f64>()
            .sqrt();
        let norm_exp = e + shift;
        let exact_values = match (&g.exact, scalar) {
            (Some(v), false) if v.len() <= EXACT_LIST_MAX => {
                Some(v.iter().map(|x| x.to_string()).collect())
            }
            _ => None,
        };
        let npy_exponent2 = result_file
            .as_ref()
            .map(|_| npy_mantissas(g.dtype, &g.lanes, e).1);
        ResultReport {
            complete: true,
            dtype: g.dtype,
            shape: g.shape.clone(),
            value,
            mantissa: scalar.then(|| wrap(re, im)),
            exponent2: e,
            ln_abs: (scalar && modulus > 0.0).then(|| ln_abs(modulus, e)),
            phase: (scalar && complex).then(|| im.atan2(re)),
            value_text,
            exact: g.exact.is_some(),
            exact_value,
            exact_values,
            not_exact: g.numerics.note.clone(),
            arithmetic: g.numerics.describe(),
            norm: in_range(mantissa_norm, norm_exp),
            norm_text: scaled_text(mantissa_norm, norm_exp),
            partials: g.partials,
            slices: g.slices,
            exponent_file: result_file.as_deref().map(exponent_path),
            result_file,
            npy_exponent2,
        }
    }

    /// Text for people.
    pub fn to_text(&self) -> String {
        let mut s = String::new();
        if let Some(text) = &self.value_text {
            let mut tags = vec![self.dtype.to_string()];
            if let Some(digits) = &self.exact_value {
                tags.insert(0, "exact".into());
                if digits.len() > 17 {
                    tags.insert(1, format!("{} digits", digits.len()));
                }
            }
            let _ = write!(s, "value: {text} ({})", tags.join(", "));
            if let Some(note) = &self.not_exact {
                let _ = write!(s, " ({note})");
            }
            s.push('\n');
            let beyond =
                self.value.is_none() || self.exact_value.as_ref().is_some_and(|d| d.len() > 17);
            if let (true, Some(ln)) = (beyond, self.ln_abs) {
                let (re, im) = match self.mantissa {
                    Some(ScalarValue::Complex(z)) => (z.re, z.im),
                    Some(ScalarValue::Real(x)) => (x, 0.0),
                    None => (0.0, 0.0),
                };
                let _ = write!(s, "ln|value|: {}", float_text(ln));
                if let Some(phase) = self.phase {
                    let _ = write!(s, ", phase: {} rad", float_text(phase));
                }
                let binary = if self.dtype.is_complex() {
                    let sign = if im < 0.0 { '-' } else { '+' };
                    format!("({re} {sign} {}i) x 2^{}", im.abs(), self.exponent2)
                } else {
                    binary_text(re, self.exponent2)
                };
                let _ = write!(s, " (value = {binary})");
                s.push('\n');
            }
        }
        if self.value_text.is_none() || !self.shape.is_empty() {
            let _ = writeln!(
                s,
                "shape: {:?}, norm (Frobenius): {}",
                self.shape, self.norm_text
            );
            if self.exact {
                let _ = writeln!(s, "values: exact whole numbers (all digits in --json up to {EXACT_LIST_MAX} elements; the .npy holds them rounded)");
            } else if let Some(note) = &self.not_exact {
                let _ = writeln!(s, "values: {note}");
            }
        }
        let _ = writeln!(
            s,
            "summed {} partials covering all {} slices",
            self.partials, self.slices
        );
        if let Some(f) = &self.result_file {
            match (&self.exponent_file, self.npy_exponent2) {
                (Some(x), Some(0)) | (Some(x), None) => {
                    let _ = writeln!(
                        s,
                        "result written to {} (exponent 0 in {})",
                        f.display(),
                        x.display()
                    );
                }
                (Some(x), Some(k)) => {
                    let _ = writeln!(
                        s,
                        "result written to {} as mantissas; multiply by 2^{k} (stored in {})",
                        f.display(),
                        x.display()
                    );
                }
                _ => {
                    let _ = writeln!(s, "result written to {}", f.display());
                }
            }
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
    let _ = writeln!(s, "arithmetic: {}", r.numerics.describe());
    let _ = writeln!(
        s,
        "memory per slice: predicted {} (cost model, executor rule; plan file says {} bytes), measured {} (bytes the executor held)",
        bytes_human(m.predicted_per_slice as f64),
        m.plan_predicted_per_slice,
        bytes_human(m.measured_per_slice as f64)
    );
    if m.held_intermediates > 0 {
        let _ = writeln!(
            s,
            "reuse: {} slice-invariant intermediate(s) computed once and held: predicted {}, setup predicted at most {}, measured {}",
            m.held_intermediates,
            bytes_human(m.predicted_reused as f64),
            bytes_human(m.predicted_setup as f64),
            bytes_human(m.measured_setup as f64)
        );
    }
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::exec::exact::Numerics;

    fn gathered(dtype: Dtype, shape: Vec<u64>, lanes: Vec<f64>, exponent: i64) -> Gathered {
        Gathered {
            dtype,
            shape,
            lanes,
            exponent,
            exact: None,
            numerics: Numerics::float(),
            partials: 1,
            slices: 1,
        }
    }

    #[test]
    fn norms_of_huge_values_do_not_overflow() {
        // sqrt(2) x 1e300: the squares (1e600) are beyond f64.
        let g = gathered(Dtype::F64, vec![2], vec![1e300, 1e300], 0);
        let r = ResultReport::new(&g, None);
        let want = std::f64::consts::SQRT_2 * 1e300;
        assert!((r.norm.unwrap() - want).abs() <= 1e-15 * want);
        // The same 2^2000 times bigger: sqrt 2 x 1e300 x 2^2000 =
        // 1.62370200063370193...e902 (Python Decimal, 30 digits).
        let g = gathered(Dtype::F64, vec![2], vec![1e300, 1e300], 2000);
        let r = ResultReport::new(&g, None);
        assert!(r.norm.is_none());
        assert!(
            r.norm_text.starts_with("1.6237020006337") && r.norm_text.ends_with("e902"),
            "{}",
            r.norm_text
        );
    }

    #[test]
    fn exact_counts_print_every_digit() {
        let mut g = gathered(Dtype::F64, vec![], vec![2.03004905114598e18], 0);
        g.exact = Some(vec!["2030049051145980050".parse().unwrap()]);
        let r = ResultReport::new(&g, None);
        assert!(r
            .to_text()
            .starts_with("value: 2030049051145980050 (exact, 19 digits, f64)\nln|value|: "));
        assert_eq!(r.exact_value.as_deref(), Some("2030049051145980050"));
    }

    #[test]
    fn out_of_range_values_have_no_plain_value() {
        let g = gathered(Dtype::C128, vec![], vec![0.0, -1.0], 5000);
        let r = ResultReport::new(&g, None);
        assert_eq!(r.value, None);
        // ln(2^5000) = 5000 ln 2 = 3465.7359027997264 (closed form), phase -pi/2.
        assert!((r.ln_abs.unwrap() - 3465.7359027997264).abs() < 1e-9);
        assert_eq!(r.phase, Some(-std::f64::consts::FRAC_PI_2));
        assert!(!r.to_text().contains("NaN") && !r.to_text().contains("inf"));
    }
}
