//! The seams a Krylov solver sees: operators and preconditioners.

use rafter_linalg::Scalar;

/// A square linear map `y = A x` of dimension `dim()`.
pub trait LinearOperator<T: Scalar>: Sync {
    /// Dimension `n` (square).
    fn dim(&self) -> usize;
    /// `y = A x` (overwrites `y`); both of length `dim()`.
    fn apply(&self, x: &[T], y: &mut [T]);
    /// `Y = A X` for `nrhs` column-major vectors of length `dim()` (overwrites `Y`). The
    /// default applies [`LinearOperator::apply`] column by column; operators that can stream
    /// their data once for all vectors override it.
    fn apply_multi(&self, x: &[T], y: &mut [T], nrhs: usize) {
        let n = self.dim();
        for r in 0..nrhs {
            self.apply(&x[r * n..(r + 1) * n], &mut y[r * n..(r + 1) * n]);
        }
    }
}

/// An approximate inverse `z = M⁻¹ r` used for right preconditioning (`A M⁻¹ u = b`, `x = M⁻¹ u`).
pub trait Preconditioner<T: Scalar>: Sync {
    /// Dimension `n`.
    fn dim(&self) -> usize;
    /// `z = M⁻¹ r` (overwrites `z`); both of length `dim()`.
    fn apply(&self, r: &[T], z: &mut [T]);
}

/// The identity preconditioner `M = I` (no preconditioning), of dimension `n`.
#[derive(Clone, Copy, Debug)]
pub struct Identity(pub usize);

impl<T: Scalar> Preconditioner<T> for Identity {
    fn dim(&self) -> usize {
        self.0
    }
    fn apply(&self, r: &[T], z: &mut [T]) {
        z.copy_from_slice(r);
    }
}
