//! Contraction trees: binary trees whose leaves are the network's tensors.
//!
//! A [`Tree`] over `n` leaves is stored as its list of merges in single
//! assignment form: node ids `0..n` are the tensors (in network order) and
//! merge `k` creates node `n + k` from two earlier nodes. The last node is the
//! root. The merge list is one valid contraction order; other orders (any
//! topological order of the merges) describe the same tree, and the cost
//! model picks the one with the smallest peak.

mod file;
mod nested;

pub use file::{
    parse_tree_text, read_tree_file, tree_file_text, write_tree_file, TREE_FORMAT, TREE_VERSION,
};
pub use nested::{parse_nested, to_nested};

/// Reads a merge list strictly: every merge must list exactly two nodes.
/// (Read as fixed pairs directly, a `[0, 1, 4]` lost its third number
/// without a word.) For `#[serde(deserialize_with)]` in our file formats.
pub fn deserialize_merges<'de, D>(d: D) -> Result<Vec<[usize; 2]>, D::Error>
where
    D: serde::Deserializer<'de>,
{
    use serde::de::Error as _;
    use serde::Deserialize as _;
    let raw: Vec<Vec<usize>> = Vec::deserialize(d)?;
    raw.into_iter()
        .enumerate()
        .map(|(k, m)| {
            <[usize; 2]>::try_from(m.as_slice()).map_err(|_| {
                D::Error::custom(format!(
                    "merge {k} lists {} node(s) {m:?}; every merge joins exactly two nodes",
                    m.len()
                ))
            })
        })
        .collect()
}

/// [`deserialize_merges`] for an optional key.
pub fn deserialize_optional_merges<'de, D>(d: D) -> Result<Option<Vec<[usize; 2]>>, D::Error>
where
    D: serde::Deserializer<'de>,
{
    deserialize_merges(d).map(Some)
}

/// A binary contraction tree in single-assignment form.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Tree {
    leaves: usize,
    merges: Vec<[usize; 2]>,
}

impl Tree {
    /// Builds a tree from its merges, checking that every node is used once,
    /// only after it exists, and that everything ends in one root.
    pub fn new(leaves: usize, merges: Vec<[usize; 2]>) -> Result<Tree, String> {
        if leaves == 0 {
            return Err("a tree needs at least one leaf".into());
        }
        if merges.len() + 1 != leaves {
            return Err(format!(
                "a tree over {leaves} tensors has exactly {} merges, this one has {}",
                leaves - 1,
                merges.len()
            ));
        }
        let mut used_by: Vec<Option<usize>> = vec![None; leaves + merges.len()];
        for (k, &[a, b]) in merges.iter().enumerate() {
            let node = leaves + k;
            for c in [a, b] {
                if c >= node {
                    return Err(format!(
                        "merge {k} uses node {c}, which does not exist yet (nodes 0..{leaves} are tensors, merge k makes node {leaves}+k)"
                    ));
                }
                if let Some(first) = used_by[c] {
                    return Err(format!(
                        "node {c} is used twice (by merges {first} and {k}); every tensor and intermediate is used exactly once"
                    ));
                }
                used_by[c] = Some(k);
            }
            if a == b {
                return Err(format!("merge {k} merges node {a} with itself"));
            }
        }
        Ok(Tree { leaves, merges })
    }

    /// The tree that merges the leaves left to right: ((((0,1),2),3),...).
    pub fn left_deep(leaves: usize) -> Tree {
        let mut merges = Vec::with_capacity(leaves.saturating_sub(1));
        for t in 1..leaves {
            let acc = if t == 1 { 0 } else { leaves + t - 2 };
            merges.push([acc, t]);
        }
        Tree { leaves, merges }
    }

    /// Number of leaves (tensors).
    pub fn leaves(&self) -> usize {
        self.leaves
    }

    /// The merges, in single-assignment order.
    pub fn merges(&self) -> &[[usize; 2]] {
        &self.merges
    }

    /// Number of nodes (leaves plus merges).
    pub fn num_nodes(&self) -> usize {
        self.leaves + self.merges.len()
    }

    /// The root's node id.
    pub fn root(&self) -> usize {
        self.num_nodes() - 1
    }

    /// True when `node` is a leaf.
    pub fn is_leaf(&self, node: usize) -> bool {
        node < self.leaves
    }

    /// The two children of an internal node, `None` for a leaf.
    pub fn children(&self, node: usize) -> Option<[usize; 2]> {
        node.checked_sub(self.leaves).map(|k| self.merges[k])
    }

    /// The parent of every node (`None` for the root).
    pub fn parents(&self) -> Vec<Option<usize>> {
        let mut parent = vec![None; self.num_nodes()];
        for (k, &[a, b]) in self.merges.iter().enumerate() {
            parent[a] = Some(self.leaves + k);
            parent[b] = Some(self.leaves + k);
        }
        parent
    }

    /// Height of every node: 0 for leaves, 1 + the higher child otherwise.
    pub fn node_heights(&self) -> Vec<usize> {
        let mut h = vec![0; self.num_nodes()];
        for (k, &[a, b]) in self.merges.iter().enumerate() {
            h[self.leaves + k] = 1 + h[a].max(h[b]);
        }
        h
    }

    /// The number of contraction rounds if every independent contraction ran
    /// at once: the root's height.
    pub fn height(&self) -> usize {
        self.node_heights()[self.root()]
    }

    /// The leaves below every node, as sorted lists (for tests and small trees).
    pub fn leaf_sets(&self) -> Vec<Vec<usize>> {
        let mut sets: Vec<Vec<usize>> = (0..self.leaves).map(|t| vec![t]).collect();
        for &[a, b] in &self.merges {
            let mut s = sets[a].clone();
            s.extend_from_slice(&sets[b]);
            s.sort_unstable();
            sets.push(s);
        }
        sets
    }

    /// Checks that `order` (a permutation of merge numbers) never runs a merge
    /// before the merges that make its operands.
    pub fn check_order(&self, order: &[usize]) -> Result<(), String> {
        if order.len() != self.merges.len() {
            return Err(format!(
                "the order lists {} merges, the tree has {}",
                order.len(),
                self.merges.len()
            ));
        }
        let mut done = vec![false; self.merges.len()];
        for &k in order {
            if k >= self.merges.len() || done[k] {
                return Err(format!("merge {k} is out of range or listed twice"));
            }
            for c in self.merges[k] {
                if c >= self.leaves && !done[c - self.leaves] {
                    return Err(format!(
                        "merge {k} is listed before merge {}, which makes its operand",
                        c - self.leaves
                    ));
                }
            }
            done[k] = true;
        }
        Ok(())
    }

    /// Rewrites the tree so that its merges are listed in `order`, which must
    /// pass [`Tree::check_order`]. The tree's shape is unchanged.
    pub fn reordered(&self, order: &[usize]) -> Tree {
        let mut new_id: Vec<usize> = (0..self.num_nodes()).collect();
        let mut merges = Vec::with_capacity(order.len());
        for (pos, &k) in order.iter().enumerate() {
            let [a, b] = self.merges[k];
            merges.push([new_id[a], new_id[b]]);
            new_id[self.leaves + k] = self.leaves + pos;
        }
        Tree {
            leaves: self.leaves,
            merges,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn left_deep_is_valid() {
        let t = Tree::left_deep(4);
        assert_eq!(t.merges(), &[[0, 1], [4, 2], [5, 3]]);
        assert!(Tree::new(4, t.merges().to_vec()).is_ok());
        assert_eq!(t.height(), 3);
        assert_eq!(Tree::left_deep(1).num_nodes(), 1);
    }

    #[test]
    fn invalid_trees_are_refused() {
        assert!(Tree::new(3, vec![[0, 1]])
            .unwrap_err()
            .contains("exactly 2 merges"));
        assert!(Tree::new(3, vec![[0, 1], [0, 2]])
            .unwrap_err()
            .contains("used twice"));
        assert!(Tree::new(3, vec![[0, 4], [3, 2]])
            .unwrap_err()
            .contains("does not exist yet"));
    }

    #[test]
    fn reordering_keeps_the_shape() {
        // ((0,1),(2,3)): merges 0 and 1 are independent.
        let t = Tree::new(4, vec![[0, 1], [2, 3], [4, 5]]).unwrap();
        assert!(t.check_order(&[1, 0, 2]).is_ok());
        assert!(t.check_order(&[2, 0, 1]).is_err());
        let r = t.reordered(&[1, 0, 2]);
        assert_eq!(r.merges(), &[[2, 3], [0, 1], [5, 4]]);
        let mut a = t.leaf_sets();
        let mut b = r.leaf_sets();
        a.sort();
        b.sort();
        assert_eq!(a, b);
    }
}
