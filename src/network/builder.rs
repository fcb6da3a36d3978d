//! Building a [`Network`] item by item, with an error naming the first bad one.

use std::collections::HashMap;

use super::{
    Dtype, Fill, Index, IndexId, Network, Tensor, TensorId, Values, MAX_DIM, MAX_RANK, MAX_TENSORS,
};
use crate::error::{Error, Location, Result};

/// Collects indices and tensors, then validates them into a [`Network`].
///
/// ```
/// use sliceplan::network::NetworkBuilder;
/// let mut b = NetworkBuilder::new("example");
/// b.declare("i", 2, None).unwrap();
/// b.declare("j", 3, None).unwrap();
/// b.tensor("A", &["i", "j"], None, None).unwrap();
/// b.tensor("B", &["j"], None, None).unwrap();
/// b.open("i", None).unwrap();
/// let net = b.build().unwrap();
/// assert_eq!(net.num_tensors(), 2);
/// assert_eq!(net.open, vec![0]);
/// ```
#[derive(Debug, Clone)]
pub struct NetworkBuilder {
    source: String,
    name: String,
    dtype: Option<Dtype>,
    default_dim: Option<u64>,
    declared: HashMap<String, (u64, Option<usize>)>,
    declared_order: Vec<String>,
    indices: Vec<Index>,
    index_ids: HashMap<String, IndexId>,
    tensors: Vec<Tensor>,
    tensor_lines: Vec<Option<usize>>,
    tensor_ids: HashMap<String, TensorId>,
    open: Vec<IndexId>,
}

impl NetworkBuilder {
    /// A builder whose errors name `source` (a file path or a label).
    pub fn new(source: impl Into<String>) -> Self {
        let source = source.into();
        NetworkBuilder {
            name: source.clone(),
            source,
            dtype: None,
            default_dim: None,
            declared: HashMap::new(),
            declared_order: Vec::new(),
            indices: Vec::new(),
            index_ids: HashMap::new(),
            tensors: Vec::new(),
            tensor_lines: Vec::new(),
            tensor_ids: HashMap::new(),
            open: Vec::new(),
        }
    }

    /// Sets the network's human-readable name.
    pub fn name(&mut self, name: impl Into<String>) -> &mut Self {
        self.name = name.into();
        self
    }

    /// Sets the dtype the network asks for.
    pub fn dtype(&mut self, dtype: Dtype) -> &mut Self {
        self.dtype = Some(dtype);
        self
    }

    /// The dimension used for indices that were never declared.
    pub fn default_dim(&mut self, dim: u64, line: Option<usize>) -> Result<&mut Self> {
        check_dim(dim).map_err(|m| self.err(line, format!("default dimension: {m}")))?;
        self.default_dim = Some(dim);
        Ok(self)
    }

    fn err(&self, line: Option<usize>, message: impl Into<String>) -> Error {
        let location = match line {
            Some(l) => Location::line(&self.source, l),
            None => Location::source(&self.source),
        };
        Error::input(location, message)
    }

    /// Declares an index's dimension without using it yet. Declaring the same
    /// name twice with different dimensions is an error.
    pub fn declare(&mut self, name: &str, dim: u64, line: Option<usize>) -> Result<()> {
        check_name(name).map_err(|m| self.err(line, format!("index name: {m}")))?;
        check_dim(dim).map_err(|m| self.err(line, format!("index '{name}': {m}")))?;
        if let Some(&(old, old_line)) = self.declared.get(name) {
            if old != dim {
                let at = old_line
                    .map(|l| format!(" on line {l}"))
                    .unwrap_or_default();
                return Err(self.err(
                    line,
                    format!("index '{name}' has conflicting dimensions {old}{at} and {dim}; give it one dimension"),
                ));
            }
            return Ok(());
        }
        if let Some(&id) = self.index_ids.get(name) {
            let old = self.indices[id].dim;
            if old != dim {
                return Err(self.err(
                    line,
                    format!("index '{name}' has conflicting dimensions {old} and {dim}; give it one dimension"),
                ));
            }
        }
        self.declared.insert(name.to_string(), (dim, line));
        self.declared_order.push(name.to_string());
        Ok(())
    }

    /// Declares an index and registers it at once, returning its id (for
    /// importers and generators that work with ids).
    pub fn index(&mut self, name: &str, dim: u64) -> Result<IndexId> {
        self.declare(name, dim, None)?;
        self.resolve(name, None, None)
    }

    fn resolve(
        &mut self,
        name: &str,
        tensor: Option<&str>,
        line: Option<usize>,
    ) -> Result<IndexId> {
        if let Some(&id) = self.index_ids.get(name) {
            return Ok(id);
        }
        let dim = match self.declared.get(name) {
            Some(&(d, _)) => d,
            None => match self.default_dim {
                Some(d) => d,
                None => {
                    let owner = tensor
                        .map(|t| format!("tensor '{t}': "))
                        .unwrap_or_default();
                    return Err(self.err(
                        line,
                        format!("{owner}index '{name}' has no dimension; declare it (e.g. `{name} = 2` under [indices]) or set a default dimension"),
                    ));
                }
            },
        };
        check_name(name).map_err(|m| self.err(line, format!("index name: {m}")))?;
        let id = self.indices.len();
        self.indices.push(Index {
            name: name.to_string(),
            dim,
        });
        self.index_ids.insert(name.to_string(), id);
        Ok(id)
    }

    /// Adds a tensor over named indices. Indices not seen before take their
    /// declared dimension (or the default).
    pub fn tensor<S: AsRef<str>>(
        &mut self,
        name: &str,
        indices: &[S],
        values: Option<Values>,
        line: Option<usize>,
    ) -> Result<TensorId> {
        let mut ids = Vec::with_capacity(indices.len());
        for idx in indices {
            ids.push(self.resolve(idx.as_ref(), Some(name), line)?);
        }
        self.tensor_ids_checked(name, ids, values, line)
    }

    /// Adds a tensor over index ids returned by [`NetworkBuilder::index`].
    pub fn tensor_by_ids(
        &mut self,
        name: &str,
        indices: Vec<IndexId>,
        values: Option<Values>,
    ) -> Result<TensorId> {
        if let Some(&bad) = indices.iter().find(|&&e| e >= self.indices.len()) {
            return Err(self.err(None, format!("tensor '{name}': unknown index id {bad}")));
        }
        self.tensor_ids_checked(name, indices, values, None)
    }

    fn tensor_ids_checked(
        &mut self,
        name: &str,
        indices: Vec<IndexId>,
        values: Option<Values>,
        line: Option<usize>,
    ) -> Result<TensorId> {
        check_name(name).map_err(|m| self.err(line, format!("tensor name: {m}")))?;
        if self.tensors.len() >= MAX_TENSORS {
            return Err(self.err(
                line,
                format!("tensor '{name}': the network would have more than {MAX_TENSORS} tensors, the most this build accepts"),
            ));
        }
        if indices.len() > MAX_RANK {
            return Err(self.err(
                line,
                format!(
                    "tensor '{name}' has {} indices; a tensor may have at most {MAX_RANK}",
                    indices.len()
                ),
            ));
        }
        if let Some(&other) = self.tensor_ids.get(name) {
            let at = self.tensor_lines[other]
                .map(|l| format!(" (first on line {l})"))
                .unwrap_or_default();
            return Err(self.err(
                line,
                format!("duplicate tensor name '{name}'{at}; tensor names must be unique"),
            ));
        }
        for (k, &e) in indices.iter().enumerate() {
            if indices[..k].contains(&e) {
                return Err(self.err(
                    line,
                    format!(
                        "tensor '{name}': index '{}' appears twice; repeated indices within one tensor (traces, diagonals) are not supported: give each leg its own index and join them with a copy tensor",
                        self.indices[e].name
                    ),
                ));
            }
        }
        if let Some(v) = &values {
            self.check_values(name, &indices, v, line)?;
        }
        let id = self.tensors.len();
        self.tensor_ids.insert(name.to_string(), id);
        self.tensors.push(Tensor {
            name: name.to_string(),
            indices,
            values,
        });
        self.tensor_lines.push(line);
        Ok(id)
    }

    fn check_values(
        &self,
        name: &str,
        indices: &[IndexId],
        values: &Values,
        line: Option<usize>,
    ) -> Result<()> {
        let dims: Vec<u64> = indices.iter().map(|&e| self.indices[e].dim).collect();
        match values {
            Values::Inline { re, im } => {
                let want = crate::num::product(dims.iter().copied());
                if want != Some(re.len() as u128) {
                    let shape: Vec<String> = dims.iter().map(u64::to_string).collect();
                    return Err(self.err(
                        line,
                        format!(
                            "tensor '{name}': {} values given, but its shape ({}) holds {}",
                            re.len(),
                            shape.join("x"),
                            want.map(|w| w.to_string())
                                .unwrap_or_else(|| "more than 2^128".into())
                        ),
                    ));
                }
                if let Some(im) = im {
                    if im.len() != re.len() {
                        return Err(self.err(
                            line,
                            format!(
                                "tensor '{name}': {} imaginary parts for {} values; give one per value",
                                im.len(),
                                re.len()
                            ),
                        ));
                    }
                }
                if re.iter().chain(im.iter().flatten()).any(|x| !x.is_finite()) {
                    return Err(self.err(
                        line,
                        format!("tensor '{name}': values must be finite numbers"),
                    ));
                }
            }
            Values::Fill(Fill::Copy) => {
                if dims.windows(2).any(|w| w[0] != w[1]) {
                    return Err(self.err(
                        line,
                        format!("tensor '{name}': a copy tensor needs all its indices to have the same dimension, got {dims:?}"),
                    ));
                }
            }
            Values::Fill(_) | Values::Npy(_) => {}
        }
        Ok(())
    }

    /// Marks an index as open (output). The order of calls is the output order.
    pub fn open(&mut self, name: &str, line: Option<usize>) -> Result<()> {
        let id = match self.index_ids.get(name) {
            Some(&id) => id,
            None => {
                return Err(self.err(
                    line,
                    format!("open index '{name}' does not belong to any tensor; open indices must be legs of some tensor"),
                ))
            }
        };
        if self.open.contains(&id) {
            return Err(self.err(line, format!("open index '{name}' is listed twice")));
        }
        self.open.push(id);
        Ok(())
    }

    /// Validates and returns the network.
    pub fn build(self) -> Result<Network> {
        if self.tensors.is_empty() {
            return Err(self.err(None, "the network has no tensors; give at least one"));
        }
        for name in &self.declared_order {
            if !self.index_ids.contains_key(name) {
                let line = self.declared[name].1;
                return Err(self.err(
                    line,
                    format!("index '{name}' is declared but no tensor uses it; remove it or add it to a tensor"),
                ));
            }
        }
        Ok(Network {
            name: self.name,
            indices: self.indices,
            tensors: self.tensors,
            open: self.open,
            dtype: self.dtype,
        })
    }
}

fn check_dim(dim: u64) -> std::result::Result<(), String> {
    if dim == 0 {
        Err("dimension 0 is not allowed; dimensions are whole numbers from 1 to 2^63".into())
    } else if dim > MAX_DIM {
        Err(format!("dimension {dim} is larger than 2^63"))
    } else {
        Ok(())
    }
}

fn check_name(name: &str) -> std::result::Result<(), String> {
    if name.is_empty() {
        return Err("names must not be empty".into());
    }
    if name
        .chars()
        .any(|c| c.is_whitespace() || c == ',' || c.is_control())
    {
        return Err(format!(
            "'{name}' contains a space, comma or control character; use letters, digits and _-.:[]"
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rank_above_the_cap_is_refused() {
        let mut b = NetworkBuilder::new("n.toml");
        b.default_dim(1, None).unwrap();
        let names: Vec<String> = (0..=MAX_RANK).map(|k| format!("i{k}")).collect();
        let e = b
            .tensor("T", &names, None, Some(4))
            .unwrap_err()
            .to_string();
        assert_eq!(
            e,
            format!(
                "n.toml:4: tensor 'T' has {} indices; a tensor may have at most {MAX_RANK}",
                MAX_RANK + 1
            )
        );
        b.tensor("U", &names[..MAX_RANK], None, None).unwrap();
    }

    #[test]
    fn repeated_index_in_one_tensor_is_refused() {
        let mut b = NetworkBuilder::new("t");
        b.default_dim(2, None).unwrap();
        let err = b.tensor("A", &["i", "i"], None, Some(4)).unwrap_err();
        assert!(err
            .to_string()
            .starts_with("t:4: tensor 'A': index 'i' appears twice"));
    }

    #[test]
    fn unused_declared_index_is_named() {
        let mut b = NetworkBuilder::new("t");
        b.declare("i", 2, Some(3)).unwrap();
        b.declare("z", 2, Some(4)).unwrap();
        b.tensor("A", &["i"], None, None).unwrap();
        let err = b.build().unwrap_err();
        assert_eq!(
            err.to_string(),
            "t:4: index 'z' is declared but no tensor uses it; remove it or add it to a tensor"
        );
    }

    #[test]
    fn inline_values_must_match_shape() {
        let mut b = NetworkBuilder::new("t");
        b.declare("i", 2, None).unwrap();
        b.declare("j", 3, None).unwrap();
        let v = Values::Inline {
            re: vec![1.0; 5],
            im: None,
        };
        let err = b.tensor("A", &["i", "j"], Some(v), None).unwrap_err();
        assert!(err
            .to_string()
            .contains("5 values given, but its shape (2x3) holds 6"));
    }
}
