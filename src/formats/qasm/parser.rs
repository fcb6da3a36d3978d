//! The statements of an OpenQASM 2.0 program, read into a [`Circuit`].
//!
//! Accepted: the `OPENQASM 2.0;` header (optional, first if present),
//! `include "qelib1.inc";`, `qreg`/`creg` (any number), `gate` definitions,
//! gate calls with register broadcast, `barrier` (ignored) and `measure`
//! (ignored, as long as no gate follows it on the measured qubit). Refused
//! with a 'not supported' message naming the line: `opaque`, `reset`, `if`,
//! mid-circuit measurement, includes other than `qelib1.inc`, and any
//! OpenQASM version but 2.x (checked before the rest of the file is read).
//! A circuit needs at least one qubit and at most [`MAX_QUBITS`].

use super::defs::{check_arity, repeated, GateTable, MAX_QUBITS};
use super::expr::parse_expr;
use super::lexer::{tokenize, Cursor, Tok};
use crate::error::Result;
use crate::formats::circuit::{Circuit, Gate};

/// The refusal of OpenQASM version `version`, unless it is 2.x.
fn unsupported_version(version: f64) -> Option<String> {
    (!(2.0..3.0).contains(&version)).then(|| {
        format!("not supported: OpenQASM version {version}; this reader understands OpenQASM 2.0")
    })
}

/// Refuses a file whose first statement is an `OPENQASM` header with a
/// version other than 2.x, looking only at that statement (after blank and
/// comment lines). The whole file is tokenized later; without this check an
/// OpenQASM 3 file would fail on the first character OpenQASM 2.0 lacks
/// (`c = measure q;`) instead of on its header.
pub fn check_version_first(text: &str, source: &str) -> Result<()> {
    let mut start = 0usize;
    for line in text.split_inclusive('\n') {
        let code = line.split("//").next().unwrap_or_default();
        if code.trim().is_empty() {
            start += line.len();
            continue;
        }
        if !code.trim_start().starts_with("OPENQASM") {
            return Ok(());
        }
        // Up to the header's ';' (or the end of its line): what follows
        // may use syntax this lexer refuses.
        let end = start + code.find(';').map_or(code.len(), |k| k + 1);
        let Ok(toks) = tokenize(&text[..end], source) else {
            return Ok(());
        };
        if let [first, version, ..] = toks.as_slice() {
            let v = match version.tok {
                Tok::Real(x) => x,
                Tok::Int(n) => n as f64,
                _ => return Ok(()),
            };
            if first.tok == Tok::Ident("OPENQASM".into()) {
                if let Some(m) = unsupported_version(v) {
                    return Err(crate::Error::at_line(source, version.line, m));
                }
            }
        }
        return Ok(());
    }
    Ok(())
}

/// A declared register.
#[derive(Debug, Clone)]
struct Register {
    name: String,
    size: usize,
    /// Number of the register's first qubit (quantum registers only).
    offset: usize,
}

/// A qubit or bit argument: one element, or a whole register.
#[derive(Debug, Clone, Copy)]
enum Arg {
    One(usize),
    Whole { offset: usize, size: usize },
}

impl Arg {
    fn size(self) -> Option<usize> {
        match self {
            Arg::One(_) => None,
            Arg::Whole { size, .. } => Some(size),
        }
    }

    fn at(self, k: usize) -> usize {
        match self {
            Arg::One(q) => q,
            Arg::Whole { offset, .. } => offset + k,
        }
    }
}

/// Reads a whole program.
pub struct Parser<'a> {
    cur: Cursor<'a>,
    qregs: Vec<Register>,
    cregs: Vec<Register>,
    table: GateTable,
    gates: Vec<Gate>,
    /// Per qubit, the line of its first measurement.
    measured: Vec<Option<usize>>,
    statements: usize,
}

impl<'a> Parser<'a> {
    /// A parser over tokens from [`super::lexer::tokenize`].
    pub fn new(cur: Cursor<'a>) -> Self {
        Parser {
            cur,
            qregs: Vec::new(),
            cregs: Vec::new(),
            table: GateTable::default(),
            gates: Vec::new(),
            measured: Vec::new(),
            statements: 0,
        }
    }

    /// Reads every statement and returns the circuit named `name`.
    pub fn program(mut self, name: &str) -> Result<Circuit> {
        while self.cur.peek() != &Tok::Eof {
            self.statement()?;
            self.statements += 1;
        }
        if self.qregs.is_empty() {
            return Err(crate::Error::in_source(
                self.cur.source,
                "the circuit has no qubits; declare a register with `qreg q[2];`",
            ));
        }
        let mut labels = Vec::new();
        for r in &self.qregs {
            for k in 0..r.size {
                labels.push(format!("{}[{k}]", r.name));
            }
        }
        Ok(Circuit {
            name: name.to_string(),
            labels,
            gates: self.gates,
        })
    }

    fn not_supported(&self, what: &str) -> crate::Error {
        self.cur.error(format!("not supported: {what}"))
    }

    fn statement(&mut self) -> Result<()> {
        let word = match self.cur.peek() {
            Tok::Ident(w) => w.clone(),
            other => {
                return Err(self.cur.error(format!(
                "expected a statement (qreg, creg, gate, a gate call, measure, barrier), found {}",
                other.describe()
            )))
            }
        };
        match word.as_str() {
            "OPENQASM" => self.header(),
            "include" => self.include(),
            "qreg" | "creg" => self.register(word == "qreg"),
            "gate" => {
                self.cur.bump();
                self.table.define(&mut self.cur)
            }
            "opaque" => Err(self.not_supported(
                "'opaque' gate declarations (a gate without a body has no matrix); define the gate with `gate`",
            )),
            "reset" => Err(self.not_supported(
                "'reset' (not unitary); amplitudes need a unitary circuit",
            )),
            "if" => Err(self.not_supported(
                "classically controlled 'if' statements (not unitary); amplitudes need a unitary circuit",
            )),
            "measure" => self.measure(),
            "barrier" => {
                self.cur.bump();
                self.arg_list()?;
                self.cur.expect(";", "after the barrier's qubits")
            }
            _ => self.call(),
        }
    }

    fn header(&mut self) -> Result<()> {
        if self.statements > 0 {
            return Err(self
                .cur
                .error("'OPENQASM 2.0;' must be the first statement of the file"));
        }
        self.cur.bump();
        let line = self.cur.line();
        let version = match self.cur.bump() {
            Tok::Real(x) => *x,
            Tok::Int(n) => *n as f64,
            other => {
                return Err(self.cur.error(format!(
                    "expected a version number after OPENQASM, found {}",
                    other.describe()
                )))
            }
        };
        if let Some(m) = unsupported_version(version) {
            return Err(crate::Error::at_line(self.cur.source, line, m));
        }
        self.cur.expect(";", "after the OPENQASM version")
    }

    fn include(&mut self) -> Result<()> {
        self.cur.bump();
        let file = match self.cur.peek() {
            Tok::Str(s) => s.clone(),
            other => {
                return Err(self.cur.error(format!(
                    "expected a quoted file name after include, found {}",
                    other.describe()
                )))
            }
        };
        if file != "qelib1.inc" {
            return Err(self.cur.error(format!(
                "not supported: include \"{file}\"; only \"qelib1.inc\" (built in) can be included, so copy the gate definitions into this file"
            )));
        }
        self.cur.bump();
        self.table.qelib1 = true;
        self.cur.expect(";", "after the include")
    }

    fn register(&mut self, quantum: bool) -> Result<()> {
        let line = self.cur.line();
        self.cur.bump();
        let kind = if quantum { "qreg" } else { "creg" };
        let name = self.cur.ident(&format!("a register name after {kind}"))?;
        if self.qregs.iter().chain(&self.cregs).any(|r| r.name == name) {
            return Err(self
                .cur
                .error(format!("register '{name}' is declared twice")));
        }
        self.cur.expect("[", &format!("after '{kind} {name}'"))?;
        let size = self.cur.int("the register size")?;
        if size == 0 || size > 1 << 20 {
            return Err(self.cur.error(format!(
                "register '{name}' has size {size}; sizes run from 1 to 2^20"
            )));
        }
        self.cur.expect("]", "after the register size")?;
        self.cur.expect(";", "after the register declaration")?;
        let size = size as usize;
        let list = if quantum {
            &mut self.qregs
        } else {
            &mut self.cregs
        };
        let offset: usize = list.iter().map(|r| r.size).sum();
        if quantum && offset + size > MAX_QUBITS {
            return Err(crate::Error::at_line(
                self.cur.source,
                line,
                format!(
                    "qreg '{name}' brings the circuit to {} qubits; a circuit may have at most 2^20 = {MAX_QUBITS} qubits",
                    offset + size
                ),
            ));
        }
        list.push(Register { name, size, offset });
        if quantum {
            self.measured.resize(offset + size, None);
        }
        Ok(())
    }

    /// A register argument `name` or `name[k]`.
    fn arg(&mut self, quantum: bool) -> Result<Arg> {
        let name = self.cur.ident(if quantum {
            "a qubit (e.g. q[0]) or a quantum register"
        } else {
            "a bit (e.g. c[0]) or a classical register"
        })?;
        let list = if quantum { &self.qregs } else { &self.cregs };
        let reg = match list.iter().find(|r| r.name == name) {
            Some(r) => r.clone(),
            None => {
                let kind = if quantum { "quantum" } else { "classical" };
                let known: Vec<&str> = list.iter().map(|r| r.name.as_str()).collect();
                let known = if known.is_empty() {
                    "none is declared".to_string()
                } else {
                    format!("declared: {}", known.join(", "))
                };
                return Err(self
                    .cur
                    .error(format!("unknown {kind} register '{name}' ({known})")));
            }
        };
        if !self.cur.eat("[") {
            return Ok(Arg::Whole {
                offset: reg.offset,
                size: reg.size,
            });
        }
        let k = self.cur.int("an index")? as usize;
        if k >= reg.size {
            return Err(self.cur.error(format!(
                "index {k} is out of range for register '{}' of size {} (valid: 0..{})",
                reg.name,
                reg.size,
                reg.size - 1
            )));
        }
        self.cur.expect("]", "after the index")?;
        Ok(Arg::One(reg.offset + k))
    }

    fn arg_list(&mut self) -> Result<Vec<Arg>> {
        let mut args = vec![self.arg(true)?];
        while self.cur.eat(",") {
            args.push(self.arg(true)?);
        }
        Ok(args)
    }

    /// The number of applications a broadcast makes (1 without registers).
    fn broadcast(&self, args: &[Arg], what: &str, line: usize) -> Result<usize> {
        let mut size = None;
        for a in args {
            if let Some(s) = a.size() {
                if size.is_some_and(|t| t != s) {
                    return Err(crate::Error::at_line(
                        self.cur.source,
                        line,
                        format!(
                            "{what}: whole registers of different sizes ({} and {s}) cannot be combined",
                            size.unwrap_or(0)
                        ),
                    ));
                }
                size = Some(s);
            }
        }
        Ok(size.unwrap_or(1))
    }

    fn measure(&mut self) -> Result<()> {
        let line = self.cur.line();
        self.cur.bump();
        let q = self.arg(true)?;
        self.cur
            .expect("->", "between the measured qubit and the bit")?;
        let c = self.arg(false)?;
        if q.size() != c.size() {
            return Err(crate::Error::at_line(
                self.cur.source,
                line,
                "measure needs a qubit and a bit, or a quantum and a classical register of the same size",
            ));
        }
        self.cur.expect(";", "after the measurement")?;
        for k in 0..q.size().unwrap_or(1) {
            let slot = &mut self.measured[q.at(k)];
            slot.get_or_insert(line);
        }
        Ok(())
    }

    fn call(&mut self) -> Result<()> {
        let line = self.cur.line();
        let name = self.cur.ident("a gate name")?;
        let sig = self.table.signature(&name).map_err(|m| self.cur.error(m))?;
        let mut params = Vec::new();
        if self.cur.eat("(") && !self.cur.eat(")") {
            loop {
                let e = parse_expr(&mut self.cur, &[])?;
                let v = e.eval(&[]);
                if !v.is_finite() {
                    return Err(self.cur.error(format!(
                        "a parameter of '{name}' evaluates to {v}; parameters must be finite"
                    )));
                }
                params.push(v);
                if !self.cur.eat(",") {
                    break;
                }
            }
            self.cur
                .expect(")", &format!("after the parameters of '{name}'"))?;
        }
        let args = self.arg_list()?;
        self.cur
            .expect(";", &format!("after the call of '{name}'"))?;
        check_arity(&name, sig, params.len(), args.len())
            .map_err(|m| crate::Error::at_line(self.cur.source, line, m))?;
        let count = self.broadcast(&args, &format!("gate '{name}'"), line)?;
        for k in 0..count {
            let qubits: Vec<usize> = args.iter().map(|a| a.at(k)).collect();
            if let Some(q) = repeated(&qubits) {
                return Err(crate::Error::at_line(
                    self.cur.source,
                    line,
                    format!(
                        "gate '{name}' gets qubit {} twice; its qubits must differ",
                        self.label(q)
                    ),
                ));
            }
            if let Some((q, m)) = qubits
                .iter()
                .find_map(|&q| self.measured[q].map(|m| (q, m)))
            {
                return Err(crate::Error::at_line(
                    self.cur.source,
                    line,
                    format!(
                        "not supported: mid-circuit measurement: {} is measured on line {m} and used again by '{name}' on line {line}; amplitudes need every measurement at the end",
                        self.label(q)
                    ),
                ));
            }
            self.table.expand(
                &name,
                &params,
                &qubits,
                &mut self.gates,
                (self.cur.source, line, 0),
            )?;
        }
        Ok(())
    }

    fn label(&self, q: usize) -> String {
        self.qregs
            .iter()
            .find(|r| q >= r.offset && q < r.offset + r.size)
            .map(|r| format!("{}[{}]", r.name, q - r.offset))
            .unwrap_or_else(|| format!("qubit {q}"))
    }
}

#[cfg(test)]
mod tests {
    use super::super::parse_qasm;

    fn refusal(text: &str) -> String {
        parse_qasm(text, "f.qasm", "circuit")
            .unwrap_err()
            .to_string()
    }

    #[test]
    fn a_repeated_parameter_name_is_refused() {
        let e = refusal("gate rot(t, t) a { U(t, 0, 0) a; }\nqreg q[1];\nrot(0.1, 0.2) q[0];\n");
        assert!(
            e.starts_with("f.qasm:1: gate 'rot': parameter 't' is listed twice"),
            "{e}"
        );
    }

    #[test]
    fn the_version_is_checked_before_the_rest_is_tokenized() {
        // '=' on line 3 is not OpenQASM 2.0; the header on line 1 is named first.
        let e = refusal("OPENQASM 3.0;\nqubit[2] q;\nc = measure q;\n");
        assert!(
            e.starts_with("f.qasm:1: not supported: OpenQASM version 3;"),
            "{e}"
        );
        // Comment and blank lines before the header: it is on line 3.
        let e = refusal("// made by hand\n\nOPENQASM 3; bit c; c = 1;\n");
        assert!(
            e.starts_with("f.qasm:3: not supported: OpenQASM version 3;"),
            "{e}"
        );
        // A 2.0 header does not hide a later stray character (line 3).
        let e = refusal("OPENQASM 2.0;\nqreg q[1];\nc = 1;\n");
        assert!(e.starts_with("f.qasm:3: unexpected character '='"), "{e}");
    }

    #[test]
    fn a_circuit_without_qubits_names_the_file() {
        for text in ["", "OPENQASM 2.0;\ncreg c[2];\n"] {
            let e = refusal(text);
            assert!(
                e.starts_with("f.qasm: the circuit has no qubits"),
                "{text:?}: {e}"
            );
        }
    }

    #[test]
    fn the_qreg_that_crosses_the_qubit_cap_is_refused() {
        // 2^20 - 1 + 1 = 2^20 qubits: exactly MAX_QUBITS, accepted.
        let c = parse_qasm("qreg a[1048575];\nqreg b[1];\n", "f.qasm", "c").unwrap();
        assert_eq!(c.num_qubits(), super::MAX_QUBITS);
        // 2^20 + 1 = 1048577 qubits, crossed by 'b' on line 2.
        let e = refusal("qreg a[1048576];\ncreg c[4];\nqreg b[1];\n");
        assert!(
            e.starts_with("f.qasm:3: qreg 'b' brings the circuit to 1048577 qubits; a circuit may have at most 2^20 = 1048576 qubits"),
            "{e}"
        );
    }
}
