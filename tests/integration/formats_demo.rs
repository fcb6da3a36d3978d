//! The demo inputs under demo-data/ hold the values docs/inputs.md quotes.

use crate::support::formats as formats_util;

use std::path::{Path, PathBuf};

use num_complex::Complex64 as C;
use sliceplan::formats::{load, AmplitudeSpec, GraphProblem, LoadOptions, OpenQubits};

use formats_util::{contract_in_order, scalar, values_of};

fn demo(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-data")
        .join(rel)
}

fn state(rel: &str) -> Vec<C> {
    let spec = AmplitudeSpec {
        bitstring: None,
        open: Some(OpenQubits::All),
    };
    let net = load(
        &demo(rel),
        &LoadOptions {
            amplitude: spec,
            ..LoadOptions::default()
        },
    )
    .unwrap();
    let order: Vec<usize> = (0..net.num_tensors()).collect();
    contract_in_order(&net, &values_of(&net), &order)
}

#[test]
fn teleported_message_and_ghz_state() {
    // Nielsen and Chuang, sec. 1.3.7 (teleportation) with the corrections
    // moved before measurement (sec. 4.4, deferred measurement): the final
    // state is |+>_msg (|000> + |111>)/sqrt(2) |+>_spare0 |psi>_spare1 with
    // psi = rz(-pi/4) ry(2pi/3) |0> = (e^{i pi/8} / 2, e^{-i pi/8} sqrt(3)/2).
    let s = state("circuits/ghz-teleport.qasm");
    let psi = [
        C::from_polar(0.5, std::f64::consts::PI / 8.0),
        C::from_polar(3f64.sqrt() / 2.0, -std::f64::consts::PI / 8.0),
    ];
    for (x, z) in s.iter().enumerate() {
        let ghz = (x >> 2) & 0b111;
        let want = if ghz == 0 || ghz == 0b111 {
            psi[x & 1] * 0.5 * std::f64::consts::FRAC_1_SQRT_2
        } else {
            C::new(0.0, 0.0)
        };
        assert!((z - want).norm() < 1e-14, "{x:06b}: {z} vs {want}");
    }
}

#[test]
fn phase_estimation_is_exact() {
    // Nielsen and Chuang, sec. 5.2: a phase with an exact 3-bit expansion
    // (3/8 = 0.011) is read out with certainty; the target stays |1>.
    let s = state("circuits/phase-kickback.qasm");
    for (x, z) in s.iter().enumerate() {
        let want = if x == 0b0111 { 1.0 } else { 0.0 };
        assert!((z - C::new(want, 0.0)).norm() < 1e-14, "{x:04b}: {z}");
    }
}

#[test]
fn seating_ring_and_ladder_values() {
    // Counts stated in the files' comments, each confirmed here by brute force.
    let count = |rel: &str, problem: Option<GraphProblem>| -> f64 {
        let net = load(
            &demo(rel),
            &LoadOptions {
                problem,
                ..LoadOptions::default()
            },
        )
        .unwrap();
        scalar(&net).re
    };
    // 4! seatings minus the 3 * 2 * 2! with guests 0 and 1 side by side.
    assert_eq!(count("formulas/seating.cnf", None), 12.0);
    let ring = sliceplan::formats::graph::read_graph(&demo("graphs/ring-of-cliques.col")).unwrap();
    let brute = (0u32..4u32.pow(12))
        .filter(|a| {
            ring.edges
                .iter()
                .all(|&(u, v)| a / 4u32.pow(u as u32) % 4 != a / 4u32.pow(v as u32) % 4)
        })
        .count();
    assert_eq!(brute, 5856);
    assert_eq!(
        count(
            "graphs/ring-of-cliques.col",
            Some(GraphProblem::Colorings { colors: 4 })
        ),
        5856.0
    );
    assert_eq!(
        count(
            "graphs/ring-of-cliques.col",
            Some(GraphProblem::IndependentSets)
        ),
        110.0
    );
    let z = count(
        "graphs/mixed-ladder.edges",
        Some(GraphProblem::Ising {
            beta: 0.5,
            coupling: None,
            field: 0.0,
        }),
    );
    assert!((z - 121.72980333428153).abs() < 1e-12 * z, "{z}");
}

#[test]
fn ising_demo_lattice_matches_a_row_transfer_matrix() {
    // demo-data/ising-6x6.toml: ferromagnetic Ising model (J = 1, no field)
    // on a 6x6 open lattice at beta = 0.3. Independent value: the row
    // transfer matrix. A row configuration s (6 spins) has weight
    // exp(beta * sum of horizontal neighbour products); consecutive rows
    // couple by exp(beta * sum_c s_c t_c). Z = 1^T (D T)^5 D 1 with D the
    // diagonal of row weights and T the vertical coupling (64 x 64).
    let beta = 0.3f64;
    let l = 6;
    let spin = |s: usize, c: usize| if (s >> c) & 1 == 0 { 1.0 } else { -1.0 };
    let row_weight =
        |s: usize| (beta * (0..l - 1).map(|c| spin(s, c) * spin(s, c + 1)).sum::<f64>()).exp();
    let couple =
        |s: usize, t: usize| (beta * (0..l).map(|c| spin(s, c) * spin(t, c)).sum::<f64>()).exp();
    let n = 1 << l;
    let mut v: Vec<f64> = (0..n).map(row_weight).collect();
    for _ in 1..l {
        v = (0..n)
            .map(|t| row_weight(t) * (0..n).map(|s| v[s] * couple(s, t)).sum::<f64>())
            .collect();
    }
    let want: f64 = v.iter().sum();
    let net = load(&demo("ising-6x6.toml"), &LoadOptions::default()).unwrap();
    let got = scalar(&net);
    assert!(
        (got.re - want).abs() <= 1e-10 * want,
        "{} vs {want}",
        got.re
    );
    assert!(got.im.abs() <= 1e-10 * want);
}
