//! Safe strided matrix views over slices and one product, C = alpha·A·B + beta·C,
//! handed to matrixmultiply's sgemm/dgemm after a bounds check.

use crate::real::Real;

/// A read-only matrix inside a slice: element (r, c) is `data[r*row_stride + c*col_stride]`.
#[derive(Clone, Copy)]
pub struct Mat<'a, R> {
    data: &'a [R],
    rows: usize,
    cols: usize,
    row_stride: usize,
    col_stride: usize,
}

impl<'a, R: Real> Mat<'a, R> {
    /// A row-major [rows, cols] matrix whose rows are `row_stride` apart (≥ cols).
    pub fn rows(data: &'a [R], rows: usize, cols: usize, row_stride: usize) -> Self {
        let m = Mat {
            data,
            rows,
            cols,
            row_stride,
            col_stride: 1,
        };
        m.check();
        m
    }

    /// A dense row-major [rows, cols] matrix.
    pub fn dense(data: &'a [R], rows: usize, cols: usize) -> Self {
        Self::rows(data, rows, cols, cols)
    }

    /// The transpose, without copying.
    pub fn t(self) -> Self {
        Mat {
            data: self.data,
            rows: self.cols,
            cols: self.rows,
            row_stride: self.col_stride,
            col_stride: self.row_stride,
        }
    }

    fn check(&self) {
        if self.rows > 0 && self.cols > 0 {
            let last = (self.rows - 1) * self.row_stride + (self.cols - 1) * self.col_stride;
            assert!(
                last < self.data.len(),
                "matrix view past the end of its slice"
            );
        }
    }
}

/// c[m, n] (row-major, rows `row_stride` apart) = alpha·a·b + beta·c.
pub fn gemm<R: Real>(
    alpha: R,
    a: Mat<'_, R>,
    b: Mat<'_, R>,
    beta: R,
    c: &mut [R],
    c_row_stride: usize,
) {
    let (m, k, n) = (a.rows, a.cols, b.cols);
    assert_eq!(b.rows, k, "inner dimensions of a matrix product differ");
    if m == 0 || n == 0 {
        return;
    }
    assert!(
        (m - 1) * c_row_stride + n <= c.len(),
        "product past the end of its output"
    );
    // SAFETY: the views and the output were bounds-checked above for every index
    // the shapes reach; matrixmultiply reads/writes only those.
    unsafe {
        R::gemm_raw(
            m,
            k,
            n,
            alpha,
            a.data.as_ptr(),
            a.row_stride as isize,
            a.col_stride as isize,
            b.data.as_ptr(),
            b.row_stride as isize,
            b.col_stride as isize,
            beta,
            c.as_mut_ptr(),
            c_row_stride as isize,
            1,
        )
    }
}

/// The backward pass of a linear layer y = x·Wᵀ, W dense [out, in]: adds gyᵀ·x to `gw`
/// and writes gy·W into `gx` (rows `gx_row_stride` apart), or adds it to what `gx` holds
/// when `add_to_gx` (an input that feeds two layers).
pub fn linear_backward<R: Real>(
    gy: Mat<'_, R>,
    x: Mat<'_, R>,
    w: &[R],
    gw: &mut [R],
    gx: &mut [R],
    gx_row_stride: usize,
    add_to_gx: bool,
) {
    let (outputs, inputs) = (gy.cols, x.cols);
    gemm(R::ONE, gy.t(), x, R::ONE, gw, inputs);
    let beta = if add_to_gx { R::ONE } else { R::ZERO };
    gemm(
        R::ONE,
        gy,
        Mat::dense(w, outputs, inputs),
        beta,
        gx,
        gx_row_stride,
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn product_matches_the_definition() {
        // Reference: the definition of the matrix product, (AB)_ij = Σ_k A_ik B_kj.
        let a: Vec<f64> = (0..6).map(|v| v as f64).collect(); // [2,3]
        let b: Vec<f64> = (0..12).map(|v| (v as f64) * 0.5 - 1.0).collect(); // [4,3], used transposed
        let mut c = vec![1.0; 8];
        gemm(
            1.0,
            Mat::dense(&a, 2, 3),
            Mat::dense(&b, 4, 3).t(),
            1.0,
            &mut c,
            4,
        );
        for i in 0..2 {
            for j in 0..4 {
                let want: f64 = 1.0 + (0..3).map(|k| a[i * 3 + k] * b[j * 3 + k]).sum::<f64>();
                assert_eq!(c[i * 4 + j], want);
            }
        }
    }
}
