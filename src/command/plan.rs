//! `plan`: search for a contraction tree; with a budget or machine, also
//! choose the slice set and write the plan file.

use std::path::{Path, PathBuf};
use std::time::Instant;

use super::fit::{fit_loaded, FitOptions, FitOutcome};
use super::{check_optional_output, Hooks, NetworkSource, TreeChoice};
use crate::error::{Error, Result};
use crate::network::{Network, Summary};
use crate::plan::advise::make_plan;
use crate::plan::write_plan;
use crate::report::plan::PlanReport;
use crate::tree::write_tree_file;

/// Options of `plan`.
#[derive(Debug, Clone)]
pub struct PlanOptions {
    /// Network, tree choice, budget or machines, and frontier files.
    pub fit: FitOptions,
    /// Where to write the tree file (without a budget) or the plan file
    /// (with one).
    pub output: Option<PathBuf>,
}

impl PlanOptions {
    /// Checks the options without reading any input.
    pub fn check(&self) -> Result<()> {
        self.fit.check()?;
        check_optional_output(self.output.as_deref(), "output")?;
        if !self.fit.has_target() && matches!(self.fit.tree, TreeChoice::File(_)) {
            return Err(Error::invalid(
                "tree",
                "a tree file without a budget or machine leaves nothing to plan; price it with inspect",
            ));
        }
        Ok(())
    }
}

/// A plan file that was written.
#[derive(Debug, Clone)]
pub struct WrittenPlan {
    /// The plan file.
    pub path: PathBuf,
    /// The plan's arithmetic fingerprint.
    pub fingerprint: String,
    /// The native network file written beside the plan, for non-native input.
    pub network_written: Option<PathBuf>,
}

/// What `plan` returns.
#[derive(Debug, Clone)]
pub enum PlanOutcome {
    /// Without a budget: the tree found (and the tree file written, if asked).
    Tree(Box<PlanReport>),
    /// With a budget or machine: the fit answer and the plan file written,
    /// when something fits and an output was given.
    Sliced {
        /// The fit answer.
        fit: Box<FitOutcome>,
        /// The plan file, when written.
        written: Option<WrittenPlan>,
    },
}

/// Runs `plan`.
pub fn plan(opts: &PlanOptions, hooks: &Hooks<'_>) -> Result<PlanOutcome> {
    opts.check()?;
    let start = Instant::now();
    let fit = &opts.fit;
    let network = fit.network.load()?;
    if !fit.has_target() {
        return tree_only(&network, opts, hooks);
    }
    if opts.output.is_some() {
        // A plan is run later, maybe on another machine: its value files
        // must be whole now.
        crate::network::values::check_value_files(&network)?;
    }
    let outcome = fit_loaded(fit, network, start, hooks)?;
    let mut written = None;
    if let Some(out) = &opts.output {
        if let Some(mut plan) = make_plan(
            &outcome.network,
            "",
            &outcome.found.source,
            &outcome.advice[0],
            outcome.dtype,
            outcome.found.seed(),
        ) {
            let (network_path, network_written) =
                network_path_for_plan(&fit.network, &outcome.network, out)?;
            plan.network_path = network_path;
            plan.lower_bound_width = Some(outcome.found.lower_bound.width);
            write_plan(out, &plan)?;
            written = Some(WrittenPlan {
                path: out.clone(),
                fingerprint: plan.fingerprint(),
                network_written,
            });
        }
    }
    Ok(PlanOutcome::Sliced {
        fit: Box::new(outcome),
        written,
    })
}

/// Without a budget: search, report the tree, write the tree file.
fn tree_only(net: &Network, opts: &PlanOptions, hooks: &Hooks<'_>) -> Result<PlanOutcome> {
    let found = opts.fit.tree.resolve(net, hooks)?;
    if let Some(path) = &opts.output {
        write_tree_file(path, &found.tree, net)?;
    }
    let dtype = opts.fit.dtype_for(net);
    let search = found
        .search
        .clone()
        .expect("PlanOptions::check refuses a tree file without a budget");
    Ok(PlanOutcome::Tree(Box::new(PlanReport {
        network: Summary::of(net),
        tree: found.report(net, dtype),
        lower_bound: found.lower_bound,
        search,
        tree_file: opts.output.as_ref().map(|p| p.display().to_string()),
    })))
}

/// The network path a plan at `plan_path` records, relative to the plan's
/// directory. Plans refer to a native network file so that `run` reads
/// exactly this network: a native input is referred to as it is; any other
/// input (circuit, formula, graph, einsum) is first written beside the plan
/// as `<plan name>.network.toml` with its values, and that path is returned
/// too.
fn network_path_for_plan(
    source: &NetworkSource,
    net: &Network,
    plan_path: &Path,
) -> Result<(String, Option<PathBuf>)> {
    let (path, written) = match source.native_path() {
        Some(p) => (p.to_path_buf(), None),
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
