//! Gate-parameter expressions of OpenQASM 2.0: numbers, `pi`, the enclosing
//! gate's parameters, `+ - * / ^`, unary minus, and `sin cos tan exp ln sqrt`.
//!
//! Precedence, loosest first: `+ -`, then `* /`, then unary minus, then `^`
//! (right-associative, so `-2^2` is `-(2^2)` and `2^-1` is `0.5`).

use super::lexer::{Cursor, Tok};
use crate::error::Result;

/// A function allowed in an expression.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Func {
    /// Sine.
    Sin,
    /// Cosine.
    Cos,
    /// Tangent.
    Tan,
    /// Exponential.
    Exp,
    /// Natural logarithm.
    Ln,
    /// Square root.
    Sqrt,
}

impl Func {
    fn from_name(name: &str) -> Option<Func> {
        Some(match name {
            "sin" => Func::Sin,
            "cos" => Func::Cos,
            "tan" => Func::Tan,
            "exp" => Func::Exp,
            "ln" => Func::Ln,
            "sqrt" => Func::Sqrt,
            _ => return None,
        })
    }

    fn apply(self, x: f64) -> f64 {
        match self {
            Func::Sin => x.sin(),
            Func::Cos => x.cos(),
            Func::Tan => x.tan(),
            Func::Exp => x.exp(),
            Func::Ln => x.ln(),
            Func::Sqrt => x.sqrt(),
        }
    }
}

/// A parsed expression.
#[derive(Debug, Clone, PartialEq)]
pub enum Expr {
    /// A number (`pi` included).
    Num(f64),
    /// The k-th parameter of the enclosing gate definition.
    Param(usize),
    /// Unary minus.
    Neg(Box<Expr>),
    /// A binary operation: one of `+ - * / ^`.
    Bin(char, Box<Expr>, Box<Expr>),
    /// A function call.
    Call(Func, Box<Expr>),
}

impl Expr {
    /// The value, given the enclosing gate's parameter values. May be NaN or
    /// infinite (e.g. `ln(0)`); the caller reports that with its line.
    pub fn eval(&self, params: &[f64]) -> f64 {
        match self {
            Expr::Num(x) => *x,
            Expr::Param(k) => params[*k],
            Expr::Neg(e) => -e.eval(params),
            Expr::Bin(op, a, b) => {
                let (a, b) = (a.eval(params), b.eval(params));
                match op {
                    '+' => a + b,
                    '-' => a - b,
                    '*' => a * b,
                    '/' => a / b,
                    _ => a.powf(b),
                }
            }
            Expr::Call(f, e) => f.apply(e.eval(params)),
        }
    }
}

/// The most operands, operators and parentheses one expression may hold;
/// it bounds the recursion of parsing and evaluation.
pub const MAX_EXPR_PARTS: usize = 256;

/// Parses one expression; identifiers other than `pi` and the functions must
/// be among `params` (the enclosing gate's parameter names).
pub fn parse_expr(cur: &mut Cursor, params: &[String]) -> Result<Expr> {
    cur.expr_budget = 0;
    expr(cur, params)
}

fn expr(cur: &mut Cursor, params: &[String]) -> Result<Expr> {
    let mut lhs = term(cur, params)?;
    loop {
        let op = match cur.peek() {
            Tok::Sym("+") => '+',
            Tok::Sym("-") => '-',
            _ => return Ok(lhs),
        };
        cur.bump();
        let rhs = term(cur, params)?;
        lhs = Expr::Bin(op, Box::new(lhs), Box::new(rhs));
    }
}

fn term(cur: &mut Cursor, params: &[String]) -> Result<Expr> {
    let mut lhs = unary(cur, params)?;
    loop {
        let op = match cur.peek() {
            Tok::Sym("*") => '*',
            Tok::Sym("/") => '/',
            _ => return Ok(lhs),
        };
        cur.bump();
        let rhs = unary(cur, params)?;
        lhs = Expr::Bin(op, Box::new(lhs), Box::new(rhs));
    }
}

fn unary(cur: &mut Cursor, params: &[String]) -> Result<Expr> {
    cur.expr_budget += 1;
    if cur.expr_budget > MAX_EXPR_PARTS {
        return Err(cur.error(format!(
            "the parameter expression has more than {MAX_EXPR_PARTS} parts; simplify it"
        )));
    }
    if cur.eat("-") {
        return Ok(Expr::Neg(Box::new(unary(cur, params)?)));
    }
    if cur.eat("+") {
        return unary(cur, params);
    }
    let base = atom(cur, params)?;
    if cur.eat("^") {
        let exponent = unary(cur, params)?;
        return Ok(Expr::Bin('^', Box::new(base), Box::new(exponent)));
    }
    Ok(base)
}

fn atom(cur: &mut Cursor, params: &[String]) -> Result<Expr> {
    match cur.peek() {
        Tok::Int(n) => {
            let x = *n as f64;
            cur.bump();
            Ok(Expr::Num(x))
        }
        Tok::Huge(t) => {
            // A parameter may be any real number; a huge literal is one.
            let x: f64 = t.parse().unwrap_or(f64::INFINITY);
            cur.bump();
            Ok(Expr::Num(x))
        }
        Tok::Real(x) => {
            let x = *x;
            cur.bump();
            Ok(Expr::Num(x))
        }
        Tok::Sym("(") => {
            cur.bump();
            let e = expr(cur, params)?;
            cur.expect(")", "to close the parenthesis")?;
            Ok(e)
        }
        Tok::Ident(name) => {
            let name = name.clone();
            cur.bump();
            if name == "pi" {
                return Ok(Expr::Num(std::f64::consts::PI));
            }
            if let Some(f) = Func::from_name(&name) {
                cur.expect("(", &format!("after the function '{name}'"))?;
                let e = expr(cur, params)?;
                cur.expect(")", &format!("to close '{name}('"))?;
                return Ok(Expr::Call(f, Box::new(e)));
            }
            if let Some(k) = params.iter().position(|p| *p == name) {
                return Ok(Expr::Param(k));
            }
            let allowed = if params.is_empty() {
                "numbers and pi".to_string()
            } else {
                format!(
                    "numbers, pi and the gate's parameters ({})",
                    params.join(", ")
                )
            };
            Err(cur.error(format!(
                "unknown name '{name}' in a parameter expression; allowed are {allowed}, combined with + - * / ^ and sin cos tan exp ln sqrt"
            )))
        }
        other => Err(cur.error(format!(
            "expected a parameter value (a number, pi, or an expression), found {}",
            other.describe()
        ))),
    }
}

#[cfg(test)]
mod tests {
    use super::super::lexer::tokenize;
    use super::*;
    use std::f64::consts::PI;

    fn value(text: &str, params: &[&str], values: &[f64]) -> f64 {
        let toks = tokenize(text, "t").unwrap();
        let mut cur = Cursor::new(&toks, "t");
        let names: Vec<String> = params.iter().map(|s| s.to_string()).collect();
        let e = parse_expr(&mut cur, &names).unwrap();
        assert_eq!(cur.peek(), &Tok::Eof, "all of '{text}' is read");
        e.eval(values)
    }

    #[test]
    fn precedence_and_functions() {
        // Values by hand (ordinary arithmetic).
        assert_eq!(value("-3*pi/4", &[], &[]), -3.0 * PI / 4.0);
        assert_eq!(value("1+2*3", &[], &[]), 7.0);
        assert_eq!(value("-2^2", &[], &[]), -4.0);
        assert_eq!(value("2^3^2", &[], &[]), 512.0);
        assert_eq!(value("2^-1", &[], &[]), 0.5);
        assert_eq!(value("(1+2)*3", &[], &[]), 9.0);
        assert_eq!(value("8/4/2", &[], &[]), 1.0);
        assert!((value("sqrt(2)*sin(pi/4)", &[], &[]) - 1.0).abs() < 1e-15);
        assert!((value("ln(exp(1.5))+cos(0)-tan(0)", &[], &[]) - 2.5).abs() < 1e-15);
        assert_eq!(
            value("(lambda-phi)/2", &["phi", "lambda"], &[1.0, 3.0]),
            1.0
        );
    }

    #[test]
    fn huge_expressions_are_refused_not_overflowed() {
        for text in [
            "(".repeat(100_000) + "1",
            "1+".repeat(100_000) + "1",
            "-".repeat(100_000) + "1",
        ] {
            let toks = tokenize(&text, "f.qasm").unwrap();
            let mut cur = Cursor::new(&toks, "f.qasm");
            let e = parse_expr(&mut cur, &[]).unwrap_err().to_string();
            assert!(e.contains("more than 256 parts"), "{e}");
        }
    }

    #[test]
    fn unknown_names_are_reported() {
        let toks = tokenize("theta/2", "f.qasm").unwrap();
        let mut cur = Cursor::new(&toks, "f.qasm");
        let e = parse_expr(&mut cur, &[]).unwrap_err().to_string();
        assert!(e.starts_with("f.qasm:1: unknown name 'theta'"), "{e}");
    }
}
