//! Scalars, dense matrices and the entry-source seam of the rafter engine.
//!
//! The engine (cluster tree, low-rank blocks, H-matrix, Krylov solvers) is written once,
//! generically over [`Scalar`], and runs for both `f64` (electrostatics) and
//! [`Complex64`](num_complex::Complex64) (full-wave problems). The engine sees a matrix only
//! through an [`EntrySource`]: single entries and sub-blocks on request, never the whole matrix.
//!
//! Dense kernels (thin QR, thin SVD, LU with partial pivoting) come from `faer`. They are
//! reached through [`Scalar`]'s associated functions, which this crate implements for the two
//! concrete scalars, so faer's heavy generic code is compiled once, here, for `f64` and `c64`.
//!
//! Modules, one concept each:
//! - [`scalar`]: the [`Scalar`] trait (arithmetic, conjugation, moduli, and the dense kernels);
//! - [`dense`]: [`DenseMatrix`], a column-major matrix with the few operations the engine needs,
//!   and [`DenseLu`], an LU factorisation with partial pivoting;
//! - [`source`]: the [`EntrySource`] trait and [`CountingSource`], which counts requested entries.

#![warn(missing_docs)]

pub mod dense;
pub mod scalar;
pub mod source;

pub use dense::{DenseLu, DenseMatrix};
pub use num_complex::Complex64;
pub use scalar::Scalar;
pub use source::{CountingSource, EntrySource, Settled, settle_vector_state};

/// Errors of the dense kernels.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum LinalgError {
    /// The SVD iteration of faer did not converge on a `rows × cols` matrix.
    #[error("the SVD of a {rows}×{cols} matrix did not converge (are there NaN or infinite entries?)")]
    SvdNoConvergence {
        /// Rows of the matrix.
        rows: usize,
        /// Columns of the matrix.
        cols: usize,
    },
    /// The self-adjoint eigen-decomposition did not converge.
    #[error("the eigen-decomposition of a {n}×{n} matrix did not converge (are there NaN entries?)")]
    EigenNoConvergence {
        /// Order of the matrix.
        n: usize,
    },
    /// The LU factorisation met an exactly zero or non-finite pivot.
    #[error(
        "the {n}×{n} matrix is singular to working precision (smallest pivot modulus {pivot:e}); \
         check for duplicated points or a zero kernel"
    )]
    Singular {
        /// Order of the matrix.
        n: usize,
        /// Smallest pivot modulus found.
        pivot: f64,
    },
    /// Operand shapes do not agree.
    #[error("dimension mismatch: {what} (expected {expected}, got {got})")]
    DimensionMismatch {
        /// Which operand.
        what: &'static str,
        /// Expected length.
        expected: usize,
        /// Length received.
        got: usize,
    },
}
