//! Arguments shared by `fit` and `plan`: the budget, dtype and machines, and
//! the outputs of the fit report.

use std::path::PathBuf;

use clap::Args;

use crate::cost::bytes::parse_bytes;
use crate::cost::machine::Machine;
use crate::error::{Error, Result};
use crate::network::{Dtype, Network};
use crate::plan::advise::Target;

/// Where slices must fit.
#[derive(Debug, Clone, Args)]
pub struct BudgetArgs {
    /// Memory one process may use, e.g. 64GiB or 500GB (KiB/MiB/GiB/TiB = powers of 1024, KB/MB/GB/TB = powers of 1000).
    #[arg(long, value_name = "SIZE")]
    pub budget: Option<String>,

    /// Machine profile (TOML); repeat to compare node types. Without --budget, the first machine's usable memory is the budget.
    #[arg(long, value_name = "FILE")]
    pub machine: Vec<PathBuf>,

    /// Element type: f32, f64, c64 or c128 (default: the network's, else c64).
    #[arg(long, value_name = "DTYPE")]
    pub dtype: Option<String>,

    /// Slices one process runs at once with --budget (each needs its own peak).
    #[arg(long, value_name = "N", default_value_t = 1)]
    pub slices_at_once: u64,

    /// Write the frontier as CSV to this file.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,

    /// Write the frontier chart as SVG to this file.
    #[arg(long, value_name = "FILE")]
    pub svg: Option<PathBuf>,
}

/// Budget arguments after validation (no file read yet).
#[derive(Debug, Clone)]
pub struct CheckedBudget {
    /// The explicit budget, bytes.
    pub budget: Option<u64>,
    /// The explicit dtype.
    pub dtype: Option<Dtype>,
    /// Slices at once with an explicit budget.
    pub slices_at_once: u64,
}

impl BudgetArgs {
    /// Checks the values without touching any file.
    pub fn check(&self) -> Result<CheckedBudget> {
        let budget = self
            .budget
            .as_deref()
            .map(|b| parse_bytes(b).map_err(|m| Error::usage(format!("--budget: {m}"))))
            .transpose()?;
        if budget == Some(0) {
            return Err(Error::usage(
                "--budget: a budget of 0 bytes cannot hold anything",
            ));
        }
        if self.slices_at_once == 0 {
            return Err(Error::usage("--slices-at-once must be at least 1"));
        }
        let dtype = self
            .dtype
            .as_deref()
            .map(|d| {
                d.parse::<Dtype>()
                    .map_err(|m| Error::usage(format!("--dtype: {m}")))
            })
            .transpose()?;
        Ok(CheckedBudget {
            budget,
            dtype,
            slices_at_once: self.slices_at_once,
        })
    }

    /// Reads the machine profiles and lists the targets: the explicit budget
    /// first (when given), then one per machine.
    pub fn targets(&self, checked: &CheckedBudget) -> Result<Vec<Target>> {
        let mut targets = Vec::new();
        if let Some(b) = checked.budget {
            targets.push(Target::budget(b, checked.slices_at_once));
        }
        for path in &self.machine {
            targets.push(Target::machine(Machine::read(path)?));
        }
        // With an explicit budget and machines, the budget row keeps the
        // first machine's estimate: it is the same hardware, constrained.
        if checked.budget.is_some() {
            if let Some(m) = targets.get(1).and_then(|t| t.machine.clone()) {
                targets[0].machine = Some(m);
            }
        }
        Ok(targets)
    }

    /// The dtype: explicit, else the network's, else c64.
    pub fn dtype_for(&self, checked: &CheckedBudget, net: &Network) -> Dtype {
        checked.dtype.or(net.dtype).unwrap_or_default()
    }
}
