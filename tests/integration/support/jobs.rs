//! Fixtures shared by the jobs tests: the independent-set network of an
//! n x n grid, a plan for it, a stand-in `sliceplan` binary that records its
//! arguments and writes partial files, and a runner for the real binary.

use std::path::{Path, PathBuf};

use sliceplan::cost::machine::Estimate;
use sliceplan::cost::{NodeSets, PeakModel};
use sliceplan::formats::{self, LoadOptions};
use sliceplan::network::{Dtype, Network};
use sliceplan::plan::{write_plan, Plan, Predicted, SlicedIndex, PLAN_FORMAT, PLAN_VERSION};
use sliceplan::tree::Tree;

/// The native network whose value is the number of independent sets of the
/// n x n grid graph: a copy tensor per vertex (value 1 = in the set), the
/// matrix [[1, 1], [1, 0]] on every edge (both ends in the set is
/// forbidden). Tensors are ordered so that merging in file order sweeps
/// the grid row by row (each edge matrix just before the later of its two
/// vertices), which keeps the file-order tree narrow.
pub fn grid_network_toml(n: usize) -> String {
    let mut s = format!(
        "format = \"sliceplan-network\"\nversion = 1\nname = \"independent sets of the {n}x{n} grid\"\ndtype = \"f64\"\ndim = 2\n"
    );
    let edge = |s: &mut String, name: String| {
        s.push_str(&format!(
            "\n[[tensor]]\nname = \"{name}\"\nindices = [\"{name}a\", \"{name}b\"]\nvalues = [1, 1, 1, 0]\n"
        ));
    };
    for r in 0..n {
        for c in 0..n {
            if c > 0 {
                edge(&mut s, format!("h{r}_{}", c - 1));
            }
            if r > 0 {
                edge(&mut s, format!("v{}_{c}", r - 1));
            }
            let mut legs = Vec::new();
            if c > 0 {
                legs.push(format!("\"h{r}_{}b\"", c - 1));
            }
            if r > 0 {
                legs.push(format!("\"v{}_{c}b\"", r - 1));
            }
            if c + 1 < n {
                legs.push(format!("\"h{r}_{c}a\""));
            }
            if r + 1 < n {
                legs.push(format!("\"v{r}_{c}a\""));
            }
            s.push_str(&format!(
                "\n[[tensor]]\nname = \"s{r}_{c}\"\nindices = [{}]\nfill = \"copy\"\n",
                legs.join(", ")
            ));
        }
    }
    s
}

/// A plan for the n x n grid network at `net_path`: the file-order tree, the
/// vertical bonds `v{n/2-1}_0a .. v{n/2-1}_{k-1}a` sliced (2^k slices), its
/// predicted costs from the cost model, and a model estimate of
/// `seconds_per_slice` when given.
pub fn grid_plan(
    net: &Network,
    net_path: &str,
    n: usize,
    k: usize,
    seconds_per_slice: Option<f64>,
) -> Plan {
    let tree = Tree::left_deep(net.num_tensors());
    let names: Vec<String> = (0..k).map(|c| format!("v{}_{c}a", n / 2 - 1)).collect();
    let sliced: Vec<usize> = names
        .iter()
        .map(|s| net.index_id(s).expect("grid bond"))
        .collect();
    let sets = NodeSets::new(net, &tree);
    let priced = sets.evaluate_sliced(net, &sliced, PeakModel::EXECUTOR);
    let dtype = Dtype::F64;
    Plan {
        format: PLAN_FORMAT.into(),
        version: PLAN_VERSION,
        tool_version: env!("CARGO_PKG_VERSION").into(),
        network_fingerprint: net.fingerprint(),
        network_path: net_path.into(),
        tensors: net.num_tensors(),
        merges: tree.merges().to_vec(),
        order: priced.per_slice.order.clone(),
        sliced: names
            .iter()
            .map(|name| SlicedIndex {
                name: name.clone(),
                dim: 2,
            })
            .collect(),
        dtype,
        budget_bytes: 1 << 20,
        slices_at_once: 1,
        seed: 0,
        reuse: false,
        held: Vec::new(),
        predicted: Predicted {
            per_slice_total_ops_log2: priced.per_slice.total_ops.log2,
            per_slice_width: priced.per_slice.width,
            per_slice_peak_bytes: format!(
                "{:.0}",
                priced.per_slice.peak.to_f64() * dtype.bytes() as f64
            ),
            total_ops_log2: priced.total_ops.log2,
            overhead: 1.0,
            baseline_total_ops_log2: 0.0,
            found_by: "greedy".into(),
            tree_source: "file order (test fixture)".into(),
            plain_total_ops_log2: priced.total_ops.log2,
            reused_bytes: "0".into(),
            setup_bytes: "0".into(),
        },
        frontier: Vec::new(),
        cover: None,
        estimate: seconds_per_slice.map(|s| Estimate {
            machine: "test-node".into(),
            seconds_per_slice: s,
            wall_seconds: s * (1u64 << k) as f64,
            nodes_used: 1,
            node_hours: s * (1u64 << k) as f64 / 3600.0,
            method: "fixed for the test".into(),
            threads_per_slice: 1,
            by_threads: Vec::new(),
        }),
        lower_bound_width: None,
        ops_bound: None,
    }
}

/// Writes `grid.toml` and `grid.plan.toml` for the n x n grid into `dir`
/// and returns the plan's path.
pub fn write_grid_plan(dir: &Path, n: usize, k: usize, seconds_per_slice: Option<f64>) -> PathBuf {
    std::fs::create_dir_all(dir).unwrap();
    let net_path = dir.join("grid.toml");
    std::fs::write(&net_path, grid_network_toml(n)).unwrap();
    let net = formats::load(&net_path, &LoadOptions::default()).expect("grid network loads");
    let plan = grid_plan(&net, "grid.toml", n, k, seconds_per_slice);
    let plan_path = dir.join("grid.plan.toml");
    write_plan(&plan_path, &plan).unwrap();
    plan_path
}

/// A stand-in for the `sliceplan` binary in `dir`: for `run ... --chunk I
/// --of N ... --out D` it records its arguments, one per line, in
/// `dir/calls/chunk-I.args` and its working directory in
/// `dir/calls/chunk-I.cwd`, then hands over to the real binary, which
/// writes `D/chunk-I-of-N.partial`; when the file `dir/fail-I` exists it
/// prints an error and exits 3 instead.
pub fn stand_in_binary(dir: &Path) -> PathBuf {
    std::fs::create_dir_all(dir.join("calls")).unwrap();
    let path = dir.join("stand-in-sliceplan");
    let script = format!(
        r#"#!/usr/bin/env bash
set -u
here='{here}'
chunk='' of='' out=''
args=("$@")
while (($# > 0)); do
    case $1 in
    --chunk) chunk=$2; shift ;;
    --of) of=$2; shift ;;
    --out) out=$2; shift ;;
    esac
    shift
done
printf '%s\n' "${{args[@]}}" >"$here/calls/chunk-$chunk.args"
pwd >"$here/calls/chunk-$chunk.cwd"
if [[ -e $here/fail-$chunk ]]; then
    echo "stand-in: chunk $chunk fails on purpose" >&2
    exit 3
fi
exec '{real}' "${{args[@]}}"
"#,
        here = dir.display(),
        real = env!("CARGO_BIN_EXE_sliceplan"),
    );
    std::fs::write(&path, script).unwrap();
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o755)).unwrap();
    path
}

/// The arguments the stand-in recorded for chunk `i`.
pub fn recorded_args(stand_in_dir: &Path, i: u64) -> Vec<String> {
    std::fs::read_to_string(stand_in_dir.join(format!("calls/chunk-{i}.args")))
        .unwrap_or_default()
        .lines()
        .map(String::from)
        .collect()
}

/// The working directory the stand-in ran chunk `i` in.
pub fn recorded_cwd(stand_in_dir: &Path, i: u64) -> String {
    std::fs::read_to_string(stand_in_dir.join(format!("calls/chunk-{i}.cwd")))
        .unwrap_or_default()
        .trim_end_matches('\n')
        .to_string()
}

/// Runs `sliceplan ARGS` (the shared runner).
pub use crate::support::bin::run as sliceplan;
