//! DIMACS CNF formulas and the network whose value is their model count.
//!
//! The reader follows the DIMACS challenge format: comment lines `c ...`
//! anywhere, one header `p cnf VARIABLES CLAUSES`, then clauses as signed
//! variable numbers ended by `0`, free to span lines. A line starting with
//! `%` ends the data (the SATLIB archives end every file with `%`, `0`).
//! The count is over all declared variables, so a variable no clause uses
//! doubles it. The header may declare at most [`MAX_TENSORS`] variables.
//!
//! Network: variable v is the index `x<v>` (dimension 2, value 0 = false),
//! shared by every clause that mentions it (a hyperedge). Clause k (k-th in
//! the file, from 1) is the tensor `c<k>` over its variables, 1 everywhere
//! except 0 at the one assignment that falsifies it. Clauses longer than
//! [`CHAIN_FROM`] literals become a chain of three-leg tensors `c<k>_<j>`
//! carrying "satisfied so far" on indices `c<k>_s<j>`, so no tensor exceeds
//! 8 elements. An unused variable gets a tensor `free<v>` = (1, 1).
//! Repeated literals in a clause count once; a clause holding x and not-x is
//! always true and is dropped; an empty clause makes the value 0.

use std::path::Path;

use crate::error::{Error, Result};
use crate::network::{Dtype, Network, NetworkBuilder, Values, MAX_TENSORS};

/// Clauses with more literals than this are written as a chain.
pub const CHAIN_FROM: usize = 10;

/// A formula as read: variable count and clauses with their first line.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Cnf {
    /// Number of variables declared in the header.
    pub variables: usize,
    /// Clauses as signed variable numbers (1-based), with the line each starts on.
    pub clauses: Vec<(usize, Vec<i64>)>,
}

/// Parses DIMACS CNF text; `source` names it in errors.
pub fn parse_cnf(text: &str, source: &str) -> Result<Cnf> {
    let err = |line: usize, m: String| Error::at_line(source, line, m);
    let mut header: Option<(usize, usize, usize)> = None;
    let mut clauses = Vec::new();
    let mut current: Vec<i64> = Vec::new();
    let mut start = 0usize;
    for (k, raw) in text.split('\n').enumerate() {
        let line_no = k + 1;
        let line = raw.trim();
        if line.is_empty() || line.starts_with('c') {
            continue;
        }
        if line.starts_with('%') {
            break;
        }
        if line.starts_with('p') {
            if let Some((_, _, at)) = header {
                return Err(err(
                    line_no,
                    format!("a second `p` header (the first is on line {at}); give exactly one"),
                ));
            }
            let fields: Vec<&str> = line.split_whitespace().collect();
            if fields.get(1).is_some_and(|f| *f != "cnf") {
                return Err(err(line_no, format!(
                    "not supported: `p {}` files; this reader takes plain `p cnf VARIABLES CLAUSES`",
                    fields[1]
                )));
            }
            let parsed = match fields.as_slice() {
                ["p", "cnf", v, c] => v.parse::<usize>().ok().zip(c.parse::<usize>().ok()),
                _ => None,
            };
            let (v, c) = parsed.ok_or_else(|| {
                err(line_no, format!(
                    "malformed header '{line}'; expected `p cnf VARIABLES CLAUSES` with two whole numbers"
                ))
            })?;
            // Checked before anything is built per variable: an unused
            // variable becomes a tensor of its own.
            if v > MAX_TENSORS {
                return Err(err(
                    line_no,
                    format!("{v} variables is more than this reader accepts (2^23 = {MAX_TENSORS}, the most tensors a network may have)"),
                ));
            }
            header = Some((v, c, line_no));
            continue;
        }
        let Some((vars, _, _)) = header else {
            return Err(err(
                line_no,
                "clauses before the `p cnf VARIABLES CLAUSES` header; put the header first".into(),
            ));
        };
        for tok in line.split_whitespace() {
            let lit: i64 = tok.parse().map_err(|_| {
                err(
                    line_no,
                    format!(
                        "'{tok}' is not a literal; clauses are signed variable numbers ended by 0"
                    ),
                )
            })?;
            if lit == 0 {
                clauses.push((
                    if current.is_empty() { line_no } else { start },
                    std::mem::take(&mut current),
                ));
                continue;
            }
            if lit.unsigned_abs() > vars as u64 {
                return Err(err(
                    line_no,
                    format!(
                        "literal {lit} is out of range; the header declares variables 1..{vars}"
                    ),
                ));
            }
            if current.is_empty() {
                start = line_no;
            }
            current.push(lit);
        }
    }
    let Some((variables, declared, at)) = header else {
        return Err(Error::in_source(
            source,
            "no `p cnf VARIABLES CLAUSES` header found; is this a DIMACS CNF file?",
        ));
    };
    if !current.is_empty() {
        // The last clause lacks its closing 0; accept it, as most tools do.
        clauses.push((start, current));
    }
    if clauses.len() != declared {
        return Err(err(
            at,
            format!(
                "the header declares {declared} clauses but the file has {}; fix the `p cnf` line",
                clauses.len()
            ),
        ));
    }
    Ok(Cnf { variables, clauses })
}

/// Reads a DIMACS CNF file.
pub fn read_cnf(path: &Path) -> Result<Cnf> {
    let text = crate::io::read_text(path)?;
    parse_cnf(&text, &path.display().to_string())
}

/// Reads a DIMACS CNF file and builds its model-counting network.
pub fn load_cnf(path: &Path) -> Result<Network> {
    let cnf = read_cnf(path)?;
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    cnf_network(
        &cnf,
        &path.display().to_string(),
        &format!("{stem} model count"),
    )
}

/// The network whose value is the number of satisfying assignments.
pub fn cnf_network(cnf: &Cnf, source: &str, name: &str) -> Result<Network> {
    let mut b = NetworkBuilder::new(source);
    b.name(name);
    b.dtype(Dtype::F64);
    let mut var_index: Vec<Option<usize>> = vec![None; cnf.variables + 1];
    let mut tensors = 0usize;
    for (k, (_, lits)) in cnf.clauses.iter().enumerate() {
        let mut clause: Vec<i64> = Vec::with_capacity(lits.len());
        for &l in lits {
            if !clause.contains(&l) {
                clause.push(l);
            }
        }
        if clause.iter().any(|&l| clause.contains(&-l)) {
            continue;
        }
        let name = format!("c{}", k + 1);
        let mut ids = Vec::with_capacity(clause.len());
        for &l in &clause {
            ids.push(variable(&mut b, &mut var_index, l.unsigned_abs() as usize)?);
        }
        // The falsifying value of each variable: 0 for x, 1 for not-x.
        let falsify: Vec<bool> = clause.iter().map(|&l| l < 0).collect();
        if clause.len() <= CHAIN_FROM {
            b.tensor_by_ids(&name, ids, Some(clause_values(&falsify)))?;
            tensors += 1;
        } else {
            tensors += chain(&mut b, &name, &ids, &falsify)?;
        }
    }
    for v in 1..=cnf.variables {
        if var_index[v].is_none() {
            let e = variable(&mut b, &mut var_index, v)?;
            b.tensor_by_ids(&format!("free{v}"), vec![e], Some(real(vec![1.0, 1.0])))?;
            tensors += 1;
        }
    }
    if tensors == 0 {
        // No variables and no clauses: one assignment (the empty one).
        b.tensor_by_ids("one", vec![], Some(real(vec![1.0])))?;
    }
    b.build()
}

/// The index of variable `v`, registered on first use.
fn variable(b: &mut NetworkBuilder, ids: &mut [Option<usize>], v: usize) -> Result<usize> {
    if let Some(e) = ids[v] {
        return Ok(e);
    }
    let e = b.index(&format!("x{v}"), 2)?;
    ids[v] = Some(e);
    Ok(e)
}

fn real(re: Vec<f64>) -> Values {
    Values::Inline { re, im: None }
}

/// Ones except a zero at the assignment that sets every literal false.
fn clause_values(falsify: &[bool]) -> Values {
    let mut re = vec![1.0; 1 << falsify.len()];
    let off = falsify.iter().fold(0usize, |acc, &f| acc * 2 + f as usize);
    re[off] = 0.0;
    real(re)
}

/// Writes a long clause as a chain; returns the number of tensors added.
fn chain(b: &mut NetworkBuilder, name: &str, ids: &[usize], falsify: &[bool]) -> Result<usize> {
    let m = ids.len();
    let sat = |x: usize, j: usize| (x == 1) != falsify[j];
    let mut carry = b.index(&format!("{name}_s1"), 2)?;
    // First: s1 = literal 1.
    let mut re = vec![0.0; 4];
    for x in 0..2 {
        re[x * 2 + sat(x, 0) as usize] = 1.0;
    }
    b.tensor_by_ids(&format!("{name}_1"), vec![ids[0], carry], Some(real(re)))?;
    for (j, &id) in ids.iter().enumerate().take(m - 1).skip(1) {
        let next = b.index(&format!("{name}_s{}", j + 1), 2)?;
        let mut re = vec![0.0; 8];
        for s in 0..2 {
            for x in 0..2 {
                let out = (s == 1 || sat(x, j)) as usize;
                re[s * 4 + x * 2 + out] = 1.0;
            }
        }
        b.tensor_by_ids(
            &format!("{name}_{}", j + 1),
            vec![carry, id, next],
            Some(real(re)),
        )?;
        carry = next;
    }
    // Last: 1 when satisfied so far or by the last literal.
    let mut re = vec![0.0; 4];
    for s in 0..2 {
        for x in 0..2 {
            re[s * 2 + x] = (s == 1 || sat(x, m - 1)) as u8 as f64;
        }
    }
    b.tensor_by_ids(
        &format!("{name}_{m}"),
        vec![carry, ids[m - 1]],
        Some(real(re)),
    )?;
    Ok(m)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn satlib_trailer_is_not_a_clause() {
        // SATLIB files end with "%", "0" (corpus README, Part B).
        let text = "c demo\np cnf 3 2\n1 -2 0\n2\n 3 0\n%\n0\n\n";
        let cnf = parse_cnf(text, "t.cnf").unwrap();
        assert_eq!(cnf.clauses, vec![(3, vec![1, -2]), (4, vec![2, 3])]);
    }

    #[test]
    fn crlf_and_comments_anywhere() {
        let text = "p cnf 2 1\r\nc inside\r\n1 2 0\r\n";
        assert_eq!(parse_cnf(text, "t").unwrap().clauses.len(), 1);
    }

    #[test]
    fn malformed_inputs_are_named() {
        let cases = [
            ("p cnf x 1\n1 0\n", "t:1: malformed header"),
            ("p cnf 2 1\n1 3 0\n", "t:2: literal 3 is out of range"),
            ("1 2 0\np cnf 2 1\n", "t:1: clauses before the"),
            (
                "p cnf 2 2\n1 2 0\n",
                "t:1: the header declares 2 clauses but the file has 1",
            ),
            ("p cnf 2 1\n1 a 0\n", "t:2: 'a' is not a literal"),
            ("p wcnf 2 1\n1 0\n", "t:1: not supported: `p wcnf`"),
            ("c nothing\n", "t: no `p cnf"),
            // 2^23 + 1 = 8388609 variables: one over MAX_TENSORS.
            (
                "p cnf 8388609 1\n1 0\n",
                "t:1: 8388609 variables is more than this reader accepts (2^23 = 8388608,",
            ),
        ];
        for (text, want) in cases {
            let e = parse_cnf(text, "t").unwrap_err().to_string();
            assert!(e.starts_with(want), "{text:?}: {e}");
        }
    }

    #[test]
    fn clause_tensor_zero_only_where_falsified() {
        // (x1 or not x2): falsified by x1 = 0, x2 = 1, i.e. offset 0b01.
        let Values::Inline { re, .. } = clause_values(&[false, true]) else {
            unreachable!()
        };
        assert_eq!(re, vec![1.0, 0.0, 1.0, 1.0]);
    }
}
