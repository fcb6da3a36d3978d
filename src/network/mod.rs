//! The network model: tensors with ordered index lists, indices with
//! dimensions, open (output) indices, optional tensor values.
//!
//! A [`Network`] is always valid once built: every dimension is at least 1,
//! tensor names are unique, no index repeats within one tensor, and every open
//! index belongs to some tensor. Build one with [`NetworkBuilder`], which
//! reports the first problem with the item (and line, when the caller knows
//! it) that caused it.

mod builder;
mod fingerprint;
mod summary;
pub mod values;

pub use builder::NetworkBuilder;
pub use summary::Summary;

use std::fmt;
use std::path::PathBuf;
use std::str::FromStr;

/// Position of an index in [`Network::indices`].
pub type IndexId = usize;
/// Position of a tensor in [`Network::tensors`].
pub type TensorId = usize;

/// The largest dimension an index may have (2^63).
pub const MAX_DIM: u64 = 1 << 63;

/// The most tensors a network may have (2^23 = 8,388,608): eight times the
/// 10^6-tensor lattices the search is benchmarked on. Readers refuse a file
/// that would build more, before building it.
pub const MAX_TENSORS: usize = 1 << 23;

/// The most indices one tensor may carry. A tensor of rank 64 with
/// dimensions of 2 already has 2^64 elements; ranks far beyond that are a
/// damaged file, and checking them costs time quadratic in the rank.
pub const MAX_RANK: usize = 1024;

/// Element type of the tensors, which fixes the bytes per element.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Hash, Default, serde::Serialize, serde::Deserialize,
)]
#[serde(rename_all = "lowercase")]
pub enum Dtype {
    /// 32-bit real.
    F32,
    /// 64-bit real.
    F64,
    /// Complex with 32-bit parts (8 bytes), numpy's `complex64`.
    #[default]
    C64,
    /// Complex with 64-bit parts (16 bytes), numpy's `complex128`.
    C128,
}

impl Dtype {
    /// All dtypes, in the order they are documented.
    pub const ALL: [Dtype; 4] = [Dtype::F32, Dtype::F64, Dtype::C64, Dtype::C128];

    /// Bytes taken by one element.
    pub fn bytes(self) -> u64 {
        match self {
            Dtype::F32 => 4,
            Dtype::F64 | Dtype::C64 => 8,
            Dtype::C128 => 16,
        }
    }

    /// True for the complex types.
    pub fn is_complex(self) -> bool {
        matches!(self, Dtype::C64 | Dtype::C128)
    }

    /// Real floating-point operations per multiply-add: 2 for real, 8 for
    /// complex (one complex multiply is 4 real multiplies and 2 adds, plus
    /// the complex add).
    pub fn flops_per_op(self) -> u64 {
        if self.is_complex() {
            8
        } else {
            2
        }
    }

    /// The name used in files and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Dtype::F32 => "f32",
            Dtype::F64 => "f64",
            Dtype::C64 => "c64",
            Dtype::C128 => "c128",
        }
    }
}

impl fmt::Display for Dtype {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Dtype {
    type Err = String;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "f32" | "float32" => Ok(Dtype::F32),
            "f64" | "float64" => Ok(Dtype::F64),
            "c64" | "complex64" => Ok(Dtype::C64),
            "c128" | "complex128" => Ok(Dtype::C128),
            _ => Err(format!(
                "unknown dtype '{s}'; valid: f32, f64, c64 (complex, 8 bytes), c128 (complex, 16 bytes)"
            )),
        }
    }
}

/// One index (leg, bond) of the network.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Index {
    /// The index's name, unique in the network.
    pub name: String,
    /// Its dimension, 1 ..= 2^63.
    pub dim: u64,
}

/// A named way to fill a tensor with values.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Fill {
    /// Every element 1.
    Ones,
    /// The copy (delta) tensor: 1 where all indices take the same value, else
    /// 0. All its indices must have the same dimension.
    Copy,
    /// Reproducible pseudo-random values uniform in [-1, 1) (real part, and
    /// imaginary part for complex dtypes) from the given seed.
    Random {
        /// The seed.
        seed: u64,
    },
}

/// Where a tensor's values come from.
#[derive(Debug, Clone, PartialEq)]
pub enum Values {
    /// Values listed in the file, row-major (last index fastest), like numpy's
    /// default C order. `im` is absent for real tensors.
    Inline {
        /// Real parts.
        re: Vec<f64>,
        /// Imaginary parts, same length as `re`, when complex.
        im: Option<Vec<f64>>,
    },
    /// A `.npy` file (numpy's documented format), path already resolved
    /// against the network file's directory.
    Npy(PathBuf),
    /// A named filler.
    Fill(Fill),
}

/// One tensor of the network.
#[derive(Debug, Clone, PartialEq)]
pub struct Tensor {
    /// The tensor's name, unique in the network.
    pub name: String,
    /// Its indices, in storage order (the first varies slowest).
    pub indices: Vec<IndexId>,
    /// Its values, when given.
    pub values: Option<Values>,
}

/// A validated tensor network.
#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    /// A human-readable name (from the file, or the file's stem).
    pub name: String,
    /// Indices, numbered by first appearance in the tensors.
    pub indices: Vec<Index>,
    /// Tensors, in file order.
    pub tensors: Vec<Tensor>,
    /// Open (output) indices, in output order.
    pub open: Vec<IndexId>,
    /// The dtype the network asks for, when it names one.
    pub dtype: Option<Dtype>,
}

impl Network {
    /// Number of tensors.
    pub fn num_tensors(&self) -> usize {
        self.tensors.len()
    }

    /// Number of indices.
    pub fn num_indices(&self) -> usize {
        self.indices.len()
    }

    /// The dimension of every index, by id.
    pub fn dims(&self) -> Vec<u64> {
        self.indices.iter().map(|i| i.dim).collect()
    }

    /// log2 of the dimension of every index, by id.
    pub fn log2_dims(&self) -> Vec<f64> {
        self.indices.iter().map(|i| (i.dim as f64).log2()).collect()
    }

    /// For every index, the tensors it touches (in tensor order).
    pub fn incidence(&self) -> Vec<Vec<TensorId>> {
        let mut inc = vec![Vec::new(); self.indices.len()];
        for (t, tensor) in self.tensors.iter().enumerate() {
            for &e in &tensor.indices {
                inc[e].push(t);
            }
        }
        inc
    }

    /// For every index, whether it is open.
    pub fn open_mask(&self) -> Vec<bool> {
        let mut mask = vec![false; self.indices.len()];
        for &e in &self.open {
            mask[e] = true;
        }
        mask
    }

    /// Looks an index up by name.
    pub fn index_id(&self, name: &str) -> Option<IndexId> {
        self.indices.iter().position(|i| i.name == name)
    }

    /// Looks a tensor up by name.
    pub fn tensor_id(&self, name: &str) -> Option<TensorId> {
        self.tensors.iter().position(|t| t.name == name)
    }

    /// log2 of the number of elements of a tensor.
    pub fn tensor_size_log2(&self, t: TensorId) -> f64 {
        self.tensors[t]
            .indices
            .iter()
            .map(|&e| (self.indices[e].dim as f64).log2())
            .sum()
    }

    /// Number of elements of a tensor, when it fits in a u128.
    pub fn tensor_size(&self, t: TensorId) -> Option<u128> {
        crate::num::product(self.tensors[t].indices.iter().map(|&e| self.indices[e].dim))
    }

    /// True when every tensor has values.
    pub fn has_values(&self) -> bool {
        self.tensors.iter().all(|t| t.values.is_some())
    }

    /// A stable fingerprint of the structure and the values: tensor names
    /// and order, their indices with dimensions, where their values come
    /// from (by content), the open indices and the dtype. Independent of how
    /// the file was written (whitespace, comments, key order).
    pub fn fingerprint(&self) -> String {
        fingerprint::fingerprint(self)
    }

    /// Resolves a comma-separated list of index names to ids (`field`
    /// names the option in errors).
    pub fn parse_index_list(&self, list: &str, field: &'static str) -> crate::Result<Vec<IndexId>> {
        let names: Vec<String> = list.split(',').map(String::from).collect();
        self.index_ids(&names, field)
    }

    /// Resolves index names to ids, refusing unknown and repeated names
    /// (`field` names the option in errors).
    pub fn index_ids(&self, names: &[String], field: &'static str) -> crate::Result<Vec<IndexId>> {
        let mut out = Vec::new();
        for name in names.iter().map(|s| s.trim()).filter(|s| !s.is_empty()) {
            let id = self.index_id(name).ok_or_else(|| {
                crate::Error::invalid(
                    field,
                    format!(
                        "the network has no index named '{name}' (it has {} indices, e.g. {})",
                        self.indices.len(),
                        self.index_examples()
                    ),
                )
            })?;
            if out.contains(&id) {
                return Err(crate::Error::invalid(
                    field,
                    format!("index '{name}' is listed twice"),
                ));
            }
            out.push(id);
        }
        Ok(out)
    }

    fn index_examples(&self) -> String {
        let names: Vec<&str> = self
            .indices
            .iter()
            .take(5)
            .map(|i| i.name.as_str())
            .collect();
        names.join(", ")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dtype_sizes_follow_numpy() {
        // numpy: float32 4 bytes, float64 8, complex64 8, complex128 16.
        let bytes: Vec<u64> = Dtype::ALL.iter().map(|d| d.bytes()).collect();
        assert_eq!(bytes, vec![4, 8, 8, 16]);
        assert_eq!("c128".parse::<Dtype>(), Ok(Dtype::C128));
        assert!("c32".parse::<Dtype>().is_err());
    }
}
