//! Column-major dense matrices and their LU factorisation.

use crate::{LinalgError, Scalar};

/// A dense `nrows × ncols` matrix stored column by column in one contiguous buffer
/// (entry `(i, j)` at `data[i + j·nrows]`).
#[derive(Clone, Debug, PartialEq)]
pub struct DenseMatrix<T> {
    nrows: usize,
    ncols: usize,
    data: Vec<T>,
}

impl<T: Copy> DenseMatrix<T> {
    /// Matrix whose entry `(i, j)` is `f(i, j)`.
    pub fn from_fn(nrows: usize, ncols: usize, mut f: impl FnMut(usize, usize) -> T) -> Self {
        let mut data = Vec::with_capacity(nrows * ncols);
        for j in 0..ncols {
            for i in 0..nrows {
                data.push(f(i, j));
            }
        }
        Self { nrows, ncols, data }
    }

    /// Wraps a column-major buffer; fails when its length is not `nrows·ncols`.
    pub fn from_column_major(nrows: usize, ncols: usize, data: Vec<T>) -> Result<Self, LinalgError> {
        if data.len() != nrows * ncols {
            return Err(LinalgError::DimensionMismatch {
                what: "column-major buffer",
                expected: nrows * ncols,
                got: data.len(),
            });
        }
        Ok(Self { nrows, ncols, data })
    }

    /// Number of rows.
    #[inline]
    pub fn nrows(&self) -> usize {
        self.nrows
    }
    /// Number of columns.
    #[inline]
    pub fn ncols(&self) -> usize {
        self.ncols
    }
    /// The column-major buffer.
    #[inline]
    pub fn as_slice(&self) -> &[T] {
        &self.data
    }
    /// The column-major buffer, mutable.
    #[inline]
    pub fn as_mut_slice(&mut self) -> &mut [T] {
        &mut self.data
    }
    /// Consumes the matrix and returns its column-major buffer.
    pub fn into_vec(self) -> Vec<T> {
        self.data
    }
    /// Entry `(i, j)`.
    #[inline]
    pub fn get(&self, i: usize, j: usize) -> T {
        self.data[i + j * self.nrows]
    }
    /// Sets entry `(i, j)`.
    #[inline]
    pub fn set(&mut self, i: usize, j: usize, v: T) {
        self.data[i + j * self.nrows] = v;
    }
    /// Column `j` as a slice.
    #[inline]
    pub fn col(&self, j: usize) -> &[T] {
        &self.data[j * self.nrows..(j + 1) * self.nrows]
    }
    /// Column `j` as a mutable slice.
    #[inline]
    pub fn col_mut(&mut self, j: usize) -> &mut [T] {
        &mut self.data[j * self.nrows..(j + 1) * self.nrows]
    }
    /// The first `k` columns, as a new matrix.
    pub fn leading_columns(&self, k: usize) -> Self {
        let k = k.min(self.ncols);
        Self { nrows: self.nrows, ncols: k, data: self.data[..k * self.nrows].to_vec() }
    }
}

impl<T: Scalar> DenseMatrix<T> {
    /// The `nrows × ncols` zero matrix.
    pub fn zeros(nrows: usize, ncols: usize) -> Self {
        Self { nrows, ncols, data: vec![T::zero(); nrows * ncols] }
    }

    /// Frobenius norm `‖A‖_F = (Σ |a_ij|²)^½`.
    pub fn frobenius_norm(&self) -> f64 {
        self.data.iter().map(|x| x.abs2()).sum::<f64>().sqrt()
    }

    /// `y ← y + A x`; `x` has `ncols` entries and `y` has `nrows`.
    #[inline]
    pub fn gemv_add(&self, x: &[T], y: &mut [T]) {
        debug_assert_eq!(x.len(), self.ncols);
        debug_assert_eq!(y.len(), self.nrows);
        for (j, &xj) in x.iter().enumerate() {
            axpy(xj, self.col(j), y);
        }
    }

    /// `y ← Aᵀ x` (plain transpose, no conjugation); `x` has `nrows` entries, `y` has `ncols`.
    #[inline]
    pub fn gemv_transpose(&self, x: &[T], y: &mut [T]) {
        debug_assert_eq!(x.len(), self.nrows);
        debug_assert_eq!(y.len(), self.ncols);
        for (j, yj) in y.iter_mut().enumerate() {
            *yj = dot_unconj(self.col(j), x);
        }
    }

    /// The product `A B`.
    pub fn matmul(&self, b: &Self) -> Result<Self, LinalgError> {
        if self.ncols != b.nrows {
            return Err(LinalgError::DimensionMismatch {
                what: "inner dimension of a product",
                expected: self.ncols,
                got: b.nrows,
            });
        }
        let mut c = Self::zeros(self.nrows, b.ncols);
        T::gemm_add(&mut c, self, b);
        Ok(c)
    }

    /// The plain transpose `Aᵀ`.
    pub fn transpose(&self) -> Self {
        Self::from_fn(self.ncols, self.nrows, |i, j| self.get(j, i))
    }
}

/// `y ← y + a x` on slices of equal length.
#[inline]
pub fn axpy<T: Scalar>(a: T, x: &[T], y: &mut [T]) {
    for (yi, &xi) in y.iter_mut().zip(x) {
        *yi += a * xi;
    }
}

/// `Σ x_i y_i` without conjugation, with four partial sums so the loop vectorises.
#[inline]
pub fn dot_unconj<T: Scalar>(x: &[T], y: &[T]) -> T {
    let n = x.len().min(y.len());
    let (x, y) = (&x[..n], &y[..n]);
    let mut acc = [T::zero(); 4];
    let chunks = n / 4;
    for c in 0..chunks {
        for l in 0..4 {
            acc[l] += x[4 * c + l] * y[4 * c + l];
        }
    }
    let mut s = (acc[0] + acc[1]) + (acc[2] + acc[3]);
    for i in 4 * chunks..n {
        s += x[i] * y[i];
    }
    s
}

/// Hermitian inner product `⟨x, y⟩ = Σ conj(x_i) y_i`.
#[inline]
pub fn dot<T: Scalar>(x: &[T], y: &[T]) -> T {
    x.iter().zip(y).map(|(&a, &b)| a.conj() * b).sum()
}

/// Euclidean norm `(Σ |x_i|²)^½`.
#[inline]
pub fn norm2<T: Scalar>(x: &[T]) -> f64 {
    x.iter().map(|v| v.abs2()).sum::<f64>().sqrt()
}

/// LU factorisation with partial pivoting, `P A = L U`, of a square matrix (faer), stored
/// packed in one `n × n` buffer (no extra copies of the matrix).
pub struct DenseLu<T: Scalar> {
    lu: DenseMatrix<T>,
    fwd: Vec<usize>,
    bwd: Vec<usize>,
}

impl<T: Scalar> DenseLu<T> {
    /// Factorises a copy of `a`. Fails when `a` is not square or has a zero or non-finite pivot.
    pub fn factor(a: &DenseMatrix<T>) -> Result<Self, LinalgError> {
        Self::factor_in_place(a.clone())
    }

    /// Factorises `a` in its own storage (the memory-lean path for large dense references).
    pub fn factor_in_place(mut a: DenseMatrix<T>) -> Result<Self, LinalgError> {
        let n = a.nrows();
        if n != a.ncols() {
            return Err(LinalgError::DimensionMismatch {
                what: "columns of a matrix to factorise (it must be square)",
                expected: n,
                got: a.ncols(),
            });
        }
        let (mut fwd, mut bwd) = (vec![0usize; n], vec![0usize; n]);
        if n > 0 {
            T::lu_in_place(&mut a, &mut fwd, &mut bwd);
            let min_pivot = (0..n)
                .map(|i| a.get(i, i).abs())
                .fold(f64::INFINITY, |m, p| if p.is_finite() { m.min(p) } else { 0.0 });
            if min_pivot == 0.0 || !min_pivot.is_finite() {
                return Err(LinalgError::Singular { n, pivot: min_pivot });
            }
        }
        Ok(Self { lu: a, fwd, bwd })
    }

    /// Order of the factorised matrix.
    pub fn order(&self) -> usize {
        self.lu.nrows()
    }

    /// Overwrites the `n × nrhs` column-major `rhs` with `A⁻¹ rhs`.
    pub fn solve_in_place(&self, rhs: &mut [T]) -> Result<(), LinalgError> {
        let n = self.order();
        if n == 0 {
            return Ok(());
        }
        if !rhs.len().is_multiple_of(n) {
            return Err(LinalgError::DimensionMismatch {
                what: "right-hand side length (a multiple of the order)",
                expected: n,
                got: rhs.len(),
            });
        }
        T::lu_solve_packed(&self.lu, &self.fwd, &self.bwd, rhs.len() / n, rhs);
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use num_complex::Complex64;

    // Reference: a hand-checkable 3×3 system (exact solution chosen first, rhs = A x).
    #[test]
    fn lu_solves_small_system_exactly() {
        let a = DenseMatrix::from_fn(3, 3, |i, j| if i == j { 4.0 } else { 1.0 / (1.0 + (i + j) as f64) });
        let x = [1.0, -2.0, 3.0];
        let mut b = vec![0.0; 3];
        a.gemv_add(&x, &mut b);
        let lu = DenseLu::factor(&a).unwrap();
        lu.solve_in_place(&mut b).unwrap();
        for (bi, xi) in b.iter().zip(x) {
            assert!((bi - xi).abs() < 1e-14);
        }
    }

    #[test]
    fn singular_matrix_is_reported() {
        let a = DenseMatrix::from_fn(3, 3, |i, _| i as f64);
        assert!(matches!(DenseLu::factor(&a), Err(LinalgError::Singular { .. })));
    }

    #[test]
    fn qr_and_svd_reconstruct_complex_matrix() {
        let a = DenseMatrix::from_fn(7, 4, |i, j| Complex64::new((i * j) as f64 + 1.0, i as f64 - j as f64));
        let (q, r) = Complex64::qr_thin(&a);
        let qr = q.matmul(&r).unwrap();
        let diff: f64 = a.as_slice().iter().zip(qr.as_slice()).map(|(x, y)| (x - y).norm_sqr()).sum();
        assert!(diff.sqrt() < 1e-12 * a.frobenius_norm());
        let (w, s, z) = Complex64::svd_thin(&a).unwrap();
        let ws = DenseMatrix::from_fn(w.nrows(), w.ncols(), |i, j| w.get(i, j) * s[j]);
        let zh = DenseMatrix::from_fn(z.ncols(), z.nrows(), |i, j| z.get(j, i).conj());
        let rec = ws.matmul(&zh).unwrap();
        let diff: f64 = a.as_slice().iter().zip(rec.as_slice()).map(|(x, y)| (x - y).norm_sqr()).sum();
        assert!(diff.sqrt() < 1e-12 * a.frobenius_norm());
        assert!(s.windows(2).all(|p| p[0] >= p[1]));
    }
}
