//! The one copy routine of the executor: copy a strided view into a new
//! row-major tensor over a chosen index order, summing out the indices the
//! copy does not keep.
//!
//! # Method
//!
//! Writes are always contiguous: the trailing output axes form the *row*
//! group (at least 64 elements when the shape allows). When reading along
//! the row is strided and some other axis is read more contiguously, those
//! axes form the *column* group, and the copy proceeds in tiles of rows x
//! columns so that the strided reads of neighbouring rows share cache lines
//! (a cache-blocked transpose, generalised to many small axes). Remaining
//! axes are walked by an odometer. A group of several axes carries a table
//! of offsets (at most 4096 entries); a single axis uses its stride.
//!
//! # Complexity
//!
//! O(elements of the result x elements summed per result element) time;
//! O(the group tables) extra memory.

use std::sync::Arc;

use super::dense::{for_each_offset, row_major_strides, Dense, View};
use super::memory::{Held, Meter};
use super::modular::{Prime, ADD_BLOCK};
use super::scalar::Scalar;
use crate::network::IndexId;

/// Target number of elements of a group.
const GROUP: usize = 64;
/// Largest group that gets an offset table.
const TABLE_MAX: usize = 4096;
/// Tile edges: row elements and column elements.
const TILE_ROW: usize = 64;
const TILE_COL: usize = 32;

/// Offsets of the elements of a group of axes, in the source and the result.
enum Group {
    /// One axis (or none: length 1).
    Axis { len: usize, src: usize, dst: usize },
    /// Several axes, row-major over them.
    Table { src: Vec<usize>, dst: Vec<usize> },
}

impl Group {
    fn new(axes: &[usize], dims: &[usize], sstr: &[usize], dstr: &[usize]) -> Group {
        match axes {
            [] => Group::Axis {
                len: 1,
                src: 0,
                dst: 0,
            },
            &[k] => Group::Axis {
                len: dims[k],
                src: sstr[k],
                dst: dstr[k],
            },
            _ => {
                let gd: Vec<usize> = axes.iter().map(|&k| dims[k]).collect();
                let gs: Vec<usize> = axes.iter().map(|&k| sstr[k]).collect();
                let gt: Vec<usize> = axes.iter().map(|&k| dstr[k]).collect();
                let (mut src, mut dst) = (Vec::new(), Vec::new());
                for_each_offset(&gd, &gs, &gt, |s, d| {
                    src.push(s);
                    dst.push(d);
                });
                Group::Table { src, dst }
            }
        }
    }

    fn len(&self) -> usize {
        match self {
            Group::Axis { len, .. } => *len,
            Group::Table { src, .. } => src.len(),
        }
    }

    #[inline]
    fn src(&self, j: usize) -> usize {
        match self {
            Group::Axis { src, .. } => j * src,
            Group::Table { src, .. } => src[j],
        }
    }

    #[inline]
    fn dst(&self, j: usize) -> usize {
        match self {
            Group::Axis { dst, .. } => j * dst,
            Group::Table { dst, .. } => dst[j],
        }
    }
}

/// Takes axes from `candidates` (in order) until the group holds at least
/// [`GROUP`] elements, never letting a group of several axes exceed
/// [`TABLE_MAX`].
fn take_group(candidates: &[usize], dims: &[usize]) -> Vec<usize> {
    let mut group = Vec::new();
    let mut size = 1usize;
    for &k in candidates {
        if size >= GROUP || (!group.is_empty() && size * dims[k] > TABLE_MAX) {
            break;
        }
        group.push(k);
        size *= dims[k];
    }
    group
}

/// Copies `src` into a new row-major tensor over `out` (every entry must be
/// an index of `src`), summing over the indices of `src` not in `out`. The
/// result is counted on `meter` and keeps the exponent of `src`.
pub fn permute_sum<T: Scalar>(src: &View<'_, T>, out: &[IndexId], meter: &Arc<Meter>) -> Dense<T> {
    permute_sum_mod(src, out, meter, None)
}

/// [`permute_sum`] for residues modulo `modulus` when one is given: sums
/// are reduced after every [`ADD_BLOCK`] terms and at the end, so they stay
/// exact (see [`super::modular`]).
pub fn permute_sum_mod<T: Scalar>(
    src: &View<'_, T>,
    out: &[IndexId],
    meter: &Arc<Meter>,
    modulus: Option<&Prime>,
) -> Dense<T> {
    let pos: Vec<usize> = out
        .iter()
        .map(|&e| {
            src.position(e)
                .expect("output indices come from the source")
        })
        .collect();
    let dims: Vec<usize> = pos.iter().map(|&p| src.dims[p]).collect();
    let sstr: Vec<usize> = pos.iter().map(|&p| src.strides[p]).collect();
    let dstr = row_major_strides(&dims);
    let summed: Vec<usize> = (0..src.indices.len())
        .filter(|p| !pos.contains(p))
        .collect();
    let mut held = Held::zeroed(dims.iter().product(), meter);
    let dst = held.as_mut_slice();
    let data = &src.data[src.offset..];
    if !summed.is_empty() {
        let rdims: Vec<usize> = summed.iter().map(|&p| src.dims[p]).collect();
        let rstr: Vec<usize> = summed.iter().map(|&p| src.strides[p]).collect();
        let mut extra = Vec::with_capacity(rdims.iter().product());
        for_each_offset(&rdims, &rstr, &rstr, |o, _| extra.push(o));
        for_each_offset(&dims, &sstr, &dstr, |so, d| {
            let mut acc = T::default();
            for part in extra.chunks(ADD_BLOCK) {
                for &x in part {
                    acc += data[so + x];
                }
                if let Some(m) = modulus {
                    acc = acc.reduced(m);
                }
            }
            dst[d] = acc;
        });
        return Dense::new(out.to_vec(), dims, held).with_exp(src.exp);
    }
    let n = dims.len();
    let trailing: Vec<usize> = (0..n).rev().collect();
    let mut row_axes = take_group(&trailing, &dims);
    row_axes.reverse();
    let row = Group::new(&row_axes, &dims, &sstr, &dstr);
    let row_min = row_axes.iter().map(|&k| sstr[k]).min().unwrap_or(1);
    let mut others: Vec<usize> = (0..n).filter(|k| !row_axes.contains(k)).collect();
    others.sort_by_key(|&k| sstr[k]);
    let col_axes = match others.first() {
        Some(&k) if sstr[k] < row_min => {
            let mut g = take_group(&others, &dims);
            g.sort_unstable();
            g
        }
        _ => Vec::new(),
    };
    let col = Group::new(&col_axes, &dims, &sstr, &dstr);
    let outer: Vec<usize> = (0..n)
        .filter(|k| !row_axes.contains(k) && !col_axes.contains(k))
        .collect();
    let pick = |v: &[usize]| -> Vec<usize> { outer.iter().map(|&k| v[k]).collect() };
    let contiguous = (0..row.len()).all(|j| row.src(j) == j);
    let (rl, cl) = (row.len(), col.len());
    for_each_offset(&pick(&dims), &pick(&sstr), &pick(&dstr), |so, d| {
        for cb in (0..cl).step_by(TILE_COL) {
            for rb in (0..rl).step_by(TILE_ROW) {
                let re = (rb + TILE_ROW).min(rl);
                for i in cb..(cb + TILE_COL).min(cl) {
                    let (s0, d0) = (so + col.src(i), d + col.dst(i));
                    let out_row = &mut dst[d0 + rb..d0 + re];
                    if contiguous {
                        out_row.copy_from_slice(&data[s0 + rb..s0 + re]);
                    } else {
                        for (j, x) in out_row.iter_mut().enumerate() {
                            *x = data[s0 + row.src(rb + j)];
                        }
                    }
                }
            }
        }
    });
    Dense::new(out.to_vec(), dims, held).with_exp(src.exp)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn arange(n: usize) -> Vec<f64> {
        (0..n).map(|x| x as f64).collect()
    }

    /// The copy by the definition: element by element through the odometer.
    fn by_definition(v: &View<'_, f64>, out: &[IndexId]) -> Vec<f64> {
        let pos: Vec<usize> = out.iter().map(|&e| v.position(e).unwrap()).collect();
        let dims: Vec<usize> = pos.iter().map(|&p| v.dims[p]).collect();
        let s: Vec<usize> = pos.iter().map(|&p| v.strides[p]).collect();
        let mut r = Vec::new();
        for_each_offset(&dims, &s, &s, |o, _| r.push(v.data[v.offset + o]));
        r
    }

    #[test]
    fn every_permutation_of_a_mixed_shape_matches_the_definition() {
        // Dims 2, 70, 3, 2, 33: groups, tiles and tables all get used.
        let dims = vec![2, 70, 3, 2, 33];
        let data = arange(dims.iter().product::<usize>() + 5);
        let v = View {
            data: &data,
            offset: 5,
            indices: vec![0, 1, 2, 3, 4],
            strides: row_major_strides(&dims),
            dims,
            exp: 0,
        };
        let meter = Meter::new();
        let mut perm = vec![0, 1, 2, 3, 4];
        // Heap's algorithm: all 120 orders.
        let mut c = [0usize; 5];
        let mut k = 0;
        let check = |p: &[usize]| {
            assert_eq!(
                permute_sum(&v, p, &meter).data(),
                &by_definition(&v, p)[..],
                "order {p:?}"
            )
        };
        check(&perm);
        while k < 5 {
            if c[k] < k {
                perm.swap(if k % 2 == 0 { 0 } else { c[k] }, k);
                check(&perm);
                c[k] += 1;
                k = 0;
            } else {
                c[k] = 0;
                k += 1;
            }
        }
    }
    #[test]
    fn transposes_a_matrix() {
        let meter = Meter::new();
        // A 3x70 matrix (wider than a tile) with A[i][j] = 70 i + j.
        let data = arange(210);
        let v = View {
            data: &data,
            offset: 0,
            indices: vec![0, 1],
            dims: vec![3, 70],
            strides: vec![70, 1],
            exp: 0,
        };
        let t = permute_sum(&v, &[1, 0], &meter);
        assert_eq!(t.dims, vec![70, 3]);
        for j in 0..70 {
            for i in 0..3 {
                assert_eq!(t.data()[j * 3 + i], (70 * i + j) as f64);
            }
        }
        assert_eq!(meter.current(), 210 * 8);
    }

    #[test]
    fn sums_out_dropped_indices() {
        let meter = Meter::new();
        // T[a][b][c] = 12 a + 4 b + c over 2x3x4; sum over b:
        // S[c][a] = sum_b (12 a + 4 b + c) = 36 a + 12 + 3 c.
        let data = arange(24);
        let v = View {
            data: &data,
            offset: 0,
            indices: vec![7, 8, 9],
            dims: vec![2, 3, 4],
            strides: vec![12, 4, 1],
            exp: 0,
        };
        let s = permute_sum(&v, &[9, 7], &meter);
        for c in 0..4 {
            for a in 0..2 {
                assert_eq!(s.data()[c * 2 + a], (36 * a + 12 + 3 * c) as f64);
            }
        }
    }
}
