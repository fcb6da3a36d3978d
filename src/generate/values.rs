//! Attaching values to generated structures: seeded random tensors or ones.

use crate::network::{Dtype, Fill, Network, Values};

/// How to fill the tensors of a generated structure.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Filler {
    /// No values (structure only: enough for planning).
    None,
    /// Every element 1.
    Ones,
    /// Reproducible random complex values, uniform in [-1, 1) per part;
    /// tensor t draws from the seed [`tensor_seed`]`(seed, t)`.
    Random {
        /// The network's seed.
        seed: u64,
    },
}

/// The seed of tensor `t` in a network seeded with `seed` (a SplitMix64
/// step, so neighbouring tensors get unrelated streams).
pub fn tensor_seed(seed: u64, t: usize) -> u64 {
    let mut z = seed.wrapping_add((t as u64 + 1).wrapping_mul(0x9E37_79B9_7F4A_7C15));
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    (z ^ (z >> 31)) >> 1
}

/// Gives every tensor of `net` values from `filler` (random fills ask for
/// the c128 dtype, ones for f64).
pub fn fill(mut net: Network, filler: Filler) -> Network {
    for (t, tensor) in net.tensors.iter_mut().enumerate() {
        tensor.values = match filler {
            Filler::None => None,
            Filler::Ones => Some(Values::Fill(Fill::Ones)),
            Filler::Random { seed } => Some(Values::Fill(Fill::Random {
                seed: tensor_seed(seed, t),
            })),
        };
    }
    net.dtype = match filler {
        Filler::None => net.dtype,
        Filler::Ones => Some(Dtype::F64),
        Filler::Random { .. } => Some(Dtype::C128),
    };
    net
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn seeds_differ_per_tensor_and_fit_toml_integers() {
        let seeds: Vec<u64> = (0..100).map(|t| tensor_seed(7, t)).collect();
        let mut unique = seeds.clone();
        unique.sort_unstable();
        unique.dedup();
        assert_eq!(unique.len(), 100);
        // Native files store seeds as TOML integers (i64).
        assert!(seeds.iter().all(|&s| s <= i64::MAX as u64));
        let net = fill(
            crate::generate::matrix_chain(&[2, 3, 4]).unwrap(),
            Filler::Random { seed: 7 },
        );
        assert!(net.has_values());
    }
}
