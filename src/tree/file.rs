//! The tree file: our own small, versioned TOML format.
//!
//! ```toml
//! format = "sliceplan-tree"
//! version = 1
//! network = "3f2a9c0d11b4e7a2"   # fingerprint of the network it was made for
//! tensors = 4
//! # Node ids 0..tensors are the network's tensors in file order;
//! # merge k makes node tensors+k from the two nodes it lists.
//! merges = [[0, 1], [2, 3], [4, 5]]
//! ```
//!
//! Instead of `merges`, a hand-written file may give `nested = "((A,B),(C,D))"`
//! with tensor names. The `network` key is optional in hand-written files; when
//! present it must match.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::{parse_nested, Tree};
use crate::error::{Error, Result};
use crate::network::Network;

/// The `format` value of a tree file.
pub const TREE_FORMAT: &str = "sliceplan-tree";
/// The newest tree file version this build reads and writes.
pub const TREE_VERSION: u32 = 1;

#[derive(Debug, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct TreeFile {
    format: String,
    version: u32,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    network: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    tensors: Option<usize>,
    #[serde(
        default,
        skip_serializing_if = "Option::is_none",
        deserialize_with = "super::deserialize_optional_merges"
    )]
    merges: Option<Vec<[usize; 2]>>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    nested: Option<String>,
}

/// Reads a tree file and checks it against the network.
pub fn read_tree_file(path: &Path, net: &Network) -> Result<Tree> {
    let text = crate::io::read_text(path)?;
    parse_tree_text(&text, &path.display().to_string(), net)
}

/// Parses tree-file text (`source` names it in errors).
pub fn parse_tree_text(text: &str, source: &str, net: &Network) -> Result<Tree> {
    let file: TreeFile = crate::io::parse_toml(text, source, "tree file")?;
    crate::io::check_header(
        source,
        "tree file",
        &file.format,
        TREE_FORMAT,
        file.version,
        TREE_VERSION,
    )?;
    let fingerprint = net.fingerprint();
    if let Some(fp) = &file.network {
        if *fp != fingerprint {
            return Err(Error::in_source(
                source,
                format!("this tree was made for network {fp}, but '{}' has fingerprint {fingerprint}; find a tree for this network", net.name),
            ));
        }
    }
    if let Some(n) = file.tensors {
        if n != net.num_tensors() {
            return Err(Error::in_source(
                source,
                format!(
                    "the tree is over {n} tensors, the network has {}",
                    net.num_tensors()
                ),
            ));
        }
    }
    let tree = match (file.merges, file.nested) {
        (Some(merges), None) => check_merges(net, merges),
        (None, Some(nested)) => parse_nested(&nested, net),
        _ => Err("give exactly one of `merges` (list of [a, b] node pairs) or `nested` (e.g. \"((A,B),C)\")".into()),
    };
    tree.map_err(|m| Error::in_source(source, m))
}

/// Like [`Tree::new`], but names tensors rather than ids in the common errors.
fn check_merges(net: &Network, merges: Vec<[usize; 2]>) -> std::result::Result<Tree, String> {
    let n = net.num_tensors();
    let mut seen = vec![0usize; n];
    for &[a, b] in &merges {
        for c in [a, b] {
            if c < n {
                seen[c] += 1;
            }
        }
    }
    if let Some(t) = seen.iter().position(|&s| s > 1) {
        return Err(format!(
            "tensor '{}' (node {t}) appears twice in the tree; every tensor must appear exactly once",
            net.tensors[t].name
        ));
    }
    for (k, &[a, b]) in merges.iter().enumerate() {
        if let Some(c) = [a, b].into_iter().find(|&c| c >= n + k) {
            return Err(format!(
                "merge {k} uses node {c}, which does not exist yet (nodes 0..{n} are tensors, merge k makes node {n}+k)"
            ));
        }
    }
    if let Some(t) = seen.iter().position(|&s| s == 0) {
        if n > 1 {
            return Err(format!(
                "the tree does not use tensor '{}' (node {t}); every tensor must appear exactly once",
                net.tensors[t].name
            ));
        }
    }
    Tree::new(n, merges)
}

/// The text of a tree file for `tree` over `net`.
pub fn tree_file_text(tree: &Tree, net: &Network) -> String {
    let file = TreeFile {
        format: TREE_FORMAT.into(),
        version: TREE_VERSION,
        network: Some(net.fingerprint()),
        tensors: Some(net.num_tensors()),
        merges: Some(tree.merges().to_vec()),
        nested: None,
    };
    let body = toml::to_string(&file).expect("tree files always serialise");
    format!(
        "# Contraction tree for network '{}'.\n# Node ids 0..{} are its tensors in file order; merge k makes node {}+k.\n{body}",
        net.name,
        net.num_tensors(),
        net.num_tensors()
    )
}

/// Writes a tree file atomically (temporary file, then rename).
pub fn write_tree_file(path: &Path, tree: &Tree, net: &Network) -> Result<()> {
    crate::io::write_atomic(path, tree_file_text(tree, net).as_bytes())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::network::NetworkBuilder;

    fn net3() -> Network {
        let mut b = NetworkBuilder::new("n");
        b.default_dim(2, None).unwrap();
        b.tensor("A", &["i", "j"], None, None).unwrap();
        b.tensor("B", &["j", "k"], None, None).unwrap();
        b.tensor("C", &["k", "i"], None, None).unwrap();
        b.build().unwrap()
    }

    #[test]
    fn round_trip() {
        let net = net3();
        let tree = Tree::new(3, vec![[1, 2], [0, 3]]).unwrap();
        let text = tree_file_text(&tree, &net);
        assert_eq!(parse_tree_text(&text, "t", &net).unwrap(), tree);
        let nested = format!("format = \"{TREE_FORMAT}\"\nversion = 1\nnested = \"(A, (B, C))\"\n");
        assert_eq!(parse_tree_text(&nested, "t", &net).unwrap(), tree);
    }
}
