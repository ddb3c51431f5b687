//! The [`Scalar`] trait: one code path for `f64` and `Complex64`.

use crate::LinalgError;
use crate::dense::DenseMatrix;
use faer::{MatMut, MatRef};
use num_complex::Complex64;
use std::fmt::Debug;
use std::iter::Sum;
use std::ops::{Add, AddAssign, Div, Mul, MulAssign, Neg, Sub, SubAssign};

/// Thin SVD factors `(W, σ, Z)` of `A = W diag(σ) Zᴴ`.
pub type Svd<T> = (DenseMatrix<T>, Vec<f64>, DenseMatrix<T>);

/// A field element the engine computes with: `f64` or [`Complex64`].
///
/// Besides arithmetic, a scalar knows its conjugate and modulus, and supplies the dense kernels
/// the engine needs (thin QR, thin SVD, LU). Those kernels are implemented with faer for the two
/// concrete types only.
pub trait Scalar:
    Copy
    + Clone
    + Send
    + Sync
    + Debug
    + Default
    + PartialEq
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
    + AddAssign
    + SubAssign
    + MulAssign
    + Sum
    + 'static
{
    /// Short name used in reports: `"f64"` or `"complex64"`.
    const NAME: &'static str;
    /// Bytes one stored entry takes (8 for `f64`, 16 for `Complex64`).
    const BYTES: usize = std::mem::size_of::<Self>();

    /// Additive identity.
    fn zero() -> Self;
    /// Multiplicative identity.
    fn one() -> Self;
    /// The real number `x` as a scalar.
    fn from_f64(x: f64) -> Self;
    /// Complex conjugate (identity for `f64`).
    fn conj(self) -> Self;
    /// Modulus `|x|`.
    fn abs(self) -> f64;
    /// Squared modulus `|x|²` (no square root).
    fn abs2(self) -> f64;
    /// Real part.
    fn re(self) -> f64;
    /// `true` when every component is finite.
    fn is_finite(self) -> bool;
    /// Product with a real number.
    fn scale(self, s: f64) -> Self;

    /// Thin QR of an `m × k` matrix (`m ≥ k` or not): returns `(Q, R)` with `Q` of size
    /// `m × min(m,k)` with orthonormal columns and `R` upper trapezoidal, `A = Q R`.
    fn qr_thin(a: &DenseMatrix<Self>) -> (DenseMatrix<Self>, DenseMatrix<Self>);
    /// Householder QR in place: on return `a` (`m × k`) holds `R` in its upper triangle and the
    /// Householder vectors below it; the returned matrix holds the block reflector
    /// coefficients. Together they represent the full orthogonal `Q` of `A = Q R` (see
    /// [`Scalar::householder_apply`]). Sequential: callers parallelise over blocks.
    fn qr_in_place(a: &mut DenseMatrix<Self>) -> DenseMatrix<Self>;
    /// `x ← Q x` for the `Q` of a [`Scalar::qr_in_place`] factorisation (`factors`, `coeff`);
    /// `x` has as many rows as the factorised matrix.
    fn householder_apply(factors: &DenseMatrix<Self>, coeff: &DenseMatrix<Self>, x: &mut DenseMatrix<Self>);
    /// Thin SVD `A = W diag(σ) Zᴴ`: returns `(W, σ, Z)` with σ non-increasing.
    fn svd_thin(a: &DenseMatrix<Self>) -> Result<Svd<Self>, LinalgError>;
    /// Eigen-decomposition `A = Q diag(λ) Qᴴ` of a self-adjoint matrix (only its lower triangle
    /// is read): returns `(λ, Q)` with `λ` non-decreasing and orthonormal columns in `Q`.
    fn self_adjoint_eigen(a: &DenseMatrix<Self>) -> Result<(Vec<f64>, DenseMatrix<Self>), LinalgError>;
    /// Singular values of `A`, non-increasing.
    fn singular_values(a: &DenseMatrix<Self>) -> Result<Vec<f64>, LinalgError>;
    /// LU factorisation with partial pivoting `P A = L U`, in place: `a` is overwritten by `L`
    /// (strictly lower part, unit diagonal implied) and `U` (upper part); `fwd`/`bwd` receive
    /// the row permutation and its inverse. No copy of the matrix is made; parallel (rayon)
    /// for orders ≥ 256.
    fn lu_in_place(a: &mut DenseMatrix<Self>, fwd: &mut [usize], bwd: &mut [usize]);
    /// Solves `A X = B` in place for an `n × nrhs` column-major right-hand side, with the packed
    /// factors of [`Scalar::lu_in_place`].
    fn lu_solve_packed(lu: &DenseMatrix<Self>, fwd: &[usize], bwd: &[usize], nrhs: usize, rhs: &mut [Self]);
    /// `C ← C + A B` (GEMM by faer, sequential: callers parallelise over blocks).
    fn gemm_add(c: &mut DenseMatrix<Self>, a: &DenseMatrix<Self>, b: &DenseMatrix<Self>);
    /// `C ← C + op(A) B` on column-major panels inside larger arrays (GEMM by faer,
    /// sequential). `C` is `m × n` with column stride `c.1`, `B` is `k × n` with column stride
    /// `b.1`; `A` is `m × k` with column stride `a.1`, or with `a_transposed` stored as the
    /// `k × m` matrix whose plain transpose is used. Each slice starts at its panel's first
    /// entry. Panics when a slice is too short for its panel (an internal invariant of the
    /// callers).
    fn gemm_add_panels(
        c: (&mut [Self], usize),
        a: (&[Self], usize),
        a_transposed: bool,
        b: (&[Self], usize),
        m: usize,
        n: usize,
        k: usize,
    );
}

fn faer_ref<T: Copy>(a: &DenseMatrix<T>) -> MatRef<'_, T> {
    MatRef::from_column_major_slice(a.as_slice(), a.nrows(), a.ncols())
}

fn faer_mut<T: Copy>(a: &mut DenseMatrix<T>) -> MatMut<'_, T> {
    let (m, n) = (a.nrows(), a.ncols());
    MatMut::from_column_major_slice_mut(a.as_mut_slice(), m, n)
}

fn from_faer<T: Copy>(m: MatRef<'_, T>) -> DenseMatrix<T> {
    DenseMatrix::from_fn(m.nrows(), m.ncols(), |i, j| m[(i, j)])
}

macro_rules! dense_kernels {
    ($t:ty) => {
        fn qr_thin(a: &DenseMatrix<Self>) -> (DenseMatrix<Self>, DenseMatrix<Self>) {
            let qr = faer_ref(a).qr();
            (from_faer(qr.compute_thin_Q().as_ref()), from_faer(qr.thin_R()))
        }

        fn qr_in_place(a: &mut DenseMatrix<Self>) -> DenseMatrix<Self> {
            use faer::linalg::qr::no_pivoting::factor;
            let (m, k) = (a.nrows(), a.ncols());
            let bs = factor::recommended_block_size::<$t>(m, k).max(1);
            let mut coeff = DenseMatrix::zeros(bs, m.min(k));
            if m.min(k) == 0 {
                return coeff;
            }
            let req = factor::qr_in_place_scratch::<$t>(m, k, bs, faer::Par::Seq, Default::default());
            let mut mem = faer::dyn_stack::MemBuffer::new(req);
            factor::qr_in_place(
                faer_mut(a),
                faer_mut(&mut coeff),
                faer::Par::Seq,
                faer::dyn_stack::MemStack::new(&mut mem),
                Default::default(),
            );
            coeff
        }

        fn householder_apply(
            factors: &DenseMatrix<Self>,
            coeff: &DenseMatrix<Self>,
            x: &mut DenseMatrix<Self>,
        ) {
            use faer::linalg::householder;
            let size = factors.nrows().min(factors.ncols());
            if size == 0 || x.ncols() == 0 {
                return;
            }
            let basis = faer_ref(factors).subcols(0, size);
            let req = householder::apply_block_householder_sequence_on_the_left_in_place_scratch::<$t>(
                factors.nrows(),
                coeff.nrows(),
                x.ncols(),
            );
            let mut mem = faer::dyn_stack::MemBuffer::new(req);
            householder::apply_block_householder_sequence_on_the_left_in_place_with_conj(
                basis,
                faer_ref(coeff),
                faer::Conj::No,
                faer_mut(x),
                faer::Par::Seq,
                faer::dyn_stack::MemStack::new(&mut mem),
            );
        }

        fn svd_thin(a: &DenseMatrix<Self>) -> Result<Svd<Self>, LinalgError> {
            let svd = faer_ref(a)
                .thin_svd()
                .map_err(|_| LinalgError::SvdNoConvergence { rows: a.nrows(), cols: a.ncols() })?;
            let s = svd.S().column_vector();
            let sigma = (0..s.nrows()).map(|i| s[i].abs()).collect();
            Ok((from_faer(svd.U()), sigma, from_faer(svd.V())))
        }

        fn self_adjoint_eigen(a: &DenseMatrix<Self>) -> Result<(Vec<f64>, DenseMatrix<Self>), LinalgError> {
            let e = faer_ref(a)
                .self_adjoint_eigen(faer::Side::Lower)
                .map_err(|_| LinalgError::EigenNoConvergence { n: a.nrows() })?;
            let s = e.S().column_vector();
            let lambda = (0..s.nrows()).map(|i| Scalar::re(s[i])).collect();
            Ok((lambda, from_faer(e.U())))
        }

        fn singular_values(a: &DenseMatrix<Self>) -> Result<Vec<f64>, LinalgError> {
            faer_ref(a)
                .singular_values()
                .map_err(|_| LinalgError::SvdNoConvergence { rows: a.nrows(), cols: a.ncols() })
        }

        fn lu_in_place(a: &mut DenseMatrix<Self>, fwd: &mut [usize], bwd: &mut [usize]) {
            use faer::linalg::lu::partial_pivoting::factor;
            let n = a.nrows();
            let par = if n >= 256 { faer::Par::rayon(0) } else { faer::Par::Seq };
            let req = factor::lu_in_place_scratch::<usize, $t>(n, a.ncols(), par, Default::default());
            let mut mem = faer::dyn_stack::MemBuffer::new(req);
            factor::lu_in_place(
                faer_mut(a),
                fwd,
                bwd,
                par,
                faer::dyn_stack::MemStack::new(&mut mem),
                Default::default(),
            );
        }

        fn lu_solve_packed(
            lu: &DenseMatrix<Self>,
            fwd: &[usize],
            bwd: &[usize],
            nrhs: usize,
            rhs: &mut [Self],
        ) {
            use faer::linalg::lu::partial_pivoting::solve;
            let n = lu.nrows();
            let par = if n >= 256 { faer::Par::rayon(0) } else { faer::Par::Seq };
            let perm = faer::perm::PermRef::new_checked(fwd, bwd, n);
            let req = solve::solve_in_place_scratch::<usize, $t>(n, nrhs, par);
            let mut mem = faer::dyn_stack::MemBuffer::new(req);
            let f = faer_ref(lu);
            solve::solve_in_place_with_conj(
                f,
                f,
                perm,
                faer::Conj::No,
                MatMut::from_column_major_slice_mut(rhs, n, nrhs),
                par,
                faer::dyn_stack::MemStack::new(&mut mem),
            );
        }

        fn gemm_add_panels(
            c: (&mut [Self], usize),
            a: (&[Self], usize),
            a_transposed: bool,
            b: (&[Self], usize),
            m: usize,
            n: usize,
            k: usize,
        ) {
            if m == 0 || n == 0 || k == 0 {
                return;
            }
            let cm = MatMut::from_column_major_slice_with_stride_mut(c.0, m, n, c.1);
            let am = if a_transposed {
                MatRef::from_column_major_slice_with_stride(a.0, k, m, a.1).transpose()
            } else {
                MatRef::from_column_major_slice_with_stride(a.0, m, k, a.1)
            };
            let bm = MatRef::from_column_major_slice_with_stride(b.0, k, n, b.1);
            faer::linalg::matmul::matmul(cm, faer::Accum::Add, am, bm, <$t as Scalar>::one(), faer::Par::Seq);
        }

        fn gemm_add(c: &mut DenseMatrix<Self>, a: &DenseMatrix<Self>, b: &DenseMatrix<Self>) {
            faer::linalg::matmul::matmul(
                faer_mut(c),
                faer::Accum::Add,
                faer_ref(a),
                faer_ref(b),
                <$t as Scalar>::one(),
                faer::Par::Seq,
            );
        }
    };
}

impl Scalar for f64 {
    const NAME: &'static str = "f64";
    #[inline(always)]
    fn zero() -> Self {
        0.0
    }
    #[inline(always)]
    fn one() -> Self {
        1.0
    }
    #[inline(always)]
    fn from_f64(x: f64) -> Self {
        x
    }
    #[inline(always)]
    fn conj(self) -> Self {
        self
    }
    #[inline(always)]
    fn abs(self) -> f64 {
        f64::abs(self)
    }
    #[inline(always)]
    fn abs2(self) -> f64 {
        self * self
    }
    #[inline(always)]
    fn re(self) -> f64 {
        self
    }
    #[inline(always)]
    fn is_finite(self) -> bool {
        f64::is_finite(self)
    }
    #[inline(always)]
    fn scale(self, s: f64) -> Self {
        self * s
    }
    dense_kernels!(f64);
}

impl Scalar for Complex64 {
    const NAME: &'static str = "complex64";
    #[inline(always)]
    fn zero() -> Self {
        Complex64::new(0.0, 0.0)
    }
    #[inline(always)]
    fn one() -> Self {
        Complex64::new(1.0, 0.0)
    }
    #[inline(always)]
    fn from_f64(x: f64) -> Self {
        Complex64::new(x, 0.0)
    }
    #[inline(always)]
    fn conj(self) -> Self {
        Complex64::conj(&self)
    }
    #[inline(always)]
    fn abs(self) -> f64 {
        self.norm()
    }
    #[inline(always)]
    fn abs2(self) -> f64 {
        self.norm_sqr()
    }
    #[inline(always)]
    fn re(self) -> f64 {
        self.re
    }
    #[inline(always)]
    fn is_finite(self) -> bool {
        self.re.is_finite() && self.im.is_finite()
    }
    #[inline(always)]
    fn scale(self, s: f64) -> Self {
        Complex64::new(self.re * s, self.im * s)
    }
    dense_kernels!(Complex64);
}
