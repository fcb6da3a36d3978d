//! Dense tensors (owned, row-major, metered) and strided views of them, with
//! the one copy routine the executor uses: permute into a new index order
//! while summing out indices the result does not keep.
//!
//! Tensors list only their *active* indices: those with dimension above one
//! that are not sliced. An index of dimension one adds nothing to addressing,
//! so dropping it keeps the layout logic free of special cases.

use std::sync::Arc;

use super::memory::{Held, Meter};
use super::scalar::Scalar;
use crate::network::IndexId;

/// An owned tensor: row-major data over `indices` (the first varies slowest).
#[derive(Debug)]
pub struct Dense<T> {
    /// The tensor's indices in storage order.
    pub indices: Vec<IndexId>,
    /// Their dimensions.
    pub dims: Vec<usize>,
    data: Held<T>,
}

impl<T: Scalar> Dense<T> {
    /// Wraps metered data; `data` must hold the product of `dims` elements.
    pub fn new(indices: Vec<IndexId>, dims: Vec<usize>, data: Held<T>) -> Dense<T> {
        debug_assert_eq!(indices.len(), dims.len());
        debug_assert_eq!(dims.iter().product::<usize>(), data.as_slice().len());
        Dense {
            indices,
            dims,
            data,
        }
    }

    /// The elements in row-major order.
    pub fn data(&self) -> &[T] {
        self.data.as_slice()
    }

    /// Bytes counted for this tensor.
    pub fn bytes(&self) -> u64 {
        self.data.bytes()
    }

    /// A view of the whole tensor.
    pub fn view(&self) -> View<'_, T> {
        View {
            data: self.data(),
            offset: 0,
            indices: self.indices.clone(),
            dims: self.dims.clone(),
            strides: row_major_strides(&self.dims),
        }
    }
}

/// A strided window on borrowed data: element `(i_0, i_1, ...)` sits at
/// `offset + sum_k i_k * strides[k]`.
#[derive(Debug, Clone)]
pub struct View<'a, T> {
    /// The underlying elements.
    pub data: &'a [T],
    /// Where element (0, 0, ...) sits.
    pub offset: usize,
    /// The view's indices.
    pub indices: Vec<IndexId>,
    /// Their dimensions.
    pub dims: Vec<usize>,
    /// Their strides in elements.
    pub strides: Vec<usize>,
}

impl<T> View<'_, T> {
    /// The position of index `e` in this view.
    pub fn position(&self, e: IndexId) -> Option<usize> {
        self.indices.iter().position(|&x| x == e)
    }

    /// Number of elements the view covers.
    pub fn len(&self) -> usize {
        self.dims.iter().product()
    }

    /// True when the view covers no element (never, since dimensions are at least 1).
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

/// Row-major strides of `dims`.
pub fn row_major_strides(dims: &[usize]) -> Vec<usize> {
    let mut s = vec![1usize; dims.len()];
    for k in (0..dims.len().saturating_sub(1)).rev() {
        s[k] = s[k + 1] * dims[k + 1];
    }
    s
}

/// Calls `f(offset1, offset2)` for every multi-index over `dims` in row-major
/// order, where each offset is the dot product with its stride list.
pub fn for_each_offset(
    dims: &[usize],
    s1: &[usize],
    s2: &[usize],
    mut f: impl FnMut(usize, usize),
) {
    let n = dims.len();
    if dims.contains(&0) {
        return;
    }
    let mut idx = vec![0usize; n];
    let (mut o1, mut o2) = (0usize, 0usize);
    loop {
        f(o1, o2);
        let mut k = n;
        loop {
            if k == 0 {
                return;
            }
            k -= 1;
            idx[k] += 1;
            o1 += s1[k];
            o2 += s2[k];
            if idx[k] < dims[k] {
                break;
            }
            o1 -= s1[k] * dims[k];
            o2 -= s2[k] * dims[k];
            idx[k] = 0;
        }
    }
}

/// Edge of the square tiles used when a copy transposes.
const TILE: usize = 32;

/// Copies `src` into a new row-major tensor over `out` (every entry must be
/// an index of `src`), summing over the indices of `src` not in `out`.
///
/// The result is counted on `meter`. A transposing copy is done in
/// `TILE` x `TILE` tiles so that neither side is read against the cache.
pub fn permute_sum<T: Scalar>(src: &View<'_, T>, out: &[IndexId], meter: &Arc<Meter>) -> Dense<T> {
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
            for &x in &extra {
                acc += data[so + x];
            }
            dst[d] = acc;
        });
    } else if let Some(last) = dims.len().checked_sub(1) {
        let sl = sstr[last];
        let dl = dims[last];
        // The axis read most contiguously, if it is not the last one.
        let q = (0..last).min_by_key(|&k| sstr[k]).filter(|&k| sstr[k] < sl);
        match q {
            Some(q) => {
                let outer: Vec<usize> = (0..last).filter(|&k| k != q).collect();
                let odims: Vec<usize> = outer.iter().map(|&k| dims[k]).collect();
                let os: Vec<usize> = outer.iter().map(|&k| sstr[k]).collect();
                let od: Vec<usize> = outer.iter().map(|&k| dstr[k]).collect();
                let (dq, sq, tq) = (dims[q], sstr[q], dstr[q]);
                for_each_offset(&odims, &os, &od, |so, d| {
                    for qb in (0..dq).step_by(TILE) {
                        for pb in (0..dl).step_by(TILE) {
                            for p in pb..(pb + TILE).min(dl) {
                                for i in qb..(qb + TILE).min(dq) {
                                    dst[d + i * tq + p] = data[so + i * sq + p * sl];
                                }
                            }
                        }
                    }
                });
            }
            None => {
                let odims = &dims[..last];
                for_each_offset(odims, &sstr[..last], &dstr[..last], |so, d| {
                    let row = &mut dst[d..d + dl];
                    if sl == 1 {
                        row.copy_from_slice(&data[so..so + dl]);
                    } else {
                        for (j, x) in row.iter_mut().enumerate() {
                            *x = data[so + j * sl];
                        }
                    }
                });
            }
        }
    } else {
        dst[0] = data[0];
    }
    Dense::new(out.to_vec(), dims, held)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn arange(n: usize) -> Vec<f64> {
        (0..n).map(|x| x as f64).collect()
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
        };
        let s = permute_sum(&v, &[9, 7], &meter);
        for c in 0..4 {
            for a in 0..2 {
                assert_eq!(s.data()[c * 2 + a], (36 * a + 12 + 3 * c) as f64);
            }
        }
    }

    #[test]
    fn odometer_visits_in_row_major_order() {
        let mut seen = Vec::new();
        for_each_offset(&[2, 3], &[3, 1], &[1, 2], |a, b| seen.push((a, b)));
        assert_eq!(seen, vec![(0, 0), (1, 2), (2, 4), (3, 1), (4, 3), (5, 5)]);
        let mut once = 0;
        for_each_offset(&[], &[], &[], |_, _| once += 1);
        assert_eq!(once, 1);
    }
}
