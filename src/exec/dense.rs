//! Dense tensors (owned, row-major, metered, with a power-of-two exponent),
//! strided views of them, and the row-major odometer the copy routines walk
//! with.
//!
//! Tensors list only their *active* indices: those with dimension above one
//! that are not sliced. An index of dimension one adds nothing to addressing,
//! so dropping it keeps the layout logic free of special cases.

use super::memory::Held;
use super::scalar::Scalar;
use crate::network::IndexId;

/// An owned tensor: row-major data over `indices` (the first varies
/// slowest), worth `data x 2^exp` (see [`super::scale`]).
#[derive(Debug)]
pub struct Dense<T> {
    /// The tensor's indices in storage order.
    pub indices: Vec<IndexId>,
    /// Their dimensions.
    pub dims: Vec<usize>,
    /// The power of two every element is multiplied by.
    pub exp: i64,
    data: Held<T>,
}

impl<T: Scalar> Dense<T> {
    /// Wraps metered data with exponent 0; `data` must hold the product of
    /// `dims` elements.
    pub fn new(indices: Vec<IndexId>, dims: Vec<usize>, data: Held<T>) -> Dense<T> {
        debug_assert_eq!(indices.len(), dims.len());
        debug_assert_eq!(dims.iter().product::<usize>(), data.as_slice().len());
        Dense {
            indices,
            dims,
            exp: 0,
            data,
        }
    }

    /// The same tensor with exponent `exp`.
    pub fn with_exp(mut self, exp: i64) -> Dense<T> {
        self.exp = exp;
        self
    }

    /// The elements in row-major order (to be multiplied by `2^exp`).
    pub fn data(&self) -> &[T] {
        self.data.as_slice()
    }

    /// The elements, mutably.
    pub fn data_mut(&mut self) -> &mut [T] {
        self.data.as_mut_slice()
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
            exp: self.exp,
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
    /// The power of two every element is multiplied by.
    pub exp: i64,
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

#[cfg(test)]
mod tests {
    use super::*;

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
