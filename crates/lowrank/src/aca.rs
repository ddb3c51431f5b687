//! Partially pivoted adaptive cross approximation with a reference-row/column guard.
//!
//! Method: Bebendorf, "Approximation of boundary element matrices", Numer. Math. 86 (2000)
//! (partial pivoting, Frobenius stopping rule); the guard follows the idea of ACA+ in
//! Grasedyck, "Adaptive recompression of H-matrices for BEM", Computing 74 (2005): keep the
//! residual of one reference row and one reference column up to date, and never stop while
//! either is large.

use crate::LowRank;
use rafter_linalg::dense::{axpy, dot};
use rafter_linalg::{DenseMatrix, EntrySource, Scalar};

/// Result of [`aca`].
#[derive(Clone, Debug)]
pub enum AcaOutcome<T> {
    /// The stopping rule was met (or the block was exhausted): `A ≈ U Vᵀ`.
    Converged {
        /// The cross approximation (not yet recompressed).
        block: LowRank<T>,
        /// Rows examined (pivot steps, including rows found already represented).
        steps: usize,
    },
    /// The rank cap was reached before the stopping rule: the block is not worth compressing.
    RankCap {
        /// Rows examined.
        steps: usize,
    },
}

/// Golden-ratio (Weyl) sequence over `0..len`: a deterministic, well-spread choice of reference
/// indices (reproducible runs, unlike random ones).
fn weyl(step: usize, len: usize) -> usize {
    const PHI_FRAC: f64 = 0.618_033_988_749_894_9;
    (((step as f64 + 0.5) * PHI_FRAC).fract() * len as f64) as usize % len.max(1)
}

/// First index not yet used, scanning from `start` cyclically.
fn first_unused(used: &[bool], start: usize) -> Option<usize> {
    let n = used.len();
    (0..n).map(|d| (start + d) % n).find(|&i| !used[i])
}

fn argmax_unused<T: Scalar>(v: &[T], used: &[bool]) -> Option<(usize, f64)> {
    let mut best: Option<(usize, f64)> = None;
    for (i, (&x, &u)) in v.iter().zip(used).enumerate() {
        if !u {
            let a = x.abs2();
            if best.is_none_or(|(_, b)| a > b) {
                best = Some((i, a));
            }
        }
    }
    best
}

/// Residual of the whole row `i`: `A[i, :] − Σ_l U[i, l] V[:, l]`.
fn residual_row<T: Scalar, S: EntrySource<T> + ?Sized>(
    src: &S,
    row: usize,
    cols: &[usize],
    i: usize,
    us: &[Vec<T>],
    vs: &[Vec<T>],
    out: &mut [T],
) {
    src.fill_block(&[row], cols, out);
    for (u, v) in us.iter().zip(vs) {
        axpy(-u[i], v, out);
    }
}

/// Residual of the whole column `j`: `A[:, j] − Σ_l V[j, l] U[:, l]`.
fn residual_col<T: Scalar, S: EntrySource<T> + ?Sized>(
    src: &S,
    rows: &[usize],
    col: usize,
    j: usize,
    us: &[Vec<T>],
    vs: &[Vec<T>],
    out: &mut [T],
) {
    src.fill_block(rows, &[col], out);
    for (u, v) in us.iter().zip(vs) {
        axpy(-v[j], u, out);
    }
}

fn sq_norm<T: Scalar>(x: &[T]) -> f64 {
    x.iter().map(|v| v.abs2()).sum()
}

/// A reference row or column whose residual is kept current.
struct Reference<T> {
    index: usize,
    residual: Vec<T>,
    draws: usize,
}

/// Cross approximation `A ≈ U Vᵀ` of the block `rows × cols` to relative tolerance `eps`.
///
/// Step `k` takes a pivot row `i` (the largest entry of the previous column, initially the
/// largest entry of the reference column), computes its residual, picks the pivot column `j`
/// at its largest unused entry, computes that column's residual, and adds the rank-one cross
/// `u = residual column`, `v = residual row / pivot`.
///
/// **Stopping rule** (Frobenius): stop after step `k` when `‖u_k‖ ‖v_k‖ ≤ eps ‖S_k‖_F`, with
/// `‖S_k‖_F² = ‖S_{k−1}‖_F² + 2 Re Σ_{l<k} (u_lᴴ u_k)(v_lᴴ v_k) + ‖u_k‖² ‖v_k‖²` updated exactly —
/// **and** the guard holds: the residual of the reference row `r` and column `c` satisfy
/// `m ‖R[r, :]‖² ≤ eps² ‖S_k‖_F²` and `n ‖R[:, c]‖² ≤ eps² ‖S_k‖_F²` (each a one-row sample of
/// the squared error, scaled to the whole block). If the guard fails, the next pivot comes from
/// the offending reference. A residual row that is zero (the known failure of plain ACA: the
/// row is already represented, or the block has zero rows) does not stop the iteration either:
/// the next row is taken from the reference column instead.
///
/// Returns [`AcaOutcome::RankCap`] when `max_rank` crosses are not enough. Requests
/// `(m + n)` entries per step plus one row and column per reference drawn.
pub fn aca<T: Scalar, S: EntrySource<T> + ?Sized>(
    src: &S,
    rows: &[usize],
    cols: &[usize],
    eps: f64,
    max_rank: usize,
) -> AcaOutcome<T> {
    let (m, n) = (rows.len(), cols.len());
    let mut us: Vec<Vec<T>> = Vec::new();
    let mut vs: Vec<Vec<T>> = Vec::new();
    if m == 0 || n == 0 {
        return AcaOutcome::Converged { block: LowRank::zero(m, n), steps: 0 };
    }
    let mut used_rows = vec![false; m];
    let mut used_cols = vec![false; n];
    let mut norm2 = 0.0f64;
    let mut steps = 0usize;
    let eps2 = eps * eps;

    let mut ref_row = Reference { index: weyl(0, m), residual: vec![T::zero(); n], draws: 1 };
    residual_row(src, rows[ref_row.index], cols, ref_row.index, &us, &vs, &mut ref_row.residual);
    let mut ref_col = Reference { index: weyl(0, n), residual: vec![T::zero(); m], draws: 1 };
    residual_col(src, rows, cols[ref_col.index], ref_col.index, &us, &vs, &mut ref_col.residual);

    let mut next_row = argmax_unused(&ref_col.residual, &used_rows).map(|(i, _)| i);
    let mut row = vec![T::zero(); n];
    let mut col = vec![T::zero(); m];

    while let Some(i) = next_row {
        steps += 1;
        residual_row(src, rows[i], cols, i, &us, &vs, &mut row);
        used_rows[i] = true;
        let pivot = argmax_unused(&row, &used_cols);
        let Some((j, _)) = pivot.filter(|&(_, a)| a > 0.0) else {
            // Row already represented exactly: pick another one from the references.
            if i == ref_row.index {
                redraw_row(src, rows, cols, &used_rows, &us, &vs, &mut ref_row);
            }
            next_row = pick_from_references(&ref_row, &ref_col, &used_rows, &used_cols, norm2, eps2, m, n);
            continue;
        };
        if us.len() >= max_rank {
            return AcaOutcome::RankCap { steps };
        }
        residual_col(src, rows, cols[j], j, &us, &vs, &mut col);
        used_cols[j] = true;
        let pivot = row[j];
        let inv = T::one() / pivot;
        let v: Vec<T> = row.iter().map(|&x| x * inv).collect();
        let u = col.clone();
        let (nu2, nv2) = (sq_norm(&u), sq_norm(&v));
        let cross: f64 = us.iter().zip(&vs).map(|(ul, vl)| (dot(ul, &u) * dot(vl, &v)).re()).sum();
        norm2 = (norm2 + 2.0 * cross + nu2 * nv2).max(0.0);
        // Update the reference residuals with the new cross.
        axpy(-u[ref_row.index], &v, &mut ref_row.residual);
        axpy(-v[ref_col.index], &u, &mut ref_col.residual);
        us.push(u);
        vs.push(v);
        if used_rows[ref_row.index] {
            redraw_row(src, rows, cols, &used_rows, &us, &vs, &mut ref_row);
        }
        if used_cols[ref_col.index] {
            redraw_col(src, rows, cols, &used_cols, &us, &vs, &mut ref_col);
        }
        let small_step = nu2 * nv2 <= eps2 * norm2;
        if small_step {
            next_row = pick_from_references(&ref_row, &ref_col, &used_rows, &used_cols, norm2, eps2, m, n);
        } else {
            let last = us.last().expect("just pushed");
            next_row = argmax_unused(last, &used_rows).map(|(i, _)| i);
        }
    }
    let k = us.len();
    let u = DenseMatrix::from_column_major(m, k, us.concat()).expect("m·k entries");
    let v = DenseMatrix::from_column_major(n, k, vs.concat()).expect("n·k entries");
    AcaOutcome::Converged { block: LowRank { u, v }, steps }
}

/// Next pivot row when the last step was small or empty: `None` (stop) when both reference
/// residuals pass the guard, else a row taken from the worse reference.
#[allow(clippy::too_many_arguments)]
fn pick_from_references<T: Scalar>(
    ref_row: &Reference<T>,
    ref_col: &Reference<T>,
    used_rows: &[bool],
    used_cols: &[bool],
    norm2: f64,
    eps2: f64,
    m: usize,
    n: usize,
) -> Option<usize> {
    let row_ok = used_rows[ref_row.index] || m as f64 * sq_norm(&ref_row.residual) <= eps2 * norm2;
    let col_ok = used_cols[ref_col.index] || n as f64 * sq_norm(&ref_col.residual) <= eps2 * norm2;
    if row_ok && col_ok {
        return None;
    }
    if !col_ok {
        // The reference column has a large residual: pivot on its largest unused entry.
        if let Some((i, a)) = argmax_unused(&ref_col.residual, used_rows)
            && a > 0.0
        {
            return Some(i);
        }
    }
    // Otherwise the reference row itself is the next pivot row (it is unused by construction).
    (!used_rows[ref_row.index]).then_some(ref_row.index)
}

fn redraw_row<T: Scalar, S: EntrySource<T> + ?Sized>(
    src: &S,
    rows: &[usize],
    cols: &[usize],
    used_rows: &[bool],
    us: &[Vec<T>],
    vs: &[Vec<T>],
    r: &mut Reference<T>,
) {
    if let Some(i) = first_unused(used_rows, weyl(r.draws, rows.len())) {
        r.draws += 1;
        r.index = i;
        residual_row(src, rows[i], cols, i, us, vs, &mut r.residual);
    }
}

fn redraw_col<T: Scalar, S: EntrySource<T> + ?Sized>(
    src: &S,
    rows: &[usize],
    cols: &[usize],
    used_cols: &[bool],
    us: &[Vec<T>],
    vs: &[Vec<T>],
    r: &mut Reference<T>,
) {
    if let Some(j) = first_unused(used_cols, weyl(r.draws, cols.len())) {
        r.draws += 1;
        r.index = j;
        residual_col(src, rows, cols[j], j, us, vs, &mut r.residual);
    }
}
