//! Generators with values: the Ising lattice against Kaufman's exact
//! partition function and direct spin sums, brickwork circuits against a
//! state-vector simulation written here, and seeded random fills.

use crate::support::formats as formats_util;
use crate::support::reference as common;

use num_complex::Complex64 as C;
use sliceplan::formats::circuit::{amplitude_network, AmplitudeSpec, Circuit, OpenQubits};
use sliceplan::generate::circuit::brickwork_circuit;
use sliceplan::generate::ising::{ising_lattice, IsingParams};
use sliceplan::generate::values::{fill, Filler};

use formats_util::{contract_in_order, kaufman, scalar, values_of};

#[test]
fn ising_lattice_matches_kaufman() {
    // Kaufman (1949), exact finite-lattice Z (formats_util::kaufman); rel. 1e-10.
    for l in [4, 6] {
        for beta in [0.2, 0.4406868, 0.9] {
            let p = IsingParams {
                beta,
                coupling: 1.0,
                field: 0.0,
            };
            let z = scalar(&ising_lattice(&[l, l], true, p).unwrap());
            let want = kaufman(l, l, beta);
            assert!(
                (z.re - want).abs() < 1e-10 * want && z.im.abs() < 1e-10 * want,
                "L={l} beta={beta}: {z}"
            );
        }
    }
}

/// Direct sum over every spin state of an open rows x cols x depth box.
fn brute_box(shape: [usize; 3], p: IsingParams) -> f64 {
    let n = shape.iter().product::<usize>();
    let site = |x: usize, y: usize, z: usize| (x * shape[1] + y) * shape[2] + z;
    let mut bonds = Vec::new();
    for x in 0..shape[0] {
        for y in 0..shape[1] {
            for z in 0..shape[2] {
                if x + 1 < shape[0] {
                    bonds.push((site(x, y, z), site(x + 1, y, z)));
                }
                if y + 1 < shape[1] {
                    bonds.push((site(x, y, z), site(x, y + 1, z)));
                }
                if z + 1 < shape[2] {
                    bonds.push((site(x, y, z), site(x, y, z + 1)));
                }
            }
        }
    }
    (0u64..1 << n)
        .map(|a| {
            let s = |v: usize| if a >> v & 1 == 0 { 1.0 } else { -1.0 };
            let e: f64 = bonds
                .iter()
                .map(|&(u, v)| p.coupling * s(u) * s(v))
                .sum::<f64>()
                + p.field * (0..n).map(s).sum::<f64>();
            (p.beta * e).exp()
        })
        .sum()
}

#[test]
fn three_dimensional_ising_with_field_and_negative_coupling() {
    // Independent direct spin sums over all 2^12 states of a 2x2x3 box.
    for p in [
        IsingParams {
            beta: 0.35,
            coupling: 1.0,
            field: 0.4,
        },
        IsingParams {
            beta: 0.5,
            coupling: -0.8,
            field: -0.25,
        },
    ] {
        let z = scalar(&ising_lattice(&[2, 2, 3], false, p).unwrap());
        let want = brute_box([2, 2, 3], p);
        assert!(
            (z.re - want).abs() < 1e-11 * want && z.im.abs() < 1e-11 * want,
            "{p:?}: {z} vs {want}"
        );
    }
}

/// The final state by applying each gate matrix to a state vector (qubit 0
/// most significant), independent of the network construction.
fn simulate(c: &Circuit) -> Vec<C> {
    let n = c.num_qubits();
    let mut psi = vec![C::new(0.0, 0.0); 1 << n];
    psi[0] = C::new(1.0, 0.0);
    for g in &c.gates {
        let k = g.qubits.len();
        let bit = |q: usize| 1usize << (n - 1 - q);
        let mut next = vec![C::new(0.0, 0.0); 1 << n];
        for (x, amp) in psi.iter().enumerate() {
            if *amp == C::new(0.0, 0.0) {
                continue;
            }
            let col = g
                .qubits
                .iter()
                .fold(0, |acc, &q| acc * 2 + (x & bit(q) != 0) as usize);
            let rest = g.qubits.iter().fold(x, |acc, &q| acc & !bit(q));
            for row in 0..1 << k {
                let y = g.qubits.iter().enumerate().fold(rest, |acc, (j, &q)| {
                    if row >> (k - 1 - j) & 1 == 1 {
                        acc | bit(q)
                    } else {
                        acc
                    }
                });
                next[y] += g.matrix[row * (1 << k) + col] * amp;
            }
        }
        psi = next;
    }
    psi
}

#[test]
fn brickwork_amplitudes_match_a_state_vector_simulation() {
    let c = brickwork_circuit(2, 3, 10, 42).unwrap();
    let want = simulate(&c);
    // Unitary gates keep the norm (Nielsen and Chuang, postulate 2).
    let norm: f64 = want.iter().map(|z| z.norm_sqr()).sum();
    assert!((norm - 1.0).abs() < 1e-12);
    let spec = AmplitudeSpec {
        bitstring: None,
        open: Some(OpenQubits::All),
    };
    let net = amplitude_network(&c, &spec).unwrap();
    let order: Vec<usize> = (0..net.num_tensors()).collect();
    let got = contract_in_order(&net, &values_of(&net), &order);
    for (x, (g, w)) in got.iter().zip(&want).enumerate() {
        assert!((g - w).norm() < 1e-12, "{x}: {g} vs {w}");
    }
    // One closed amplitude, and the half-open form.
    let spec = AmplitudeSpec {
        bitstring: Some("101100".into()),
        open: None,
    };
    let net = amplitude_network(&c, &spec).unwrap();
    let amp = formats_util::scalar(&net);
    assert!((amp - want[0b101100]).norm() < 1e-12);
    let spec = AmplitudeSpec {
        bitstring: Some("100000".into()),
        open: Some(OpenQubits::parse("2,3").unwrap()),
    };
    let net = amplitude_network(&c, &spec).unwrap();
    let order: Vec<usize> = (0..net.num_tensors()).collect();
    let part = contract_in_order(&net, &values_of(&net), &order);
    // Output order is qubit 2 then qubit 3.
    for (k, z) in part.iter().enumerate() {
        let x = 0b100000 | (k >> 1) << 3 | (k & 1) << 2;
        assert!((z - want[x]).norm() < 1e-12, "{k}");
    }
    // Same seed, same circuit; another seed, other values.
    assert_eq!(brickwork_circuit(2, 3, 10, 42).unwrap(), c);
    assert_ne!(
        brickwork_circuit(2, 3, 10, 43).unwrap().gates[0].matrix,
        c.gates[0].matrix
    );
}

#[test]
fn filled_structures() {
    // A chain of all-ones matrices 3x4, 4x5: every entry of the product is 4.
    let chain = fill(
        sliceplan::generate::matrix_chain(&[3, 4, 5]).unwrap(),
        Filler::Ones,
    );
    let order = [0, 1];
    let v = contract_in_order(&chain, &values_of(&chain), &order);
    assert_eq!(v, vec![C::new(4.0, 0.0); 15]);
    // Random fills are reproducible and differ between tensors and seeds.
    let a = fill(
        sliceplan::generate::lattice(&[3, 3], 2, false).unwrap(),
        Filler::Random { seed: 5 },
    );
    let b = fill(
        sliceplan::generate::lattice(&[3, 3], 2, false).unwrap(),
        Filler::Random { seed: 5 },
    );
    let c = fill(
        sliceplan::generate::lattice(&[3, 3], 2, false).unwrap(),
        Filler::Random { seed: 6 },
    );
    assert_eq!(values_of(&a), values_of(&b));
    assert_ne!(values_of(&a), values_of(&c));
    assert_ne!(values_of(&a)[4][..4], values_of(&a)[5][..4]);
    // The value by elimination equals the direct-summation reference of
    // tests/common (exponential in the 12 indices, fine here).
    let direct = formats_util::contract_by_elimination(&a, &values_of(&a));
    let brute = common::brute_force(&a, &common::all_values(&a))[0];
    assert!((direct[0] - brute).norm() < 1e-12 * brute.norm().max(1.0));
}
