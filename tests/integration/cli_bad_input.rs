//! Bad inputs to the real binary: each gets a message naming the item and
//! exit code 2, and none panics.

use std::path::Path;

const GOOD_NET: &str = r#"
format = "sliceplan-network"
version = 1
[indices]
i = 2
j = 3
[[tensor]]
name = "A"
indices = ["i", "j"]
[[tensor]]
name = "B"
indices = ["j", "i"]
"#;

/// One case: files to write (name, text), arguments, expected stderr fragment.
struct Case {
    name: &'static str,
    files: &'static [(&'static str, &'static str)],
    args: &'static [&'static str],
    expect: &'static str,
}

const CASES: &[Case] = &[
    Case {
        name: "index without a dimension",
        files: &[("n.toml", "[[tensor]]\nname = \"A\"\nindices = [\"q\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "n.toml:1: tensor 'A': index 'q' has no dimension",
    },
    Case {
        name: "dimension zero",
        files: &[("n.toml", "[indices]\ni = 0\n[[tensor]]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "n.toml:2: index 'i': dimension 0 is not valid",
    },
    Case {
        name: "negative dimension",
        files: &[("n.toml", "[indices]\ni = -2\n[[tensor]]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "dimension -2 is not valid",
    },
    Case {
        name: "dimension above 2^63",
        files: &[("n.toml", "[indices]\ni = \"2^64\"\n[[tensor]]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "dimension \"2^64\" is not valid",
    },
    Case {
        name: "conflicting dimensions",
        files: &[],
        args: &["inspect", "--einsum", "ab,bc", "--dims", "a=2,a=3", "--dim", "2"],
        expect: "index 'a' has conflicting dimensions 2 and 3",
    },
    Case {
        name: "open index absent",
        files: &[("n.toml", "open = [\"z\"]\n[indices]\ni = 2\n[[tensor]]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "n.toml:1: open index 'z' does not belong to any tensor",
    },
    Case {
        name: "duplicate tensor names",
        files: &[("n.toml", "dim = 2\n[[tensor]]\nname = \"A\"\nindices = [\"i\"]\n[[tensor]]\nname = \"A\"\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "n.toml:5: duplicate tensor name 'A' (first on line 2)",
    },
    Case {
        name: "malformed TOML",
        files: &[("n.toml", "dim = 2\n\n[[tensor]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "n.toml:3: not a valid network file",
    },
    Case {
        name: "unknown key",
        files: &[("n.toml", "dim = 2\n[[tensor]]\nindices = [\"i\"]\nshape = [2]\n")],
        args: &["inspect", "n.toml"],
        expect: "unknown field `shape`",
    },
    Case {
        name: "tree missing a tensor",
        files: &[("n.toml", GOOD_NET), ("t.toml", "format = \"sliceplan-tree\"\nversion = 1\nmerges = [[0, 0]]\n")],
        args: &["inspect", "n.toml", "--tree", "t.toml"],
        expect: "tensor 'A' (node 0) appears twice in the tree",
    },
    Case {
        name: "tree missing a tensor by name",
        files: &[("n.toml", GOOD_NET), ("t.toml", "format = \"sliceplan-tree\"\nversion = 1\nnested = \"A\"\n")],
        args: &["inspect", "n.toml", "--tree", "t.toml"],
        expect: "the tree does not use tensor 'B'",
    },
    Case {
        name: "tree listing a tensor twice",
        files: &[("n.toml", GOOD_NET), ("t.toml", "format = \"sliceplan-tree\"\nversion = 1\nnested = \"(A,A)\"\n")],
        args: &["inspect", "n.toml", "--tree", "t.toml"],
        expect: "tensor 'A' appears twice in the tree",
    },
    Case {
        name: "tree for another network",
        files: &[("n.toml", GOOD_NET), ("t.toml", "format = \"sliceplan-tree\"\nversion = 1\nnetwork = \"0000000000000000\"\nmerges = [[0, 1]]\n")],
        args: &["inspect", "n.toml", "--tree", "t.toml"],
        expect: "this tree was made for network 0000000000000000",
    },
    Case {
        name: "tree with a node from the future",
        files: &[("n.toml", GOOD_NET), ("t.toml", "format = \"sliceplan-tree\"\nversion = 1\nmerges = [[0, 5]]\n")],
        args: &["inspect", "n.toml", "--tree", "t.toml"],
        expect: "does not exist yet",
    },
    Case {
        name: "tree file of a newer version",
        files: &[("n.toml", GOOD_NET), ("t.toml", "format = \"sliceplan-tree\"\nversion = 9\nmerges = [[0, 1]]\n")],
        args: &["inspect", "n.toml", "--tree", "t.toml"],
        expect: "tree file version 9 is not supported",
    },
    Case {
        name: "einsum dims for an absent index",
        files: &[],
        args: &["inspect", "--einsum", "ab,bc->ac", "--dim", "2", "--dims", "z=3"],
        expect: "index 'z' does not appear in the equation",
    },
    Case {
        name: "einsum dims not a number",
        files: &[],
        args: &["inspect", "--einsum", "ab,bc->ac", "--dims", "a=x"],
        expect: "--dims: 'a=x': 'x' is not a whole number",
    },
    Case {
        name: "einsum trace",
        files: &[],
        args: &["inspect", "--einsum", "ii->", "--dim", "2"],
        expect: "index 'i' is repeated",
    },
    Case {
        name: "einsum output not in operands",
        files: &[],
        args: &["inspect", "--einsum", "ab,bc->az", "--dim", "2"],
        expect: "output index 'z' does not appear in any operand",
    },
    Case {
        name: "empty network",
        files: &[("n.toml", "format = \"sliceplan-network\"\nversion = 1\n")],
        args: &["inspect", "n.toml"],
        expect: "the network has no tensors",
    },
    Case {
        name: "repeated index within a tensor",
        files: &[("n.toml", "dim = 2\n[[tensor]]\nname = \"A\"\nindices = [\"i\", \"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "tensor 'A': index 'i' appears twice",
    },
    Case {
        name: "inline values of the wrong length",
        files: &[("n.toml", "dim = 2\n[[tensor]]\nname = \"A\"\nindices = [\"i\", \"j\"]\nvalues = [1, 2, 3]\n")],
        args: &["inspect", "n.toml"],
        expect: "tensor 'A': 3 values given, but its shape (2x2) holds 4",
    },
    Case {
        name: "unknown fill",
        files: &[("n.toml", "dim = 2\n[[tensor]]\nname = \"A\"\nindices = [\"i\"]\nfill = \"zeros\"\n")],
        args: &["inspect", "n.toml"],
        expect: "unknown fill 'zeros'",
    },
    Case {
        name: "copy tensor with unequal dimensions",
        files: &[("n.toml", "[indices]\ni = 2\nj = 3\n[[tensor]]\nname = \"C\"\nindices = [\"i\", \"j\"]\nfill = \"copy\"\n")],
        args: &["inspect", "n.toml"],
        expect: "a copy tensor needs all its indices to have the same dimension",
    },
    Case {
        name: "unknown dtype in the file",
        files: &[("n.toml", "dtype = \"c32\"\ndim = 2\n[[tensor]]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "n.toml:1: unknown dtype 'c32'",
    },
    Case {
        name: "unknown dtype on the command line",
        files: &[("n.toml", GOOD_NET)],
        args: &["inspect", "n.toml", "--dtype", "f16"],
        // clap lists the valid values of a value enum.
        expect: "[possible values: f32, f64, c64, c128]",
    },
    Case {
        name: "wrong format tag",
        files: &[("n.toml", "format = \"other\"\ndim = 2\n[[tensor]]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "format is 'other', expected 'sliceplan-network'",
    },
    Case {
        name: "network version too new",
        files: &[("n.toml", "version = 7\ndim = 2\n[[tensor]]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "network file version 7 is not supported",
    },
    Case {
        name: "declared index unused",
        files: &[("n.toml", "[indices]\ni = 2\nk = 2\n[[tensor]]\nindices = [\"i\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "n.toml:3: index 'k' is declared but no tensor uses it",
    },
    Case {
        name: "missing file",
        files: &[],
        args: &["inspect", "absent.toml"],
        expect: "absent.toml: cannot read",
    },
    Case {
        name: "unknown extension",
        files: &[("n.xyz", "")],
        args: &["inspect", "n.xyz"],
        expect: "cannot tell the input format",
    },
    Case {
        name: "slice of an unknown index",
        files: &[("n.toml", GOOD_NET)],
        args: &["inspect", "n.toml", "--slice", "i,q"],
        expect: "--slice: the network has no index named 'q'",
    },
    Case {
        name: "both einsum and tensors",
        files: &[("n.toml", "einsum = \"ab\"\ndim = 2\n[[tensor]]\nindices = [\"a\"]\n")],
        args: &["inspect", "n.toml"],
        expect: "give either `einsum = ...` or [[tensor]] entries",
    },
];

fn run_case(dir: &Path, case: &Case) -> (Option<i32>, String) {
    for (name, text) in case.files {
        std::fs::write(dir.join(name), text).unwrap();
    }
    let out = crate::support::bin::binary()
        .args(case.args)
        .current_dir(dir)
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn every_bad_input_exits_2_with_a_named_item() {
    assert!(CASES.len() >= 20);
    let mut failures = Vec::new();
    for case in CASES {
        let dir = tempfile::tempdir().unwrap();
        let (code, stderr) = run_case(dir.path(), case);
        if code != Some(2) || !stderr.contains(case.expect) || stderr.contains("panicked") {
            failures.push(format!("{}: exit {code:?}, stderr: {stderr}", case.name));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn the_good_network_inspects() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("n.toml"), GOOD_NET).unwrap();
    let out = crate::support::bin::binary()
        .args(["inspect", "n.toml", "--json"])
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["network"]["tensors"], 2);
    // Trace of A·B with i=2, j=3: one merge over {i, j}: 6 ops.
    assert_eq!(v["tree"]["total_ops"], "6");
}
