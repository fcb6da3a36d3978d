//! Reading `#SBATCH` lines back the way sbatch reads them, so tests and the
//! scheduler stand-in see exactly the options a real submission would get.
//!
//! sbatch's rules, as its manual states them: directives are lines starting
//! with `#SBATCH` before the first line that is neither blank nor a comment;
//! the rest of such a line is split into words at blanks, where double or
//! single quotes group and are removed, a backslash takes the next character
//! literally, and an unquoted `#` ends the line. Nothing is expanded.

/// One `--name=value` (or `--name value`) option from the directives.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Directive {
    /// The option name without dashes, e.g. `mem`.
    pub name: String,
    /// Its value, unquoted (empty for a flag).
    pub value: String,
}

/// The words of every `#SBATCH` line sbatch would honour, in order.
pub fn directive_words(script: &str) -> Vec<String> {
    let mut words = Vec::new();
    for (n, line) in script.lines().enumerate() {
        let trimmed = line.trim();
        if n == 0 && trimmed.starts_with("#!") {
            continue;
        }
        if trimmed.is_empty() {
            continue;
        }
        if !trimmed.starts_with('#') {
            break;
        }
        if let Some(rest) = line.strip_prefix("#SBATCH") {
            words.extend(split_words(rest));
        }
    }
    words
}

/// The options of a script's `#SBATCH` lines as name/value pairs.
///
/// ```
/// use sliceplan::jobs::directives::options;
/// let o = options("#!/bin/bash\n#SBATCH --mem=4M --output=\"/a b/%a.out\"\necho\n#SBATCH --time=1");
/// assert_eq!(o.len(), 2);
/// assert_eq!((o[1].name.as_str(), o[1].value.as_str()), ("output", "/a b/%a.out"));
/// ```
pub fn options(script: &str) -> Vec<Directive> {
    let words = directive_words(script);
    let mut out = Vec::new();
    let mut k = 0;
    while k < words.len() {
        let w = words[k].trim_start_matches('-');
        match w.split_once('=') {
            Some((name, value)) => out.push(Directive {
                name: name.into(),
                value: value.into(),
            }),
            None => {
                let value = words
                    .get(k + 1)
                    .filter(|v| !v.starts_with('-'))
                    .cloned()
                    .unwrap_or_default();
                if !value.is_empty() {
                    k += 1;
                }
                out.push(Directive {
                    name: w.into(),
                    value,
                });
            }
        }
        k += 1;
    }
    out
}

/// The value of option `name` (the last one given wins, as in sbatch).
pub fn option<'a>(opts: &'a [Directive], name: &str) -> Option<&'a str> {
    opts.iter()
        .rev()
        .find(|d| d.name == name)
        .map(|d| d.value.as_str())
}

fn split_words(text: &str) -> Vec<String> {
    let mut words = Vec::new();
    let mut word = String::new();
    let mut in_word = false;
    let mut quote: Option<char> = None;
    let mut chars = text.chars();
    while let Some(c) = chars.next() {
        match (quote, c) {
            (_, '\\') => {
                if let Some(next) = chars.next() {
                    word.push(next);
                }
                in_word = true;
            }
            (Some(q), c) if c == q => quote = None,
            (Some(_), c) => word.push(c),
            (None, '"' | '\'') => {
                quote = Some(c);
                in_word = true;
            }
            (None, '#') => break,
            (None, c) if c.is_whitespace() => {
                if in_word {
                    words.push(std::mem::take(&mut word));
                    in_word = false;
                }
            }
            (None, c) => {
                word.push(c);
                in_word = true;
            }
        }
    }
    if in_word {
        words.push(word);
    }
    words
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::jobs::quote::directive_value;

    #[test]
    fn quoted_values_read_back_exactly() {
        for nasty in ["/a b/c", r#"/x"y\z"#, "/p'q/$HOME/#1", "/100%/r"] {
            let script = format!("#!/bin/bash\n#SBATCH --chdir={}\n", directive_value(nasty));
            let o = options(&script);
            assert_eq!(option(&o, "chdir"), Some(nasty), "{script}");
        }
    }

    #[test]
    fn directives_stop_at_the_first_command() {
        let s = "#!/bin/bash\n\n#SBATCH --array=0-3 # comment\n# note\n#SBATCH -n 2\nset -u\n#SBATCH --mem=9\n";
        let o = options(s);
        assert_eq!(option(&o, "array"), Some("0-3"));
        assert_eq!(option(&o, "n"), Some("2"));
        assert_eq!(option(&o, "mem"), None);
    }
}
