//! `plan --budget` → plan file → `report` (text, JSON, CSV, SVG, steps),
//! through the real binary; the steps file is executed by a small einsum
//! evaluator written here and compared with direct summation.

use crate::support::reference as common;

use std::collections::HashMap;
use std::path::Path;

use crate::support::bin::run_in as sliceplan;
use num_complex::Complex64;
use sliceplan::formats::load;

/// Evaluates one einsum equation "ab,bc->ac" on row-major tensors.
fn einsum(eq: &str, a: &[Complex64], b: &[Complex64], dim: &HashMap<char, u64>) -> Vec<Complex64> {
    let (lhs, out) = eq.split_once("->").unwrap();
    let (la, lb) = lhs.split_once(',').unwrap();
    let mut letters: Vec<char> = Vec::new();
    for c in la.chars().chain(lb.chars()).chain(out.chars()) {
        if !letters.contains(&c) {
            letters.push(c);
        }
    }
    let offset = |word: &str, value: &HashMap<char, u64>| {
        word.chars().fold(0u64, |acc, c| acc * dim[&c] + value[&c])
    };
    let out_len: u64 = out.chars().map(|c| dim[&c]).product();
    let mut result = vec![Complex64::new(0.0, 0.0); out_len as usize];
    let mut value: HashMap<char, u64> = letters.iter().map(|&c| (c, 0)).collect();
    loop {
        result[offset(out, &value) as usize] +=
            a[offset(la, &value) as usize] * b[offset(lb, &value) as usize];
        let mut k = 0;
        loop {
            if k == letters.len() {
                return result;
            }
            let c = letters[k];
            *value.get_mut(&c).unwrap() += 1;
            if value[&c] < dim[&c] {
                break;
            }
            *value.get_mut(&c).unwrap() = 0;
            k += 1;
        }
    }
}

#[test]
fn plan_then_report_and_steps_reproduce_the_ghz_state() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let net_path = dir.path().join("ghz.toml");
    std::fs::copy(root.join("demo-data/ghz-3.toml"), &net_path).unwrap();
    // Budget: below the unsliced need, so that slicing is forced.
    let (code, out, err) = sliceplan(
        dir.path(),
        &[
            "plan",
            "ghz.toml",
            "--budget",
            "1200",
            "--trials",
            "8",
            "--seed",
            "3",
            "-o",
            "ghz.plan.toml",
        ],
    );
    assert_eq!(code, Some(0), "{out}{err}");
    assert!(out.contains("plan written to ghz.plan.toml"), "{out}");
    let (code, json, _) = sliceplan(
        dir.path(),
        &[
            "report",
            "ghz.plan.toml",
            "--json",
            "--csv",
            "f.csv",
            "--svg",
            "f.svg",
            "--steps",
            "steps.json",
        ],
    );
    assert_eq!(code, Some(0));
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["fits"], true);
    assert_eq!(v["budget_bytes"], 1200);
    assert!(std::fs::read_to_string(dir.path().join("f.csv"))
        .unwrap()
        .starts_with("slices_at_most,"));
    assert!(std::fs::read_to_string(dir.path().join("f.svg"))
        .unwrap()
        .contains("<svg"));

    // Run the steps for every slice with the evaluator above.
    let net = load(&net_path, &Default::default()).unwrap();
    let values = common::all_values(&net);
    let steps: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("steps.json")).unwrap())
            .unwrap();
    let sliced: Vec<(String, u64, bool)> = steps["sliced"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| {
            (
                s["name"].as_str().unwrap().to_string(),
                s["dim"].as_u64().unwrap(),
                s["open"].as_bool().unwrap(),
            )
        })
        .collect();
    let slices: u64 = sliced.iter().map(|s| s.1).product();
    assert!(slices >= 2, "slicing was forced");
    // The full state, indexed by the open indices in network order.
    let mut state = [Complex64::new(0.0, 0.0); 8];
    for s in 0..slices {
        let mut fixed: HashMap<String, u64> = HashMap::new();
        let mut rest = s;
        for (name, dim, _) in sliced.iter().rev() {
            fixed.insert(name.clone(), rest % dim);
            rest /= dim;
        }
        // Slice the inputs: keep the entries whose sliced axes match.
        let mut list: Vec<(Vec<String>, Vec<Complex64>)> = Vec::new();
        for (t, tensor) in net.tensors.iter().enumerate() {
            let names: Vec<String> = tensor
                .indices
                .iter()
                .map(|&e| net.indices[e].name.clone())
                .collect();
            let kept: Vec<String> = names
                .iter()
                .filter(|n| !fixed.contains_key(*n))
                .cloned()
                .collect();
            let data: Vec<Complex64> = (0..values[t].len())
                .filter(|&off| {
                    // Decode the row-major offset (all dims are 2 here).
                    names.iter().enumerate().all(|(axis, n)| {
                        let bit = (off >> (names.len() - 1 - axis)) & 1;
                        fixed.get(n).is_none_or(|&v| v as usize == bit)
                    })
                })
                .map(|off| values[t][off])
                .collect();
            list.push((kept, data));
        }
        for step in steps["steps"].as_array().unwrap() {
            let [i, j] = [
                step["operands"][0].as_u64().unwrap() as usize,
                step["operands"][1].as_u64().unwrap() as usize,
            ];
            let eq = step["equation"].as_str().unwrap();
            let dims: HashMap<char, u64> = eq
                .chars()
                .filter(|c| c.is_alphabetic())
                .map(|c| (c, 2))
                .collect();
            let r = einsum(eq, &list[i].1, &list[j].1, &dims);
            let result_indices: Vec<String> = step["result_indices"]
                .as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_str().unwrap().to_string())
                .collect();
            let (hi, lo) = (i.max(j), i.min(j));
            list.remove(hi);
            list.remove(lo);
            list.push((result_indices, r));
        }
        assert_eq!(list.len(), 1);
        let (indices, data) = &list[0];
        // Place the slice's result into the state (open indices q0_2, q1_2, q2_1).
        for (off, z) in data.iter().enumerate() {
            let mut bits: HashMap<String, u64> = fixed.clone();
            for (axis, n) in indices.iter().enumerate() {
                bits.insert(n.clone(), ((off >> (indices.len() - 1 - axis)) & 1) as u64);
            }
            let full = ["q0_2", "q1_2", "q2_1"]
                .iter()
                .fold(0usize, |acc, n| acc * 2 + bits[*n] as usize);
            state[full] += z;
        }
    }
    // Nielsen and Chuang: the GHZ state has amplitude 1/sqrt(2) on |000>
    // and |111> and 0 elsewhere; also the direct summation of the network.
    let brute = common::brute_force(&net, &values);
    let h = std::f64::consts::FRAC_1_SQRT_2;
    for k in 0..8 {
        let want = if k == 0 || k == 7 { h } else { 0.0 };
        assert!(
            (state[k].re - want).abs() < 1e-12 && state[k].im.abs() < 1e-12,
            "amplitude {k}: {}",
            state[k]
        );
        assert!((state[k] - brute[k]).norm() < 1e-12);
    }
}

#[test]
fn plan_without_budget_writes_a_tree_that_inspect_reads() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    std::fs::copy(
        root.join("demo-data/matrix-chain.toml"),
        dir.path().join("m.toml"),
    )
    .unwrap();
    let (code, _, err) = sliceplan(
        dir.path(),
        &["plan", "m.toml", "--trials", "4", "-o", "m.tree.toml"],
    );
    assert_eq!(code, Some(0), "{err}");
    let (code, json, _) = sliceplan(
        dir.path(),
        &["inspect", "m.toml", "--tree", "m.tree.toml", "--json"],
    );
    assert_eq!(code, Some(0));
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    // The chain 64x512, 512x32, 32x256, 256x16, 16x128: the best order
    // contracts the inner stages first. The dynamic programme of CLRS
    // §15.2 on these five matrices gives ((A1(A2(A3A4)))A5) = 32·256·16
    // + 512·32·16 + 64·512·16 + 64·16·128 = 131,072 + 262,144 + 524,288
    // + 131,072 = 1,048,576.
    assert_eq!(v["tree"]["total_ops"], "1048576");
}

#[test]
fn plans_of_non_native_inputs_write_the_network_beside_them() {
    let dir = tempfile::tempdir().unwrap();
    let args = [
        "plan",
        "--einsum",
        "ab,bc->ac",
        "--dim",
        "4",
        "--budget",
        "1KiB",
        "--trials",
        "2",
        "-o",
        "x.plan.toml",
    ];
    let (code, out, err) = sliceplan(dir.path(), &args);
    assert_eq!(code, Some(0), "{out}{err}");
    assert!(out.contains("network written to x.network.toml"), "{out}");
    let (code, _, err) = sliceplan(dir.path(), &["report", "x.plan.toml"]);
    assert_eq!(code, Some(0), "{err}");
}
