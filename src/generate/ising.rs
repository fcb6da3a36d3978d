//! The Ising model on a lattice as a bond-dimension-2 network whose value is
//! the partition function.
//!
//! With H = -J sum_bonds s s' - h sum_sites s and K = beta J, the Boltzmann
//! weight of a bond, W[s, s'] = e^{K s s'}, factorises as W = M M^T with
//! M[s, a] = sqrt(cosh K) for a = 0 and s * sqrt(sinh K) for a = 1 (spin
//! s = +1 at value 0, -1 at value 1). Each site tensor sums its spin out:
//! T[a1..ad] = sum_s e^{beta h s} prod_k M[s, ak], so contracting the bond
//! index between two sites gives back W. For K < 0, sqrt(sinh K) is
//! imaginary and the tensors are complex; their contraction is still real.

use num_complex::Complex64;

use super::lattice;
use crate::error::{Error, Result};
use crate::network::{Dtype, Network, Values};

/// Parameters of the Ising model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IsingParams {
    /// Inverse temperature.
    pub beta: f64,
    /// Coupling J of every bond.
    pub coupling: f64,
    /// External field h.
    pub field: f64,
}

/// The Ising partition function on a lattice of the given side lengths
/// (see [`lattice`] for names and the periodic rule).
///
/// ```
/// use sliceplan::generate::ising::{ising_lattice, IsingParams};
/// let p = IsingParams { beta: 0.4, coupling: 1.0, field: 0.0 };
/// let net = ising_lattice(&[4, 4], true, p).unwrap();
/// assert_eq!(net.num_indices(), 32);
/// ```
pub fn ising_lattice(shape: &[usize], periodic: bool, p: IsingParams) -> Result<Network> {
    let k = p.beta * p.coupling;
    if ![
        p.beta,
        p.coupling,
        p.field,
        k.cosh(),
        (p.beta * p.field).exp(),
    ]
    .iter()
    .all(|x| x.is_finite())
    {
        return Err(Error::invalid(
            "beta",
            "the inverse temperature, coupling and field must be finite and small enough for exp()",
        ));
    }
    let mut net = lattice(shape, 2, periodic)?;
    let m = [
        [
            Complex64::new(k.cosh().sqrt(), 0.0),
            Complex64::new(k.sinh(), 0.0).sqrt(),
        ],
        [
            Complex64::new(k.cosh().sqrt(), 0.0),
            -Complex64::new(k.sinh(), 0.0).sqrt(),
        ],
    ];
    let weight = [(p.beta * p.field).exp(), (-p.beta * p.field).exp()];
    for tensor in net.tensors.iter_mut() {
        let d = tensor.indices.len();
        let mut re = Vec::with_capacity(1 << d);
        let mut im = Vec::with_capacity(1 << d);
        for off in 0..1usize << d {
            let mut sum = Complex64::new(0.0, 0.0);
            for (s, w) in weight.iter().enumerate() {
                let prod: Complex64 = (0..d).map(|leg| m[s][off >> (d - 1 - leg) & 1]).product();
                sum += prod * w;
            }
            re.push(sum.re);
            im.push(sum.im);
        }
        let im = im.iter().any(|&x| x != 0.0).then_some(im);
        tensor.values = Some(Values::Inline { re, im });
    }
    net.name = format!(
        "Ising {} (beta {}, J {}, h {})",
        net.name, p.beta, p.coupling, p.field
    );
    net.dtype = Some(if k < 0.0 { Dtype::C128 } else { Dtype::F64 });
    Ok(net)
}
