//! Dimension products near and beyond 2^64: exact values while they fit in
//! a u128, log2 beyond, clear refusals where a machine integer is needed;
//! never a wrapped number.

use crate::support::bin::run as sliceplan;

fn inspect_matmul(dim: u64) -> serde_json::Value {
    let dims = format!("a={dim},b={dim},c={dim}");
    let (code, out, err) = sliceplan(&[
        "inspect",
        "--einsum",
        "ab,bc->ac",
        "--dims",
        &dims,
        "--json",
    ]);
    assert_eq!(code, Some(0), "{err}");
    serde_json::from_str(&out).unwrap()
}

#[test]
fn matrix_products_straddling_2_64_stay_exact() {
    // A (d x d) times (d x d): d^3 multiply-adds, peak = both inputs and the
    // output, 3 d^2 elements (closed forms), computed here in u128.
    for d in [u32::MAX as u64, 1 << 32, (1 << 32) + 1, 3_000_000_000_000] {
        let j = inspect_matmul(d);
        let d = d as u128;
        let ops = d.checked_mul(d).and_then(|x| x.checked_mul(d));
        match ops {
            Some(ops) => assert_eq!(j["tree"]["total_ops"], ops.to_string(), "d = {d}"),
            // Past 2^128 the count is carried as log2 only.
            None => assert!(
                j["tree"]["total_ops"].as_str().unwrap().starts_with("2^"),
                "d = {d}"
            ),
        }
        let log2 = 3.0 * (d as f64).log2();
        assert!((j["tree"]["total_ops_log2"].as_f64().unwrap() - log2).abs() < 1e-9);
        assert_eq!(
            j["tree"]["peak_elements"],
            (3 * d * d).to_string(),
            "d = {d}"
        );
    }
}

#[test]
fn beyond_2_128_counts_are_powers_of_two_not_wrapped() {
    // d = 2^63: ops 2^189, output 2^126 elements, peak 3 x 2^126 (closed form).
    let j = inspect_matmul(1 << 63);
    assert_eq!(j["tree"]["total_ops"], "2^189.00");
    assert_eq!(j["tree"]["total_ops_log2"], 189.0);
    assert_eq!(j["network"]["output_size_log2"], 126.0);
    assert_eq!(j["tree"]["peak_elements"], (3u128 << 126).to_string());
    // fit cannot fit it and says so in powers of two: inputs 2 x 2^126 x 8 B
    // = 2^130 B; output accumulator 2^126 x 2 lanes x 16 B = 2^131 B.
    let dims = format!("a={0},b={0},c={0}", 1u64 << 63);
    let (code, out, _) = sliceplan(&[
        "fit",
        "--einsum",
        "ab,bc->ac",
        "--dims",
        &dims,
        "--budget",
        "1GiB",
        "--trials",
        "1",
    ]);
    assert_eq!(code, Some(1));
    assert!(
        out.contains("the inputs (2^130.00 B) and the output accumulator (2^131.00 B)"),
        "{out}"
    );
    // A slice's peak (executor rule, inputs sliced in at first use): both
    // inputs and the result, 3 x 2^126 x 8 B = 2^130.58 B; the process:
    // 2^130 + 2^131 + 1.5 x 2^130 = 4.5 x 2^130 B = 2^132.17 B.
    assert!(
        out.contains(
            "unsliced  inputs 2^130.00 B + output 2^131.00 B + 1 x 2^130.58 B = 2^132.17 B"
        ),
        "{out}"
    );
}

#[test]
fn dimensions_above_2_63_are_refused_by_name() {
    let (code, _, err) = sliceplan(&[
        "inspect",
        "--einsum",
        "ab,bc->ac",
        "--dims",
        "a=9223372036854775809,b=2,c=2",
    ]);
    assert_eq!(code, Some(2));
    assert!(err.contains("index 'a'") && err.contains("2^63"), "{err}");
}

#[test]
fn peaks_past_2_1024_are_finite_powers_of_two() {
    // Two inputs of 17 indices of dimension 2^63 hold 2^1071 elements each,
    // past the largest f64; with the third input and the output they are
    // all live at the start, so the peak is 2^1071 + 2^1071 + (smaller
    // terms) = 2^1072 to many digits (closed form).
    let (code, out, err) = sliceplan(&[
        "inspect",
        "--einsum",
        "abcdefghijklmnopq,bcdefghijklmnopqr,rs->as",
        "--dim",
        "9223372036854775808",
        "--json",
    ]);
    assert_eq!(code, Some(0), "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(j["tree"]["width"], 1071.0);
    assert!(
        (j["tree"]["peak_log2"].as_f64().unwrap() - 1072.0).abs() < 1e-9,
        "{out}"
    );
    assert_eq!(j["tree"]["peak_elements"], "2^1072.00");
}
