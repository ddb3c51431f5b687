//! Build options of an H-matrix.

use crate::HError;
use rafter_cluster::ClusterError;
use serde::Serialize;

/// What to build: accuracy and partition parameters.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct HOptions {
    /// Relative Frobenius tolerance ε **per block**: every stored block `B` of the exact block
    /// `A` satisfies `‖A − B‖_F ≤ ε ‖A‖_F` (dense blocks are exact). The whole matrix then obeys
    /// the same bound, `‖A − H‖_F ≤ ε ‖A‖_F`. Must lie in (0, 1).
    pub tolerance: f64,
    /// Admissibility parameter η of `min(diam τ, diam σ) ≤ η dist(τ, σ)`; > 0.
    pub eta: f64,
    /// Maximum points per leaf cluster; ≥ 1.
    pub leaf_size: usize,
}

impl Default for HOptions {
    /// ε = 1e-4, η = 2, leaf size [`rafter_cluster::tree::DEFAULT_LEAF_SIZE`].
    fn default() -> Self {
        Self { tolerance: 1e-4, eta: 2.0, leaf_size: rafter_cluster::tree::DEFAULT_LEAF_SIZE }
    }
}

impl HOptions {
    /// Checks every field; the error names the field, the value and a sensible range.
    pub fn validate(&self) -> Result<(), HError> {
        if !(self.tolerance > 0.0 && self.tolerance < 1.0) {
            return Err(HError::BadTolerance(self.tolerance));
        }
        if !(self.eta.is_finite() && self.eta > 0.0) {
            return Err(ClusterError::BadEta(self.eta).into());
        }
        if self.leaf_size == 0 {
            return Err(ClusterError::LeafSizeZero.into());
        }
        Ok(())
    }
}
