//! The built-in gate library: exact matrices of `U`, `CX`, the gates of the
//! OpenQASM 2.0 paper's `qelib1.inc` (Cross et al. 2017) and a few common
//! additions found in public circuit files.
//!
//! Every matrix is the gate's textbook definition (Nielsen and Chuang, ch. 4),
//! not the expansion of its `qelib1.inc` text: the two differ by a global
//! phase for `rz`, `sx`, `sxdg`, `ch`, `rxx` and `rzz`, and for `cu3` the
//! paper's text is not even controlled-U3 (see `docs/inputs.md`). Matrices
//! are row-major, row = output basis state; the gate's first qubit argument
//! is the most significant bit of the row and column numbers.

use num_complex::Complex64 as C;

/// Where a built-in gate comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Origin {
    /// `U` and `CX`, part of the language itself.
    Language,
    /// Defined in the paper's `qelib1.inc`.
    Qelib1,
    /// A common addition, not in the paper's `qelib1.inc`; a file may define
    /// its own gate of this name instead.
    Extra,
}

/// A built-in gate's signature.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Builtin {
    /// The gate's name.
    pub name: &'static str,
    /// Number of real parameters.
    pub params: usize,
    /// Number of qubit arguments.
    pub qubits: usize,
    /// Where it comes from.
    pub origin: Origin,
}

const fn g(name: &'static str, params: usize, qubits: usize, origin: Origin) -> Builtin {
    Builtin {
        name,
        params,
        qubits,
        origin,
    }
}

use Origin::{Extra, Language, Qelib1};

/// Every built-in gate.
pub const LIBRARY: &[Builtin] = &[
    g("U", 3, 1, Language),
    g("CX", 0, 2, Language),
    g("u3", 3, 1, Qelib1),
    g("u2", 2, 1, Qelib1),
    g("u1", 1, 1, Qelib1),
    g("cx", 0, 2, Qelib1),
    g("id", 0, 1, Qelib1),
    g("x", 0, 1, Qelib1),
    g("y", 0, 1, Qelib1),
    g("z", 0, 1, Qelib1),
    g("h", 0, 1, Qelib1),
    g("s", 0, 1, Qelib1),
    g("sdg", 0, 1, Qelib1),
    g("t", 0, 1, Qelib1),
    g("tdg", 0, 1, Qelib1),
    g("rx", 1, 1, Qelib1),
    g("ry", 1, 1, Qelib1),
    g("rz", 1, 1, Qelib1),
    g("cz", 0, 2, Qelib1),
    g("cy", 0, 2, Qelib1),
    g("ch", 0, 2, Qelib1),
    g("ccx", 0, 3, Qelib1),
    g("crz", 1, 2, Qelib1),
    g("cu1", 1, 2, Qelib1),
    g("cu3", 3, 2, Qelib1),
    g("u0", 1, 1, Extra),
    g("u", 3, 1, Extra),
    g("p", 1, 1, Extra),
    g("sx", 0, 1, Extra),
    g("sxdg", 0, 1, Extra),
    g("swap", 0, 2, Extra),
    g("cswap", 0, 3, Extra),
    g("crx", 1, 2, Extra),
    g("cry", 1, 2, Extra),
    g("cp", 1, 2, Extra),
    g("csx", 0, 2, Extra),
    g("cu", 4, 2, Extra),
    g("rxx", 1, 2, Extra),
    g("rzz", 1, 2, Extra),
    g("c3x", 0, 4, Extra),
    g("c3sqrtx", 0, 4, Extra),
    g("c4x", 0, 5, Extra),
];

/// Looks a built-in gate up by name (names are case-sensitive).
pub fn lookup(name: &str) -> Option<&'static Builtin> {
    LIBRARY.iter().find(|b| b.name == name)
}

fn c(re: f64, im: f64) -> C {
    C::new(re, im)
}

fn cis(phi: f64) -> C {
    C::from_polar(1.0, phi)
}

/// The general single-qubit gate U(θ, φ, λ) of the OpenQASM 2.0 paper.
fn u3(theta: f64, phi: f64, lambda: f64) -> Vec<C> {
    let (s, co) = (theta / 2.0).sin_cos();
    vec![
        c(co, 0.0),
        -cis(lambda) * s,
        cis(phi) * s,
        cis(phi + lambda) * co,
    ]
}

fn diag(d: &[C]) -> Vec<C> {
    let n = d.len();
    let mut m = vec![c(0.0, 0.0); n * n];
    for (k, &x) in d.iter().enumerate() {
        m[k * n + k] = x;
    }
    m
}

/// The identity on `k` qubits with the block for "all controls 1" replaced
/// by `u` (a matrix on the remaining qubits): controls come first.
fn controlled(controls: u32, u: &[C]) -> Vec<C> {
    let d = (u.len() as f64).sqrt() as usize;
    let n = d << controls;
    let mut m = diag(&vec![c(1.0, 0.0); n]);
    let off = n - d;
    for r in 0..d {
        for col in 0..d {
            m[(off + r) * n + off + col] = u[r * d + col];
        }
    }
    m
}

const X: [f64; 4] = [0.0, 1.0, 1.0, 0.0];

fn real(m: &[f64]) -> Vec<C> {
    m.iter().map(|&x| c(x, 0.0)).collect()
}

fn hadamard() -> Vec<C> {
    let r = std::f64::consts::FRAC_1_SQRT_2;
    real(&[r, r, r, -r])
}

fn sqrt_x(sign: f64) -> Vec<C> {
    // sqrt(X) = (1/2)[[1+i, 1-i], [1-i, 1+i]]; its inverse conjugates.
    let (a, b) = (c(0.5, 0.5 * sign), c(0.5, -0.5 * sign));
    vec![a, b, b, a]
}

/// The matrix of built-in gate `name` with parameter values `p` (as many as
/// [`Builtin::params`]). Panics on a name not in [`LIBRARY`].
pub fn matrix(name: &str, p: &[f64]) -> Vec<C> {
    use std::f64::consts::PI;
    let one = c(1.0, 0.0);
    match name {
        "U" | "u3" | "u" => u3(p[0], p[1], p[2]),
        "u2" => u3(PI / 2.0, p[0], p[1]),
        "u1" | "p" => diag(&[one, cis(p[0])]),
        "CX" | "cx" => controlled(1, &real(&X)),
        "id" | "u0" => diag(&[one, one]),
        "x" => real(&X),
        "y" => vec![c(0.0, 0.0), c(0.0, -1.0), c(0.0, 1.0), c(0.0, 0.0)],
        "z" => diag(&[one, -one]),
        "h" => hadamard(),
        "s" => diag(&[one, c(0.0, 1.0)]),
        "sdg" => diag(&[one, c(0.0, -1.0)]),
        "t" => diag(&[one, cis(PI / 4.0)]),
        "tdg" => diag(&[one, cis(-PI / 4.0)]),
        "rx" => u3(p[0], -PI / 2.0, PI / 2.0),
        "ry" => u3(p[0], 0.0, 0.0),
        "rz" => diag(&[cis(-p[0] / 2.0), cis(p[0] / 2.0)]),
        "sx" => sqrt_x(1.0),
        "sxdg" => sqrt_x(-1.0),
        "cz" => controlled(1, &matrix("z", &[])),
        "cy" => controlled(1, &matrix("y", &[])),
        "ch" => controlled(1, &hadamard()),
        "ccx" => controlled(2, &real(&X)),
        "crz" => controlled(1, &matrix("rz", p)),
        "crx" => controlled(1, &matrix("rx", p)),
        "cry" => controlled(1, &matrix("ry", p)),
        "cu1" | "cp" => controlled(1, &matrix("p", p)),
        "cu3" => controlled(1, &u3(p[0], p[1], p[2])),
        "cu" => {
            let u: Vec<C> = u3(p[0], p[1], p[2])
                .iter()
                .map(|&z| z * cis(p[3]))
                .collect();
            controlled(1, &u)
        }
        "csx" => controlled(1, &sqrt_x(1.0)),
        "swap" => real(&[
            1.0, 0.0, 0.0, 0.0, //
            0.0, 0.0, 1.0, 0.0, //
            0.0, 1.0, 0.0, 0.0, //
            0.0, 0.0, 0.0, 1.0,
        ]),
        "cswap" => controlled(1, &matrix("swap", &[])),
        "rxx" => {
            // exp(-iθ X⊗X / 2) = cos(θ/2) I - i sin(θ/2) X⊗X.
            let (s, co) = (p[0] / 2.0).sin_cos();
            let mut m = diag(&[c(co, 0.0); 4]);
            for r in 0..4 {
                m[r * 4 + (3 - r)] = c(0.0, -s);
            }
            m
        }
        "rzz" => {
            // exp(-iθ Z⊗Z / 2): e^{-iθ/2} where the bits agree, e^{iθ/2} elsewhere.
            let (a, b) = (cis(-p[0] / 2.0), cis(p[0] / 2.0));
            diag(&[a, b, b, a])
        }
        "c3x" => controlled(3, &real(&X)),
        "c3sqrtx" => controlled(3, &sqrt_x(1.0)),
        "c4x" => controlled(4, &real(&X)),
        other => panic!("'{other}' is not a built-in gate"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    fn close(a: &[C], b: &[C]) -> bool {
        a.len() == b.len() && a.iter().zip(b).all(|(x, y)| (x - y).norm() < 1e-14)
    }

    fn mul(a: &[C], b: &[C]) -> Vec<C> {
        let n = (a.len() as f64).sqrt() as usize;
        let mut m = vec![C::new(0.0, 0.0); n * n];
        for i in 0..n {
            for k in 0..n {
                for j in 0..n {
                    m[i * n + j] += a[i * n + k] * b[k * n + j];
                }
            }
        }
        m
    }

    fn dagger(a: &[C]) -> Vec<C> {
        let n = (a.len() as f64).sqrt() as usize;
        (0..n * n).map(|k| a[(k % n) * n + k / n].conj()).collect()
    }

    #[test]
    fn every_gate_is_unitary_with_the_declared_size() {
        let params = [0.3, -1.1, 2.5, 0.7];
        for b in LIBRARY {
            let m = matrix(b.name, &params[..b.params]);
            let n = 1usize << b.qubits;
            assert_eq!(m.len(), n * n, "{}", b.name);
            let id = matrix("id", &[]);
            let want = (0..b.qubits).fold(vec![C::new(1.0, 0.0)], |acc, _| kron(&acc, &id));
            assert!(close(&mul(&m, &dagger(&m)), &want), "{} is unitary", b.name);
        }
    }

    fn kron(a: &[C], b: &[C]) -> Vec<C> {
        let (na, nb) = (
            (a.len() as f64).sqrt() as usize,
            (b.len() as f64).sqrt() as usize,
        );
        let n = na * nb;
        let mut m = vec![C::new(0.0, 0.0); n * n];
        for i in 0..n {
            for j in 0..n {
                m[i * n + j] = a[(i / nb) * na + j / nb] * b[(i % nb) * nb + j % nb];
            }
        }
        m
    }

    #[test]
    fn textbook_identities() {
        // Nielsen and Chuang ch. 4: HXH = Z, S^2 = Z, T^2 = S, SX^2 = X,
        // and U(θ,φ,λ) reproduces X, Y, H as the paper's qelib1.inc says.
        let h = matrix("h", &[]);
        assert!(close(
            &mul(&mul(&h, &matrix("x", &[])), &h),
            &matrix("z", &[])
        ));
        let s = matrix("s", &[]);
        assert!(close(&mul(&s, &s), &matrix("z", &[])));
        let t = matrix("t", &[]);
        assert!(close(&mul(&t, &t), &s));
        let sx = matrix("sx", &[]);
        assert!(close(&mul(&sx, &sx), &matrix("x", &[])));
        assert!(close(&mul(&sx, &matrix("sxdg", &[])), &matrix("id", &[])));
        assert!(close(&u3(PI, 0.0, PI), &matrix("x", &[])));
        assert!(close(&u3(PI, PI / 2.0, PI / 2.0), &matrix("y", &[])));
        assert!(close(&matrix("u2", &[0.0, PI]), &h));
        // rz(θ) = e^{-iθ/2} u1(θ) (corpus README: global phase only).
        let th = 0.77;
        let shifted: Vec<C> = matrix("u1", &[th])
            .iter()
            .map(|&z| z * cis(-th / 2.0))
            .collect();
        assert!(close(&matrix("rz", &[th]), &shifted));
        // rzz(θ) = CX (I ⊗ rz(θ)) CX.
        let cx = matrix("cx", &[]);
        let mid = kron(&matrix("id", &[]), &matrix("rz", &[th]));
        assert!(close(&matrix("rzz", &[th]), &mul(&mul(&cx, &mid), &cx)));
        // SWAP = CX(a,b) CX(b,a) CX(a,b); CX(b,a) = (H⊗H) CX (H⊗H).
        let hh = kron(&h, &h);
        let xc = mul(&mul(&hh, &cx), &hh);
        assert!(close(&matrix("swap", &[]), &mul(&mul(&cx, &xc), &cx)));
    }

    #[test]
    fn controls_are_the_leading_qubits() {
        // CX with control = first argument maps |10> to |11> (row 3, column 2).
        let cx = matrix("cx", &[]);
        assert_eq!(cx[3 * 4 + 2], C::new(1.0, 0.0));
        assert_eq!(cx[2 * 4 + 2], C::new(0.0, 0.0));
        // Toffoli flips only |110> <-> |111>.
        let ccx = matrix("ccx", &[]);
        assert_eq!(ccx[7 * 8 + 6], C::new(1.0, 0.0));
        assert_eq!(ccx[5 * 8 + 5], C::new(1.0, 0.0));
    }
}
