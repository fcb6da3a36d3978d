//! Argument groups several commands share (the input network, the search,
//! the budget) and the flags with a fixed set of values, as clap value
//! enums so `--help` lists them.

use std::path::PathBuf;
use std::time::Duration;

use clap::{Args, ValueEnum};

use sliceplan::command::{NetworkSource, TreeChoice};
use sliceplan::cost::bytes::parse_bytes;
use sliceplan::error::{Error, Result};
use sliceplan::formats::{einsum, AmplitudeSpec, Format, GraphProblem, LoadOptions, OpenQubits};
use sliceplan::network::Dtype;
use sliceplan::search::{Objective, SearchOptions};

/// Element types.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum DtypeArg {
    /// 32-bit real.
    F32,
    /// 64-bit real.
    F64,
    /// Complex with 32-bit parts.
    C64,
    /// Complex with 64-bit parts.
    C128,
}

impl From<DtypeArg> for Dtype {
    fn from(d: DtypeArg) -> Dtype {
        match d {
            DtypeArg::F32 => Dtype::F32,
            DtypeArg::F64 => Dtype::F64,
            DtypeArg::C64 => Dtype::C64,
            DtypeArg::C128 => Dtype::C128,
        }
    }
}

/// Input formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormatArg {
    /// sliceplan's network file (TOML).
    Native,
    /// OpenQASM 2.0 circuit.
    Qasm,
    /// DIMACS CNF formula.
    Cnf,
    /// Graph: DIMACS `p edge` or an edge list.
    Graph,
}

impl From<FormatArg> for Format {
    fn from(f: FormatArg) -> Format {
        match f {
            FormatArg::Native => Format::Native,
            FormatArg::Qasm => Format::Qasm,
            FormatArg::Cnf => Format::Cnf,
            FormatArg::Graph => Format::Graph,
        }
    }
}

/// What a graph network counts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ProblemArg {
    /// Independent sets (the empty set included).
    IndependentSets,
    /// Proper colourings with --colors colours.
    Colorings,
    /// Perfect matchings.
    PerfectMatchings,
    /// The Ising partition function at --beta.
    Ising,
}

impl From<ProblemArg> for sliceplan::formats::ProblemKind {
    fn from(p: ProblemArg) -> Self {
        use sliceplan::formats::ProblemKind as K;
        match p {
            ProblemArg::IndependentSets => K::IndependentSets,
            ProblemArg::Colorings => K::Colorings,
            ProblemArg::PerfectMatchings => K::PerfectMatchings,
            ProblemArg::Ising => K::Ising,
        }
    }
}

/// What the search minimises.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ObjectiveArg {
    /// Least total ops (then least width).
    Ops,
    /// Least peak memory (then least total ops).
    Peak,
    /// Least width (then least total ops).
    Width,
    /// Least op width: the largest single contraction, the time exponent of
    /// the slowest step (then least total ops).
    OpWidth,
    /// Least weighted sum of log2 total ops, width and log2 peak (--weights).
    Mix,
    /// Least total ops among trees of width at most --max-width.
    OpsWithin,
}

/// Where the network comes from: a file, or an einsum equation.
#[derive(Debug, Clone, Args)]
pub struct NetArgs {
    /// Input file: network (.toml), OpenQASM 2.0 circuit (.qasm), DIMACS CNF
    /// formula (.cnf), or graph (.col, .graph, .edges).
    #[arg(value_name = "NET", required_unless_present = "einsum")]
    pub net: Option<PathBuf>,

    /// An einsum equation instead of a file, e.g. "ab,bc,cd->ad".
    #[arg(long, value_name = "EQ", conflicts_with = "net")]
    pub einsum: Option<String>,

    /// Dimension of every einsum index not named in --dims.
    #[arg(long, value_name = "D", requires = "einsum")]
    pub dim: Option<u64>,

    /// Per-index einsum dimensions, e.g. a=30,b=35.
    #[arg(long, value_name = "LIST", requires = "einsum")]
    pub dims: Option<String>,

    /// Input format when the extension does not tell.
    #[arg(long, value_name = "FMT")]
    pub format: Option<FormatArg>,

    /// Circuits: the output bits, one 0/1 per qubit, leftmost = qubit 0 of the
    /// first qreg (default: all zeros).
    #[arg(long, value_name = "BITS")]
    pub bitstring: Option<String>,

    /// Circuits: qubits left open for a batch of amplitudes, e.g. 0,3,5 or all.
    #[arg(long, value_name = "QUBITS")]
    pub open: Option<String>,

    /// Graphs: what the network counts.
    #[arg(long, value_name = "PROBLEM")]
    pub problem: Option<ProblemArg>,

    /// Graphs: number of colours for --problem colorings.
    #[arg(long, value_name = "Q")]
    pub colors: Option<u64>,

    /// Graphs: inverse temperature for --problem ising.
    #[arg(long, value_name = "BETA", allow_negative_numbers = true)]
    pub beta: Option<f64>,

    /// Graphs: one coupling J for every edge (--problem ising; default: the
    /// file's per-edge couplings, else 1).
    #[arg(long, value_name = "J", allow_negative_numbers = true)]
    pub coupling: Option<f64>,

    /// Graphs: external field h for --problem ising (default 0).
    #[arg(long, value_name = "H", allow_negative_numbers = true)]
    pub field: Option<f64>,
}

/// Parses `a=30,b=35`.
fn parse_dims(text: &str) -> Result<Vec<(String, u64)>> {
    einsum::parse_dims(text).map_err(|m| Error::invalid("dims", m))
}

/// Parses the circuit options.
pub fn amplitude(bitstring: &Option<String>, open: &Option<String>) -> Result<AmplitudeSpec> {
    let open = open
        .as_deref()
        .map(|o| OpenQubits::parse(o).map_err(|m| Error::invalid("open", m)))
        .transpose()?;
    let spec = AmplitudeSpec {
        bitstring: bitstring.clone(),
        open,
    };
    spec.validate()
        .map_err(|m| Error::invalid("bitstring", m))?;
    Ok(spec)
}

impl NetArgs {
    /// The checked network source (no file read).
    pub fn source(&self) -> Result<NetworkSource> {
        if let Some(eq) = &self.einsum {
            let dims = self.dims.as_deref().map(parse_dims).transpose()?;
            return Ok(NetworkSource::einsum(
                eq,
                self.dim,
                &dims.unwrap_or_default(),
            ));
        }
        let path = self
            .net
            .clone()
            .ok_or_else(|| Error::usage("give a network file or --einsum"))?;
        let problem = GraphProblem::from_parts(
            self.problem.map(Into::into),
            self.colors,
            self.beta,
            self.coupling,
            self.field,
        )?;
        Ok(NetworkSource::File {
            path,
            load: LoadOptions {
                format: self.format.map(Into::into),
                amplitude: amplitude(&self.bitstring, &self.open)?,
                problem,
            },
        })
    }
}

/// How long and how to search for a tree.
#[derive(Debug, Clone, Args)]
pub struct SearchArgs {
    /// Use this tree file instead of searching.
    #[arg(long, value_name = "TREE")]
    pub tree: Option<PathBuf>,

    /// Time budget for the whole command, e.g. 10s, 500ms, 2m (default 10s
    /// unless --trials is given).
    #[arg(long, value_name = "DURATION", value_parser = parse_duration)]
    pub time: Option<Duration>,

    /// Number of trials; with --seed the result is the same on every run.
    #[arg(long, value_name = "N")]
    pub trials: Option<u64>,

    /// Seed of the random choices.
    #[arg(long, value_name = "S", default_value_t = 0)]
    pub seed: u64,

    /// Worker threads (default: one per core).
    #[arg(long, value_name = "T", default_value_t = 0)]
    pub threads: usize,

    /// What to minimise.
    #[arg(long, value_name = "OBJ", value_enum, default_value_t = ObjectiveArg::Ops)]
    pub objective: ObjectiveArg,

    /// The width cap of --objective ops-within (log2 elements).
    #[arg(long, value_name = "W")]
    pub max_width: Option<f64>,

    /// The weights A,B,C of --objective mix: A x log2 total ops + B x width + C x log2 peak.
    #[arg(long, value_name = "A,B,C")]
    pub weights: Option<String>,
}

impl SearchArgs {
    /// The objective with its parameters.
    fn objective(&self) -> Result<Objective> {
        if self.weights.is_some() && self.objective != ObjectiveArg::Mix {
            return Err(Error::invalid("weights", "goes with --objective mix"));
        }
        if self.max_width.is_some() && self.objective != ObjectiveArg::OpsWithin {
            return Err(Error::invalid(
                "max_width",
                "goes with --objective ops-within",
            ));
        }
        Ok(match self.objective {
            ObjectiveArg::Ops => Objective::TotalOps,
            ObjectiveArg::Peak => Objective::Peak,
            ObjectiveArg::Width => Objective::Width,
            ObjectiveArg::OpWidth => Objective::OpWidth,
            ObjectiveArg::Mix => {
                let weights = self.weights.as_deref().ok_or_else(|| {
                    Error::invalid(
                        "weights",
                        "--objective mix needs three weights, e.g. 1,0.5,0",
                    )
                })?;
                format!("mix:{weights}")
                    .parse()
                    .map_err(|m: String| Error::invalid("weights", m))?
            }
            ObjectiveArg::OpsWithin => {
                let max_width = self.max_width.ok_or_else(|| {
                    Error::invalid(
                        "max_width",
                        "--objective ops-within needs the width cap, e.g. 30",
                    )
                })?;
                format!("ops-within:{max_width}")
                    .parse()
                    .map_err(|m: String| Error::invalid("max_width", m))?
            }
        })
    }

    /// The tree file, or the checked search options.
    pub fn choice(&self) -> Result<TreeChoice> {
        if let Some(path) = &self.tree {
            return Ok(TreeChoice::File(path.clone()));
        }
        let time = match (self.time, self.trials) {
            (None, None) => Some(Duration::from_secs(10)),
            (t, _) => t,
        };
        let search = SearchOptions {
            objective: self.objective()?,
            trials: self.trials,
            time,
            seed: self.seed,
            threads: self.threads,
            available_memory: sliceplan::host::available_memory().map(|a| a.bytes),
            ..SearchOptions::trials(1, self.seed)
        };
        search.validate()?;
        Ok(TreeChoice::Search(search))
    }
}

/// Parses `10s`, `500ms`, `2m`, `1h` or a plain number of seconds.
pub fn parse_duration(text: &str) -> std::result::Result<Duration, String> {
    let t = text.trim();
    let split = t
        .find(|c: char| !(c.is_ascii_digit() || c == '.'))
        .unwrap_or(t.len());
    let (num, unit) = t.split_at(split);
    let scale = match unit.trim() {
        "" | "s" => 1.0,
        "ms" => 1e-3,
        "m" | "min" => 60.0,
        "h" => 3600.0,
        _ => f64::NAN,
    };
    match num.parse::<f64>() {
        Ok(v) if scale.is_finite() && v > 0.0 && (v * scale) < 1e9 => {
            Ok(Duration::from_secs_f64(v * scale))
        }
        _ => Err(format!(
            "'{text}' is not a positive duration; write e.g. 10s, 500ms, 2m or 1h"
        )),
    }
}

/// Parses a byte size for clap (`64GiB`, `500GB`, and the scheduler's
/// spelling `64G`).
pub fn parse_size(text: &str) -> std::result::Result<u64, String> {
    parse_bytes(text)
}

/// Where slices must fit, and the frontier files.
#[derive(Debug, Clone, Args)]
pub struct BudgetArgs {
    /// Memory one process may use, e.g. 64GiB, 500GB or 64G (KiB/MiB/GiB/TiB and K/M/G/T = powers of 1024, KB/MB/GB/TB = powers of 1000).
    #[arg(long, value_name = "SIZE", value_parser = parse_size)]
    pub budget: Option<u64>,

    /// Machine profile, by name (cpu-64g, accel-80g, or one in
    /// $SLICEPLAN_MACHINES or ~/.config/sliceplan/machines) or by path;
    /// repeat to compare node types. Without --budget, the first machine's
    /// usable memory is the budget.
    #[arg(long, value_name = "NAME|FILE")]
    pub machine: Vec<String>,

    /// Nodes available at once (overrides the machine profiles' node count).
    #[arg(long, value_name = "N")]
    pub nodes: Option<u64>,

    /// Element type (default: the network's, else c64).
    #[arg(long, value_name = "DTYPE")]
    pub dtype: Option<DtypeArg>,

    /// Slices one process runs at once with --budget (each needs its own peak).
    #[arg(long, value_name = "N", default_value_t = 1)]
    pub slices_at_once: u64,

    /// Write the frontier as CSV to this file.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,

    /// Write the frontier chart as SVG to this file.
    #[arg(long, value_name = "FILE")]
    pub svg: Option<PathBuf>,

    /// Price and plan every slice doing all the work, instead of computing
    /// the intermediates that are the same in every slice once per process.
    #[arg(long)]
    pub no_reuse: bool,
}

impl BudgetArgs {
    /// Fills the budget fields of fit options.
    pub fn apply(&self, opts: &mut sliceplan::command::fit::FitOptions) {
        opts.budget_bytes = self.budget;
        opts.machines = self.machine.clone();
        opts.nodes = self.nodes;
        opts.dtype = self.dtype.map(Into::into);
        opts.slices_at_once = self.slices_at_once;
        opts.csv = self.csv.clone();
        opts.svg = self.svg.clone();
        opts.reuse = !self.no_reuse;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn durations() {
        assert_eq!(parse_duration("10s").unwrap(), Duration::from_secs(10));
        assert_eq!(parse_duration("500ms").unwrap(), Duration::from_millis(500));
        assert_eq!(parse_duration("2m").unwrap(), Duration::from_secs(120));
        assert_eq!(parse_duration("1.5").unwrap(), Duration::from_millis(1500));
        for bad in ["", "0s", "ten", "5 parsecs", "-1s"] {
            let e = parse_duration(bad).unwrap_err();
            assert!(e.contains("write e.g. 10s"), "{bad}: {e}");
        }
    }
}
