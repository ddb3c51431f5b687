//! Preconditioners.

use crate::{KrylovError, Preconditioner};
use rafter_linalg::{DenseLu, DenseMatrix, Scalar};
use rayon::prelude::*;

/// Block-diagonal (block-Jacobi) preconditioner: `M = diag(D_1, …, D_p)` where `D_b` is the
/// dense block of the operator on index set `I_b`, the sets partitioning `0..n`;
/// `M⁻¹ r` solves each `D_b z_b = r_b` with the LU factors (partial pivoting, faer) computed
/// once at construction. Applying it costs `Σ |I_b|²` per vector, in parallel over blocks.
pub struct BlockDiagonal<T: Scalar> {
    n: usize,
    blocks: Vec<(Vec<usize>, DenseLu<T>)>,
}

impl<T: Scalar> BlockDiagonal<T> {
    /// Factorises the blocks `(indices, dense block)`. Indices must partition `0..n`; a block
    /// must be square with one row per index. Indices not covered by any block are passed
    /// through unchanged (identity).
    pub fn new(n: usize, blocks: Vec<(Vec<usize>, DenseMatrix<T>)>) -> Result<Self, KrylovError> {
        let mut seen = vec![false; n];
        for (b, (idx, d)) in blocks.iter().enumerate() {
            if d.nrows() != idx.len() || d.ncols() != idx.len() {
                return Err(KrylovError::DimensionMismatch {
                    what: "preconditioner block (rows and columns must equal its index count)",
                    expected: idx.len(),
                    got: d.nrows().max(d.ncols()),
                });
            }
            for &i in idx {
                if i >= n || seen[i] {
                    return Err(KrylovError::BadOption {
                        field: "block indices",
                        value: format!("{i} in block {b}"),
                        hint: "indices must lie in 0..n and appear in one block only",
                    });
                }
                seen[i] = true;
            }
        }
        let blocks = blocks
            .into_par_iter()
            .enumerate()
            .map(|(b, (idx, d))| {
                let size = idx.len();
                DenseLu::factor(&d).map(|lu| (idx, lu)).map_err(|source| KrylovError::Preconditioner {
                    block: b,
                    size,
                    source,
                })
            })
            .collect::<Result<Vec<_>, _>>()?;
        Ok(Self { n, blocks })
    }

    /// Number of diagonal blocks.
    pub fn len(&self) -> usize {
        self.blocks.len()
    }
    /// `true` without blocks (then it is the identity).
    pub fn is_empty(&self) -> bool {
        self.blocks.is_empty()
    }
}

impl<T: Scalar> Preconditioner<T> for BlockDiagonal<T> {
    fn dim(&self) -> usize {
        self.n
    }
    fn apply(&self, r: &[T], z: &mut [T]) {
        z.copy_from_slice(r);
        let solved: Vec<Vec<T>> = self
            .blocks
            .par_iter()
            .map(|(idx, lu)| {
                let mut local: Vec<T> = idx.iter().map(|&i| r[i]).collect();
                // The LU was validated at construction; the lengths match by construction.
                lu.solve_in_place(&mut local).expect("block length equals its LU order");
                local
            })
            .collect();
        for ((idx, _), local) in self.blocks.iter().zip(solved) {
            for (&i, v) in idx.iter().zip(local) {
                z[i] = v;
            }
        }
    }
}
