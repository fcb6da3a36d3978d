//! The partial file one chunk writes: a header, the chunk's summed output
//! blocks, and a checksum over both. Our own format, version 2 (version 1
//! files are still read).
//!
//! ```text
//! sliceplan-partial 2\n             magic and version
//! {"plan_fingerprint": ...}\n       header: one JSON object on one line
//! <data>                             blocks, little-endian elements of the dtype
//! sha256:<64 hex digits>\n           SHA-256 of everything above
//! ```
//!
//! The header names the plan (by its arithmetic fingerprint), the chunk and
//! the slice range, the dtype, the full output shape, the block shape and
//! which blocks follow, how many slices were summed, and the arithmetic the
//! data was computed in ([`Arithmetic`]):
//!
//! * `{"kind": "float"}`: each block is stored as mantissas worth
//!   `data x 2^e`, with `e` the block's entry in `exponents` (the largest
//!   part of a non-zero block lies in `[1, 2)`), so no sum overflows the
//!   dtype;
//! * `{"kind": "modular", "primes": [p0, p1, ...]}`: each block holds, for
//!   each prime in turn, the residues modulo that prime of its elements (as
//!   whole numbers in the dtype's real parts, imaginary parts 0); the data
//!   is `primes` times longer and `exponents` is empty.
//!
//! Version 1 headers have neither field: they read as float data with every
//! exponent 0. A file is written to a temporary name, synced, then renamed,
//! so a reader sees either the whole file or none of it; the checksum
//! catches anything that changed afterwards.

use std::ops::Range;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::chunk::{ChunkId, PARTIAL_EXTENSION};
use crate::error::Result;
use crate::lanes::{decode_lanes, encode_lanes, lanes_per_element};
use crate::network::Dtype;

/// First line's first word.
pub const PARTIAL_MAGIC: &str = "sliceplan-partial";
/// The newest partial version this build reads and writes.
pub const PARTIAL_VERSION: u32 = 2;
const TRAILER_TAG: &[u8] = b"sha256:";
const TRAILER_LEN: usize = 7 + 64 + 1;

/// The header of a partial.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PartialHeader {
    /// The plan's arithmetic fingerprint ([`crate::plan::Plan::fingerprint`]).
    pub plan_fingerprint: String,
    /// The chunk, when the slices were chosen by chunk.
    pub chunk: Option<ChunkId>,
    /// First slice number.
    pub first_slice: u64,
    /// One past the last slice number.
    pub end_slice: u64,
    /// Number of slices summed into the blocks (the range's length).
    pub slices_summed: u64,
    /// Element type of the data.
    pub dtype: Dtype,
    /// Shape of the full output.
    pub shape: Vec<u64>,
    /// Shape of one block (the full shape unless open indices are sliced).
    pub block_shape: Vec<u64>,
    /// Block numbers, in the order their data follows.
    pub blocks: Vec<u64>,
    /// The arithmetic of the data (absent in version 1: float).
    #[serde(default)]
    pub arithmetic: Arithmetic,
    /// Float data: the power of two of each block, in block order (absent
    /// in version 1: all 0). Empty for modular data.
    #[serde(default)]
    pub exponents: Vec<i64>,
}

/// How the values in a partial were computed.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "lowercase", deny_unknown_fields)]
pub enum Arithmetic {
    /// Floating point in the dtype, with power-of-two exponents.
    #[default]
    Float,
    /// Whole numbers as residues modulo each of `primes` (exact counts).
    Modular {
        /// The primes, in the order their residues follow.
        primes: Vec<u64>,
    },
}

impl Arithmetic {
    /// Sets of values per element: 1 for float, one per prime for modular.
    pub fn copies(&self) -> u64 {
        match self {
            Arithmetic::Float => 1,
            Arithmetic::Modular { primes } => primes.len() as u64,
        }
    }
}

impl PartialHeader {
    /// The slice range covered.
    pub fn slices(&self) -> Range<u64> {
        self.first_slice..self.end_slice
    }

    fn data_bytes(&self) -> Option<u64> {
        let elems = self
            .block_shape
            .iter()
            .try_fold(1u64, |a, &d| a.checked_mul(d))?;
        elems
            .checked_mul(self.blocks.len() as u64)?
            .checked_mul(self.arithmetic.copies())?
            .checked_mul(self.dtype.bytes())
    }
}

/// A decoded partial: header and the blocks' lanes (see [`crate::lanes`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Partial {
    /// The header.
    pub header: PartialHeader,
    /// All blocks, concatenated, as f64 lanes.
    pub lanes: Vec<f64>,
}

impl Partial {
    /// The lanes of the `i`-th block listed in the header.
    pub fn block(&self, i: usize) -> &[f64] {
        let n = self.lanes.len() / self.header.blocks.len().max(1);
        &self.lanes[i * n..(i + 1) * n]
    }
}

/// Encodes a partial into its file bytes.
pub fn encode(partial: &Partial) -> Vec<u8> {
    let header = serde_json::to_string(&partial.header).expect("headers always serialise");
    let mut out = format!("{PARTIAL_MAGIC} {PARTIAL_VERSION}\n{header}\n").into_bytes();
    encode_lanes(partial.header.dtype, &partial.lanes, &mut out);
    let digest = Sha256::digest(&out);
    out.extend_from_slice(TRAILER_TAG);
    for b in digest {
        out.extend_from_slice(format!("{b:02x}").as_bytes());
    }
    out.push(b'\n');
    out
}

/// Decodes file bytes into a partial; the error says what is wrong.
pub fn decode(bytes: &[u8]) -> std::result::Result<Partial, String> {
    if !bytes.starts_with(PARTIAL_MAGIC.as_bytes()) {
        return Err(format!(
            "not a partial file (it does not start with '{PARTIAL_MAGIC}')"
        ));
    }
    if bytes.len() < TRAILER_LEN {
        return Err("truncated: the checksum line is missing".into());
    }
    let (body, trailer) = bytes.split_at(bytes.len() - TRAILER_LEN);
    if !trailer.starts_with(TRAILER_TAG) || trailer[TRAILER_LEN - 1] != b'\n' {
        return Err("truncated or damaged: the last line is not a sha256 checksum".into());
    }
    let digest: String = Sha256::digest(body)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect();
    if digest.as_bytes() != &trailer[TRAILER_TAG.len()..TRAILER_LEN - 1] {
        return Err(
            "checksum mismatch: the file was changed or damaged after it was written".into(),
        );
    }
    let mut lines = body.splitn(3, |&b| b == b'\n');
    let first = std::str::from_utf8(lines.next().unwrap_or_default()).unwrap_or("");
    let version = first
        .strip_prefix(PARTIAL_MAGIC)
        .and_then(|v| v.trim().parse::<u32>().ok())
        .ok_or("the first line is not 'sliceplan-partial <version>'")?;
    if version == 0 || version > PARTIAL_VERSION {
        return Err(format!(
            "partial version {version} is not supported; this build reads versions 1..={PARTIAL_VERSION}"
        ));
    }
    let header_line = lines.next().ok_or("the header line is missing")?;
    let mut header: PartialHeader =
        serde_json::from_slice(header_line).map_err(|e| format!("the header is not valid: {e}"))?;
    match (&header.arithmetic, version) {
        (Arithmetic::Float, 1) if header.exponents.is_empty() => {
            header.exponents = vec![0; header.blocks.len()];
        }
        (_, 1) => {
            return Err("a version 1 header cannot name an arithmetic or exponents".into());
        }
        (Arithmetic::Float, _) if header.exponents.len() != header.blocks.len() => {
            return Err(format!(
                "the header lists {} exponents for {} blocks",
                header.exponents.len(),
                header.blocks.len()
            ));
        }
        (Arithmetic::Modular { primes }, _)
            if primes.is_empty() || !header.exponents.is_empty() =>
        {
            return Err("modular data needs at least one prime and no exponents".into());
        }
        _ => {}
    }
    let data = lines.next().unwrap_or_default();
    if header.data_bytes() != Some(data.len() as u64) {
        return Err(format!(
            "the data holds {} bytes, the header describes {}",
            data.len(),
            header
                .data_bytes()
                .map_or_else(|| "more than 2^64".to_string(), |b| b.to_string())
        ));
    }
    if header.slices_summed != header.end_slice.saturating_sub(header.first_slice) {
        return Err("the header's slice count does not match its slice range".into());
    }
    let lanes = decode_lanes(header.dtype, data);
    debug_assert_eq!(
        lanes.len() as u64,
        header.data_bytes().unwrap_or(0) / header.dtype.bytes()
            * lanes_per_element(header.dtype) as u64
    );
    Ok(Partial { header, lanes })
}

/// Writes a partial atomically (temporary file, sync, rename).
pub fn write_partial(path: &Path, partial: &Partial) -> Result<()> {
    crate::io::write_atomic(path, &encode(partial))
}

/// Reads and checks a partial; the error says what is wrong with the file.
pub fn read_partial(path: &Path) -> std::result::Result<Partial, String> {
    let bytes = std::fs::read(path).map_err(|e| format!("cannot read: {e}"))?;
    decode(&bytes)
}

/// The partial files in `dir`, sorted by name.
pub fn list_partials(dir: &Path) -> Result<Vec<PathBuf>> {
    let entries = std::fs::read_dir(dir).map_err(|e| crate::Error::read(dir, e))?;
    let mut out = Vec::new();
    for entry in entries {
        let path = entry.map_err(|e| crate::Error::read(dir, e))?.path();
        if path.extension().and_then(|x| x.to_str()) == Some(PARTIAL_EXTENSION) && path.is_file() {
            out.push(path);
        }
    }
    out.sort();
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample(dtype: Dtype) -> Partial {
        Partial {
            header: PartialHeader {
                plan_fingerprint: "00112233aabbccdd".into(),
                chunk: Some(ChunkId { index: 1, of: 4 }),
                first_slice: 3,
                end_slice: 6,
                slices_summed: 3,
                dtype,
                shape: vec![2, 2],
                block_shape: vec![2],
                blocks: vec![0, 1],
                arithmetic: Arithmetic::Float,
                exponents: vec![3, -2000],
            },
            lanes: match lanes_per_element(dtype) {
                1 => vec![1.0, 2.0, 3.0, 4.0],
                _ => vec![1.0, -1.0, 2.0, -2.0, 3.0, -3.0, 4.0, -4.0],
            },
        }
    }

    #[test]
    fn round_trips_in_every_dtype() {
        for dtype in Dtype::ALL {
            let p = sample(dtype);
            assert_eq!(decode(&encode(&p)).unwrap(), p);
        }
        assert_eq!(sample(Dtype::F64).block(1), &[3.0, 4.0]);
    }

    #[test]
    fn modular_partials_hold_one_block_copy_per_prime() {
        let mut p = sample(Dtype::F64);
        p.header.arithmetic = Arithmetic::Modular {
            primes: vec![2_097_143, 2_097_133],
        };
        p.header.exponents.clear();
        p.lanes.extend([5.0, 6.0, 7.0, 8.0]);
        assert_eq!(decode(&encode(&p)).unwrap(), p);
        // Two blocks, each with its residues for both primes.
        assert_eq!(p.block(1), &[5.0, 6.0, 7.0, 8.0]);
        p.lanes.truncate(4);
        assert!(decode(&encode(&p)).unwrap_err().contains("the data holds"));
    }

    #[test]
    fn version_1_reads_as_float_with_exponent_0() {
        // A version 1 file as the previous build wrote it: no arithmetic and
        // no exponents in the header.
        let mut p = sample(Dtype::F64);
        p.header.exponents.clear();
        let header = serde_json::to_string(&p.header).unwrap();
        let header = header.replace(",\"arithmetic\":{\"kind\":\"float\"},\"exponents\":[]", "");
        assert!(!header.contains("arithmetic"), "{header}");
        let mut bytes = format!("{PARTIAL_MAGIC} 1\n{header}\n").into_bytes();
        encode_lanes(Dtype::F64, &p.lanes, &mut bytes);
        let digest = Sha256::digest(&bytes);
        bytes.extend_from_slice(TRAILER_TAG);
        for b in digest {
            bytes.extend_from_slice(format!("{b:02x}").as_bytes());
        }
        bytes.push(b'\n');
        let back = decode(&bytes).unwrap();
        assert_eq!(back.header.arithmetic, Arithmetic::Float);
        assert_eq!(back.header.exponents, vec![0, 0]);
        assert_eq!(back.lanes, p.lanes);
    }

    #[test]
    fn any_flipped_byte_is_caught() {
        let bytes = encode(&sample(Dtype::C64));
        for i in 0..bytes.len() {
            let mut bad = bytes.clone();
            bad[i] ^= 0x10;
            assert!(decode(&bad).is_err(), "flipping byte {i} went unnoticed");
        }
        assert!(decode(&bytes[..bytes.len() - 1]).is_err());
    }
}
