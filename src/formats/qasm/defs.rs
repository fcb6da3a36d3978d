//! User gate definitions (`gate name(params) args { body }`) and their
//! expansion, call by call, down to built-in gates with exact matrices.

use std::collections::HashMap;

use super::expr::{parse_expr, Expr};
use super::gates::{self, Origin};
use super::lexer::{Cursor, Tok};
use crate::error::{Error, Result};
use crate::formats::circuit::Gate;

/// The most gates a circuit may expand to (nested definitions can multiply).
pub const MAX_GATES: usize = 4_000_000;
/// The most qubits a circuit may declare, over all its `qreg`s (2^20 =
/// 1,048,576). Each qubit becomes at least two tensors (its `|0>` and its
/// closing `<x|`), and reading a circuit of 2^20 qubits already takes
/// gigabytes in a debug build; the `qreg` that crosses the cap is refused.
pub const MAX_QUBITS: usize = 1 << 20;
/// The deepest nesting of gate definitions expanded.
pub const MAX_NESTING: usize = 100;

/// One call inside a gate body.
#[derive(Debug, Clone, PartialEq)]
pub struct BodyCall {
    /// The gate called.
    pub name: String,
    /// Its parameter expressions, over the enclosing gate's parameters.
    pub params: Vec<Expr>,
    /// Its qubits, as positions in the enclosing gate's argument list.
    pub args: Vec<usize>,
    /// The line of the call.
    pub line: usize,
}

/// A user gate definition.
#[derive(Debug, Clone, PartialEq)]
pub struct GateDef {
    /// Number of parameters.
    pub params: usize,
    /// Number of qubit arguments.
    pub qubits: usize,
    /// The calls of the body, in order (barriers dropped).
    pub body: Vec<BodyCall>,
    /// The line of the definition.
    pub line: usize,
}

/// The gates a program can call: built-ins and the file's definitions.
#[derive(Debug, Default)]
pub struct GateTable {
    /// Whether `include "qelib1.inc";` was seen.
    pub qelib1: bool,
    defs: HashMap<String, GateDef>,
}

/// The signature (parameters, qubits) of a callable gate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Signature {
    /// Number of parameters.
    pub params: usize,
    /// Number of qubits.
    pub qubits: usize,
}

impl GateTable {
    /// The signature of gate `name`, or an error saying why it cannot be used.
    pub fn signature(&self, name: &str) -> std::result::Result<Signature, String> {
        if let Some(d) = self.defs.get(name) {
            return Ok(Signature {
                params: d.params,
                qubits: d.qubits,
            });
        }
        match gates::lookup(name) {
            Some(b) if b.origin == Origin::Language || self.qelib1 => Ok(Signature {
                params: b.params,
                qubits: b.qubits,
            }),
            Some(_) => Err(format!(
                "gate '{name}' is not defined; it belongs to the standard library: add `include \"qelib1.inc\";` before using it"
            )),
            None if ["rccx", "rc3x"].contains(&name) => Err(format!(
                "not supported: the built-in gate library has no '{name}'; define it with a `gate` statement"
            )),
            None => Err(format!(
                "unknown gate '{name}'; define it with a `gate` statement before its first use (names are case-sensitive)"
            )),
        }
    }

    /// Parses a definition after the `gate` keyword and adds it.
    pub fn define(&mut self, cur: &mut Cursor) -> Result<()> {
        let line = cur.line();
        let name = cur.ident("a gate name after 'gate'")?;
        if let Some(old) = self.defs.get(&name) {
            return Err(cur.error(format!(
                "gate '{name}' is defined twice (first on line {}); give the second one another name",
                old.line
            )));
        }
        if let Some(b) = gates::lookup(&name) {
            let taken = match b.origin {
                Origin::Language => true,
                Origin::Qelib1 => self.qelib1,
                Origin::Extra => false,
            };
            if taken {
                return Err(cur.error(format!(
                    "gate '{name}' is already defined by the standard library; give yours another name"
                )));
            }
        }
        let mut params = Vec::new();
        if cur.eat("(") && !cur.eat(")") {
            params = name_list(cur, "a parameter name")?;
            if let Some(k) = (0..params.len()).find(|&k| params[..k].contains(&params[k])) {
                return Err(cur.error(format!(
                    "gate '{name}': parameter '{}' is listed twice; give each parameter its own name",
                    params[k]
                )));
            }
            cur.expect(")", "after the parameter names")?;
        }
        let args = name_list(cur, "a qubit argument name")?;
        for (k, a) in args.iter().enumerate() {
            if params.contains(a) {
                return Err(cur.error(format!(
                    "gate '{name}': '{a}' is both a parameter and a qubit argument"
                )));
            }
            if args[..k].contains(a) {
                return Err(cur.error(format!(
                    "gate '{name}': qubit argument '{a}' is listed twice"
                )));
            }
        }
        cur.expect("{", &format!("to open the body of gate '{name}'"))?;
        let mut body = Vec::new();
        while !cur.eat("}") {
            if let Some(call) = self.body_statement(cur, &name, &params, &args)? {
                body.push(call);
            }
        }
        self.defs.insert(
            name,
            GateDef {
                params: params.len(),
                qubits: args.len(),
                body,
                line,
            },
        );
        Ok(())
    }

    fn body_statement(
        &self,
        cur: &mut Cursor,
        gate: &str,
        params: &[String],
        args: &[String],
    ) -> Result<Option<BodyCall>> {
        let line = cur.line();
        let name = match cur.peek() {
            Tok::Ident(n) => n.clone(),
            Tok::Eof => {
                return Err(cur.error(format!("the body of gate '{gate}' is not closed; add '}}'")))
            }
            other => {
                return Err(cur.error(format!(
                    "expected a gate call inside gate '{gate}', found {}",
                    other.describe()
                )))
            }
        };
        cur.bump();
        let qubit = |cur: &mut Cursor| -> Result<usize> {
            let a = cur.ident("a qubit argument")?;
            if cur.peek() == &Tok::Sym("[") {
                return Err(cur.error(format!(
                    "inside a gate body, qubits are named by the gate's arguments ({}) without indices",
                    args.join(", ")
                )));
            }
            args.iter().position(|x| *x == a).ok_or_else(|| {
                cur.error(format!(
                    "'{a}' is not an argument of gate '{gate}' (its arguments: {})",
                    args.join(", ")
                ))
            })
        };
        match name.as_str() {
            "barrier" => {
                loop {
                    qubit(cur)?;
                    if !cur.eat(",") {
                        break;
                    }
                }
                cur.expect(";", "after the barrier")?;
                return Ok(None);
            }
            "measure" | "reset" | "if" | "qreg" | "creg" | "gate" | "opaque" => {
                return Err(cur.error(format!(
                    "'{name}' is not allowed inside a gate body (gate '{gate}'); only gate calls and barrier are"
                )))
            }
            _ => {}
        }
        let sig = self.signature(&name).map_err(|m| cur.error(m))?;
        let mut exprs = Vec::new();
        if cur.eat("(") && !cur.eat(")") {
            loop {
                exprs.push(parse_expr(cur, params)?);
                if !cur.eat(",") {
                    break;
                }
            }
            cur.expect(")", &format!("after the parameters of '{name}'"))?;
        }
        let mut qubits = Vec::new();
        loop {
            qubits.push(qubit(cur)?);
            if !cur.eat(",") {
                break;
            }
        }
        cur.expect(";", &format!("after the call of '{name}'"))?;
        check_arity(&name, sig, exprs.len(), qubits.len())
            .map_err(|m| Error::at_line(cur.source, line, m))?;
        if let Some(q) = repeated(&qubits) {
            return Err(Error::at_line(
                cur.source,
                line,
                format!(
                    "gate '{name}' gets qubit '{}' twice; its qubits must differ",
                    args[q]
                ),
            ));
        }
        Ok(Some(BodyCall {
            name,
            params: exprs,
            args: qubits,
            line,
        }))
    }

    /// Appends the built-in gates that `name(params) qubits` stands for.
    /// `at` is the source, the line of the outermost call, and the nesting
    /// depth so far (0 at top level), for errors.
    pub fn expand(
        &self,
        name: &str,
        params: &[f64],
        qubits: &[usize],
        out: &mut Vec<Gate>,
        at: (&str, usize, usize),
    ) -> Result<()> {
        if at.2 > MAX_NESTING {
            return Err(Error::at_line(
                at.0,
                at.1,
                format!("gate definitions nest more than {MAX_NESTING} deep; flatten them"),
            ));
        }
        if out.len() >= MAX_GATES {
            return Err(Error::at_line(
                at.0,
                at.1,
                format!("the circuit expands to more than {MAX_GATES} gates; this is more than this reader accepts"),
            ));
        }
        if let Some(def) = self.defs.get(name) {
            for call in &def.body {
                let mut values = Vec::with_capacity(call.params.len());
                for e in &call.params {
                    let v = e.eval(params);
                    if !v.is_finite() {
                        return Err(Error::at_line(
                            at.0,
                            call.line,
                            format!("a parameter of '{}' evaluates to {v} (called from line {}); parameters must be finite", call.name, at.1),
                        ));
                    }
                    values.push(v);
                }
                let q: Vec<usize> = call.args.iter().map(|&k| qubits[k]).collect();
                self.expand(&call.name, &values, &q, out, (at.0, at.1, at.2 + 1))?;
            }
            return Ok(());
        }
        out.push(Gate {
            name: name.to_string(),
            qubits: qubits.to_vec(),
            matrix: gates::matrix(name, params),
        });
        Ok(())
    }
}

/// The arity check shared by top-level and body calls.
pub fn check_arity(
    name: &str,
    sig: Signature,
    params: usize,
    qubits: usize,
) -> std::result::Result<(), String> {
    if params != sig.params {
        return Err(format!(
            "gate '{name}' takes {} parameter(s), {params} given",
            sig.params
        ));
    }
    if qubits != sig.qubits {
        return Err(format!(
            "gate '{name}' acts on {} qubit(s), {qubits} given",
            sig.qubits
        ));
    }
    Ok(())
}

/// The first item that occurs twice, if any.
pub fn repeated(items: &[usize]) -> Option<usize> {
    items
        .iter()
        .enumerate()
        .find(|(k, x)| items[..*k].contains(x))
        .map(|(_, &x)| x)
}

fn name_list(cur: &mut Cursor, what: &str) -> Result<Vec<String>> {
    let mut names = vec![cur.ident(what)?];
    while cur.eat(",") {
        names.push(cur.ident(what)?);
    }
    Ok(names)
}
