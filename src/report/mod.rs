//! Rendering results for people (aligned text) and scripts (JSON).

pub mod chart;
pub mod fit;
pub mod inspect;
pub mod jobs;
pub mod memory_chart;
pub mod plan;
pub mod steps;
pub mod steps_chart;
mod table;

pub use table::Table;

/// One JSON object, pretty-printed and newline-terminated: what `--json`
/// prints and what JSON files hold.
pub fn to_json<T: serde::Serialize>(value: &T) -> String {
    let mut s = serde_json::to_string_pretty(value).expect("reports always serialise");
    s.push('\n');
    s
}

/// Formats a log2 value with two decimals (`-inf` as `-`).
pub fn log2_str(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.2}")
    } else {
        "-".into()
    }
}

/// Formats an overhead factor: `2.406x`, or `1.14e8x` from 10,000 on.
pub fn overhead_str(x: f64) -> String {
    if x < 1e4 {
        format!("{x:.3}x")
    } else {
        format!("{x:.2e}x")
    }
}

/// Formats a count of ops given as log2: `2^12.51`, or `0` when there is
/// nothing to contract (a single tensor).
pub fn ops_str(log2: f64) -> String {
    if log2.is_finite() {
        format!("2^{log2:.2}")
    } else {
        "0".into()
    }
}

/// Formats an element or byte count given as log2 in human units,
/// e.g. `2^33.00 = 8.00 Gi`.
pub fn pow2_human(log2: f64) -> String {
    if !log2.is_finite() {
        return "0".into();
    }
    const UNITS: [&str; 7] = ["", "Ki", "Mi", "Gi", "Ti", "Pi", "Ei"];
    if log2 >= 70.0 {
        return format!("2^{log2:.2}");
    }
    let step = ((log2 / 10.0).floor().max(0.0) as usize).min(UNITS.len() - 1);
    let mantissa = (log2 - 10.0 * step as f64).exp2();
    format!("2^{log2:.2} = {mantissa:.2} {}", UNITS[step])
        .trim_end()
        .to_string()
}

/// Groups the digits of a decimal string (`40500` → `40,500`); numbers of
/// 10^15 and more print in scientific notation, and other text (such as
/// `2^130.00`) is returned unchanged.
pub fn group_decimal(s: &str) -> String {
    match s.parse::<u128>() {
        Ok(v) if v < 1_000_000_000_000_000 => crate::num::group_thousands(v),
        Ok(v) => format!("{:.3e}", v as f64),
        Err(_) => s.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn human_units() {
        assert_eq!(pow2_human(33.0), "2^33.00 = 8.00 Gi");
        assert_eq!(pow2_human(3.0), "2^3.00 = 8.00");
    }
}
