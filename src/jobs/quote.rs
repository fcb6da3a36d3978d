//! Quoting for the generated scripts: shell words, `#SBATCH` values, and
//! Slurm file-name patterns.
//!
//! Paths are written into two languages. In the script body they are bash
//! words, always single-quoted (a `'` inside becomes `'\''`), so spaces, `$`,
//! backquotes and double quotes stay literal. In `#SBATCH` lines they are
//! read by sbatch's own tokenizer, which is not a shell: it honours double
//! quotes and backslash escapes and expands nothing, so values are wrapped in
//! double quotes with `\` and `"` escaped. Output and error file names are
//! also Slurm patterns, where `%` starts a replacement (`%a` is the array
//! index) and a backslash turns replacement off, so `%` is doubled and
//! directories holding a backslash are refused. Text that no script can
//! carry on one line (newlines, other control characters) is refused too.

use std::path::Path;

use crate::error::{Error, Result};

/// A bash word that stands for exactly `text`.
///
/// ```
/// use sliceplan::jobs::quote::shell_word;
/// assert_eq!(shell_word("a b"), "'a b'");
/// assert_eq!(shell_word("it's $HOME"), r"'it'\''s $HOME'");
/// ```
pub fn shell_word(text: &str) -> String {
    format!("'{}'", text.replace('\'', r"'\''"))
}

/// An `#SBATCH` option value that sbatch reads back as exactly `text`.
///
/// ```
/// use sliceplan::jobs::quote::directive_value;
/// assert_eq!(directive_value(r#"/a "b"\c"#), r#""/a \"b\"\\c""#);
/// ```
pub fn directive_value(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 2);
    out.push('"');
    for c in text.chars() {
        if c == '"' || c == '\\' {
            out.push('\\');
        }
        out.push(c);
    }
    out.push('"');
    out
}

/// A literal piece of a Slurm file-name pattern (`%` doubled).
///
/// ```
/// use sliceplan::jobs::quote::pattern_literal;
/// assert_eq!(pattern_literal("/runs/100%"), "/runs/100%%");
/// ```
pub fn pattern_literal(text: &str) -> String {
    text.replace('%', "%%")
}

/// The path as text a script can carry, or an error naming the option
/// `field` it came from and why it cannot be used.
pub fn script_path(field: &'static str, path: &Path) -> Result<String> {
    let text = path.to_str().ok_or_else(|| {
        Error::invalid(
            field,
            format!(
                "the path {} is not valid UTF-8; scripts need a path they can spell",
                path.display()
            ),
        )
    })?;
    if let Some(c) = text.chars().find(|c| c.is_control()) {
        return Err(Error::invalid(field, format!(
            "the path {text:?} holds the control character {c:?}; a script line cannot carry it, use a path without one"
        )));
    }
    Ok(text.to_string())
}

/// Like [`script_path`], for a directory that also appears in Slurm
/// file-name patterns (where a backslash would switch off `%a`).
pub fn pattern_dir(field: &'static str, path: &Path) -> Result<String> {
    let text = script_path(field, path)?;
    if text.contains('\\') {
        return Err(Error::invalid(field, format!(
            "the path {text:?} holds a backslash, which turns off Slurm's %a in log file names; use a path without one"
        )));
    }
    Ok(text)
}

/// Checks a plain `#SBATCH` value such as a partition or account name:
/// letters, digits and `_ - . , + :` only (a comma lists several).
pub fn plain_value(field: &'static str, text: &str) -> Result<String> {
    let ok = !text.is_empty()
        && text
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "_-.,+:".contains(c));
    if ok {
        Ok(text.to_string())
    } else {
        Err(Error::invalid(field, format!(
            "'{text}' is not a valid name; use letters, digits and _ - . , + : (e.g. 'compute' or 'proj-42')"
        )))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bash_reads_back_the_same_word() {
        // Brute force against the real shell: bash prints the word back.
        let nasty = "a b'c\"d$e`f`\\g%h!i*j";
        let out = std::process::Command::new("bash")
            .arg("-c")
            .arg(format!("printf %s {}", shell_word(nasty)))
            .output()
            .expect("bash runs");
        assert_eq!(String::from_utf8(out.stdout).unwrap(), nasty);
    }

    #[test]
    fn control_characters_and_backslashes_are_refused() {
        assert!(script_path("out", Path::new("/a\nb")).is_err());
        assert!(pattern_dir("out", Path::new("/a\\b")).is_err());
        assert_eq!(pattern_dir("out", Path::new("/a b/$c")).unwrap(), "/a b/$c");
        assert!(plain_value("partition", "gpu;rm").is_err());
        assert_eq!(plain_value("partition", "gpu,cpu").unwrap(), "gpu,cpu");
    }
}
