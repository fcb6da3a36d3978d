//! Splitting OpenQASM 2.0 text into tokens, each with its 1-based line.
//!
//! Comments run from `//` to the end of the line and may hold any UTF-8
//! text. Carriage returns count as white space, so Windows line endings
//! work. The lexer walks characters, never byte offsets inside a character.

use crate::error::{Error, Result};

/// One token.
#[derive(Debug, Clone, PartialEq)]
pub enum Tok {
    /// A name: register, gate, parameter or keyword.
    Ident(String),
    /// A whole number without sign, fraction or exponent.
    Int(u64),
    /// A number with a fraction or an exponent.
    Real(f64),
    /// A whole number too large for 64 bits (refused where a whole number
    /// is needed, so an unsupported statement around it is named first).
    Huge(String),
    /// A quoted string (for `include`).
    Str(String),
    /// Punctuation or an operator: `; , ( ) [ ] { } + - * / ^ -> ==`.
    Sym(&'static str),
    /// End of the input.
    Eof,
}

impl Tok {
    /// How the token reads in an error message.
    pub fn describe(&self) -> String {
        match self {
            Tok::Ident(s) => format!("'{s}'"),
            Tok::Int(n) => format!("'{n}'"),
            Tok::Real(x) => format!("'{x}'"),
            Tok::Huge(t) => format!("'{t}'"),
            Tok::Str(s) => format!("\"{s}\""),
            Tok::Sym(s) => format!("'{s}'"),
            Tok::Eof => "the end of the file".to_string(),
        }
    }
}

/// A token and the line it starts on.
#[derive(Debug, Clone, PartialEq)]
pub struct Token {
    /// The token.
    pub tok: Tok,
    /// Its 1-based line.
    pub line: usize,
}

const SYMBOLS: [&str; 13] = [
    ";", ",", "(", ")", "[", "]", "{", "}", "+", "*", "/", "^", "-",
];

/// Splits `text` into tokens; `source` names the file in errors.
pub fn tokenize(text: &str, source: &str) -> Result<Vec<Token>> {
    let chars: Vec<char> = text.chars().collect();
    let mut out = Vec::new();
    let mut line = 1usize;
    let mut i = 0usize;
    while i < chars.len() {
        let c = chars[i];
        if c == '\n' {
            line += 1;
            i += 1;
        } else if c.is_whitespace() {
            i += 1;
        } else if c == '/' && chars.get(i + 1) == Some(&'/') {
            while i < chars.len() && chars[i] != '\n' {
                i += 1;
            }
        } else if c == '/' && chars.get(i + 1) == Some(&'*') {
            return Err(Error::at_line(
                source,
                line,
                "block comments (/* ... */) are not part of OpenQASM 2.0; use // comments",
            ));
        } else if c.is_ascii_alphabetic() || c == '_' {
            let start = i;
            while i < chars.len() && (chars[i].is_ascii_alphanumeric() || chars[i] == '_') {
                i += 1;
            }
            let word: String = chars[start..i].iter().collect();
            out.push(Token {
                tok: Tok::Ident(word),
                line,
            });
        } else if c.is_ascii_digit() || (c == '.' && next_is_digit(&chars, i + 1)) {
            let (tok, next) = number(&chars, i).map_err(|m| Error::at_line(source, line, m))?;
            out.push(Token { tok, line });
            i = next;
        } else if c == '"' {
            let start = i + 1;
            let mut j = start;
            while j < chars.len() && chars[j] != '"' && chars[j] != '\n' {
                j += 1;
            }
            if j >= chars.len() || chars[j] != '"' {
                return Err(Error::at_line(
                    source,
                    line,
                    "unterminated string; close it with '\"' on the same line",
                ));
            }
            out.push(Token {
                tok: Tok::Str(chars[start..j].iter().collect()),
                line,
            });
            i = j + 1;
        } else if c == '-' && chars.get(i + 1) == Some(&'>') {
            out.push(Token {
                tok: Tok::Sym("->"),
                line,
            });
            i += 2;
        } else if c == '=' && chars.get(i + 1) == Some(&'=') {
            out.push(Token {
                tok: Tok::Sym("=="),
                line,
            });
            i += 2;
        } else if let Some(sym) = SYMBOLS.iter().find(|s| s.starts_with(c)) {
            out.push(Token {
                tok: Tok::Sym(sym),
                line,
            });
            i += 1;
        } else {
            return Err(Error::at_line(
                source,
                line,
                format!("unexpected character {c:?}; OpenQASM 2.0 statements use ASCII names, numbers and ; , ( ) [ ] {{ }} + - * / ^ -> =="),
            ));
        }
    }
    out.push(Token {
        tok: Tok::Eof,
        line,
    });
    Ok(out)
}

fn next_is_digit(chars: &[char], i: usize) -> bool {
    chars.get(i).is_some_and(|c| c.is_ascii_digit())
}

/// Reads a number starting at `i`: digits, optional fraction, optional
/// exponent (`3`, `0.5`, `.5`, `2.`, `3.000000e-01`, `1E5`).
fn number(chars: &[char], mut i: usize) -> std::result::Result<(Tok, usize), String> {
    let start = i;
    let mut real = false;
    while i < chars.len() && chars[i].is_ascii_digit() {
        i += 1;
    }
    if i < chars.len() && chars[i] == '.' {
        real = true;
        i += 1;
        while i < chars.len() && chars[i].is_ascii_digit() {
            i += 1;
        }
    }
    if i < chars.len() && (chars[i] == 'e' || chars[i] == 'E') {
        let mut j = i + 1;
        if j < chars.len() && (chars[j] == '+' || chars[j] == '-') {
            j += 1;
        }
        if next_is_digit(chars, j) {
            real = true;
            i = j;
            while i < chars.len() && chars[i].is_ascii_digit() {
                i += 1;
            }
        }
    }
    let text: String = chars[start..i].iter().collect();
    if i < chars.len() && (chars[i].is_ascii_alphabetic() || chars[i] == '_') {
        return Err(format!(
            "'{text}{}' is not a number or a name; names start with a letter",
            chars[i]
        ));
    }
    if real {
        let x: f64 = text
            .parse()
            .map_err(|_| format!("'{text}' is not a valid number"))?;
        Ok((Tok::Real(x), i))
    } else {
        match text.parse::<u64>() {
            Ok(n) => Ok((Tok::Int(n), i)),
            Err(_) => Ok((Tok::Huge(text), i)),
        }
    }
}

/// A read position in a token list, with helpers that produce errors naming
/// the line and what was expected.
#[derive(Debug)]
pub struct Cursor<'a> {
    toks: &'a [Token],
    pos: usize,
    /// The file name used in errors.
    pub source: &'a str,
    /// Work done on the expression being parsed (bounds its size and depth).
    pub expr_budget: usize,
}

impl<'a> Cursor<'a> {
    /// A cursor at the first token. `toks` must end with [`Tok::Eof`].
    pub fn new(toks: &'a [Token], source: &'a str) -> Self {
        Cursor {
            toks,
            pos: 0,
            source,
            expr_budget: 0,
        }
    }

    /// The current token.
    pub fn peek(&self) -> &'a Tok {
        &self.toks[self.pos].tok
    }

    /// The line of the current token.
    pub fn line(&self) -> usize {
        self.toks[self.pos].line
    }

    /// Moves past the current token and returns it.
    pub fn bump(&mut self) -> &'a Tok {
        let t = &self.toks[self.pos].tok;
        if self.pos + 1 < self.toks.len() {
            self.pos += 1;
        }
        t
    }

    /// True (and moves on) when the current token is the symbol `sym`.
    pub fn eat(&mut self, sym: &str) -> bool {
        if matches!(self.peek(), Tok::Sym(s) if *s == sym) {
            self.bump();
            true
        } else {
            false
        }
    }

    /// An error at the current line.
    pub fn error(&self, message: impl Into<String>) -> Error {
        Error::at_line(self.source, self.line(), message)
    }

    /// Requires the symbol `sym`; `context` says what was being read.
    pub fn expect(&mut self, sym: &str, context: &str) -> Result<()> {
        if self.eat(sym) {
            Ok(())
        } else {
            Err(self.error(format!(
                "expected '{sym}' {context}, found {}",
                self.peek().describe()
            )))
        }
    }

    /// Requires a name; `what` says which kind.
    pub fn ident(&mut self, what: &str) -> Result<String> {
        match self.peek() {
            Tok::Ident(s) => {
                self.bump();
                Ok(s.clone())
            }
            other => Err(self.error(format!("expected {what}, found {}", other.describe()))),
        }
    }

    /// Requires a whole number; `what` says what it is for.
    pub fn int(&mut self, what: &str) -> Result<u64> {
        match self.peek() {
            Tok::Int(n) => {
                self.bump();
                Ok(*n)
            }
            Tok::Huge(t) => {
                Err(self.error(format!("'{t}' is too large for a whole number ({what})")))
            }
            other => Err(self.error(format!(
                "expected {what} (a whole number), found {}",
                other.describe()
            ))),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn toks(text: &str) -> Vec<Tok> {
        tokenize(text, "t")
            .unwrap()
            .into_iter()
            .map(|t| t.tok)
            .collect()
    }

    #[test]
    fn numbers_and_symbols() {
        assert_eq!(
            toks("rz(-3.000000e-01) q[2];"),
            vec![
                Tok::Ident("rz".into()),
                Tok::Sym("("),
                Tok::Sym("-"),
                Tok::Real(0.3),
                Tok::Sym(")"),
                Tok::Ident("q".into()),
                Tok::Sym("["),
                Tok::Int(2),
                Tok::Sym("]"),
                Tok::Sym(";"),
                Tok::Eof
            ]
        );
        assert_eq!(
            toks(".5 2. 1e3")[..3],
            [Tok::Real(0.5), Tok::Real(2.0), Tok::Real(1000.0)]
        );
    }

    #[test]
    fn comments_may_hold_utf8_and_crlf_counts_lines() {
        let t = tokenize("// café — “quoted”\r\nx q;\r\n", "t").unwrap();
        assert_eq!(t[0].tok, Tok::Ident("x".into()));
        assert_eq!(t[0].line, 2);
    }

    #[test]
    fn stray_characters_are_named() {
        let e = tokenize("x q;\nh q @ 2;", "f.qasm")
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("f.qasm:2: unexpected character '@'"), "{e}");
        let e = tokenize("measure q -> c; é", "f.qasm")
            .unwrap_err()
            .to_string();
        assert!(e.contains("'é'"), "{e}");
    }
}
