//! Byte quantities with units: `64GiB`, `1.5TB`, `4096`.
//!
//! Binary units (KiB, MiB, GiB, TiB, PiB) are powers of 1024 and decimal
//! units (KB, MB, GB, TB, PB) powers of 1000, as IEC 80000-13 defines them;
//! a bare letter (K, M, G, T, P, as in Slurm's `--mem=64G`) is a power of
//! 1024, as the scheduler reads it. A bare number is bytes. Fractions are
//! allowed (`1.5GiB`) and rounded down to whole bytes.

/// Parses a byte quantity; the error says what a valid value looks like.
///
/// ```
/// use sliceplan::cost::bytes::parse_bytes;
/// assert_eq!(parse_bytes("1GiB"), Ok(1_073_741_824));
/// assert_eq!(parse_bytes("1GB"), Ok(1_000_000_000));
/// assert_eq!(parse_bytes("512 MiB"), Ok(512 << 20));
/// assert_eq!(parse_bytes("64G"), Ok(64 << 30)); // Slurm's --mem spelling
/// assert_eq!(parse_bytes("64Gi"), Ok(64 << 30));
/// assert!(parse_bytes("-1GB").is_err());
/// ```
pub fn parse_bytes(text: &str) -> Result<u64, String> {
    let hint = "write a size such as 64GiB, 512MB or 1048576 (KiB/MiB/GiB/TiB/PiB and K/M/G/T/P = powers of 1024, KB/MB/GB/TB/PB = powers of 1000)";
    let t = text.trim();
    let split = t
        .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == '_'))
        .unwrap_or(t.len());
    let (number, unit) = t.split_at(split);
    let number: String = number.chars().filter(|&c| c != '_').collect();
    if number.is_empty()
        || number.starts_with('.')
        || number.ends_with('.')
        || number.matches('.').count() > 1
    {
        return Err(format!("'{text}' is not a size; {hint}"));
    }
    let unit = unit.trim();
    let factor: u128 = match unit.to_ascii_lowercase().trim_end_matches('b') {
        "" => 1,
        "k" if unit.len() == 2 => 1_000,
        "m" if unit.len() == 2 => 1_000_000,
        "g" if unit.len() == 2 => 1_000_000_000,
        "t" if unit.len() == 2 => 1_000_000_000_000,
        "p" if unit.len() == 2 => 1_000_000_000_000_000,
        // A bare letter is the batch scheduler's spelling (`--mem=64G`):
        // powers of 1024, as Slurm reads it.
        "k" | "ki" => 1 << 10,
        "m" | "mi" => 1 << 20,
        "g" | "gi" => 1 << 30,
        "t" | "ti" => 1 << 40,
        "p" | "pi" => 1 << 50,
        _ => return Err(format!("'{text}': unknown unit '{unit}'; {hint}")),
    };
    if unit.len() > 1 && !unit.ends_with(['B', 'b']) && !unit.ends_with(['i', 'I']) {
        return Err(format!(
            "'{text}': unknown unit '{unit}' (did you mean '{unit}B'?); {hint}"
        ));
    }
    let (whole, frac) = number.split_once('.').unwrap_or((&number, ""));
    let too_big = || format!("'{text}' is larger than {} bytes", u64::MAX);
    let whole: u128 = whole.parse().map_err(|_| too_big())?;
    let mut bytes = whole.checked_mul(factor).ok_or_else(too_big)?;
    if !frac.is_empty() {
        // frac / 10^len * factor, exactly, rounded down.
        let digits = frac.len().min(30) as u32;
        let f: u128 = frac[..digits as usize]
            .parse()
            .map_err(|_| format!("'{text}' is not a size; {hint}"))?;
        bytes += f * factor / 10u128.pow(digits);
    }
    u64::try_from(bytes).map_err(|_| too_big())
}

/// Formats bytes in binary units, e.g. `1.50 GiB`.
pub fn bytes_human(bytes: f64) -> String {
    const UNITS: [&str; 7] = ["B", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB"];
    if !bytes.is_finite() || bytes >= 1024f64.powi(7) {
        return format!("2^{:.2} B", bytes.log2());
    }
    let mut v = bytes;
    let mut u = 0;
    while v >= 1024.0 && u < UNITS.len() - 1 {
        v /= 1024.0;
        u += 1;
    }
    if u == 0 {
        format!("{v:.0} B")
    } else {
        format!("{v:.2} {}", UNITS[u])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn human_units() {
        assert_eq!(bytes_human(1536.0 * 1024.0 * 1024.0), "1.50 GiB");
        assert_eq!(bytes_human(100.0), "100 B");
    }

    #[test]
    fn units_follow_iec_80000_13() {
        // IEC 80000-13: kibi = 2^10, gibi = 2^30; kilo = 10^3, giga = 10^9.
        assert_eq!(parse_bytes("1GiB"), Ok(1_073_741_824));
        assert_eq!(parse_bytes("1GB"), Ok(1_000_000_000));
        assert_eq!(parse_bytes("1KiB"), Ok(1024));
        assert_eq!(parse_bytes("2TiB"), Ok(2 << 40));
        assert_eq!(parse_bytes("80GiB"), Ok(80 << 30));
        assert_eq!(parse_bytes("1.5GiB"), Ok(1_610_612_736));
        assert_eq!(parse_bytes("100"), Ok(100));
        assert_eq!(parse_bytes("100B"), Ok(100));
        assert_eq!(parse_bytes(" 64 gib "), Ok(64 << 30));
        // A bare binary prefix, as in Slurm's --mem=64G (powers of 1024).
        assert_eq!(parse_bytes("64G"), Ok(64 << 30));
        assert_eq!(parse_bytes("5Gi"), Ok(5 << 30));
        assert_eq!(parse_bytes("512M"), Ok(512 << 20));
    }

    #[test]
    fn junk_negatives_and_overflow_are_refused() {
        for bad in [
            "", "GiB", "-1GB", "1.2.3GB", "12XB", "1e9", "5Gx", "abc", ".5GB", "1.GB",
        ] {
            assert!(parse_bytes(bad).is_err(), "{bad}");
        }
        assert!(parse_bytes("16EiB").is_err());
        assert!(parse_bytes("99999999999999999999999")
            .unwrap_err()
            .contains("larger than"));
        assert!(parse_bytes("20000PB").unwrap_err().contains("larger than"));
    }
}
