//! Quantum circuits as flat lists of gates with exact matrices, and the
//! network of their amplitudes <x|C|0...0>.
//!
//! Qubits are numbered 0, 1, ...; a bitstring's leftmost character is qubit 0.
//! Each qubit starts in a one-index tensor `init<q>` holding |0> = (1, 0).
//! Each gate becomes one tensor `g<n>_<name>` whose legs are the gate's
//! qubits before the gate (in argument order), then the same qubits after
//! it; its values are the gate matrix transposed, so that element
//! (i1..ik, o1..ok) is <o|G|i>. The wire of qubit q between two gates is the
//! index `q<q>_<v>` (v counts the gates on q so far). At the end, a qubit is
//! either closed by a one-index tensor `out<q>` holding <0| = (1, 0) or
//! <1| = (0, 1), or its last wire index is left open.

use num_complex::Complex64;

use crate::error::{Error, Result};
use crate::network::{Dtype, Network, NetworkBuilder, Values};

/// One gate application.
#[derive(Debug, Clone, PartialEq)]
pub struct Gate {
    /// The gate's name (for tensor names and messages).
    pub name: String,
    /// The qubits it acts on, in argument order (distinct).
    pub qubits: Vec<usize>,
    /// Its 2^k x 2^k matrix, row-major, row = output state; the first
    /// qubit is the most significant bit.
    pub matrix: Vec<Complex64>,
}

/// A circuit: qubit labels and gates in time order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Circuit {
    /// A human-readable name.
    pub name: String,
    /// One label per qubit, e.g. `q[0]`, in qubit order.
    pub labels: Vec<String>,
    /// The gates, first applied first.
    pub gates: Vec<Gate>,
}

impl Circuit {
    /// Number of qubits.
    pub fn num_qubits(&self) -> usize {
        self.labels.len()
    }
}

/// Which qubits are left open in an amplitude network.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum OpenQubits {
    /// Every qubit: the network's value is the whole state vector.
    All,
    /// These qubits, in this output order.
    List(Vec<usize>),
}

impl OpenQubits {
    /// Parses `all` or a comma-separated list of qubit numbers (`0,3,5`).
    pub fn parse(text: &str) -> std::result::Result<OpenQubits, String> {
        if text.trim() == "all" {
            return Ok(OpenQubits::All);
        }
        let mut list = Vec::new();
        for item in text.split(',').map(str::trim) {
            let q: usize = item.parse().map_err(|_| {
                format!("'{item}' is not a qubit number; give `all` or numbers such as 0,3,5")
            })?;
            if list.contains(&q) {
                return Err(format!("qubit {q} is listed twice"));
            }
            list.push(q);
        }
        Ok(OpenQubits::List(list))
    }
}

/// What an amplitude network computes: the output bits of the closed
/// qubits, and which qubits stay open.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct AmplitudeSpec {
    /// `0`/`1` per qubit, leftmost = qubit 0; `None` means all zeros.
    /// Characters at open qubits are ignored.
    pub bitstring: Option<String>,
    /// Qubits left open, if any.
    pub open: Option<OpenQubits>,
}

impl AmplitudeSpec {
    /// Checks the characters of the bitstring (its length needs the circuit).
    pub fn validate(&self) -> std::result::Result<(), String> {
        if let Some(bits) = &self.bitstring {
            if let Some(bad) = bits.chars().find(|&ch| ch != '0' && ch != '1') {
                return Err(format!(
                    "the bitstring may hold only 0 and 1 (leftmost = qubit 0), found {bad:?}"
                ));
            }
        }
        Ok(())
    }

    /// The output bit of every qubit and the open qubits in output order.
    fn resolve(&self, c: &Circuit) -> Result<(Vec<u8>, Vec<usize>)> {
        self.validate()
            .map_err(|m| Error::invalid("bitstring", m))?;
        let n = c.num_qubits();
        let bits: Vec<u8> = match &self.bitstring {
            None => vec![0; n],
            Some(s) => {
                let bits: Vec<u8> = s.bytes().map(|b| b - b'0').collect();
                if bits.len() != n {
                    return Err(Error::invalid("bitstring", format!(
                        "the bitstring has {} characters but '{}' has {n} qubits; give one 0/1 per qubit, leftmost = qubit 0 ({}), qubits numbered across registers in declaration order",
                        bits.len(),
                        c.name,
                        c.labels.first().map(String::as_str).unwrap_or("none")
                    )));
                }
                bits
            }
        };
        let open = match &self.open {
            None => Vec::new(),
            Some(OpenQubits::All) => (0..n).collect(),
            Some(OpenQubits::List(list)) => {
                if let Some(&q) = list.iter().find(|&&q| q >= n) {
                    return Err(Error::invalid(
                        "open",
                        format!(
                            "qubit {q} does not exist; '{}' has qubits 0..{}",
                            c.name,
                            n.saturating_sub(1)
                        ),
                    ));
                }
                list.clone()
            }
        };
        Ok((bits, open))
    }
}

fn real_values(v: &[f64]) -> Values {
    Values::Inline {
        re: v.to_vec(),
        im: None,
    }
}

/// Values of a gate tensor: the matrix transposed (inputs first), with the
/// imaginary parts left out when they are all zero.
fn gate_values(g: &Gate) -> Values {
    let n = 1usize << g.qubits.len();
    let mut re = Vec::with_capacity(n * n);
    let mut im = Vec::with_capacity(n * n);
    for i in 0..n {
        for o in 0..n {
            let z = g.matrix[o * n + i];
            re.push(z.re);
            im.push(z.im);
        }
    }
    let im = im.iter().any(|&x| x != 0.0).then_some(im);
    Values::Inline { re, im }
}

/// The network of <x|C|0...0> (or, with open qubits, of the slice of the
/// final state with the closed qubits fixed to their bits). Its dtype is
/// c128 and every tensor carries exact values.
pub fn amplitude_network(c: &Circuit, spec: &AmplitudeSpec) -> Result<Network> {
    let (bits, open) = spec.resolve(c)?;
    let n = c.num_qubits();
    if n == 0 {
        return Err(Error::in_source(
            &c.name,
            "the circuit has no qubits; declare a register with `qreg q[2];`",
        ));
    }
    let mut b = NetworkBuilder::new(&c.name);
    let what = if open.len() == n {
        "state vector".to_string()
    } else {
        let mut is_open = vec![false; n];
        for &q in &open {
            is_open[q] = true;
        }
        // Wide circuits name only the first 64 qubits' bits.
        let shown: String = bits
            .iter()
            .take(64)
            .enumerate()
            .map(|(q, &x)| if is_open[q] { '*' } else { (b'0' + x) as char })
            .collect();
        let more = if n > 64 { "..." } else { "" };
        format!("amplitude <{shown}{more}|")
    };
    b.name(format!("{} {what}", c.name));
    b.dtype(Dtype::C128);
    let mut wire = Vec::with_capacity(n);
    let mut version = vec![0usize; n];
    for q in 0..n {
        let e = b.index(&format!("q{q}_0"), 2)?;
        b.tensor_by_ids(&format!("init{q}"), vec![e], Some(real_values(&[1.0, 0.0])))?;
        wire.push(e);
    }
    for (k, g) in c.gates.iter().enumerate() {
        let mut legs: Vec<usize> = g.qubits.iter().map(|&q| wire[q]).collect();
        for &q in &g.qubits {
            version[q] += 1;
            let e = b.index(&format!("q{q}_{}", version[q]), 2)?;
            legs.push(e);
            wire[q] = e;
        }
        b.tensor_by_ids(&format!("g{k}_{}", g.name), legs, Some(gate_values(g)))?;
    }
    for q in 0..n {
        if !open.contains(&q) {
            let v = if bits[q] == 0 { [1.0, 0.0] } else { [0.0, 1.0] };
            b.tensor_by_ids(&format!("out{q}"), vec![wire[q]], Some(real_values(&v)))?;
        }
    }
    for &q in &open {
        b.open(&format!("q{q}_{}", version[q]), None)?;
    }
    b.build()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn bell() -> Circuit {
        let h = crate::formats::qasm::gates::matrix("h", &[]);
        let cx = crate::formats::qasm::gates::matrix("cx", &[]);
        Circuit {
            name: "bell".into(),
            labels: vec!["q[0]".into(), "q[1]".into()],
            gates: vec![
                Gate {
                    name: "h".into(),
                    qubits: vec![0],
                    matrix: h,
                },
                Gate {
                    name: "cx".into(),
                    qubits: vec![0, 1],
                    matrix: cx,
                },
            ],
        }
    }

    #[test]
    fn structure_of_a_bell_pair() {
        let net = amplitude_network(&bell(), &AmplitudeSpec::default()).unwrap();
        // 2 init + 2 gates + 2 out tensors; wires q0_0, q1_0, q0_1, q0_2, q1_1.
        assert_eq!(net.num_tensors(), 6);
        assert_eq!(net.num_indices(), 5);
        let spec = AmplitudeSpec {
            bitstring: None,
            open: Some(OpenQubits::parse("1").unwrap()),
        };
        let net = amplitude_network(&bell(), &spec).unwrap();
        assert_eq!(net.open, vec![net.index_id("q1_1").unwrap()]);
    }

    #[test]
    fn bad_specs_are_usage_errors() {
        let spec = AmplitudeSpec {
            bitstring: Some("011".into()),
            open: None,
        };
        let e = amplitude_network(&bell(), &spec).unwrap_err();
        assert!(e
            .to_string()
            .contains("has 3 characters but 'bell' has 2 qubits"));
        assert!(OpenQubits::parse("0,x").is_err());
        assert!(OpenQubits::parse("1,1").is_err());
        let spec = AmplitudeSpec {
            bitstring: None,
            open: Some(OpenQubits::List(vec![5])),
        };
        assert!(amplitude_network(&bell(), &spec).is_err());
    }
}
