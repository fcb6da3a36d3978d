//! Scaled arithmetic through the binary: values far beyond the range of f64
//! (and of f32) come out as mantissa, power-of-two exponent and ln|value|,
//! never as NaN or infinity; the `.npy` result carries its exponent beside
//! it; NaN and infinite inputs are refused.

use crate::support::exec as exec_support;

use std::path::Path;

use exec_support::{sliceplan, stderr, stdout, write_native};
use serde_json::Value;
use sliceplan::network::{Dtype, NetworkBuilder, Values};

fn json(out: &std::process::Output) -> Value {
    assert!(
        out.status.success(),
        "exit {:?}: {}\n{}",
        out.status.code(),
        stdout(out),
        stderr(out)
    );
    serde_json::from_str(&stdout(out))
        .unwrap_or_else(|e| panic!("not JSON ({e}): {}\n{}", stdout(out), stderr(out)))
}

/// ln Z of the L x L periodic Ising lattice (J = 1, h = 0), by the row
/// transfer matrix, independently of the network: Z = Tr(T^L) with
/// T[a, b] = exp(beta (sum_j a_j a_{j+1} + sum_j a_j b_j)) over the 2^L row
/// states, each entry scaled by exp(-2 L beta) (its largest value) so that
/// nothing overflows; ln Z adds L x 2 L beta back.
fn ising_ln_z_by_transfer_matrix(l: usize, beta: f64) -> f64 {
    let n = 1usize << l;
    let spin = |s: usize, j: usize| if s >> j & 1 == 0 { 1.0 } else { -1.0 };
    let shift = 2.0 * l as f64 * beta;
    let t: Vec<f64> = (0..n * n)
        .map(|k| {
            let (a, b) = (k / n, k % n);
            let e: f64 = (0..l)
                .map(|j| spin(a, j) * spin(a, (j + 1) % l) + spin(a, j) * spin(b, j))
                .sum();
            (beta * e - shift).exp()
        })
        .collect();
    let mut p = t.clone();
    for _ in 1..l {
        let mut q = vec![0.0; n * n];
        for i in 0..n {
            for k in 0..n {
                let x = p[i * n + k];
                for j in 0..n {
                    q[i * n + j] += x * t[k * n + j];
                }
            }
        }
        p = q;
    }
    let trace: f64 = (0..n).map(|i| p[i * n + i]).sum();
    trace.ln() + l as f64 * shift
}

/// Generates the 6x6 periodic Ising lattice at `beta`, plans it in `dtype`
/// with slicing (a budget below the unsliced peak), runs every chunk and
/// gathers; returns the gather JSON.
fn ising_case(dir: &Path, beta: &str, dtype: &str) -> Value {
    // Below the unsliced peak in each dtype, so the plans slice.
    let budget = if dtype == "f32" { "24KiB" } else { "64KiB" };
    let g = sliceplan(
        dir,
        &[
            "generate",
            "lattice",
            "--shape",
            "6x6",
            "--periodic",
            "--model",
            "ising",
            "--beta",
            beta,
            "-o",
            "ising.toml",
        ],
    );
    assert!(g.status.success(), "{}", stderr(&g));
    let p = sliceplan(
        dir,
        &[
            "plan",
            "ising.toml",
            "--budget",
            budget,
            "--dtype",
            dtype,
            "--trials",
            "4",
            "-o",
            "ising.plan.toml",
        ],
    );
    assert!(p.status.success(), "{}{}", stdout(&p), stderr(&p));
    let r = sliceplan(
        dir,
        &[
            "run",
            "ising.plan.toml",
            "--all",
            "--out",
            "parts",
            "--verify",
            "--json",
        ],
    );
    let run = json(&r);
    assert_eq!(run["verify"]["agrees"], true, "{run}");
    assert!(run["run"]["slices_total"].as_u64().unwrap() > 1, "{run}");
    json(&sliceplan(
        dir,
        &[
            "gather",
            "ising.plan.toml",
            "parts",
            "-o",
            "z.npy",
            "--json",
        ],
    ))
}

#[test]
fn ising_at_beta_10_on_the_6x6_periodic_lattice() {
    // Independent reference: the row transfer matrix above. ln Z = 720.69...
    // (the figure; 720 + ln 2 from the two ground states, plus
    // excitations far below 1e-16 of them).
    let want = ising_ln_z_by_transfer_matrix(6, 10.0);
    assert!((want - 720.693147).abs() < 1e-6, "{want}");
    for (dtype, tol) in [("f64", 1e-9), ("f32", 1e-4), ("c64", 1e-4)] {
        let dir = tempfile::tempdir().unwrap();
        let j = ising_case(dir.path(), "10", dtype);
        let ln = j["ln_abs"].as_f64().unwrap();
        assert!((ln - want).abs() <= tol, "{dtype}: ln Z {ln} vs {want}");
        // e^720.69 is beyond f64: no plain value, a mantissa and exponent.
        assert!(j["value"].is_null(), "{j}");
        let e = j["exponent2"].as_i64().unwrap();
        let m = match &j["mantissa"] {
            Value::Number(x) => x.as_f64().unwrap(),
            z => z["re"].as_f64().unwrap(),
        };
        assert!((m.ln() + e as f64 * std::f64::consts::LN_2 - want).abs() <= tol);
        // The decimal text: ln Z / ln 10 = 312.993... so 9.84e312 (real) or
        // (9.84 + 0i) x 10^312 (complex).
        let text = j["value_text"].as_str().unwrap();
        assert!(
            text.starts_with("9.84") || text.starts_with("(9.84"),
            "{text}"
        );
        assert!(text.ends_with("e312") || text.ends_with("10^312"), "{text}");
        // The .npy holds mantissas, its exponent sits beside it.
        let npy = sliceplan::npy::read_npy(&dir.path().join("z.npy")).unwrap();
        let exp = sliceplan::npy::read_npy(&dir.path().join("z.exp2.npy")).unwrap();
        let (nm, ne) = (npy.values[0].re, exp.values[0].re);
        assert_eq!(ne as i64, j["npy_exponent2"].as_i64().unwrap());
        assert!((nm.ln() + ne * std::f64::consts::LN_2 - want).abs() <= tol);
    }
}

#[test]
fn values_in_range_keep_exponent_0() {
    // beta = 0.3: Z is about e^59, an ordinary f64; reference as above.
    let dir = tempfile::tempdir().unwrap();
    let j = ising_case(dir.path(), "0.3", "f64");
    let want = ising_ln_z_by_transfer_matrix(6, 0.3);
    let z = j["value"].as_f64().unwrap();
    assert!((z.ln() - want).abs() < 1e-9, "{z} vs e^{want}");
    assert_eq!(
        (j["exponent2"].as_i64(), j["npy_exponent2"].as_i64()),
        (Some(0), Some(0))
    );
    let npy = sliceplan::npy::read_npy(&dir.path().join("z.npy")).unwrap();
    assert_eq!(npy.values[0].re, z);
}

#[test]
fn ring_of_2000_matrices_of_1e10() {
    // Closed form: the ring of 2000 matrices [[1e10, 0], [0, 0]] has trace
    // (1e10)^2000 = 10^20000, ln = 20000 ln 10.
    let n = 2000;
    let mut b = NetworkBuilder::new("ring");
    b.name("ring of 2000 matrices");
    for k in 0..n {
        b.declare(&format!("i{k}"), 2, None).unwrap();
    }
    for k in 0..n {
        let values = Values::Inline {
            re: vec![1e10, 0.0, 0.0, 0.0],
            im: None,
        };
        b.tensor(
            &format!("M{k}"),
            &[format!("i{k}"), format!("i{}", (k + 1) % n)],
            Some(values),
            None,
        )
        .unwrap();
    }
    b.dtype(Dtype::F64);
    let net = b.build().unwrap();
    let dir = tempfile::tempdir().unwrap();
    write_native(&net, &dir.path().join("ring.toml"));
    let p = sliceplan(
        dir.path(),
        &[
            "plan",
            "ring.toml",
            "--budget",
            "1MiB",
            "--trials",
            "1",
            "-o",
            "ring.plan.toml",
        ],
    );
    assert!(p.status.success(), "{}{}", stdout(&p), stderr(&p));
    let j = json(&sliceplan(
        dir.path(),
        &["run", "ring.plan.toml", "--all", "--json"],
    ));
    let r = &j["result"];
    let want = 20000.0 * std::f64::consts::LN_10;
    let ln = r["ln_abs"].as_f64().unwrap();
    // 2000 roundings of 2^-53 each at most: relative error below 1e-12.
    assert!((ln - want).abs() < 1e-9, "{ln} vs {want}");
    let text = r["value_text"].as_str().unwrap();
    let (d, k) = text.split_once('e').unwrap();
    let (d, k): (f64, i64) = (d.parse().unwrap(), k.parse().unwrap());
    assert!(
        (k == 20000 && (d - 1.0).abs() < 1e-11) || (k == 19999 && (d - 10.0).abs() < 1e-10),
        "{text}"
    );
    // Whole numbers, but entries above 2^20 and a result beyond 2^53: the
    // value is a float and says so.
    assert!(r["not_exact"]
        .as_str()
        .unwrap()
        .starts_with("not exact: f64 holds 53 bits"));
    let t = sliceplan(dir.path(), &["gather", "ring.plan.toml", "ring.partials"]);
    assert!(
        stdout(&t).contains("(not exact: f64 holds 53 bits"),
        "{}",
        stdout(&t)
    );
    assert!(
        stdout(&t).contains("ln|value|: 46051.70185988"),
        "{}",
        stdout(&t)
    );
}

#[test]
fn infinite_inputs_are_refused_not_contracted() {
    // A value no f64 holds cannot be contracted: the run stops with the
    // tensor named (exit 2), nothing NaN or infinite is printed.
    let dir = tempfile::tempdir().unwrap();
    let v = [
        num_complex::Complex64::new(f64::INFINITY, 0.0),
        num_complex::Complex64::new(1.0, 0.0),
    ];
    sliceplan::npy::write_npy(&dir.path().join("a.npy"), &[2], &v).unwrap();
    let text = "format = \"sliceplan-network\"\nversion = 1\ndtype = \"f64\"\n\n[indices]\ni = 2\n\n[[tensor]]\nname = \"A\"\nindices = [\"i\"]\nnpy = \"a.npy\"\n\n[[tensor]]\nname = \"B\"\nindices = [\"i\"]\nfill = \"ones\"\n";
    std::fs::write(dir.path().join("net.toml"), text).unwrap();
    let p = sliceplan(
        dir.path(),
        &[
            "plan",
            "net.toml",
            "--budget",
            "1MiB",
            "-o",
            "net.plan.toml",
        ],
    );
    assert!(p.status.success(), "{}", stderr(&p));
    let r = sliceplan(dir.path(), &["run", "net.plan.toml", "--all"]);
    assert_eq!(r.status.code(), Some(2), "{}{}", stdout(&r), stderr(&r));
    assert!(
        stderr(&r).contains("tensor 'A' holds an infinite value"),
        "{}",
        stderr(&r)
    );
    assert!(!stdout(&r).contains("value:"));
}
