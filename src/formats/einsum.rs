//! Einstein-summation equations such as `ab,bc,cd->ad`.
//!
//! Each character is one index (as in numpy's `einsum`). Operands are
//! separated by commas; one `->` introduces the output. Without `->`, the output
//! is every index that appears exactly once, in alphabetical order (numpy's
//! implicit mode). An index may appear in any number of operands (a hyperedge
//! when three or more). An index repeated inside one operand (a trace or
//! diagonal, `ii->`) is refused with a message: write it with a copy tensor.
//! Ellipses (`...`) are refused.

use std::collections::BTreeMap;

use crate::error::{Error, Result};
use crate::network::{Network, NetworkBuilder};

/// A parsed equation: index names per operand and the output.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Equation {
    /// One list of single-character index names per operand.
    pub inputs: Vec<Vec<String>>,
    /// The output's index names, in order.
    pub output: Vec<String>,
}

/// Parses an equation (no dimensions involved).
pub fn parse_equation(eq: &str) -> std::result::Result<Equation, String> {
    let eq: String = eq.chars().filter(|c| !c.is_whitespace()).collect();
    if eq.contains("...") {
        return Err("ellipses ('...') are not supported; name every index".into());
    }
    let arrows = eq.matches("->").count();
    if arrows > 1 {
        return Err(format!(
            "the equation has more than one '->' (it has {arrows}); write one, before the output, e.g. \"ab,bc->ac\""
        ));
    }
    let (lhs, rhs) = match eq.split_once("->") {
        Some((l, r)) => (l, Some(r)),
        None => (eq.as_str(), None),
    };
    if lhs.is_empty() {
        return Err("the equation has no operands; write e.g. \"ab,bc->ac\"".into());
    }
    let mut inputs = Vec::new();
    for (k, op) in lhs.split(',').enumerate() {
        let mut names = Vec::new();
        for c in op.chars() {
            if !c.is_alphanumeric() {
                return Err(format!(
                    "operand {} ('{op}'): '{c}' is not an index letter; use letters or digits",
                    k + 1
                ));
            }
            let s = c.to_string();
            if names.contains(&s) {
                return Err(format!(
                    "operand {} ('{op}'): index '{c}' is repeated; traces and diagonals within one operand are not supported (use a copy tensor)",
                    k + 1
                ));
            }
            names.push(s);
        }
        inputs.push(names);
    }
    let mut count: BTreeMap<&str, usize> = BTreeMap::new();
    for names in &inputs {
        for n in names {
            *count.entry(n.as_str()).or_insert(0) += 1;
        }
    }
    let output: Vec<String> = match rhs {
        Some(r) => {
            let mut out: Vec<String> = Vec::new();
            for c in r.chars() {
                let s = c.to_string();
                if !count.contains_key(s.as_str()) {
                    return Err(format!("output index '{c}' does not appear in any operand"));
                }
                if out.contains(&s) {
                    return Err(format!("output index '{c}' is repeated"));
                }
                out.push(s);
            }
            out
        }
        None => count
            .iter()
            .filter(|&(_, &c)| c == 1)
            .map(|(n, _)| n.to_string())
            .collect(),
    };
    Ok(Equation { inputs, output })
}

/// Parses `a=30,b=35` into (name, dimension) pairs.
pub fn parse_dims(text: &str) -> std::result::Result<Vec<(String, u64)>, String> {
    let mut out = Vec::new();
    for item in text.split(',').map(str::trim).filter(|s| !s.is_empty()) {
        let (name, dim) = item
            .split_once('=')
            .ok_or_else(|| format!("'{item}' is not of the form NAME=DIM (e.g. a=30)"))?;
        let dim: u64 = dim
            .trim()
            .parse()
            .map_err(|_| format!("'{item}': '{dim}' is not a whole number"))?;
        out.push((name.trim().to_string(), dim));
    }
    Ok(out)
}

/// Builds a network from an equation, a default dimension and per-index
/// dimensions. Tensors are named `T0`, `T1`, ...; the output indices are open.
pub fn network_from_einsum(
    eq: &str,
    default_dim: Option<u64>,
    dims: &[(String, u64)],
) -> Result<Network> {
    let source = "einsum equation";
    let parsed = parse_equation(eq).map_err(|m| Error::in_source(source, m))?;
    let mut b = NetworkBuilder::new(source);
    b.name(eq.trim());
    if let Some(d) = default_dim {
        b.default_dim(d, None)?;
    }
    for (name, d) in dims {
        if !parsed.inputs.iter().any(|op| op.contains(name)) {
            return Err(Error::in_source(
                "einsum dimensions",
                format!("index '{name}' does not appear in the equation '{eq}'"),
            ));
        }
        b.declare(name, *d, None)
            .map_err(|e| Error::in_source("einsum dimensions", strip_source(&e)))?;
    }
    for (k, op) in parsed.inputs.iter().enumerate() {
        b.tensor(&format!("T{k}"), op, None, None)?;
    }
    for o in &parsed.output {
        b.open(o, None)?;
    }
    b.build()
}

fn strip_source(e: &Error) -> String {
    match e {
        Error::Input { message, .. } => message.clone(),
        other => other.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn implicit_output_is_single_indices_sorted() {
        // numpy's implicit mode: "ba,cb" -> "ac".
        let e = parse_equation("ba,cb").unwrap();
        assert_eq!(e.output, vec!["a", "c"]);
    }

    #[test]
    fn traces_are_refused() {
        assert!(parse_equation("ii->").unwrap_err().contains("repeated"));
        assert!(parse_equation("ab->z").unwrap_err().contains("'z'"));
        assert!(parse_equation("a...,b").is_err());
    }

    #[test]
    fn a_second_arrow_is_named() {
        // Two '->' in "ab,bc->ac->a" (hand count), also with spaces.
        for eq in ["ab,bc->ac->a", "ab, bc -> ac -> a"] {
            let e = parse_equation(eq).unwrap_err();
            assert!(
                e.starts_with("the equation has more than one '->' (it has 2)"),
                "{e}"
            );
        }
    }

    #[test]
    fn dims_per_index() {
        let net =
            network_from_einsum("ab,bc->ac", Some(2), &parse_dims("a=30,b=35").unwrap()).unwrap();
        assert_eq!(net.dims(), vec![30, 35, 2]);
        assert!(network_from_einsum("ab,bc", None, &[]).is_err());
    }
}
