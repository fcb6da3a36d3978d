//! DIMACS CNF input: model counts of the corpus SATLIB instances and of
//! small formulas with every quirk, against independent counts.

use crate::support::formats as formats_util;

use serde_json::Value;
use sliceplan::formats::cnf::{cnf_network, parse_cnf, Cnf};
use sliceplan::formats::{load, LoadOptions};

use formats_util::{corpus, scalar, scalar_by_branching};

/// Model count by trying every assignment of the formula itself (not the
/// network): independent of how clauses become tensors.
fn brute_count(cnf: &Cnf) -> u64 {
    (0u64..1 << cnf.variables)
        .filter(|a| {
            cnf.clauses.iter().all(|(_, c)| {
                c.iter().any(|&l| {
                    let bit = a >> (l.unsigned_abs() - 1) & 1 == 1;
                    bit == (l > 0)
                })
            })
        })
        .count() as u64
}

fn network_count(text: &str) -> (f64, Cnf) {
    let cnf = parse_cnf(text, "t.cnf").unwrap();
    let net = cnf_network(&cnf, "t.cnf", "t").unwrap();
    let v = scalar(&net);
    assert_eq!(v.im, 0.0);
    (v.re, cnf)
}

#[test]
fn corpus_satlib_counts() {
    let text = std::fs::read_to_string(corpus().join("cnf/reference-counts.json")).unwrap();
    let records: Vec<Value> = serde_json::from_str(&text).unwrap();
    let mut checked = 0;
    for rec in records.iter().skip(1) {
        let file = rec["file"].as_str().unwrap();
        let net = load(&corpus().join("cnf").join(file), &LoadOptions::default()).unwrap();
        // Source: corpus cnf/reference-counts.json (four independent methods
        // agree: brute force, two SDD compilations, backtracking).
        let want = rec["count_sdd"].as_u64().unwrap() as f64;
        // The 50-variable formulas have width about 34 (min-fill elimination
        // order), too wide to contract densely here: branch on variables
        // first, as slicing does, down to width 12.
        let got = scalar_by_branching(&net, 12.0);
        assert_eq!((got.re, got.im), (want, 0.0), "{file}");
        checked += 1;
    }
    assert_eq!(checked, 20);
}

#[test]
fn quirks_keep_the_count() {
    // Every count below is checked against brute force over the formula.
    let cases = [
        // Clauses spanning lines, comments inside, SATLIB trailer.
        "c demo\np cnf 4 3\n1 -2\n c inside a clause\n 3 0\n-1 2 0 -3\n -4 0\n%\n0\n\n",
        // Repeated literal, tautology (2 and -2), unused variable 5: factor 2.
        "p cnf 5 3\n1 1 -3 0\n2 -2 4 0\n-1 -4 0\n",
        // Windows line endings, last clause without its closing 0.
        "p cnf 3 2\r\n1 2 0\r\n-2 -3",
        // A clause longer than the chain threshold (12 literals), plus more.
        "p cnf 13 3\n1 2 3 4 5 6 7 8 9 10 11 -12 0\n-1 -2 0\n12 13 -5 0\n",
        // Only negative literals, every variable in one long clause.
        "p cnf 11 1\n-1 -2 -3 -4 -5 -6 -7 -8 -9 -10 -11 0\n",
    ];
    for text in cases {
        let (got, cnf) = network_count(text);
        assert_eq!(got, brute_count(&cnf) as f64, "{text:?}");
    }
}

#[test]
fn closed_forms() {
    // No clauses over n variables: 2^n assignments (closed formula).
    assert_eq!(network_count("p cnf 6 0\n").0, 64.0);
    // Nothing at all: the empty assignment satisfies the empty formula.
    assert_eq!(network_count("p cnf 0 0\n").0, 1.0);
    // An empty clause is never satisfied.
    assert_eq!(network_count("p cnf 2 2\n1 2 0\n0\n").0, 0.0);
    // x1 and not x1: unsatisfiable.
    assert_eq!(network_count("p cnf 1 2\n1 0\n-1 0\n").0, 0.0);
    // A single clause of k literals over k variables: 2^k - 1.
    assert_eq!(network_count("p cnf 3 1\n1 -2 3 0\n").0, 7.0);
}
