//! The native network file: our own TOML schema (see `docs/network-format.md`).
//!
//! ```toml
//! format = "sliceplan-network"
//! version = 1
//! name = "three matrices"
//! dtype = "f64"
//! open = ["a", "d"]
//!
//! [indices]
//! a = 2
//! b = 3
//! c = 3
//! d = 2
//!
//! [[tensor]]
//! name = "X"
//! indices = ["a", "b"]
//! values = [1, 2, 3, 4, 5, 6]   # row-major: the last index varies fastest
//!
//! [[tensor]]
//! name = "Y"
//! indices = ["b", "c"]
//! fill = "copy"
//!
//! [[tensor]]
//! name = "Z"
//! indices = ["c", "d"]
//! fill = "random"
//! seed = 7
//! ```
//!
//! Instead of `[[tensor]]` entries, `einsum = "ab,bc,cd->ad"` with `dim = 2`
//! and/or an `[indices]` table declares a structure-only network.

use std::collections::BTreeMap;
use std::path::Path;

use serde::Deserialize;
use toml::Spanned;

use super::einsum;
use crate::error::{line_of_offset, Error, LineIndex, Result};
use crate::network::{Dtype, Fill, Network, NetworkBuilder, Values};

/// The `format` value of a native network file.
pub const NETWORK_FORMAT: &str = "sliceplan-network";
/// The newest native file version this build reads and writes.
pub const NETWORK_VERSION: u32 = 1;

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct NativeFile {
    format: Option<Spanned<String>>,
    version: Option<Spanned<i64>>,
    name: Option<String>,
    dtype: Option<Spanned<String>>,
    dim: Option<Spanned<DimValue>>,
    einsum: Option<Spanned<String>>,
    #[serde(default)]
    indices: BTreeMap<String, Spanned<DimValue>>,
    #[serde(default)]
    open: Vec<Spanned<String>>,
    #[serde(default)]
    tensor: Vec<Spanned<TensorEntry>>,
}

/// A dimension as written: any TOML value, judged by [`dim_value`] so that
/// a float, an integer beyond i64 or a boolean gets the same message as a
/// dimension of 0 (serde's untagged enums would only say that no variant
/// matched, and the TOML integer type stops at i64).
#[derive(Debug)]
enum DimValue {
    /// An integer; the TOML reader gives those beyond i64 as 128-bit.
    Int(i128),
    /// An integer beyond even 128 bits, as its digits.
    BigInt(String),
    Float(f64),
    Text(String),
    /// Anything else, described (`true`, `an array`, ...).
    Other(String),
}

impl<'de> Deserialize<'de> for DimValue {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> std::result::Result<Self, D::Error> {
        d.deserialize_any(DimVisitor)
    }
}

struct DimVisitor;

impl<'de> serde::de::Visitor<'de> for DimVisitor {
    type Value = DimValue;

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("a dimension")
    }

    fn visit_i64<E>(self, v: i64) -> std::result::Result<DimValue, E> {
        Ok(DimValue::Int(v.into()))
    }

    fn visit_u64<E>(self, v: u64) -> std::result::Result<DimValue, E> {
        Ok(DimValue::Int(v.into()))
    }

    fn visit_i128<E>(self, v: i128) -> std::result::Result<DimValue, E> {
        Ok(DimValue::Int(v))
    }

    fn visit_u128<E>(self, v: u128) -> std::result::Result<DimValue, E> {
        Ok(i128::try_from(v).map_or_else(|_| DimValue::BigInt(v.to_string()), DimValue::Int))
    }

    fn visit_f64<E>(self, v: f64) -> std::result::Result<DimValue, E> {
        Ok(DimValue::Float(v))
    }

    fn visit_bool<E>(self, v: bool) -> std::result::Result<DimValue, E> {
        Ok(DimValue::Other(v.to_string()))
    }

    fn visit_str<E>(self, v: &str) -> std::result::Result<DimValue, E> {
        Ok(DimValue::Text(v.to_string()))
    }

    fn visit_seq<A: serde::de::SeqAccess<'de>>(
        self,
        mut seq: A,
    ) -> std::result::Result<DimValue, A::Error> {
        while seq.next_element::<serde::de::IgnoredAny>()?.is_some() {}
        Ok(DimValue::Other("an array".into()))
    }

    fn visit_map<A: serde::de::MapAccess<'de>>(
        self,
        mut map: A,
    ) -> std::result::Result<DimValue, A::Error> {
        // A TOML date-time reaches a visitor as a one-entry map whose key
        // is the reader's private marker.
        let mut what = "a table";
        while let Some(key) = map.next_key::<String>()? {
            if key.contains("datetime") {
                what = "a date or time";
            }
            map.next_value::<serde::de::IgnoredAny>()?;
        }
        Ok(DimValue::Other(what.into()))
    }
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct TensorEntry {
    name: Option<String>,
    indices: Vec<String>,
    values: Option<Vec<f64>>,
    imag: Option<Vec<f64>>,
    npy: Option<String>,
    fill: Option<String>,
    seed: Option<i64>,
}

/// Reads a native network file.
pub fn read_native(path: &Path) -> Result<Network> {
    let text = crate::io::read_text(path)?;
    let base = path.parent().unwrap_or(Path::new("."));
    let stem = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_default();
    parse_native(&text, &path.display().to_string(), base, &stem)
}

/// Parses native network text. `source` names it in errors, `base` is the
/// directory `.npy` paths are relative to, `default_name` is used when the
/// file gives no `name`.
pub fn parse_native(text: &str, source: &str, base: &Path, default_name: &str) -> Result<Network> {
    let lines = LineIndex::new(text);
    let line = |offset: usize| Some(lines.line(offset));
    let file: NativeFile = toml::from_str(text).map_err(|e| {
        let at = e.span().map(|s| line_of_offset(text, s.start)).unwrap_or(1);
        let mut message = e.message().trim().to_string();
        // The TOML reader gives up on integers beyond 128 bits before any
        // field sees them; say which number and what would fit.
        if message == "integer number overflowed" {
            let shown = e.span().and_then(|s| text.get(s)).unwrap_or("").trim();
            message = format!(
                "integer {shown} is too large; dimensions are whole numbers from 1 to 2^63 (write 2^63 as the string \"2^63\"), other integers fit in 64 bits"
            );
        }
        Error::at_line(source, at, format!("not a valid network file: {message}"))
    })?;
    if let Some(f) = &file.format {
        if f.get_ref() != NETWORK_FORMAT {
            return Err(Error::input(
                loc(source, line(f.span().start)),
                format!("format is '{}', expected '{NETWORK_FORMAT}'", f.get_ref()),
            ));
        }
    }
    if let Some(v) = &file.version {
        if *v.get_ref() < 1 || *v.get_ref() > NETWORK_VERSION as i64 {
            return Err(Error::input(
                loc(source, line(v.span().start)),
                format!("network file version {} is not supported; this build reads versions 1..={NETWORK_VERSION}", v.get_ref()),
            ));
        }
    }
    let mut b = NetworkBuilder::new(source);
    b.name(
        file.name
            .clone()
            .unwrap_or_else(|| default_name.to_string()),
    );
    if let Some(d) = &file.dtype {
        let dtype: Dtype = d
            .get_ref()
            .parse()
            .map_err(|m: String| Error::input(loc(source, line(d.span().start)), m))?;
        b.dtype(dtype);
    }
    if let Some(d) = &file.dim {
        let at = line(d.span().start);
        let dim = dim_value(d.get_ref(), "dim").map_err(|m| Error::input(loc(source, at), m))?;
        b.default_dim(dim, at)?;
    }
    for (name, d) in &file.indices {
        let at = line(d.span().start);
        let dim = dim_value(d.get_ref(), name).map_err(|m| Error::input(loc(source, at), m))?;
        b.declare(name, dim, at)?;
    }
    match (&file.einsum, file.tensor.is_empty()) {
        (Some(eq), true) => {
            let at = line(eq.span().start);
            let parsed = einsum::parse_equation(eq.get_ref())
                .map_err(|m| Error::input(loc(source, at), format!("einsum: {m}")))?;
            for (k, operand) in parsed.inputs.iter().enumerate() {
                b.tensor(&format!("T{k}"), operand, None, at)?;
            }
            for o in &parsed.output {
                b.open(o, at)?;
            }
        }
        (Some(eq), false) => {
            return Err(Error::input(
                loc(source, line(eq.span().start)),
                "give either `einsum = ...` or [[tensor]] entries, not both",
            ))
        }
        (None, _) => {
            for (k, entry) in file.tensor.iter().enumerate() {
                let at = line(entry.span().start);
                let t = entry.get_ref();
                let name = t.name.clone().unwrap_or_else(|| format!("T{k}"));
                let values = tensor_values(t, &name, base, k)
                    .map_err(|m| Error::input(loc(source, at), m))?;
                b.tensor(&name, &t.indices, values, at)?;
            }
        }
    }
    if !file.open.is_empty() && file.einsum.is_some() {
        return Err(Error::in_source(
            source,
            "with `einsum`, the open indices are the equation's output (after `->`); remove `open`",
        ));
    }
    for o in &file.open {
        b.open(o.get_ref(), line(o.span().start))?;
    }
    b.build()
}

fn loc(source: &str, line: Option<usize>) -> crate::error::Location {
    crate::error::Location {
        source: source.to_string(),
        line,
    }
}

fn dim_value(v: &DimValue, what: &str) -> std::result::Result<u64, String> {
    let bad = |shown: &str| {
        format!("index '{what}': dimension {shown} is not valid; dimensions are whole numbers from 1 to 2^63 (write 2^63 as the string \"2^63\")")
    };
    match v {
        // Bare integers stop at i64::MAX, as TOML's do; 2^63 is a string.
        DimValue::Int(i) if (1..=i64::MAX as i128).contains(i) => Ok(*i as u64),
        DimValue::Int(i) => Err(bad(&i.to_string())),
        DimValue::BigInt(digits) => Err(bad(digits)),
        // `{:?}` keeps the point: 2.0, not 2.
        DimValue::Float(x) => Err(bad(&format!("{x:?}"))),
        DimValue::Other(what) => Err(bad(what)),
        DimValue::Text(s) => {
            let t = s.trim();
            let parsed = match t.split_once('^') {
                Some(("2", p)) => p
                    .trim()
                    .parse::<u32>()
                    .ok()
                    .filter(|&p| p <= 63)
                    .map(|p| 1u64 << p),
                _ => t.parse::<u64>().ok(),
            };
            match parsed {
                Some(d) if (1..=crate::network::MAX_DIM).contains(&d) => Ok(d),
                _ => Err(bad(&format!("\"{s}\""))),
            }
        }
    }
}

fn tensor_values(
    t: &TensorEntry,
    name: &str,
    base: &Path,
    position: usize,
) -> std::result::Result<Option<Values>, String> {
    let given = [t.values.is_some(), t.npy.is_some(), t.fill.is_some()]
        .iter()
        .filter(|&&g| g)
        .count();
    if given > 1 {
        return Err(format!(
            "tensor '{name}': give at most one of `values`, `npy` and `fill`"
        ));
    }
    if t.imag.is_some() && t.values.is_none() {
        return Err(format!(
            "tensor '{name}': `imag` needs `values` (the real parts)"
        ));
    }
    if t.seed.is_some() && t.fill.as_deref() != Some("random") {
        return Err(format!(
            "tensor '{name}': `seed` only goes with `fill = \"random\"`"
        ));
    }
    if let Some(re) = &t.values {
        return Ok(Some(Values::Inline {
            re: re.clone(),
            im: t.imag.clone(),
        }));
    }
    if let Some(p) = &t.npy {
        return Ok(Some(Values::Npy(base.join(p))));
    }
    match t.fill.as_deref() {
        None => Ok(None),
        Some("ones") => Ok(Some(Values::Fill(Fill::Ones))),
        Some("copy") => Ok(Some(Values::Fill(Fill::Copy))),
        Some("random") => {
            let seed = match t.seed {
                Some(s) if s >= 0 => s as u64,
                Some(s) => return Err(format!("tensor '{name}': seed {s} must not be negative")),
                None => position as u64,
            };
            Ok(Some(Values::Fill(Fill::Random { seed })))
        }
        Some(other) => Err(format!(
            "tensor '{name}': unknown fill '{other}'; valid fills: \"ones\", \"copy\", \"random\" (with optional `seed`)"
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(text: &str) -> Result<Network> {
        parse_native(text, "n.toml", Path::new("."), "n")
    }

    fn with_dim(value: &str) -> String {
        format!("[indices]\na = {value}\n[[tensor]]\nindices = [\"a\"]\n")
    }

    #[test]
    fn every_bad_dimension_value_gets_the_same_words() {
        let words = "is not valid; dimensions are whole numbers from 1 to 2^63";
        for (value, shown) in [
            ("2.5", "2.5"),
            ("2.0", "2.0"),
            // 2^70 = 1180591620717411303424, beyond TOML's i64.
            ("1180591620717411303424", "1180591620717411303424"),
            // 2^63 = 9223372036854775808: in range, but only as a string.
            ("9223372036854775808", "9223372036854775808"),
            ("-3", "-3"),
            ("true", "true"),
            ("[2]", "an array"),
        ] {
            let e = parse(&with_dim(value)).unwrap_err().to_string();
            let want = format!("n.toml:2: index 'a': dimension {shown} {words}");
            assert!(e.starts_with(&want), "{value}: {e}");
        }
        let e = parse("dim = 1.5\neinsum = \"ab\"\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with(&format!("n.toml:1: index 'dim': dimension 1.5 {words}")),
            "{e}"
        );
    }

    #[test]
    fn an_integer_beyond_128_bits_is_named() {
        // 2^128 = 340282366920938463463374607431768211456: the TOML reader
        // itself gives up on it.
        let e = parse(&with_dim("340282366920938463463374607431768211456"))
            .unwrap_err()
            .to_string();
        assert!(
            e.starts_with("n.toml:2: not a valid network file: integer 340282366920938463463374607431768211456 is too large; dimensions are whole numbers from 1 to 2^63"),
            "{e}"
        );
    }

    #[test]
    fn the_largest_bare_and_string_dimensions_are_read() {
        // i64::MAX = 2^63 - 1 is the largest bare TOML integer.
        let net = parse(&with_dim("9223372036854775807")).unwrap();
        assert_eq!(net.dims(), vec![(1u64 << 63) - 1]);
        let net = parse(&with_dim("\"2^63\"")).unwrap();
        assert_eq!(net.dims(), vec![1u64 << 63]);
    }
}
