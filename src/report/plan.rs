//! The `plan` report: network summary, the tree found, the width lower bound
//! and how the search went.

use serde::Serialize;

use super::inspect::{tree_lines, TreeReport};
use super::log2_str;
use crate::network::Summary;
use crate::search::WidthBound;

/// How the search went, as it appears in JSON (`search.*`).
#[derive(Debug, Clone, Serialize)]
pub struct SearchReport {
    /// The objective, as given on the command line.
    pub objective: String,
    /// The seed.
    pub seed: u64,
    /// Trials run.
    pub trials: u64,
    /// The trial that found the best tree.
    pub best_trial: u64,
    /// The finder (and refinements) behind the best tree.
    pub finder: String,
    /// Seconds until the best trial finished.
    pub seconds_to_best: f64,
    /// Seconds the search took.
    pub seconds: f64,
    /// Trials per second.
    pub trials_per_second: f64,
    /// True when stopped early by Ctrl-C.
    pub interrupted: bool,
    /// Where the search's time went (simplify, candidates, trials, refine,
    /// pricing), seconds.
    pub phases: crate::search::PhaseTimes,
    /// The simple orders priced before the trials, as found.
    pub candidates: Vec<crate::search::CandidateScore>,
}

/// Everything `plan` reports.
#[derive(Debug, Clone, Serialize)]
pub struct PlanReport {
    /// The network summary.
    pub network: Summary,
    /// The best tree's metrics.
    pub tree: TreeReport,
    /// The proven lower bound on width.
    pub lower_bound: WidthBound,
    /// How the search went.
    pub search: SearchReport,
    /// Where the tree was written, when it was.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tree_file: Option<String>,
}

impl PlanReport {
    /// Renders the report as aligned text.
    pub fn to_text(&self) -> String {
        let n = &self.network;
        let s = &self.search;
        let lb = &self.lower_bound;
        let mut out = String::new();
        out.push_str(&format!(
            "network      {}  (fingerprint {})\n",
            n.name, n.fingerprint
        ));
        out.push_str(&format!(
            "size         {} tensors, {} indices\n",
            n.tensors, n.indices
        ));
        out.push_str(&format!(
            "search       objective {}, seed {}, {} trials in {:.2} s ({:.0}/s){}\n",
            s.objective,
            s.seed,
            s.trials,
            s.seconds,
            s.trials_per_second,
            if s.interrupted { ", interrupted" } else { "" }
        ));
        out.push('\n');
        out.push_str(&format!("tree: {}\n", self.tree.source));
        out.push_str(&tree_lines(&self.tree));
        out.push_str(&format!(
            "  width lower bound {}  (gap {}; largest tensor {}, output {}, line graph {})\n",
            log2_str(lb.width),
            log2_str(self.tree.width - lb.width),
            log2_str(lb.largest_tensor),
            log2_str(lb.output),
            log2_str(lb.line_graph)
        ));
        if let Some(path) = &self.tree_file {
            out.push_str(&format!("\ntree written to {path}\n"));
        }
        out
    }
}
