//! `fit` and `report` through the real binary.

use crate::support::bin::run as sliceplan;

#[test]
fn output_alone_over_the_budget_cannot_fit() {
    // Closed forms: inputs 2 x 1024^2 c64 elements x 8 B = 16 MiB; the open
    // output a,c is accumulated in two f64 lanes per complex element, each
    // with a compensation f64: 1024^2 x 2 x 16 B = 32 MiB. Budget 4 MiB:
    // exit 1 and the reason named.
    let (code, out, _) = sliceplan(&[
        "fit",
        "--einsum",
        "ab,bc->ac",
        "--dim",
        "1024",
        "--budget",
        "4MiB",
    ]);
    assert_eq!(code, Some(1));
    assert!(
        out.contains(
            "CANNOT FIT: the inputs (16.00 MiB) and the output accumulator (32.00 MiB) alone need 48.00 MiB"
        ),
        "{out}"
    );
    let (code, out, _) = sliceplan(&[
        "fit",
        "--einsum",
        "ab,bc->ac",
        "--dim",
        "1024",
        "--budget",
        "4MiB",
        "--json",
    ]);
    assert_eq!(code, Some(1));
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["fits"], false);
    assert_eq!(v["fits_without_slicing"], false);
    assert_eq!(v["budget_bytes"], 4 << 20);
}

#[test]
fn fit_json_has_the_contract_keys() {
    let (code, out, _) = sliceplan(&[
        "fit",
        "demo-data/matrix-chain.toml",
        "--budget",
        "1MiB",
        "--json",
        "--machine",
        "configs/machines/cpu-64g.toml",
    ]);
    assert_eq!(code, Some(0), "{out}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    for key in ["tensors", "indices", "fingerprint"] {
        assert!(
            v["network"][key].is_number() || v["network"][key].is_string(),
            "network.{key}"
        );
    }
    for key in ["total_ops_log2", "width", "op_width", "peak_log2", "height"] {
        assert!(v["tree"][key].is_number(), "tree.{key}");
    }
    assert_eq!(v["budget_bytes"], 1 << 20);
    assert_eq!(v["dtype"], "f64");
    assert_eq!(v["bytes_per_element"], 8);
    assert!(v["fits_without_slicing"].is_boolean());
    assert_eq!(v["fits"], true);
    let s = &v["slicing"];
    assert!(s["indices"].is_array() && s["slices"].is_string());
    for key in ["total_ops_log2", "width", "peak_bytes"] {
        assert!(s["per_slice"][key].is_number(), "slicing.per_slice.{key}");
    }
    assert!(s["total_ops_log2"].is_number() && s["overhead"].is_number());
    let row = &v["frontier"][0];
    for key in [
        "slices",
        "per_slice_peak_bytes",
        "total_ops_log2",
        "overhead",
    ] {
        assert!(!row[key].is_null(), "frontier[0].{key}");
    }
    for key in ["seconds_per_slice", "wall_seconds", "node_hours"] {
        assert!(v["estimate"][key].is_number(), "estimate.{key}");
    }
}

#[test]
fn bad_budgets_exit_2() {
    for bad in ["junk", "-5GB", "99999999999999999999TB", "0", "12XB"] {
        let arg = format!("--budget={bad}");
        let (code, _, err) = sliceplan(&["fit", "--einsum", "ab,bc->ac", "--dim", "2", &arg]);
        assert_eq!(code, Some(2), "{bad}: {err}");
        assert!(err.contains("--budget"), "{bad}: {err}");
    }
}

/// One story per screen: when slicing re-planned the tree, the unsliced
/// figure of that tree and the baseline of the overheads (the frontier's
/// first row) are both named, in `fit` and in `report` of the plan.
#[test]
fn a_re_planned_tree_is_named_beside_the_baseline() {
    let dir = tempfile::tempdir().unwrap();
    let demo = concat!(env!("CARGO_MANIFEST_DIR"), "/demo-data/ising-6x6.toml");
    let plan = dir.path().join("p.plan.toml");
    let plan = plan.to_str().unwrap();
    let args = [
        "plan", demo, "--budget", "6KiB", "--trials", "32", "-o", plan,
    ];
    let (code, _, err) = sliceplan(&[&args[..], &["--json"]].concat());
    assert_eq!(code, Some(0), "{err}");
    let (code, json, err) = sliceplan(&["report", plan, "--json"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let tree_ops = v["slicing"]["tree_total_ops_log2"].as_f64().unwrap();
    let baseline = v["frontier"][0]["total_ops_log2"].as_f64().unwrap();
    // The overhead is over the baseline (the frontier's first row).
    let overhead = v["slicing"]["overhead"].as_f64().unwrap();
    let total = v["slicing"]["total_ops_log2"].as_f64().unwrap();
    assert!((overhead - (total - baseline).exp2()).abs() < 1e-9 * overhead);
    let (_, text, _) = sliceplan(&["report", plan]);
    let named = text.contains("re-planned for slicing");
    assert_eq!(named, (tree_ops - baseline).abs() > 1e-9, "{text}");
}
