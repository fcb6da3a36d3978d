//! Helpers shared by the integration tests: an independent reference
//! contraction by direct summation, and small builders.
#![allow(dead_code)]

use num_complex::Complex64;
use sliceplan::network::{values::materialize, Network};

/// The network's value by direct summation over every assignment of every
/// index: for each assignment, the product of the tensors' entries, added to
/// the output entry that the open indices select. Output is row-major over
/// the open indices in order. Exponential; for networks with few indices.
pub fn brute_force(net: &Network, values: &[Vec<Complex64>]) -> Vec<Complex64> {
    let dims = net.dims();
    let out_len: u64 = net.open.iter().map(|&e| dims[e]).product();
    let mut out = vec![Complex64::new(0.0, 0.0); out_len as usize];
    let mut assign = vec![0u64; dims.len()];
    loop {
        let mut term = Complex64::new(1.0, 0.0);
        for (t, tensor) in net.tensors.iter().enumerate() {
            let mut off = 0u64;
            for &e in &tensor.indices {
                off = off * dims[e] + assign[e];
            }
            term *= values[t][off as usize];
        }
        let mut o = 0u64;
        for &e in &net.open {
            o = o * dims[e] + assign[e];
        }
        out[o as usize] += term;
        // Next assignment (odometer).
        let mut k = 0;
        loop {
            if k == dims.len() {
                return out;
            }
            assign[k] += 1;
            if assign[k] < dims[k] {
                break;
            }
            assign[k] = 0;
            k += 1;
        }
    }
}

/// Every tensor's values, materialised.
pub fn all_values(net: &Network) -> Vec<Vec<Complex64>> {
    (0..net.num_tensors())
        .map(|t| materialize(net, t).expect("test networks have values"))
        .collect()
}
