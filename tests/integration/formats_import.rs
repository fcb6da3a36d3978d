//! `import` and `generate` through the real binary and the library: the
//! written network reads back with the same fingerprint and values, and
//! malformed circuit, formula and graph files fail with exit code 2 and a
//! message naming the file, line and item.

use crate::support::formats as formats_util;

use std::path::Path;

use sliceplan::formats::native::read_native;
use sliceplan::formats::write::{write_native, WriteOptions};
use sliceplan::formats::{load, AmplitudeSpec, GraphProblem, LoadOptions, OpenQubits};
use sliceplan::network::Network;

use crate::support::bin::run_in as sliceplan;
use formats_util::{corpus, values_of};

/// Writes `net`, reads it back, and checks structure and values are equal.
fn round_trip(net: &Network, dir: &Path, name: &str, inline_max: usize) -> usize {
    let path = dir.join(format!("{name}.toml"));
    let written = write_native(net, &path, &WriteOptions { inline_max }).unwrap();
    let back = read_native(&path).unwrap();
    assert_eq!(back.fingerprint(), net.fingerprint(), "{name}");
    assert_eq!(written.fingerprint, net.fingerprint());
    assert_eq!((back.dtype, &back.name), (net.dtype, &net.name));
    // Values are bit-for-bit equal (TOML floats and .npy both round-trip f64).
    assert_eq!(values_of(&back), values_of(net), "{name}");
    written.npy_files.len()
}

#[test]
fn every_input_kind_round_trips() {
    let dir = tempfile::tempdir().unwrap();
    let qasm = corpus().join("qasm/small/qft_n4.qasm");
    let spec = AmplitudeSpec {
        bitstring: Some("0110".into()),
        open: None,
    };
    let opts = LoadOptions {
        amplitude: spec,
        ..LoadOptions::default()
    };
    round_trip(&load(&qasm, &opts).unwrap(), dir.path(), "amp", 256);
    let spec = AmplitudeSpec {
        bitstring: None,
        open: Some(OpenQubits::parse("2,0").unwrap()),
    };
    let opts = LoadOptions {
        amplitude: spec,
        ..LoadOptions::default()
    };
    // Every gate tensor (4 or 16 elements) goes to a side file with inline_max 2.
    let net = load(&qasm, &opts).unwrap();
    let gates = net
        .tensors
        .iter()
        .filter(|t| t.name.starts_with('g'))
        .count();
    assert_eq!(round_trip(&net, dir.path(), "open", 2), gates);
    let cnf = load(
        &corpus().join("cnf/uf20-91/uf20-01.cnf"),
        &LoadOptions::default(),
    )
    .unwrap();
    round_trip(&cnf, dir.path(), "cnf", 256);
    let graph_file = dir.path().join("g.edges");
    std::fs::write(&graph_file, "0 1 0.5\n1 2 -1\n2 0 2\n").unwrap();
    let problem = GraphProblem::Ising {
        beta: 0.3,
        coupling: None,
        field: 0.1,
    };
    let opts = LoadOptions {
        problem: Some(problem),
        ..LoadOptions::default()
    };
    round_trip(&load(&graph_file, &opts).unwrap(), dir.path(), "ising", 0);
    let lattice = sliceplan::generate::values::fill(
        sliceplan::generate::lattice(&[3, 3], 3, true).unwrap(),
        sliceplan::generate::values::Filler::Random { seed: 11 },
    );
    round_trip(&lattice, dir.path(), "lattice", 256);
}

#[test]
fn import_command_writes_a_network_other_commands_read() {
    let dir = tempfile::tempdir().unwrap();
    let qasm = corpus().join("qasm/small/adder_n4.qasm");
    let q = qasm.to_str().unwrap();
    let (code, out, err) = sliceplan(
        dir.path(),
        &[
            "import",
            q,
            "--bitstring",
            "1001",
            "-o",
            "a.toml",
            "--inline-max",
            "8",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    assert!(
        out.starts_with("wrote a.toml: adder_n4 amplitude <1001|"),
        "{out}"
    );
    assert!(dir.path().join("a.data").is_dir());
    let direct = load(
        &qasm,
        &LoadOptions {
            amplitude: AmplitudeSpec {
                bitstring: Some("1001".into()),
                open: None,
            },
            ..LoadOptions::default()
        },
    )
    .unwrap();
    let back = read_native(&dir.path().join("a.toml")).unwrap();
    assert_eq!(back.fingerprint(), direct.fingerprint());
    assert_eq!(values_of(&back), values_of(&direct));
    // Corpus reference: adder_n4 gives <1001| amplitude 1.
    let order: Vec<usize> = (0..back.num_tensors()).collect();
    let amp = formats_util::contract_in_order(&back, &values_of(&back), &order)[0];
    assert!(
        (amp.re - 1.0).abs() < 1e-12 && amp.im.abs() < 1e-12,
        "{amp}"
    );
    // inspect reads circuits directly, with the same options.
    let (code, out, _) = sliceplan(dir.path(), &["inspect", q, "--bitstring", "1001", "--json"]);
    assert_eq!(code, Some(0));
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["network"]["fingerprint"], direct.fingerprint());
    // generate, then inspect the file it wrote.
    let (code, out, err) = sliceplan(
        dir.path(),
        &[
            "generate", "lattice", "--shape", "3x4", "--seed", "2", "-o", "l.toml", "--json",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(
        (v["tensors"].as_u64(), v["indices"].as_u64()),
        (Some(12), Some(17))
    );
    let (code, _, err) = sliceplan(dir.path(), &["inspect", "l.toml"]);
    assert_eq!(code, Some(0), "{err}");
}

#[test]
fn malformed_files_exit_2_with_file_line_and_item() {
    let dir = tempfile::tempdir().unwrap();
    let cases: &[(&str, &str, &[&str], &str)] = &[
        ("a.qasm", "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[1];\nopaque g q;\n", &[], "a.qasm:4: not supported: 'opaque'"),
        ("b.qasm", "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[1];\ncreg c[1];\nreset q[0];\n", &[], "b.qasm:5: not supported: 'reset'"),
        ("c.qasm", "OPENQASM 2.0;\r\ninclude \"qelib1.inc\";\r\nqreg q[1];\r\ncreg c[1];\r\nmeasure q -> c;\r\nif(c==1) x q[0];\r\n", &[], "c.qasm:6: not supported: classically controlled 'if'"),
        ("d.qasm", "// ünïcödé — comment\nOPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[2];\ncreg c[2];\nmeasure q[1] -> c[1];\ncx q[0],q[1];\n", &[], "d.qasm:7: not supported: mid-circuit measurement"),
        ("e.qasm", "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[2];\nfrobnicate q[0];\n", &[], "e.qasm:4: unknown gate 'frobnicate'"),
        ("f.qasm", "OPENQASM 2.0;\nqreg q[2];\nU(pi,0,pi) q[5];\n", &[], "f.qasm:3: index 5 is out of range"),
        ("g.qasm", "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[2];\nx q[0];\n", &["--bitstring", "012"], "--bitstring: the bitstring may hold only 0 and 1"),
        ("h.qasm", "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[2];\nx q[0];\n", &["--bitstring", "011"], "--bitstring: the bitstring has 3 characters but 'h' has 2 qubits"),
        ("i.qasm", "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[2];\nx q[0];\n", &["--open", "7"], "--open: qubit 7 does not exist"),
        ("a.cnf", "p cnf 3\n1 2 0\n", &[], "a.cnf:1: malformed header"),
        ("b.cnf", "c x\np cnf 3 1\n1 -4 0\n", &[], "b.cnf:3: literal -4 is out of range; the header declares variables 1..3"),
        ("c.cnf", "p cnf 3 2\n1 2 0\n", &[], "c.cnf:1: the header declares 2 clauses but the file has 1"),
        ("d.cnf", "p cnf 3 1\n1 two 0\n", &[], "d.cnf:2: 'two' is not a literal"),
        ("e.cnf", "1 2 0\n", &[], "e.cnf:1: clauses before the `p cnf"),
        ("a.col", "p edge 3 1\ne 1 9\n", &["--problem", "independent-sets"], "a.col:2: vertex '9' is out of range"),
        ("b.col", "p edge three 1\n", &["--problem", "independent-sets"], "b.col:1: malformed header"),
        ("c.col", "p edge 3 1\ne 2 2\n", &["--problem", "perfect-matchings"], "c.col:2: self-loop at vertex 2"),
        ("d.edges", "1 2\n2 3 4 5\n", &["--problem", "independent-sets"], "d.edges:2: '2 3 4 5' is not an edge"),
        ("e.edges", "1 2\n", &[], "--problem: e.edges: a graph needs a problem"),
        ("f.edges", "1 2\n", &["--problem", "colorings"], "--colors: the colorings problem needs the number of colours"),
        ("g.edges", "1 2\n", &["--problem", "ising", "--colors", "3", "--beta", "1"], "--colors: goes with the colorings problem only"),
        ("h.edges", "1 2\n", &["--problem", "cliques"], "invalid value 'cliques' for '--problem <PROBLEM>'"),
        ("x.cnf", "p cnf 1 1\n1 0\n", &["--bitstring", "1"], "--bitstring/--open: the bitstring and open qubits apply to OpenQASM circuits only"),
        ("y.txt", "1 2\n", &[], "cannot tell the input format"),
    ];
    assert!(cases.len() >= 15);
    for (name, text, extra, want) in cases {
        std::fs::write(dir.path().join(name), text).unwrap();
        let mut args = vec!["import", name, "-o", "out.toml"];
        args.extend_from_slice(extra);
        let (code, out, err) = sliceplan(dir.path(), &args);
        assert_eq!(code, Some(2), "{name}: {err}");
        assert!(out.is_empty(), "{name}: stdout {out}");
        // Our own messages start with the program's name; clap's (a value
        // outside a value enum) with "error:".
        assert!(
            err.starts_with("sliceplan: ") || err.starts_with("error: "),
            "{name}: {err}"
        );
        assert!(err.contains(want), "{name}:\n got: {err}\nwant: {want}");
        assert!(!err.contains("panicked"), "{name}: {err}");
    }
    assert!(!dir.path().join("out.toml").exists());
}

#[test]
fn generate_refuses_bad_options_with_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let cases: &[(&[&str], &str)] = &[
        (
            &["generate", "lattice", "--shape", "4xfour", "-o", "x.toml"],
            "--shape: 'four' in '4xfour' is not a whole number",
        ),
        (
            &[
                "generate",
                "lattice",
                "--shape",
                "2x2",
                "--periodic",
                "-o",
                "x.toml",
            ],
            "periodic sides must be at least 3",
        ),
        (
            &[
                "generate", "lattice", "--shape", "4x4", "--model", "ising", "--bond", "3",
                "--beta", "1", "-o", "x.toml",
            ],
            "--bond: the ising model needs bond 2",
        ),
        (
            &[
                "generate", "lattice", "--shape", "4x4", "--model", "gauss", "-o", "x.toml",
            ],
            "invalid value 'gauss' for '--model <MODEL>'",
        ),
        (
            &[
                "generate",
                "regular-graph",
                "--vertices",
                "5",
                "--degree",
                "3",
                "-o",
                "x.toml",
            ],
            "no simple 3-regular graph on 5 vertices",
        ),
        (
            &[
                "generate",
                "brickwork",
                "--rows",
                "1",
                "--cols",
                "1",
                "--depth",
                "2",
                "-o",
                "x.toml",
            ],
            "at least two qubits",
        ),
        (
            &["generate", "matrix-chain", "--dims", "3,4", "-o", "x.json"],
            "must end in .toml",
        ),
    ];
    for (args, want) in cases {
        let (code, _, err) = sliceplan(dir.path(), args);
        assert_eq!(code, Some(2), "{args:?}: {err}");
        assert!(err.contains(want), "{args:?}:\n got: {err}\nwant: {want}");
    }
}
