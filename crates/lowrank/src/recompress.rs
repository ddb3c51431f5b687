//! Recompression of a low-rank block: QR of both factors, SVD of the small core, truncation.

use crate::LowRank;
use rafter_linalg::{DenseMatrix, LinalgError, Scalar};

/// Smallest rank `r` such that `(Σ_{i ≥ r} σ_i²)^½ ≤ eps · (Σ_i σ_i²)^½`, for singular values
/// `σ` sorted non-increasing: the optimal rank at relative Frobenius tolerance `eps`
/// (Eckart–Young).
pub fn optimal_rank(sigma: &[f64], eps: f64) -> usize {
    let total: f64 = sigma.iter().map(|s| s * s).sum();
    let limit = eps * eps * total;
    let mut tail = 0.0;
    let mut r = sigma.len();
    while r > 0 && tail + sigma[r - 1] * sigma[r - 1] <= limit {
        tail += sigma[r - 1] * sigma[r - 1];
        r -= 1;
    }
    r
}

/// Truncates `U Vᵀ` to the smallest rank whose relative Frobenius error is at most `eps`.
///
/// `U = Q_u R_u`, `V = Q_v R_v` (thin QR), `R_u R_vᵀ = W Σ Zᴴ` (SVD of the `k × k` core), then
/// `U' = Q_u W_r Σ_r`, `V' = Q_v conj(Z_r)` with `r` = [`optimal_rank`]`(σ, eps)`. Because `Q_u`
/// and `Q_v` have orthonormal columns, the truncation error is exactly the tail of `σ`, so the
/// result is the best rank-`r` approximation of `U Vᵀ` and `‖U Vᵀ − U'V'ᵀ‖_F ≤ eps ‖U Vᵀ‖_F`.
/// Costs `O((m + n) k²)`.
pub fn recompress<T: Scalar>(block: LowRank<T>, eps: f64) -> Result<LowRank<T>, LinalgError> {
    let (m, n, k) = (block.nrows(), block.ncols(), block.rank());
    if k == 0 {
        return Ok(block);
    }
    let (qu, ru) = T::qr_thin(&block.u);
    let (qv, rv) = T::qr_thin(&block.v);
    let core = ru.matmul(&rv.transpose())?;
    let (w, sigma, z) = T::svd_thin(&core)?;
    let r = optimal_rank(&sigma, eps);
    if r == 0 {
        return Ok(LowRank::zero(m, n));
    }
    let ws = DenseMatrix::from_fn(w.nrows(), r, |i, l| w.get(i, l).scale(sigma[l]));
    let zc = DenseMatrix::from_fn(z.nrows(), r, |i, l| z.get(i, l).conj());
    Ok(LowRank { u: qu.matmul(&ws)?, v: qv.matmul(&zc)? })
}
