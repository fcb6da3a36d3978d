//! Random brickwork circuits of our own on a qubit grid, with gate values.
//!
//! The layers and qubit pairs are those of [`super::brickwork`] for the same
//! grid, depth and seed. Each two-qubit gate is CZ · (R_a ⊗ R_b): a fresh
//! random single-qubit rotation on each of its qubits, then a controlled-Z.
//! R = U(θ, φ, λ) (the OpenQASM 2.0 general single-qubit gate) with
//! cos θ uniform in [-1, 1] and φ, λ uniform in [0, 2π), so that R's axis
//! is uniform on the sphere. Everything is reproducible from the seed
//! (ChaCha8; the rotations use a stream separate from the layer order).

use std::f64::consts::PI;

use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use super::brick_pairs;
use crate::error::{Error, Result};
use crate::formats::circuit::{Circuit, Gate};
use crate::formats::qasm::gates;

/// The random brickwork circuit on a `rows` x `cols` grid (qubit r * cols + c
/// at row r, column c) with `depth` layers.
///
/// ```
/// use sliceplan::formats::circuit::{amplitude_network, AmplitudeSpec};
/// let c = sliceplan::generate::circuit::brickwork_circuit(2, 3, 4, 1).unwrap();
/// let net = amplitude_network(&c, &AmplitudeSpec::default()).unwrap();
/// assert!(net.has_values());
/// ```
pub fn brickwork_circuit(rows: usize, cols: usize, depth: usize, seed: u64) -> Result<Circuit> {
    let qubits = rows.saturating_mul(cols);
    if qubits < 2 {
        return Err(Error::invalid(
            "rows",
            "a brickwork circuit needs at least two qubits",
        ));
    }
    // Each layer holds at most qubits/2 gates of one tensor each.
    let gates = depth.saturating_mul(qubits / 2);
    let max = crate::network::MAX_TENSORS;
    if qubits > 1 << 20 || gates > max {
        return Err(Error::invalid(
            "depth",
            format!(
                "a {rows}x{cols} grid of depth {depth} is too large: at most 2^20 qubits and {max} gates"
            ),
        ));
    }
    let mut order_rng = ChaCha8Rng::seed_from_u64(seed);
    let mut gate_rng = ChaCha8Rng::seed_from_u64(seed);
    gate_rng.set_stream(1);
    let cz = gates::matrix("cz", &[]);
    let mut patterns = [0usize, 1, 2, 3];
    let mut circuit_gates = Vec::new();
    for layer in 0..depth {
        if layer % 4 == 0 {
            patterns.shuffle(&mut order_rng);
        }
        for (a, b) in brick_pairs(rows, cols, patterns[layer % 4]) {
            let ra = rotation(&mut gate_rng);
            let rb = rotation(&mut gate_rng);
            circuit_gates.push(Gate {
                name: "brick".into(),
                qubits: vec![a, b],
                matrix: mul4(&cz, &kron2(&ra, &rb)),
            });
        }
    }
    Ok(Circuit {
        name: format!("brickwork {rows}x{cols} depth {depth} seed {seed}"),
        labels: (0..rows * cols).map(|q| format!("q[{q}]")).collect(),
        gates: circuit_gates,
    })
}

fn rotation(rng: &mut ChaCha8Rng) -> Vec<num_complex::Complex64> {
    let theta = rng.random_range(-1.0f64..=1.0).acos();
    let phi = rng.random_range(0.0..2.0 * PI);
    let lambda = rng.random_range(0.0..2.0 * PI);
    gates::matrix("U", &[theta, phi, lambda])
}

type C = num_complex::Complex64;

fn kron2(a: &[C], b: &[C]) -> Vec<C> {
    let mut m = vec![C::new(0.0, 0.0); 16];
    for i in 0..4 {
        for j in 0..4 {
            m[i * 4 + j] = a[(i / 2) * 2 + j / 2] * b[(i % 2) * 2 + j % 2];
        }
    }
    m
}

fn mul4(a: &[C], b: &[C]) -> Vec<C> {
    let mut m = vec![C::new(0.0, 0.0); 16];
    for i in 0..4 {
        for k in 0..4 {
            for j in 0..4 {
                m[i * 4 + j] += a[i * 4 + k] * b[k * 4 + j];
            }
        }
    }
    m
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::formats::circuit::{amplitude_network, AmplitudeSpec};

    #[test]
    fn same_layers_as_the_structure_generator() {
        let c = brickwork_circuit(3, 3, 8, 5).unwrap();
        let valued = amplitude_network(&c, &AmplitudeSpec::default()).unwrap();
        let plain = super::super::brickwork(3, 3, 8, 5).unwrap();
        assert_eq!(valued.num_tensors(), plain.num_tensors());
        let legs = |n: &crate::network::Network| -> Vec<Vec<String>> {
            n.tensors
                .iter()
                .map(|t| {
                    t.indices
                        .iter()
                        .map(|&e| n.indices[e].name.clone())
                        .collect()
                })
                .collect()
        };
        assert_eq!(legs(&valued), legs(&plain));
    }
}
