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
/// `U = Q_u R_u`, `V = Q_v R_v` (Householder QR in place, `Q` kept in factored form),
/// `R_u R_vᵀ = W Σ Zᴴ` (SVD of the small core), then `U' = Q_u [W_r Σ_r; 0]`,
/// `V' = Q_v [conj(Z_r); 0]` with `r` = [`optimal_rank`]`(σ, eps)`. Because `Q_u` and `Q_v` are
/// orthogonal, the truncation error is exactly the tail of `σ`, so the result is the best
/// rank-`r` approximation of `U Vᵀ` and `‖U Vᵀ − U'V'ᵀ‖_F ≤ eps ‖U Vᵀ‖_F`. Costs
/// `O((m + n) k²)` and allocates little beyond the result.
pub fn recompress<T: Scalar>(block: LowRank<T>, eps: f64) -> Result<LowRank<T>, LinalgError> {
    let (m, n, k) = (block.nrows(), block.ncols(), block.rank());
    if k == 0 {
        return Ok(block);
    }
    let LowRank { mut u, mut v } = block;
    let cu = T::qr_in_place(&mut u);
    let cv = T::qr_in_place(&mut v);
    let (su, sv) = (m.min(k), n.min(k));
    // core = R_u R_vᵀ, with R the upper triangles of the factored matrices.
    let core = DenseMatrix::from_fn(su, sv, |i, j| {
        (i.max(j)..k).fold(T::zero(), |acc, l| acc + u.get(i, l) * v.get(j, l))
    });
    let (w, sigma, z) = T::svd_thin(&core)?;
    let r = optimal_rank(&sigma, eps);
    if r == 0 {
        return Ok(LowRank::zero(m, n));
    }
    let mut uu = DenseMatrix::zeros(m, r);
    let mut vv = DenseMatrix::zeros(n, r);
    for (l, &s) in sigma.iter().enumerate().take(r) {
        for i in 0..su {
            uu.set(i, l, w.get(i, l).scale(s));
        }
        for j in 0..sv {
            vv.set(j, l, z.get(j, l).conj());
        }
    }
    T::householder_apply(&u, &cu, &mut uu);
    T::householder_apply(&v, &cv, &mut vv);
    Ok(LowRank { u: uu, v: vv })
}
