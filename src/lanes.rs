//! Values as f64 *lanes* (one per real element, two per complex one) and
//! their little-endian encoding per dtype: the one encoding that partial
//! files, `.npy` results and the executor share.

use crate::network::Dtype;

/// Number of f64 lanes per element of `dtype` (1 real, 2 complex).
pub fn lanes_per_element(dtype: Dtype) -> usize {
    if dtype.is_complex() {
        2
    } else {
        1
    }
}

/// Appends lanes to `out` as little-endian elements of `dtype` (f32 parts
/// for f32 and c64, f64 parts for f64 and c128).
pub fn encode_lanes(dtype: Dtype, lanes: &[f64], out: &mut Vec<u8>) {
    match dtype {
        Dtype::F32 | Dtype::C64 => {
            for &x in lanes {
                out.extend_from_slice(&(x as f32).to_le_bytes());
            }
        }
        Dtype::F64 | Dtype::C128 => {
            for &x in lanes {
                out.extend_from_slice(&x.to_le_bytes());
            }
        }
    }
}

/// Reads little-endian elements of `dtype` back into lanes. `bytes` must hold
/// a whole number of parts.
pub fn decode_lanes(dtype: Dtype, bytes: &[u8]) -> Vec<f64> {
    match dtype {
        Dtype::F32 | Dtype::C64 => bytes
            .chunks_exact(4)
            .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]) as f64)
            .collect(),
        Dtype::F64 | Dtype::C128 => bytes
            .chunks_exact(8)
            .map(|c| f64::from_le_bytes([c[0], c[1], c[2], c[3], c[4], c[5], c[6], c[7]]))
            .collect(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lanes_round_trip_through_bytes() {
        // 0.5, -2.25 and 3.0 are exact in f32, so every dtype returns them unchanged.
        let lanes = [0.5, -2.25, 3.0, 0.0];
        for dtype in Dtype::ALL {
            let mut bytes = Vec::new();
            encode_lanes(dtype, &lanes, &mut bytes);
            assert_eq!(
                bytes.len() as u64,
                4 * dtype.bytes() / lanes_per_element(dtype) as u64
            );
            assert_eq!(decode_lanes(dtype, &bytes), lanes);
        }
    }
}
