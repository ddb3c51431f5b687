//! Krylov solvers and preconditioners.
//!
//! A solver sees the matrix only as a [`LinearOperator`] (apply to a vector) and the
//! preconditioner as a [`Preconditioner`] (apply an approximate inverse); neither knows how the
//! operator is stored. [`gmres`] is restarted GMRES(m) with right preconditioning;
//! [`BlockDiagonal`] is a block-Jacobi preconditioner from LU factorisations (faer) of dense
//! diagonal blocks.
//!
//! **Tolerances.** GMRES stops on the relative residual `‖b − A x‖ / ‖b‖` of the operator it
//! is given. When that operator is an H-matrix approximation of a true matrix with relative
//! error ε, residuals below about ε say nothing about the true system: keep the GMRES
//! tolerance above ε, 2–10 ε (see [`GmresOptions::tolerance`]).
//!
//! Modules, one concept each: [`operator`] (the two seams), [`gmres`](mod@gmres) (the solver),
//! [`precond`] (preconditioners).

#![warn(missing_docs)]

pub mod gmres;
pub mod operator;
pub mod precond;

pub use gmres::{GmresOptions, GmresReport, gmres, gmres_monitored, solve_many};
pub use operator::{Identity, LinearOperator, Preconditioner};
pub use precond::BlockDiagonal;

/// Errors of the Krylov layer.
#[derive(Debug, thiserror::Error)]
pub enum KrylovError {
    /// The residual did not reach the tolerance within the iteration cap.
    #[error(
        "GMRES did not converge: relative residual {residual:.3e} after {iterations} iterations \
         (target {tolerance:.1e}); raise the iteration cap or the restart length, use a stronger \
         preconditioner, or check that the operator is well conditioned"
    )]
    NotConverged {
        /// Iterations done.
        iterations: usize,
        /// Last true relative residual.
        residual: f64,
        /// Requested tolerance.
        tolerance: f64,
        /// Relative residual after each iteration.
        history: Vec<f64>,
    },
    /// Vector lengths disagree with the operator.
    #[error("size mismatch: {what} has {got} entries, the operator has dimension {expected}")]
    DimensionMismatch {
        /// What was checked.
        what: &'static str,
        /// Expected length.
        expected: usize,
        /// Length received.
        got: usize,
    },
    /// Bad solver options.
    #[error("invalid GMRES option {field} = {value}: {hint}")]
    BadOption {
        /// Field name.
        field: &'static str,
        /// Value given.
        value: String,
        /// Valid range.
        hint: &'static str,
    },
    /// NaN or infinity appeared (in the right-hand side, the operator or the preconditioner).
    #[error(
        "GMRES met a non-finite value at iteration {iteration}; check the right-hand side, the operator and the preconditioner"
    )]
    NonFinite {
        /// Iteration where it was seen.
        iteration: usize,
    },
    /// A dense kernel (LU of a preconditioner block) failed.
    #[error("preconditioner block {block} of size {size}: {source}")]
    Preconditioner {
        /// Index of the block.
        block: usize,
        /// Its order.
        size: usize,
        /// The underlying error.
        source: rafter_linalg::LinalgError,
    },
}
