//! Which arithmetic a plan runs in, and whether its result is exact.
//!
//! # Counting networks
//!
//! A network is a *counting network* when every value is a whole number
//! (every real part, with all imaginary parts 0): CNF model counts and the
//! graph counting problems (independent sets, colourings, perfect
//! matchings) build such networks, and so does any network of whole-number
//! weights. Nothing marks them: the values are checked
//! ([`analyse`]), so an imported file, a generated one and a hand-written
//! one are treated alike.
//!
//! For such a network the result is bounded: every intermediate entry, and
//! every partial sum of the contraction, is at most
//!
//! ```text
//! B = prod over tensors of max(1, max |entry|) x prod over closed indices of the dimension
//! ```
//!
//! (the sum of the absolute values of all terms of the full expansion).
//! Hence ([`Numerics::for_network`]):
//!
//! * `B <= 2^24` (f32 parts) or `B <= 2^53` (f64 parts): floating point is
//!   exact already, since every sum it forms is a whole number below the
//!   mantissa's reach (rescaling by powers of two changes no mantissa bit);
//! * otherwise, entries from 0 to 2^20 and an element type of at least 8
//!   bytes: residues modulo enough primes below 2^21 ([`super::modular`]);
//! * otherwise (larger or negative entries, or f32): floating point, and the
//!   result says it is not exact.
//!
//! Other networks use floating point with power-of-two exponents
//! ([`super::scale`]).

use serde::Serialize;

use super::modular::{primes_for, MAX_ENTRY};
use crate::error::Result;
use crate::network::{values::materialize, Dtype, Fill, Network, Values};
use crate::partial::Arithmetic;

/// What the values of a network are, for exact counting.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Integers {
    /// Some value is not a whole number (or has an imaginary part).
    No,
    /// Every value is a whole number.
    Yes {
        /// log2 of the bound `B` on every sum (see the module documentation).
        bound_log2: f64,
        /// Every entry lies in `0..=2^20` ([`MAX_ENTRY`]).
        small_non_negative: bool,
    },
}

/// Checks the values of every tensor of `net` (materialising each in turn).
///
/// Time O(total input elements); memory one tensor at a time.
pub fn analyse(net: &Network) -> Result<Integers> {
    let mut bound_log2 = 0.0f64;
    let mut small = true;
    for t in 0..net.num_tensors() {
        let max = match &net.tensors[t].values {
            Some(Values::Fill(Fill::Ones | Fill::Copy)) => 1.0,
            Some(Values::Fill(Fill::Random { .. })) => return Ok(Integers::No),
            _ => {
                let mut max = 0.0f64;
                for z in materialize(net, t)? {
                    if z.im != 0.0 || !z.re.is_finite() || z.re.fract() != 0.0 {
                        return Ok(Integers::No);
                    }
                    small &= (0.0..=MAX_ENTRY).contains(&z.re);
                    max = max.max(z.re.abs());
                }
                max
            }
        };
        bound_log2 += max.max(1.0).log2();
    }
    let open = net.open_mask();
    bound_log2 += net
        .indices
        .iter()
        .enumerate()
        .filter(|(e, _)| !open[*e])
        .map(|(_, i)| (i.dim as f64).log2())
        .sum::<f64>();
    Ok(Integers::Yes {
        bound_log2,
        small_non_negative: small,
    })
}

/// The arithmetic of a run and what its result is worth.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Numerics {
    /// The arithmetic partials are computed and stored in.
    pub arithmetic: Arithmetic,
    /// Floating point with power-of-two rescaling (always, except in the
    /// benchmark's unscaled baseline).
    pub scaled: bool,
    /// True when every value of the network is a whole number.
    pub integers: bool,
    /// log2 of the proven bound on the result, for whole-number networks.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bound_log2: Option<f64>,
    /// True when the result is exact (a whole-number network computed
    /// without rounding).
    pub exact: bool,
    /// Why a whole-number result is not exact, e.g. "not exact: f64 holds
    /// 53 bits".
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// Bits of the mantissa of a dtype's parts.
pub fn mantissa_bits(dtype: Dtype) -> u32 {
    match dtype {
        Dtype::F32 | Dtype::C64 => 24,
        Dtype::F64 | Dtype::C128 => 53,
    }
}

/// The name of a dtype's part type.
fn part_name(dtype: Dtype) -> &'static str {
    match dtype {
        Dtype::F32 | Dtype::C64 => "f32",
        Dtype::F64 | Dtype::C128 => "f64",
    }
}

impl Numerics {
    /// Plain scaled floating point (networks that are not counting networks).
    pub fn float() -> Numerics {
        Numerics {
            arithmetic: Arithmetic::Float,
            scaled: true,
            integers: false,
            bound_log2: None,
            exact: false,
            note: None,
        }
    }

    /// The choice for values `integers` computed in `dtype` (see the module
    /// documentation).
    pub fn choose(dtype: Dtype, integers: Integers) -> Numerics {
        let Integers::Yes {
            bound_log2,
            small_non_negative,
        } = integers
        else {
            return Numerics::float();
        };
        let bits = mantissa_bits(dtype);
        let mut n = Numerics {
            integers: true,
            bound_log2: Some(bound_log2),
            ..Numerics::float()
        };
        // A small margin keeps a bound rounded in log2 on the safe side.
        if bound_log2 <= bits as f64 - 1e-9 {
            n.exact = true;
        } else if small_non_negative && dtype.bytes() >= 8 {
            n.arithmetic = Arithmetic::Modular {
                primes: primes_for(bound_log2),
            };
            n.exact = true;
        } else {
            let why = if dtype.bytes() < 8 {
                format!("; plan with dtype f64 for an exact count (the bound is 2^{bound_log2:.1})")
            } else {
                "; exact counting takes whole-number entries from 0 to 2^20".to_string()
            };
            n.note = Some(format!(
                "not exact: {} holds {bits} bits{why}",
                part_name(dtype)
            ));
        }
        n
    }

    /// The choice for `net` computed in `dtype`.
    pub fn for_network(net: &Network, dtype: Dtype) -> Result<Numerics> {
        Ok(Numerics::choose(dtype, analyse(net)?))
    }

    /// One line for people, e.g. "exact: residues modulo 6 primes below 2^21".
    pub fn describe(&self) -> String {
        match (&self.arithmetic, self.exact) {
            (Arithmetic::Modular { primes }, _) => format!(
                "exact: whole numbers as residues modulo {} primes below 2^21 (bound 2^{:.1}), rebuilt by the Chinese remainder theorem",
                primes.len(),
                self.bound_log2.unwrap_or(0.0)
            ),
            (Arithmetic::Float, true) => format!(
                "exact: whole numbers below the proven bound 2^{:.1} are exact in floating point",
                self.bound_log2.unwrap_or(0.0)
            ),
            (Arithmetic::Float, false) => {
                let mut s = String::from("floating point with power-of-two exponents");
                if let Some(note) = &self.note {
                    s.push_str(&format!(" ({note})"));
                }
                s
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::network::NetworkBuilder;

    fn net(values: &[f64]) -> Network {
        let mut b = NetworkBuilder::new("t");
        b.declare("i", values.len() as u64, None).unwrap();
        b.declare("j", 3, None).unwrap();
        let re = values.to_vec();
        b.tensor("A", &["i"], Some(Values::Inline { re, im: None }), None)
            .unwrap();
        b.tensor("B", &["i", "j"], Some(Values::Fill(Fill::Ones)), None)
            .unwrap();
        b.open("j", None).unwrap();
        b.build().unwrap()
    }

    #[test]
    fn whole_numbers_and_their_bound() {
        // Max entries 5 and 1, closed index i of dimension 4: B = 5 x 4 = 20.
        let got = analyse(&net(&[0.0, 5.0, 2.0, 1.0])).unwrap();
        let Integers::Yes {
            bound_log2,
            small_non_negative,
        } = got
        else {
            panic!("{got:?}")
        };
        assert!((bound_log2 - 20f64.log2()).abs() < 1e-12);
        assert!(small_non_negative);
        assert_eq!(analyse(&net(&[0.5, 1.0])).unwrap(), Integers::No);
        assert!(matches!(
            analyse(&net(&[-2.0, 1.0])).unwrap(),
            Integers::Yes {
                small_non_negative: false,
                ..
            }
        ));
    }

    #[test]
    fn choice_by_bound_and_dtype() {
        let small = Integers::Yes {
            bound_log2: 40.0,
            small_non_negative: true,
        };
        let big = Integers::Yes {
            bound_log2: 121.0,
            small_non_negative: true,
        };
        let n = Numerics::choose(Dtype::F64, small);
        assert_eq!((n.arithmetic, n.exact), (Arithmetic::Float, true));
        let n = Numerics::choose(Dtype::F64, big);
        assert!(n.exact);
        // 6 primes just below 2^21 give about 126 bits > 122.
        assert!(matches!(n.arithmetic, Arithmetic::Modular { ref primes } if primes.len() == 6));
        let n = Numerics::choose(Dtype::F32, small);
        assert_eq!((n.arithmetic, n.exact), (Arithmetic::Float, false));
        assert!(n.note.unwrap().starts_with("not exact: f32 holds 24 bits"));
        let n = Numerics::choose(Dtype::C64, big);
        assert!(matches!(n.arithmetic, Arithmetic::Modular { .. }));
        assert_eq!(
            Numerics::choose(Dtype::F64, Integers::No),
            Numerics::float()
        );
    }
}
