//! OpenQASM 2.0 input: corpus circuits against the corpus reference
//! amplitudes, textbook states, and malformed programs.

use crate::support::formats as formats_util;

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use num_complex::Complex64 as C;
use serde_json::Value;
use sliceplan::formats::circuit::{amplitude_network, AmplitudeSpec, Circuit, OpenQubits};
use sliceplan::formats::qasm::{parse_qasm, read_qasm};

use formats_util::{contract_in_order, corpus, values_of};

/// The whole final state, through the amplitude network with every qubit
/// open, contracted in time order (init tensors, gates, then nothing).
fn state_via_network(c: &Circuit) -> Vec<C> {
    let spec = AmplitudeSpec {
        bitstring: None,
        open: Some(OpenQubits::All),
    };
    let net = amplitude_network(c, &spec).unwrap();
    let order: Vec<usize> = (0..net.num_tensors()).collect();
    contract_in_order(&net, &values_of(&net), &order)
}

/// One amplitude through a closed network (bitstring projectors).
fn amplitude_via_network(c: &Circuit, bits: &str) -> C {
    let spec = AmplitudeSpec {
        bitstring: Some(bits.to_string()),
        open: None,
    };
    let net = amplitude_network(c, &spec).unwrap();
    let order: Vec<usize> = (0..net.num_tensors()).collect();
    contract_in_order(&net, &values_of(&net), &order)[0]
}

/// Row-major over qubits 0..n with qubit 0 most significant, which is the
/// corpus bitstring read as binary with its leftmost character first.
fn position(bits: &str) -> usize {
    usize::from_str_radix(bits, 2).unwrap()
}

fn reference_records() -> Vec<Value> {
    let text = std::fs::read_to_string(corpus().join("qasm/reference-amplitudes.json")).unwrap();
    let all: Vec<Value> = serde_json::from_str(&text).unwrap();
    all.into_iter().skip(1).collect()
}

/// The circuit of a record: the file itself, or for a record with a
/// `derived_reference`, the file with the listed trailing lines deleted.
fn record_circuit(rec: &Value) -> Option<(Circuit, Vec<Value>)> {
    let file = rec["file"].as_str().unwrap();
    let path = corpus().join("qasm").join(file);
    if rec["unitary"] == Value::Bool(true) {
        let amps = rec["amplitudes"].as_array().unwrap().clone();
        return Some((read_qasm(&path).unwrap(), amps));
    }
    let derived = rec.get("derived_reference")?;
    let amps = derived["amplitudes"].as_array()?.clone();
    let deleted: Vec<u64> = derived["deleted_lines"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_u64().unwrap())
        .collect();
    let text = std::fs::read_to_string(&path).unwrap();
    let kept: Vec<&str> = text
        .split('\n')
        .enumerate()
        .filter(|(k, _)| !deleted.contains(&(*k as u64 + 1)))
        .map(|(_, l)| l)
        .collect();
    let c = parse_qasm(&kept.join("\n"), file, file).unwrap();
    Some((c, amps))
}

/// Time-order contraction work: sum over gates of 2^(qubits + gate size).
fn work(c: &Circuit) -> f64 {
    let n = c.num_qubits() as i32;
    c.gates
        .iter()
        .map(|g| 2f64.powi(n + g.qubits.len() as i32))
        .sum()
}

/// Checks every listed amplitude of every record whose contraction work
/// is within `range`; returns how many records were checked.
fn check_records(range: std::ops::Range<f64>) -> usize {
    let mut checked = 0;
    for rec in reference_records() {
        if rec["qubits"].as_u64().unwrap() > 20 {
            continue;
        }
        let Some((c, amps)) = record_circuit(&rec) else {
            continue;
        };
        if !range.contains(&work(&c)) {
            continue;
        }
        let state = state_via_network(&c);
        for a in &amps {
            let bits = a["bitstring"].as_str().unwrap();
            let want = C::new(a["re"].as_f64().unwrap(), a["im"].as_f64().unwrap());
            let got = state[position(bits)];
            // Source: corpus reference-amplitudes.json (exact statevectors
            // from an independent library; rz and sx in its convention, which
            // is ours, so no phase factor applies).
            assert!(
                (got - want).norm() < 1e-10,
                "{} <{bits}|: got {got}, reference {want}",
                rec["file"]
            );
        }
        checked += 1;
    }
    checked
}

#[test]
fn corpus_amplitudes_of_small_circuits() {
    let checked = check_records(0.0..3e6);
    assert!(checked >= 60, "only {checked} records were cheap enough");
}

#[test]
#[ignore = "minutes in a debug build: run scripts/long-tests.sh (release)"]
fn corpus_amplitudes_of_large_circuits() {
    check_records(3e6..f64::INFINITY);
}

#[test]
fn closed_networks_agree_with_the_open_one() {
    // Source: corpus reference-amplitudes.json, through the bitstring form.
    for file in [
        "small/adder_n4_transpiled.qasm",
        "small/wstate_n3.qasm",
        "small/qft_n4.qasm",
    ] {
        let rec = reference_records()
            .into_iter()
            .find(|r| r["file"] == file)
            .unwrap();
        let c = read_qasm(&corpus().join("qasm").join(file)).unwrap();
        for a in rec["amplitudes"].as_array().unwrap() {
            let want = C::new(a["re"].as_f64().unwrap(), a["im"].as_f64().unwrap());
            let got = amplitude_via_network(&c, a["bitstring"].as_str().unwrap());
            assert!((got - want).norm() < 1e-10, "{file}: {got} vs {want}");
        }
    }
}

fn features() -> HashMap<String, String> {
    let text = std::fs::read_to_string(corpus().join("qasm/features.tsv")).unwrap();
    text.lines()
        .skip(1)
        .filter_map(|l| {
            let mut f = l.split('\t');
            Some((f.next()?.to_string(), f.nth(1)?.to_string()))
        })
        .collect()
}

fn qasm_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let p = entry.unwrap().path();
        if p.is_dir() {
            qasm_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "qasm") {
            out.push(p);
        }
    }
}

#[test]
fn every_corpus_file_imports_or_says_what_is_not_supported() {
    let root = corpus().join("qasm");
    let features = features();
    let mut files = Vec::new();
    qasm_files(&root, &mut files);
    assert_eq!(files.len(), 128, "corpus README: 128 circuit files");
    let (mut ok, mut unsupported, mut invalid) = (0, 0, 0);
    for path in files {
        let rel = path
            .strip_prefix(&root)
            .unwrap()
            .to_string_lossy()
            .replace('\\', "/");
        let feats = &features[&rel];
        let spec = AmplitudeSpec::default();
        match read_qasm(&path).and_then(|c| amplitude_network(&c, &spec)) {
            Ok(_) => {
                ok += 1;
                // Corpus features.tsv: every unitary file has only final measurements.
                assert!(
                    !feats.contains("measure-mid") && !feats.contains("if"),
                    "{rel}"
                );
            }
            Err(e) => {
                let msg = e.to_string();
                let at_line = format!("{}:", path.display());
                assert!(msg.starts_with(&at_line), "{rel}: no line in '{msg}'");
                if feats.contains("undeclared-register") {
                    // Corpus README: 8 files measure an undeclared register q.
                    assert!(msg.contains("unknown quantum register 'q'"), "{rel}: {msg}");
                    invalid += 1;
                } else {
                    assert!(msg.contains("not supported: "), "{rel}: {msg}");
                    unsupported += 1;
                }
            }
        }
    }
    // Corpus README: 16 non-unitary files plus bwt_n21 (resets; its
    // transpiled form is one of the five missing files).
    assert_eq!((unsupported, invalid), (17, 8));
    assert_eq!(ok, 128 - 25);
}

fn amplitudes(text: &str) -> Vec<C> {
    state_via_network(&parse_qasm(text, "t.qasm", "t").unwrap())
}

#[test]
fn ghz_state_has_two_equal_amplitudes() {
    // Nielsen and Chuang, ch. 1 (GHZ state): (|000..0> + |111..1>)/sqrt(2).
    let text = "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[5];\ncreg c[5];\nh q[0];\n\
        cx q[0],q[1];\ncx q[1],q[2];\ncx q[2],q[3];\ncx q[3],q[4];\nmeasure q -> c;\n";
    let s = amplitudes(text);
    let r = std::f64::consts::FRAC_1_SQRT_2;
    for (k, z) in s.iter().enumerate() {
        let want = if k == 0 || k == 31 { r } else { 0.0 };
        assert!((z - C::new(want, 0.0)).norm() < 1e-15, "{k}: {z}");
    }
}

#[test]
fn fourier_transform_of_zero_is_uniform() {
    // Nielsen and Chuang, sec. 5.1: QFT|0...0> = 2^(-n/2) sum_x |x>.
    let n = 5;
    let mut text = format!("OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[{n}];\n");
    for j in 0..n {
        text.push_str(&format!("h q[{j}];\n"));
        for k in j + 1..n {
            text.push_str(&format!("cu1(pi/2^{}) q[{k}],q[{j}];\n", k - j));
        }
    }
    for j in 0..n / 2 {
        text.push_str(&format!("swap q[{j}],q[{}];\n", n - 1 - j));
    }
    let s = amplitudes(&text);
    let want = 2f64.powf(-(n as f64) / 2.0);
    assert!(s.iter().all(|z| (z - C::new(want, 0.0)).norm() < 1e-14));
    // And of |1>: amplitudes 2^(-n/2) e^{2 pi i x y / 2^n}, y = 1 read with
    // qubit 0 most significant after the swaps (same section).
    let s = amplitudes(&text.replace(
        &format!("qreg q[{n}];\n"),
        &format!("qreg q[{n}];\nx q[{}];\n", n - 1),
    ));
    for (x, z) in s.iter().enumerate() {
        let phase = 2.0 * std::f64::consts::PI * x as f64 / 32.0;
        assert!((z - C::from_polar(want, phase)).norm() < 1e-14, "{x}: {z}");
    }
}

#[test]
fn user_gates_broadcast_and_several_registers() {
    // Hand-checked: majority-style gate on (a[0], b[0], c[0]) after x a; x b.
    let text =
        "OPENQASM 2.0;\r\ninclude \"qelib1.inc\";\r\nqreg a[2];\r\nqreg b[2];\r\nqreg c[1];\r\n\
        gate both(theta) p, r { rx(theta) p; barrier p, r; cx p, r; }\r\n\
        gate twice(t) u, v { both(t/2) u, v; both(-t/2+pi) u, v; }\r\n\
        x a;\r\nx b;\r\ntwice(2*pi) a[0], c[0];\r\n";
    let c = parse_qasm(text, "t.qasm", "t").unwrap();
    assert_eq!(c.labels, vec!["a[0]", "a[1]", "b[0]", "b[1]", "c[0]"]);
    // x on a (2 gates), x on b (2), then 2 x (rx + cx) = 8 gates.
    assert_eq!(c.gates.len(), 8);
    // Nielsen and Chuang (4.4): rx(pi) = -iX, so a[0]: |1> -> -i|0>; the cx
    // then does nothing; both(-pi + pi) is rx(0) = I and a cx that does
    // nothing: the state is -i|01110>.
    let s = state_via_network(&c);
    assert!((s[position("01110")] - C::new(0.0, -1.0)).norm() < 1e-14);
}

fn parse_error(text: &str) -> String {
    match parse_qasm(text, "bad.qasm", "bad") {
        Ok(_) => panic!("accepted: {text}"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn malformed_programs_name_line_and_construct() {
    let head = "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[2];\ncreg c[2];\n";
    let cases: &[(&str, &str)] = &[
        ("opaque magic q;\n", "bad.qasm:5: not supported: 'opaque'"),
        ("reset q[0];\n", "bad.qasm:5: not supported: 'reset'"),
        (
            "measure q -> c;\nif(c==1) x q[0];\n",
            "bad.qasm:6: not supported: classically controlled 'if'",
        ),
        (
            "measure q[0] -> c[0];\nh q[0];\n",
            "bad.qasm:6: not supported: mid-circuit measurement: q[0] is measured on line 5",
        ),
        ("foo q[0];\n", "bad.qasm:5: unknown gate 'foo'"),
        (
            "rccx q[0],q[1],q[0];\n",
            "bad.qasm:5: not supported: the built-in gate library has no 'rccx'",
        ),
        (
            "cx q[0];\n",
            "bad.qasm:5: gate 'cx' acts on 2 qubit(s), 1 given",
        ),
        (
            "rz q[0];\n",
            "bad.qasm:5: gate 'rz' takes 1 parameter(s), 0 given",
        ),
        (
            "x q[2];\n",
            "bad.qasm:5: index 2 is out of range for register 'q' of size 2",
        ),
        (
            "h q[0]\nh q[1];\n",
            "bad.qasm:6: expected ';' after the call of 'h'",
        ),
        (
            "cx q[1],q[1];\n",
            "bad.qasm:5: gate 'cx' gets qubit q[1] twice",
        ),
        (
            "gate x a { U(0,0,0) a; }\n",
            "bad.qasm:5: gate 'x' is already defined by the standard library",
        ),
        (
            "gate g a { h a;\n",
            "bad.qasm:6: the body of gate 'g' is not closed",
        ),
        (
            "gate g(t) a { rz(s) a; }\n",
            "bad.qasm:5: unknown name 's' in a parameter expression",
        ),
        (
            "gate g a { h a[0]; }\n",
            "bad.qasm:5: inside a gate body, qubits are named",
        ),
        (
            "rz(ln(0)) q[0];\n",
            "bad.qasm:5: a parameter of 'rz' evaluates to -inf",
        ),
        (
            "qreg r[3];\ncx q, r;\n",
            "bad.qasm:6: gate 'cx': whole registers of different sizes",
        ),
        (
            "measure z[0] -> c[0];\n",
            "bad.qasm:5: unknown quantum register 'z' (declared: q)",
        ),
        ("qreg q[4];\n", "bad.qasm:5: register 'q' is declared twice"),
        (
            "x q[0]; OPENQASM 2.0;\n",
            "bad.qasm:5: 'OPENQASM 2.0;' must be the first statement",
        ),
    ];
    for (body, want) in cases {
        let msg = parse_error(&format!("{head}{body}"));
        assert!(msg.starts_with(want), "{body:?}\n got: {msg}\nwant: {want}");
    }
    let more: &[(&str, &str)] = &[
        (
            "OPENQASM 3.0;\nqubit q;\n",
            "bad.qasm:1: not supported: OpenQASM version 3",
        ),
        (
            "OPENQASM 2.0;\ninclude \"mylib.inc\";\n",
            "bad.qasm:2: not supported: include \"mylib.inc\"",
        ),
        (
            "OPENQASM 2.0;\nqreg q[1];\nh q[0];\n",
            "bad.qasm:3: gate 'h' is not defined; it belongs to the standard library",
        ),
        (
            "OPENQASM 2.0;\nqreg q[0];\n",
            "bad.qasm:2: register 'q' has size 0",
        ),
        ("OPENQASM 2.0;\n/* block */\n", "bad.qasm:2: block comments"),
        (
            "OPENQASM 2.0;\nqreg q[1];\nU(0,0,0) q[0]; // ok ünïcode\nU(0,0 q[0];\n",
            "bad.qasm:4: expected ')'",
        ),
    ];
    for (text, want) in more {
        let msg = parse_error(text);
        assert!(msg.starts_with(want), "{text:?}\n got: {msg}\nwant: {want}");
    }
}

#[test]
fn deeply_nested_definitions_are_refused() {
    let mut text =
        String::from("OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[1];\ngate g0 a { x a; }\n");
    for k in 1..150 {
        text.push_str(&format!("gate g{k} a {{ g{} a; }}\n", k - 1));
    }
    text.push_str("g149 q[0];\n");
    let msg = parse_error(&text);
    assert!(
        msg.starts_with("bad.qasm:154: gate definitions nest more than 100 deep"),
        "{msg}"
    );
    // 100 levels are fine: x applied once.
    let ok = text.replace("g149 q[0];", "g99 q[0];");
    assert_eq!(parse_qasm(&ok, "t", "t").unwrap().gates.len(), 1);
}

#[test]
fn header_and_include_are_optional_for_u_and_cx() {
    // U and CX belong to the language (OpenQASM 2.0 paper, sec. 3).
    let c = parse_qasm("qreg q[2];\nU(pi,0,pi) q[0];\nCX q[0],q[1];\n", "t", "t").unwrap();
    let s = state_via_network(&c);
    assert!((s[position("11")] - C::new(1.0, 0.0)).norm() < 1e-15);
}
