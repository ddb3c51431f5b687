//! The low-rank block type `U Vᵀ`.

use rafter_linalg::dense::{axpy, dot_unconj};
use rafter_linalg::{DenseMatrix, Scalar};

/// A block stored as `U Vᵀ` (plain transpose, no conjugation, so complex-symmetric kernels keep
/// their structure), `U: m × k`, `V: n × k`.
#[derive(Clone, Debug, PartialEq)]
pub struct LowRank<T> {
    /// Left factor, `m × k`.
    pub u: DenseMatrix<T>,
    /// Right factor, `n × k`.
    pub v: DenseMatrix<T>,
}

impl<T: Scalar> LowRank<T> {
    /// The rank-0 block of size `m × n`.
    pub fn zero(m: usize, n: usize) -> Self {
        Self { u: DenseMatrix::zeros(m, 0), v: DenseMatrix::zeros(n, 0) }
    }
    /// Rows `m`.
    pub fn nrows(&self) -> usize {
        self.u.nrows()
    }
    /// Columns `n`.
    pub fn ncols(&self) -> usize {
        self.v.nrows()
    }
    /// Rank `k` (columns of the factors).
    pub fn rank(&self) -> usize {
        self.u.ncols()
    }
    /// Bytes of the stored factors, `(m + n) k · size_of::<T>()`.
    pub fn bytes(&self) -> usize {
        (self.nrows() + self.ncols()) * self.rank() * T::BYTES
    }
    /// `y ← y + U (Vᵀ x)`, with `tmp` of length at least `k` as scratch.
    #[inline]
    pub fn gemv_add(&self, x: &[T], y: &mut [T], tmp: &mut [T]) {
        let k = self.rank();
        for (l, t) in tmp[..k].iter_mut().enumerate() {
            *t = dot_unconj(self.v.col(l), x);
        }
        for (l, &t) in tmp[..k].iter().enumerate() {
            axpy(t, self.u.col(l), y);
        }
    }
    /// The dense `m × n` matrix `U Vᵀ` (for checks and small blocks only).
    pub fn to_dense(&self) -> DenseMatrix<T> {
        let (m, n, k) = (self.nrows(), self.ncols(), self.rank());
        let mut d = DenseMatrix::zeros(m, n);
        for j in 0..n {
            let col = d.col_mut(j);
            for l in 0..k {
                axpy(self.v.get(j, l), self.u.col(l), col);
            }
        }
        d
    }
}
