//! `report --steps` on plans of every demo network, with traversal orders
//! that are not 0, 1, 2, ...: the steps file is executed for every slice by
//! a small einsum evaluator written here (dense loops, no library code) and
//! its result compared with the executor's `run --all` result.
//!
//! Regression: the steps writer kept intermediates by position in its own
//! list instead of by merge number, so any plan whose traversal order was
//! not the identity panicked (index out of bounds), among them the README's
//! demo plan.

use crate::support::reference as common;

use std::collections::HashMap;
use std::path::Path;

use crate::support::bin::run_in as sliceplan;
use num_complex::Complex64;
use sliceplan::formats::load;
use sliceplan::network::Network;

/// A dense tensor: index names (row-major, first slowest) and values.
#[derive(Clone)]
struct Dense {
    names: Vec<String>,
    data: Vec<Complex64>,
}

/// Row-major offset of an assignment.
fn offset(names: &[String], dims: &HashMap<String, u64>, value: &HashMap<String, u64>) -> usize {
    names.iter().fold(0u64, |acc, n| acc * dims[n] + value[n]) as usize
}

/// Every assignment of `names` in row-major order.
fn assignments(names: &[String], dims: &HashMap<String, u64>) -> Vec<HashMap<String, u64>> {
    let total: u64 = names.iter().map(|n| dims[n]).product();
    (0..total)
        .map(|mut k| {
            let mut v = HashMap::new();
            for n in names.iter().rev() {
                v.insert(n.clone(), k % dims[n]);
                k /= dims[n];
            }
            v
        })
        .collect()
}

/// Row-major strides of `names` over the positions of `all` (0 where a
/// name of `all` is not among `names`).
fn strides(names: &[String], all: &[String], dims: &HashMap<String, u64>) -> Vec<usize> {
    let mut own = vec![0usize; names.len()];
    let mut step = 1usize;
    for k in (0..names.len()).rev() {
        own[k] = step;
        step *= dims[&names[k]] as usize;
    }
    all.iter()
        .map(|n| names.iter().position(|m| m == n).map_or(0, |k| own[k]))
        .collect()
}

/// Contracts `a` and `b` into the indices `out`, summing the others: one
/// pass over every assignment of the union of their indices (an odometer
/// that moves three offsets by their strides).
fn contract(a: &Dense, b: &Dense, out: &[String], dims: &HashMap<String, u64>) -> Dense {
    let mut all: Vec<String> = Vec::new();
    for n in a.names.iter().chain(&b.names).chain(out) {
        if !all.contains(n) {
            all.push(n.clone());
        }
    }
    let len: u64 = out.iter().map(|n| dims[n]).product();
    let mut data = vec![Complex64::new(0.0, 0.0); len as usize];
    let (sa, sb, so) = (
        strides(&a.names, &all, dims),
        strides(&b.names, &all, dims),
        strides(out, &all, dims),
    );
    let d: Vec<usize> = all.iter().map(|n| dims[n] as usize).collect();
    let mut digit = vec![0usize; all.len()];
    let (mut ia, mut ib, mut io) = (0usize, 0usize, 0usize);
    loop {
        data[io] += a.data[ia] * b.data[ib];
        let mut k = all.len();
        loop {
            if k == 0 {
                return Dense {
                    names: out.to_vec(),
                    data,
                };
            }
            k -= 1;
            digit[k] += 1;
            ia += sa[k];
            ib += sb[k];
            io += so[k];
            if digit[k] < d[k] {
                break;
            }
            ia -= sa[k] * d[k];
            ib -= sb[k] * d[k];
            io -= so[k] * d[k];
            digit[k] = 0;
        }
    }
}

/// Runs a steps file over every slice; returns the output as a map from
/// the values of the network's open indices (in network order) to the
/// value.
fn run_steps(net: &Network, steps: &serde_json::Value) -> HashMap<Vec<u64>, Complex64> {
    let dims: HashMap<String, u64> = net
        .indices
        .iter()
        .map(|i| (i.name.clone(), i.dim))
        .collect();
    // Real dtypes use only the real parts of the values (as the executor).
    let real = net.dtype.is_some_and(|d| !d.is_complex());
    let values: Vec<Vec<Complex64>> = common::all_values(net)
        .into_iter()
        .map(|t| {
            t.into_iter()
                .map(|z| if real { Complex64::new(z.re, 0.0) } else { z })
                .collect()
        })
        .collect();
    let sliced: Vec<String> = steps["sliced"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["name"].as_str().unwrap().to_string())
        .collect();
    let open: Vec<String> = net
        .open
        .iter()
        .map(|&e| net.indices[e].name.clone())
        .collect();
    let mut result: HashMap<Vec<u64>, Complex64> = HashMap::new();
    for fixed in assignments(&sliced, &dims) {
        // The inputs with the sliced indices fixed.
        let mut list: Vec<Dense> = net
            .tensors
            .iter()
            .enumerate()
            .map(|(t, tensor)| {
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
                // Row-major order of the kept indices is the original order
                // with the fixed positions skipped.
                let d: Vec<u64> = names.iter().map(|n| dims[n]).collect();
                let want: Vec<Option<u64>> = names.iter().map(|n| fixed.get(n).copied()).collect();
                let data = (0..values[t].len())
                    .filter(|&off| {
                        let mut rest = off as u64;
                        (0..d.len()).rev().all(|axis| {
                            let digit = rest % d[axis];
                            rest /= d[axis];
                            want[axis].is_none_or(|w| w == digit)
                        })
                    })
                    .map(|off| values[t][off])
                    .collect();
                Dense { names: kept, data }
            })
            .collect();
        for step in steps["steps"].as_array().unwrap() {
            let [i, j] = [0, 1].map(|k| step["operands"][k].as_u64().unwrap() as usize);
            let out: Vec<String> = step["result_indices"]
                .as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_str().unwrap().to_string())
                .collect();
            let r = contract(&list[i], &list[j], &out, &dims);
            let (hi, lo) = (i.max(j), i.min(j));
            list.remove(hi);
            list.remove(lo);
            list.push(r);
        }
        assert_eq!(list.len(), 1, "the steps end in one tensor");
        let last = &list[0];
        for v in assignments(&last.names, &dims) {
            let mut full = v.clone();
            full.extend(fixed.iter().map(|(k, x)| (k.clone(), *x)));
            let key: Vec<u64> = open.iter().map(|n| full[n]).collect();
            *result.entry(key).or_default() += last.data[offset(&last.names, &dims, &v)];
        }
    }
    result
}

/// Plans `network` with a budget that forces slicing, writes its steps,
/// runs them here and with `run --all`, and compares.
fn check_network(file: &str, seed: &str) {
    let started = std::time::Instant::now();
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = tempfile::tempdir().unwrap();
    let net_path = dir.path().join("net.toml");
    std::fs::copy(root.join("demo-data").join(file), &net_path).unwrap();
    // The unsliced need, then a budget with 90% of the per-slice peak.
    let (code, json, err) = sliceplan(
        dir.path(),
        &[
            "fit", "net.toml", "--budget", "1TiB", "--trials", "8", "--seed", seed, "--json",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    let m = &v["memory"];
    let budget = m["inputs_bytes"].as_f64().unwrap()
        + m["output_bytes"].as_f64().unwrap()
        + m["per_slice_peak_bytes"].as_f64().unwrap() * 0.9;
    let budget = (budget.ceil() as u64).to_string();
    let (code, out, err) = sliceplan(
        dir.path(),
        &[
            "plan",
            "net.toml",
            "--budget",
            &budget,
            "--trials",
            "8",
            "--seed",
            seed,
            "-o",
            "p.plan.toml",
        ],
    );
    assert_eq!(code, Some(0), "{file} seed {seed}: {out}{err}");
    let (code, _, err) = sliceplan(dir.path(), &["report", "p.plan.toml", "--steps", "s.json"]);
    assert_eq!(code, Some(0), "{file} seed {seed}: {err}");
    let steps: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("s.json")).unwrap()).unwrap();
    assert!(
        steps["slices"].as_str().unwrap() != "1",
        "{file}: slicing was forced"
    );
    let (code, _, err) = sliceplan(dir.path(), &["run", "p.plan.toml", "--all", "-o", "r.npy"]);
    assert_eq!(code, Some(0), "{file} seed {seed}: {err}");
    let executor = sliceplan::npy::read_npy(&dir.path().join("r.npy")).unwrap();
    let net = load(&net_path, &Default::default()).unwrap();
    let mine = run_steps(&net, &steps);
    let open_dims: Vec<u64> = net.open.iter().map(|&e| net.indices[e].dim).collect();
    assert_eq!(executor.shape, open_dims);
    let scale = executor
        .values
        .iter()
        .map(|z| z.norm())
        .fold(0.0, f64::max)
        .max(1e-300);
    for (k, z) in executor.values.iter().enumerate() {
        // Row-major position k over the open indices.
        let mut key = vec![0; open_dims.len()];
        let mut rest = k as u64;
        for (axis, &d) in open_dims.iter().enumerate().rev() {
            key[axis] = rest % d;
            rest /= d;
        }
        let got = mine.get(&key).copied().unwrap_or_default();
        assert!(
            (got - z).norm() <= 1e-9 * scale,
            "{file} seed {seed}: element {key:?}: steps {got}, executor {z}"
        );
    }
    eprintln!(
        "{file} seed {seed}: {} slices, {:.1} s",
        steps["slices"],
        started.elapsed().as_secs_f64()
    );
}

#[test]
fn steps_of_every_demo_network_reproduce_the_executor() {
    for seed in ["0", "1"] {
        for file in ["ghz-3.toml", "ising-6x6.toml", "matrix-chain.toml"] {
            check_network(file, seed);
        }
    }
}
