//! `sliceplan plan`: search for a contraction tree; with a budget, also
//! choose the slice set and write the plan file.
//!
//! The command runs in three steps: [`PlanArgs::validate`] turns the raw
//! arguments into checked options without touching any file; [`run`] loads
//! the network and searches with a progress bar and Ctrl-C handling (then
//! slices, with a budget); the result is rendered as text or JSON.

use std::path::{Path, PathBuf};

use clap::Args;

use super::budget_args::{BudgetArgs, CheckedBudget};
use super::fit::{slice_and_report, write_extras};
use super::tree_source::TreeArgs;
use super::{to_json, NetArgs, Outcome};
use crate::error::{Error, Result};
use crate::network::{Dtype, Network, Summary};
use crate::plan::advise::make_plan;
use crate::plan::write_plan;
use crate::report::plan::PlanReport;
use crate::search::SearchOptions;
use crate::tree::write_tree_file;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan plan demo-data/ising-6x6.toml --time 5s -o ising.tree.toml
  sliceplan plan --einsum \"ab,bc,cd,de,ef,fg->ag\" --dims a=30,b=35,c=15,d=5,e=10,f=20,g=25 --trials 50
  sliceplan plan net.toml --trials 500 --seed 7 --threads 2 --objective ops-within:30 --json
  sliceplan plan demo-data/ising-6x6.toml --budget 2KiB --dtype f64 -o ising.plan.toml
  sliceplan plan net.toml --machine configs/machines/cpu-64g.toml -o job.plan.toml --svg frontier.svg

Without --budget or --machine, -o writes the tree file; with one, it writes
the plan file (tree, traversal order, slice set, predicted costs), and the
exit code is 1 when nothing fits.";

/// Arguments of `plan`.
#[derive(Debug, Args)]
pub struct PlanArgs {
    #[command(flatten)]
    net: NetArgs,

    #[command(flatten)]
    tree: TreeArgs,

    #[command(flatten)]
    budget: BudgetArgs,

    /// Write the tree file, or with a budget the plan file (atomically).
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    output: Option<PathBuf>,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

/// Checked options of `plan`, ready to run.
#[derive(Debug, Clone)]
pub struct PlanOptions {
    /// Search options.
    pub search: SearchOptions,
    /// The budget arguments, checked.
    pub budget: CheckedBudget,
    /// Whether a budget or machine was given (slicing and a plan file).
    pub slicing: bool,
}

impl PlanArgs {
    /// Checks the arguments without touching any file.
    pub fn validate(&self) -> Result<PlanOptions> {
        self.net.validate()?;
        let search = self.tree.check()?;
        let budget = self.budget.check()?;
        Ok(PlanOptions {
            search,
            slicing: budget.budget.is_some() || !self.budget.machine.is_empty(),
            budget,
        })
    }
}

pub(super) fn run(args: PlanArgs) -> Result<Outcome> {
    let opts = args.validate()?;
    let net = args.net.load()?;
    let dtype = args.budget.dtype_for(&opts.budget, &net);
    let targets = if opts.slicing {
        args.budget.targets(&opts.budget)?
    } else {
        Vec::new()
    };
    let found = args.tree.find(&net, &opts.search)?;
    if !opts.slicing {
        return tree_only(&net, &args, &found, dtype);
    }
    let (report, advice) = slice_and_report(&net, &found, &targets, dtype);
    write_extras(&report, &args.budget.csv, &args.budget.svg, &advice[0])?;
    let mut stdout = if args.json {
        to_json(&report)
    } else {
        report.to_text()
    };
    if let Some(out) = &args.output {
        match make_plan(&net, "", &found.source, &advice[0], dtype, found.seed()) {
            Some(mut plan) => {
                let (network_path, written) = network_path_for_plan(&args.net, &net, out)?;
                plan.network_path = network_path;
                plan.lower_bound_width = Some(found.lower_bound.width);
                write_plan(out, &plan)?;
                if !args.json {
                    if let Some(w) = written {
                        stdout.push_str(&format!(
                            "\nnetwork written to {} (the plan refers to it)",
                            w.display()
                        ));
                    }
                    stdout.push_str(&format!(
                        "\nplan written to {} (fingerprint {})\n",
                        out.display(),
                        plan.fingerprint()
                    ));
                }
            }
            None if !args.json => stdout.push_str("\nno plan written: nothing fits the budget\n"),
            None => {}
        }
    }
    Ok(Outcome {
        stdout,
        code: if report.fits { 0 } else { 1 },
    })
}

/// Without a budget: report the tree, and write the tree file with -o.
fn tree_only(
    net: &Network,
    args: &PlanArgs,
    found: &super::tree_source::Found,
    dtype: Dtype,
) -> Result<Outcome> {
    if let Some(path) = &args.output {
        write_tree_file(path, &found.tree, net)?;
    }
    let search = found
        .search
        .clone()
        .ok_or_else(|| Error::usage("--tree without --budget or --machine has nothing to do; use `sliceplan inspect --tree`"))?;
    let report = PlanReport {
        network: Summary::of(net),
        tree: found.report(net, dtype),
        lower_bound: found.lower_bound,
        search,
        tree_file: args.output.as_ref().map(|p| p.display().to_string()),
    };
    Ok(Outcome::ok(if args.json {
        to_json(&report)
    } else {
        report.to_text()
    }))
}

/// The network path a plan at `plan_path` records, relative to the plan's
/// directory. Plans refer to a native network file so that `run` reads
/// exactly this network: a native input is referred to as it is; any other
/// input (circuit, formula, graph, einsum) is first written beside the plan
/// as `<plan name>.network.toml` with its values, and that path is returned
/// too.
fn network_path_for_plan(
    args: &NetArgs,
    net: &Network,
    plan_path: &Path,
) -> Result<(String, Option<PathBuf>)> {
    let native = args.net.as_ref().filter(|p| {
        args.format.is_none()
            && matches!(
                crate::formats::Format::from_path(p),
                Some(crate::formats::Format::Native)
            )
    });
    let (path, written) = match native {
        Some(p) => (p.clone(), None),
        None => {
            let name = plan_path
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_default();
            let stem = name.trim_end_matches(".toml").trim_end_matches(".plan");
            let target = plan_path.with_file_name(format!("{stem}.network.toml"));
            crate::formats::write::write_native(net, &target, &Default::default())?;
            (target.clone(), Some(target))
        }
    };
    let abs = |p: &Path| std::path::absolute(p).map_err(|e| Error::read(p, e));
    let net_abs = abs(&path)?;
    let plan_dir = abs(plan_path)?
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_default();
    let rel = match net_abs.strip_prefix(&plan_dir) {
        Ok(rel) => rel.to_path_buf(),
        Err(_) => relative_to(&net_abs, &plan_dir),
    };
    Ok((rel.display().to_string(), written))
}

/// `target` relative to `base` (both absolute), with `..` where needed.
fn relative_to(target: &Path, base: &Path) -> PathBuf {
    let t: Vec<_> = target.components().collect();
    let b: Vec<_> = base.components().collect();
    let common = t.iter().zip(&b).take_while(|(x, y)| x == y).count();
    let mut out = PathBuf::new();
    for _ in common..b.len() {
        out.push("..");
    }
    for c in &t[common..] {
        out.push(c);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn relative_paths() {
        assert_eq!(
            relative_to(Path::new("/a/b/net.toml"), Path::new("/a/c")),
            PathBuf::from("../b/net.toml")
        );
        assert_eq!(
            relative_to(Path::new("/a/net.toml"), Path::new("/a")),
            PathBuf::from("net.toml")
        );
    }
}
