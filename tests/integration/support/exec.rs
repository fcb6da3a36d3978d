//! Helpers for the executor's integration tests: writing a network as a
//! native TOML file, networks with known values, and running the binary.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Output;

use sliceplan::cost::{NodeSets, PeakModel};
use sliceplan::network::{Fill, IndexId, Network, NetworkBuilder, Values};
use sliceplan::plan::{write_plan, Plan};
use sliceplan::tree::Tree;

/// Writes `net` as a native network file.
pub fn write_native(net: &Network, path: &Path) {
    let mut s = String::from("format = \"sliceplan-network\"\nversion = 1\n");
    let _ = writeln!(s, "name = {:?}", net.name);
    if let Some(d) = net.dtype {
        let _ = writeln!(s, "dtype = \"{d}\"");
    }
    let open: Vec<String> = net
        .open
        .iter()
        .map(|&e| format!("{:?}", net.indices[e].name))
        .collect();
    let _ = writeln!(s, "open = [{}]\n\n[indices]", open.join(", "));
    for i in &net.indices {
        let _ = writeln!(s, "{:?} = {}", i.name, i.dim);
    }
    for t in &net.tensors {
        let idx: Vec<String> = t
            .indices
            .iter()
            .map(|&e| format!("{:?}", net.indices[e].name))
            .collect();
        let _ = write!(
            s,
            "\n[[tensor]]\nname = {:?}\nindices = [{}]\n",
            t.name,
            idx.join(", ")
        );
        let list = |v: &[f64]| {
            v.iter()
                .map(|x| format!("{x:?}"))
                .collect::<Vec<_>>()
                .join(", ")
        };
        match &t.values {
            Some(Values::Inline { re, im }) => {
                let _ = writeln!(s, "values = [{}]", list(re));
                if let Some(im) = im {
                    let _ = writeln!(s, "imag = [{}]", list(im));
                }
            }
            Some(Values::Fill(Fill::Ones)) => s.push_str("fill = \"ones\"\n"),
            Some(Values::Fill(Fill::Copy)) => s.push_str("fill = \"copy\"\n"),
            Some(Values::Fill(Fill::Random { seed })) => {
                let _ = writeln!(s, "fill = \"random\"\nseed = {seed}");
            }
            Some(Values::Npy(p)) => {
                let _ = writeln!(s, "npy = {:?}", p.display().to_string());
            }
            None => {}
        }
    }
    std::fs::write(path, s).unwrap();
}

/// The n x n grid whose contraction counts its independent sets.
///
/// Structure from `generate::lattice`: one tensor per site, one index per
/// bond. The bond matrix M = [[1, 1], [1, 0]] (no two adjacent ones) sits on
/// the lower-numbered site: site s with value x contributes M[x][b] on each
/// bond b towards a later site and [b == x] on each bond from an earlier one.
pub fn independent_set_grid(n: usize) -> Network {
    let lattice = sliceplan::generate::lattice(&[n, n], 2, false).unwrap();
    let inc = lattice.incidence();
    let mut b = NetworkBuilder::new("independent sets");
    b.name(format!("independent sets of the {n}x{n} grid"));
    for idx in &lattice.indices {
        b.declare(&idx.name, 2, None).unwrap();
    }
    for (s, t) in lattice.tensors.iter().enumerate() {
        let k = t.indices.len();
        let lower: Vec<bool> = t.indices.iter().map(|&e| inc[e][0] == s).collect();
        let mut re = Vec::with_capacity(1 << k);
        for code in 0..(1usize << k) {
            let bit = |p: usize| (code >> (k - 1 - p)) & 1;
            let mut v = 0.0;
            for x in 0..2 {
                let ok = (0..k).all(|p| {
                    if lower[p] {
                        !(x == 1 && bit(p) == 1)
                    } else {
                        bit(p) == x
                    }
                });
                if ok {
                    v += 1.0;
                }
            }
            re.push(v);
        }
        let names: Vec<&str> = t
            .indices
            .iter()
            .map(|&e| lattice.indices[e].name.as_str())
            .collect();
        b.tensor(&t.name, &names, Some(Values::Inline { re, im: None }), None)
            .unwrap();
    }
    b.dtype(sliceplan::network::Dtype::F64);
    b.build().unwrap()
}

/// A chain of `len` Fibonacci matrices [[1, 1], [1, 0]] with the outer
/// indices open; the product is [[F(len+1), F(len)], [F(len), F(len-1)]].
pub fn fibonacci_chain(len: usize) -> Network {
    let base = sliceplan::generate::matrix_chain(&vec![2; len + 1]).unwrap();
    let mut b = NetworkBuilder::new("fibonacci chain");
    for idx in &base.indices {
        b.declare(&idx.name, 2, None).unwrap();
    }
    for t in &base.tensors {
        let names: Vec<&str> = t
            .indices
            .iter()
            .map(|&e| base.indices[e].name.as_str())
            .collect();
        let values = Values::Inline {
            re: vec![1.0, 1.0, 1.0, 0.0],
            im: None,
        };
        b.tensor(&t.name, &names, Some(values), None).unwrap();
    }
    for &e in &base.open {
        b.open(&base.indices[e].name, None).unwrap();
    }
    b.dtype(sliceplan::network::Dtype::F64);
    b.build().unwrap()
}

/// A slice set for `tree` with at least `min_slices` slices whose per-slice
/// peak (executor rule) is below the unsliced one: indices are added
/// greedily, each the one that gives the lowest peak, ties broken by the
/// lowest total ops. A small stand-in for the slicing search, enough to
/// force slicing in tests.
pub fn slice_greedily(net: &Network, tree: &Tree, min_slices: u64) -> Vec<IndexId> {
    let sets = NodeSets::new(net, tree);
    let cost = |ids: &[IndexId]| {
        let s = sets.evaluate_sliced(net, ids, PeakModel::EXECUTOR);
        (s.per_slice.peak.exact.unwrap(), s.per_slice.total_ops.log2)
    };
    let whole = cost(&[]).0;
    let mut chosen: Vec<IndexId> = Vec::new();
    let slices = |c: &[IndexId]| c.iter().map(|&e| net.indices[e].dim).product::<u64>();
    while slices(&chosen) < min_slices || cost(&chosen).0 >= whole {
        let best = (0..net.num_indices())
            .filter(|e| !chosen.contains(e) && net.indices[*e].dim > 1)
            .map(|e| {
                let mut c = chosen.clone();
                c.push(e);
                (cost(&c), e)
            })
            .min_by(|a, b| a.0 .0.cmp(&b.0 .0).then(a.0 .1.total_cmp(&b.0 .1)))
            .expect("some index is left to slice");
        chosen.push(best.1);
    }
    chosen
}

/// Writes `net` as `dir/<stem>.toml` and `plan` as `dir/<stem>.plan.toml`.
pub fn write_case(dir: &Path, stem: &str, net: &Network, plan: &Plan) -> PathBuf {
    write_native(net, &dir.join(format!("{stem}.toml")));
    let path = dir.join(format!("{stem}.plan.toml"));
    write_plan(&path, plan).unwrap();
    path
}

/// Runs the built binary with `args` in `dir`.
pub fn sliceplan(dir: &Path, args: &[&str]) -> Output {
    crate::support::bin::binary()
        .args(args)
        .current_dir(dir)
        .output()
        .expect("the binary runs")
}

/// Stdout as text.
pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// Stderr as text.
pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}
