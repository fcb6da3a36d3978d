//! OpenQASM 2.0 circuits (Cross, Bishop, Smolin and Gambetta, "Open Quantum
//! Assembly Language", arXiv:1707.03429, 2017) read into a [`Circuit`] and
//! turned into amplitude networks.
//!
//! Qubits are numbered by concatenating the `qreg` declarations in order, so
//! in `qreg a[2]; qreg b[1];` qubit 0 is `a[0]` and qubit 2 is `b[0]`. A
//! bitstring's leftmost character is qubit 0. Gate values are exact and
//! follow the textbook matrices of [`gates`] (e.g. `rz(θ)` is
//! diag(e^{-iθ/2}, e^{iθ/2}), not `u1(θ)`).

pub mod defs;
pub mod expr;
pub mod gates;
pub mod lexer;
pub mod parser;

use std::path::Path;

use crate::error::Result;
use crate::formats::circuit::{amplitude_network, AmplitudeSpec, Circuit};
use crate::network::Network;

/// Parses OpenQASM 2.0 text. `source` names it in errors; `name` becomes
/// the circuit's name.
pub fn parse_qasm(text: &str, source: &str, name: &str) -> Result<Circuit> {
    parser::check_version_first(text, source)?;
    let toks = lexer::tokenize(text, source)?;
    parser::Parser::new(lexer::Cursor::new(&toks, source)).program(name)
}

/// Reads an OpenQASM 2.0 file.
pub fn read_qasm(path: &Path) -> Result<Circuit> {
    let source = path.display().to_string();
    let text = crate::io::read_text(path)?;

    let name = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    parse_qasm(&text, &source, &name)
}

/// Reads an OpenQASM 2.0 file and builds the network `spec` asks for.
pub fn load_qasm(path: &Path, spec: &AmplitudeSpec) -> Result<Network> {
    amplitude_network(&read_qasm(path)?, spec)
}
