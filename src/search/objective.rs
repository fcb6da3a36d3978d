//! What the search minimises: total ops, peak, width, op width, a weighted
//! mix, or total ops under a width cap; and how two trees compare under it.

use std::fmt;
use std::str::FromStr;

use super::exact::ExactGoal;
use crate::num::Ordered;

/// The quantity a search minimises.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Objective {
    /// Least total ops (then least width).
    #[default]
    TotalOps,
    /// Least peak (then least total ops).
    Peak,
    /// Least width (then least total ops).
    Width,
    /// Least op width: log2 of the largest single contraction, the time
    /// exponent of the slowest step (then least total ops).
    OpWidth,
    /// Least `ops * log2(total ops) + width * width + peak * log2(peak)`.
    Mix {
        /// Weight of log2 total ops.
        ops: f64,
        /// Weight of the width.
        width: f64,
        /// Weight of log2 peak.
        peak: f64,
    },
    /// Least total ops among trees of width at most `max_width` (log2
    /// elements); trees above the cap rank after every tree within it, by
    /// how far they exceed it.
    OpsWithinWidth {
        /// The cap on the width.
        max_width: f64,
    },
}

/// The measures of a tree an objective looks at (log2 values).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measures {
    /// log2 total ops.
    pub total_ops_log2: f64,
    /// Width.
    pub width: f64,
    /// Op width: log2 of the largest single contraction's ops.
    pub op_width: f64,
    /// log2 peak, when computed.
    pub peak_log2: Option<f64>,
}

/// A comparable score: smaller is better, compared lexicographically.
pub type Key = (Ordered, Ordered);

impl Objective {
    /// True when comparing trees needs their peak.
    pub fn needs_peak(&self) -> bool {
        match self {
            Objective::Peak => true,
            Objective::Mix { peak, .. } => *peak != 0.0,
            _ => false,
        }
    }

    /// The comparable key of a tree's measures. The peak must be present
    /// when [`Objective::needs_peak`] says so.
    pub fn key(&self, m: &Measures) -> Key {
        let peak = m.peak_log2.unwrap_or(f64::INFINITY);
        let (a, b) = match *self {
            Objective::TotalOps => (m.total_ops_log2, m.width),
            Objective::Peak => (peak, m.total_ops_log2),
            Objective::Width => (m.width, m.total_ops_log2),
            Objective::OpWidth => (m.op_width, m.total_ops_log2),
            Objective::Mix {
                ops,
                width,
                peak: wp,
            } => {
                let p = if wp == 0.0 { 0.0 } else { wp * peak };
                (
                    ops * m.total_ops_log2 + width * m.width + p,
                    m.total_ops_log2,
                )
            }
            Objective::OpsWithinWidth { max_width } => {
                ((m.width - max_width).max(0.0), m.total_ops_log2)
            }
        };
        (Ordered(a), Ordered(b))
    }

    /// The goal the exact finder and refinement pursue for this objective
    /// (peak has no local form; width is its usual proxy).
    pub fn exact_goal(&self) -> ExactGoal {
        match *self {
            Objective::TotalOps => ExactGoal::TotalOps,
            Objective::Width | Objective::Peak => ExactGoal::Width,
            Objective::OpWidth => ExactGoal::OpWidth,
            Objective::Mix { ops, .. } if ops > 0.0 => ExactGoal::TotalOps,
            Objective::Mix { .. } => ExactGoal::Width,
            Objective::OpsWithinWidth { max_width } => ExactGoal::OpsWithin(max_width),
        }
    }

    /// True when the exact finder's optimum is also optimal for this
    /// objective (so no other tree can beat it).
    pub fn solved_by_exact(&self) -> bool {
        matches!(
            self,
            Objective::TotalOps
                | Objective::Width
                | Objective::OpWidth
                | Objective::OpsWithinWidth { .. }
        )
    }
}

impl fmt::Display for Objective {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Objective::TotalOps => f.write_str("ops"),
            Objective::Peak => f.write_str("peak"),
            Objective::Width => f.write_str("width"),
            Objective::OpWidth => f.write_str("op-width"),
            Objective::Mix { ops, width, peak } => write!(f, "mix:{ops},{width},{peak}"),
            Objective::OpsWithinWidth { max_width } => write!(f, "ops-within:{max_width}"),
        }
    }
}

impl FromStr for Objective {
    type Err = String;

    /// Parses `ops`, `peak`, `width`, `op-width`, `mix:A,B,C` or
    /// `ops-within:W`.
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let valid = "valid: ops, peak, width, op-width (log2 of the largest single contraction), mix:A,B,C (A x log2 total ops + B x width + C x log2 peak), ops-within:W (least total ops with width <= W)";
        let s = s.trim();
        let number = |t: &str, what: &str| -> Result<f64, String> {
            let v: f64 = t
                .trim()
                .parse()
                .map_err(|_| format!("'{t}' in '{s}' is not a number ({what})"))?;
            if v.is_finite() && v >= 0.0 {
                Ok(v)
            } else {
                Err(format!("{what} must be a finite number >= 0, got '{t}'"))
            }
        };
        match s {
            "ops" => Ok(Objective::TotalOps),
            "peak" => Ok(Objective::Peak),
            "width" => Ok(Objective::Width),
            "op-width" => Ok(Objective::OpWidth),
            _ => {
                if let Some(rest) = s.strip_prefix("mix:") {
                    let parts: Vec<&str> = rest.split(',').collect();
                    if parts.len() != 3 {
                        return Err(format!(
                            "'{s}' needs three weights, e.g. mix:1,0.5,0; {valid}"
                        ));
                    }
                    let ops = number(parts[0], "weight")?;
                    let width = number(parts[1], "weight")?;
                    let peak = number(parts[2], "weight")?;
                    if ops + width + peak == 0.0 {
                        return Err(format!("'{s}': at least one weight must be positive"));
                    }
                    Ok(Objective::Mix { ops, width, peak })
                } else if let Some(rest) = s.strip_prefix("ops-within:") {
                    Ok(Objective::OpsWithinWidth {
                        max_width: number(rest, "width cap")?,
                    })
                } else {
                    Err(format!("unknown objective '{s}'; {valid}"))
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parse_round_trip() {
        for s in [
            "ops",
            "peak",
            "width",
            "op-width",
            "mix:1,0.5,0",
            "ops-within:30",
        ] {
            let o: Objective = s.parse().unwrap();
            assert_eq!(o.to_string(), s);
        }
        assert!("mix:1,2".parse::<Objective>().is_err());
        assert!("ops-within:-3".parse::<Objective>().is_err());
        assert!("flops".parse::<Objective>().unwrap_err().contains("valid:"));
    }

    #[test]
    fn capped_ranks_feasible_first() {
        let o = Objective::OpsWithinWidth { max_width: 10.0 };
        let m = |ops, width| Measures {
            total_ops_log2: ops,
            width,
            op_width: width,
            peak_log2: None,
        };
        assert!(o.key(&m(50.0, 10.0)) < o.key(&m(20.0, 11.0)));
        assert!(o.key(&m(20.0, 9.0)) < o.key(&m(21.0, 8.0)));
    }

    #[test]
    fn op_width_ranks_the_largest_contraction_first() {
        let m = |ops, op_width| Measures {
            total_ops_log2: ops,
            width: 0.0,
            op_width,
            peak_log2: None,
        };
        let o = Objective::OpWidth;
        assert!(o.key(&m(40.0, 10.0)) < o.key(&m(20.0, 11.0)));
        assert!(o.key(&m(20.0, 10.0)) < o.key(&m(21.0, 10.0)));
        assert_eq!(o.exact_goal(), ExactGoal::OpWidth);
    }
}
