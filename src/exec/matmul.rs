//! The matrix-multiply back end behind a small trait: faer for real work, a
//! plain triple loop as the deterministic stand-in tests compare against.

use faer::{Accum, MatMut, MatRef, Par};
use num_complex::Complex64;

use super::scalar::Scalar;

/// A matrix over borrowed data: element (i, j) sits at
/// `offset + i * row_stride + j * col_stride`.
#[derive(Debug, Clone, Copy)]
pub struct MatView<'a, T> {
    /// The underlying elements.
    pub data: &'a [T],
    /// Where element (0, 0) sits.
    pub offset: usize,
    /// Number of rows.
    pub rows: usize,
    /// Number of columns.
    pub cols: usize,
    /// Distance between rows, in elements.
    pub row_stride: usize,
    /// Distance between columns, in elements.
    pub col_stride: usize,
}

impl<T: Copy> MatView<'_, T> {
    /// Element (i, j).
    pub fn at(&self, i: usize, j: usize) -> T {
        self.data[self.offset + i * self.row_stride + j * self.col_stride]
    }

    /// The transposed matrix (no copy: the strides swap).
    pub fn transposed(self) -> Self {
        MatView {
            rows: self.cols,
            cols: self.rows,
            row_stride: self.col_stride,
            col_stride: self.row_stride,
            ..self
        }
    }

    /// True when every element lies inside `data`.
    pub fn in_bounds(&self) -> bool {
        if self.rows == 0 || self.cols == 0 {
            return true;
        }
        let last =
            self.offset + (self.rows - 1) * self.row_stride + (self.cols - 1) * self.col_stride;
        last < self.data.len()
    }
}

/// Multiplies matrices.
pub trait MatMul: Sync {
    /// Overwrites `dst`, a contiguous row-major `lhs.rows` x `rhs.cols`
    /// block, with `lhs * rhs`, using up to `threads` threads.
    fn matmul<T: Scalar>(
        &self,
        dst: &mut [T],
        lhs: MatView<'_, T>,
        rhs: MatView<'_, T>,
        threads: usize,
    );

    /// Adds `lhs * rhs` to `dst` (same shapes as [`MatMul::matmul`]). The
    /// modular kernel sums its inner dimension in blocks this way without
    /// a second buffer. The provided version multiplies into a temporary
    /// (not metered) and adds it; the back ends here override it.
    fn matmul_add<T: Scalar>(
        &self,
        dst: &mut [T],
        lhs: MatView<'_, T>,
        rhs: MatView<'_, T>,
        threads: usize,
    ) {
        let mut tmp = vec![T::default(); dst.len()];
        self.matmul(&mut tmp, lhs, rhs, threads);
        for (d, t) in dst.iter_mut().zip(tmp) {
            *d += t;
        }
    }
}

/// Below this many multiply-adds a product is done by the plain loop: the
/// call overhead of the blocked kernel would dominate.
const SMALL_OPS: usize = 256;

/// faer's blocked, vectorised multiply (parallel with rayon when `threads > 1`).
#[derive(Debug, Clone, Copy, Default)]
pub struct FaerMatMul;

impl MatMul for FaerMatMul {
    fn matmul<T: Scalar>(
        &self,
        dst: &mut [T],
        lhs: MatView<'_, T>,
        rhs: MatView<'_, T>,
        threads: usize,
    ) {
        faer_product(dst, lhs, rhs, threads, Accum::Replace);
    }

    fn matmul_add<T: Scalar>(
        &self,
        dst: &mut [T],
        lhs: MatView<'_, T>,
        rhs: MatView<'_, T>,
        threads: usize,
    ) {
        faer_product(dst, lhs, rhs, threads, Accum::Add);
    }
}

/// `dst = lhs * rhs` or `dst += lhs * rhs` with faer.
fn faer_product<T: Scalar>(
    dst: &mut [T],
    lhs: MatView<'_, T>,
    rhs: MatView<'_, T>,
    threads: usize,
    accum: Accum,
) {
    let (m, k, n) = (lhs.rows, lhs.cols, rhs.cols);
    assert!(rhs.rows == k && dst.len() == m * n, "matrix shapes agree");
    assert!(
        lhs.in_bounds() && rhs.in_bounds(),
        "matrix views stay inside their data"
    );
    if m * k * n <= SMALL_OPS {
        return loop_product(dst, lhs, rhs, matches!(accum, Accum::Add));
    }
    // SAFETY: both views were checked to stay inside their slices, the
    // destination is exactly m x n contiguous, and the borrows keep the
    // data alive and unaliased for the call.
    let (a, b, c) = unsafe {
        (
            MatRef::<T>::from_raw_parts(
                lhs.data.as_ptr().add(lhs.offset),
                m,
                k,
                lhs.row_stride as isize,
                lhs.col_stride as isize,
            ),
            MatRef::<T>::from_raw_parts(
                rhs.data.as_ptr().add(rhs.offset),
                k,
                n,
                rhs.row_stride as isize,
                rhs.col_stride as isize,
            ),
            MatMut::<T>::from_raw_parts_mut(dst.as_mut_ptr(), m, n, n as isize, 1),
        )
    };
    let par = if threads > 1 {
        Par::rayon(threads)
    } else {
        Par::Seq
    };
    let one = T::from_complex(Complex64::new(1.0, 0.0));
    faer::linalg::matmul::matmul(c, accum, a, b, one, par);
}

/// The textbook triple loop: slow, obviously right, single-threaded.
#[derive(Debug, Clone, Copy, Default)]
pub struct LoopMatMul;

impl MatMul for LoopMatMul {
    fn matmul<T: Scalar>(
        &self,
        dst: &mut [T],
        lhs: MatView<'_, T>,
        rhs: MatView<'_, T>,
        _threads: usize,
    ) {
        loop_product(dst, lhs, rhs, false);
    }

    fn matmul_add<T: Scalar>(
        &self,
        dst: &mut [T],
        lhs: MatView<'_, T>,
        rhs: MatView<'_, T>,
        _threads: usize,
    ) {
        loop_product(dst, lhs, rhs, true);
    }
}

/// The triple loop, overwriting `dst` or adding to it.
fn loop_product<T: Scalar>(dst: &mut [T], lhs: MatView<'_, T>, rhs: MatView<'_, T>, add: bool) {
    let (m, k, n) = (lhs.rows, lhs.cols, rhs.cols);
    assert!(rhs.rows == k && dst.len() == m * n, "matrix shapes agree");
    for i in 0..m {
        for j in 0..n {
            let mut acc = if add { dst[i * n + j] } else { T::default() };
            for p in 0..k {
                acc += lhs.at(i, p) * rhs.at(p, j);
            }
            dst[i * n + j] = acc;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use num_complex::Complex32;

    fn check<T: Scalar>(m: usize, k: usize, n: usize) {
        // Integer-valued entries keep every product and sum exact in all four
        // dtypes, so faer must agree with the loop exactly.
        let val =
            |x: usize| T::from_complex(Complex64::new((x % 7) as f64 - 3.0, (x % 5) as f64 - 2.0));
        let a: Vec<T> = (0..m * k).map(val).collect();
        let b: Vec<T> = (0..k * n).map(|x| val(x * 3 + 1)).collect();
        // lhs stored column-major, rhs row-major: both stride patterns get used.
        let lhs = MatView {
            data: &a,
            offset: 0,
            rows: m,
            cols: k,
            row_stride: 1,
            col_stride: m,
        };
        let rhs = MatView {
            data: &b,
            offset: 0,
            rows: k,
            cols: n,
            row_stride: n,
            col_stride: 1,
        };
        let mut fast = vec![T::default(); m * n];
        let mut slow = vec![T::default(); m * n];
        FaerMatMul.matmul(&mut fast, lhs, rhs, 1);
        LoopMatMul.matmul(&mut slow, lhs, rhs, 1);
        assert!(
            fast == slow,
            "faer and the loop disagree for {m}x{k}x{n} {}",
            T::DTYPE
        );
    }

    #[test]
    fn faer_matches_the_loop() {
        for (m, k, n) in [(1, 1, 1), (3, 4, 5), (17, 33, 9), (40, 1, 40), (1, 70, 1)] {
            check::<f32>(m, k, n);
            check::<f64>(m, k, n);
            check::<Complex32>(m, k, n);
            check::<Complex64>(m, k, n);
        }
    }
}
