//! Where each slice's result goes in the final output.
//!
//! The output is row-major over the network's open indices in order. When no
//! open index is sliced, every slice yields the whole output and slices are
//! summed. When some are, a slice yields one *block*: the output with those
//! indices fixed to the slice's values. Blocks are numbered by the values of
//! the sliced open indices, mixed radix in slice-set order (first slowest).

use super::accumulate::Accumulator;
use super::dense::{for_each_offset, row_major_strides};
use super::modular::ResidueSum;
use crate::network::{IndexId, Network};

/// The output's shape and how blocks map into it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OutputLayout {
    /// The full output shape (open indices in order).
    pub shape: Vec<u64>,
    /// The shape of one block (open indices that are not sliced, in order).
    pub block_shape: Vec<u64>,
    /// Per sliced open index: (its position in the slice set, its position
    /// among the open indices, its dimension), in slice-set order.
    sliced_open: Vec<(usize, usize, u64)>,
}

impl OutputLayout {
    /// The layout for `net` sliced over `sliced` (in slice-set order).
    pub fn new(net: &Network, sliced: &[IndexId]) -> OutputLayout {
        let shape: Vec<u64> = net.open.iter().map(|&e| net.indices[e].dim).collect();
        let block_shape = net
            .open
            .iter()
            .filter(|e| !sliced.contains(e))
            .map(|&e| net.indices[e].dim)
            .collect();
        let sliced_open = sliced
            .iter()
            .enumerate()
            .filter_map(|(k, e)| {
                let p = net.open.iter().position(|o| o == e)?;
                Some((k, p, net.indices[*e].dim))
            })
            .collect();
        OutputLayout {
            shape,
            block_shape,
            sliced_open,
        }
    }

    /// Elements of the full output (saturating at `usize::MAX`).
    pub fn len(&self) -> usize {
        self.shape
            .iter()
            .try_fold(1usize, |a, &d| a.checked_mul(usize::try_from(d).ok()?))
            .unwrap_or(usize::MAX)
    }

    /// True for an output without elements (never: dimensions are at least 1).
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Elements of one block.
    pub fn block_len(&self) -> usize {
        self.block_shape.iter().product::<u64>() as usize
    }

    /// Number of distinct blocks.
    pub fn blocks(&self) -> u64 {
        self.sliced_open.iter().map(|s| s.2).product()
    }

    /// The block a slice with sliced values `values` writes to.
    pub fn block_of(&self, values: &[u64]) -> u64 {
        self.sliced_open
            .iter()
            .fold(0, |acc, &(k, _, d)| acc * d + values[k])
    }

    /// The blocks the slices `range` write to, ascending: the list a
    /// partial over that range must carry. `dims` are the dimensions of the
    /// slice set in order (slice numbers are mixed radix, first slowest).
    /// Walks the range with a mixed-radix counter and stops once every block
    /// has been seen, so it costs at most one step per slice run.
    pub fn blocks_of_slices(&self, dims: &[u64], range: std::ops::Range<u64>) -> Vec<u64> {
        if range.is_empty() {
            return Vec::new();
        }
        if self.sliced_open.is_empty() {
            return vec![0];
        }
        let mut digits = vec![0u64; dims.len()];
        let mut rest = range.start;
        for k in (0..dims.len()).rev() {
            digits[k] = rest % dims[k];
            rest /= dims[k];
        }
        let all = self.blocks();
        let mut seen = std::collections::BTreeSet::new();
        for _ in range {
            seen.insert(self.block_of(&digits));
            if seen.len() as u64 == all {
                break;
            }
            for k in (0..dims.len()).rev() {
                digits[k] += 1;
                if digits[k] < dims[k] {
                    break;
                }
                digits[k] = 0;
            }
        }
        seen.into_iter().collect()
    }

    /// Adds `block` (lanes of block number `key`, worth `block x 2^exp`)
    /// into `acc`, the full output.
    pub fn add_block(
        &self,
        key: u64,
        block: &[f64],
        exp: i64,
        lanes_per_element: usize,
        acc: &mut Accumulator,
    ) {
        if block.iter().all(|&x| x == 0.0) {
            return;
        }
        let factor = acc.align(exp);
        let w = lanes_per_element;
        self.for_each_in_block(key, |full, own| {
            for j in 0..w {
                acc.add_lane(full * w + j, block[own * w + j] * factor);
            }
        });
    }

    /// Adds a block of residues (lanes of block number `key`, prime-major as
    /// partials hold them: all elements for the first prime, then the next)
    /// into `sums`, the full output's residues. Only the real lane of each
    /// element is used (`lanes_per_element` lanes per element).
    pub fn add_residue_block(
        &self,
        key: u64,
        block: &[f64],
        lanes_per_element: usize,
        sums: &mut ResidueSum,
    ) {
        let primes = sums.primes().len();
        let per_prime = block.len() / primes.max(1);
        let w = lanes_per_element;
        for k in 0..primes {
            let part = &block[k * per_prime..(k + 1) * per_prime];
            self.for_each_in_block(key, |full, own| sums.add_at(k, full, part[own * w]));
        }
    }

    /// Calls `f(element of the full output, element of the block)` for every
    /// element of block `key`.
    fn for_each_in_block(&self, key: u64, mut f: impl FnMut(usize, usize)) {
        let shape: Vec<usize> = self.shape.iter().map(|&d| d as usize).collect();
        let strides = row_major_strides(&shape);
        let mut fixed = 0usize;
        let mut rest = key;
        for &(_, p, d) in self.sliced_open.iter().rev() {
            fixed += (rest % d) as usize * strides[p];
            rest /= d;
        }
        let sliced_pos: Vec<usize> = self.sliced_open.iter().map(|s| s.1).collect();
        let axes: Vec<usize> = (0..shape.len())
            .filter(|p| !sliced_pos.contains(p))
            .collect();
        let bdims: Vec<usize> = axes.iter().map(|&p| shape[p]).collect();
        let full: Vec<usize> = axes.iter().map(|&p| strides[p]).collect();
        let own = row_major_strides(&bdims);
        for_each_offset(&bdims, &full, &own, |o, b| f(fixed + o, b));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::network::NetworkBuilder;

    #[test]
    fn blocks_land_in_their_rows() {
        // Open (i: 2, j: 3) with i sliced: block k is row k of the 2x3 output.
        let mut b = NetworkBuilder::new("t");
        b.declare("i", 2, None).unwrap();
        b.declare("j", 3, None).unwrap();
        b.tensor("A", &["i", "j"], None, None).unwrap();
        b.open("i", None).unwrap();
        b.open("j", None).unwrap();
        let net = b.build().unwrap();
        let layout = OutputLayout::new(&net, &[0]);
        assert_eq!((layout.blocks(), layout.block_len()), (2, 3));
        assert_eq!(layout.block_of(&[1]), 1);
        let mut acc = Accumulator::new(6, 1);
        layout.add_block(1, &[7.0, 8.0, 9.0], 0, 1, &mut acc);
        assert_eq!(acc.finish(), vec![0.0, 0.0, 0.0, 7.0, 8.0, 9.0]);
        // Slicing j instead: block k is column k.
        let layout = OutputLayout::new(&net, &[1]);
        let mut acc = Accumulator::new(6, 1);
        layout.add_block(2, &[5.0, 6.0], 0, 1, &mut acc);
        assert_eq!(acc.finish(), vec![0.0, 0.0, 5.0, 0.0, 0.0, 6.0]);
    }

    #[test]
    fn blocks_of_slices_match_slice_by_slice() {
        // Open i (2) and j (3), closed k (5); slice set [k, j, i] (k slowest).
        let mut b = NetworkBuilder::new("t");
        for (name, d) in [("i", 2), ("j", 3), ("k", 5)] {
            b.declare(name, d, None).unwrap();
        }
        b.tensor("A", &["i", "j", "k"], None, None).unwrap();
        b.tensor("B", &["k"], None, None).unwrap();
        b.open("i", None).unwrap();
        b.open("j", None).unwrap();
        let net = b.build().unwrap();
        let sliced = [2, 1, 0];
        let dims = [5, 3, 2];
        let layout = OutputLayout::new(&net, &sliced);
        // Brute force: decode every slice number into its values and collect
        // the blocks.
        let brute = |r: std::ops::Range<u64>| {
            let mut set = std::collections::BTreeSet::new();
            for s in r {
                let values = [s / 6, s / 2 % 3, s % 2];
                set.insert(layout.block_of(&values));
            }
            set.into_iter().collect::<Vec<_>>()
        };
        for a in 0..30 {
            for e in a..=30 {
                assert_eq!(
                    layout.blocks_of_slices(&dims, a..e),
                    brute(a..e),
                    "{a}..{e}"
                );
            }
        }
    }
}
