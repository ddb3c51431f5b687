//! Partially pivoted adaptive cross approximation with a reference-row/column guard.
//!
//! Method: Bebendorf, "Approximation of boundary element matrices", Numer. Math. 86 (2000)
//! (partial pivoting, Frobenius stopping rule). The guard follows the idea of ACA+ in
//! Grasedyck, "Adaptive recompression of H-matrices for BEM", Computing 74 (2005) — keep the
//! residual of a reference row and a reference column current and never stop while either is
//! large — and adds a final check on the row and column *least represented* by the crosses so
//! far, which is where a part of the block that ACA has not yet seen must show up.

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

/// Cross approximation `A ≈ U Vᵀ` of the block `rows × cols` to relative tolerance `eps`.
///
/// Step `k` takes a pivot row `i` (the largest entry of the previous cross's column; initially
/// the largest entry of the reference column), computes its residual, picks the pivot column
/// `j` at its largest unused entry, computes that column's residual, and adds the rank-one
/// cross `u = residual column`, `v = residual row / pivot`.
///
/// **Stopping rule** (Frobenius): after a step with `‖u_k‖ ‖v_k‖ ≤ eps ‖S_k‖_F`, where
/// `‖S_k‖_F² = ‖S_{k−1}‖_F² + 2 Re Σ_{l<k} (u_lᴴ u_k)(v_lᴴ v_k) + ‖u_k‖² ‖v_k‖²` is updated
/// exactly, ACA stops only if the **guard** also holds: a reference row `r` and column `c`
/// have residuals with `m ‖R[r, :]‖² ≤ eps² ‖S_k‖_F²` and `n ‖R[:, c]‖² ≤ eps² ‖S_k‖_F²` (each
/// a one-line sample of the squared error scaled to the whole block). The check is made twice:
/// on the running references (spread over the block by a golden-ratio sequence), then on the
/// unused row and column with the smallest weight in `U` and `V` — those the crosses have
/// touched least. If a check fails, the next pivot comes from the offending reference.
///
/// A residual row that vanishes (below `1e-15 ‖S‖_F`: the row is already represented, or the
/// block has zero rows — the known early-stop failure of plain ACA) adds no cross; the next
/// row is taken from the references instead.
///
/// Returns [`AcaOutcome::RankCap`] when `max_rank` crosses are not enough. Requests `m + n`
/// entries per step plus one row or column per reference drawn.
pub fn aca<T: Scalar, S: EntrySource<T> + ?Sized>(
    src: &S,
    rows: &[usize],
    cols: &[usize],
    eps: f64,
    max_rank: usize,
) -> AcaOutcome<T> {
    let (m, n) = (rows.len(), cols.len());
    if m == 0 || n == 0 {
        return AcaOutcome::Converged { block: LowRank::zero(m, n), steps: 0 };
    }
    let mut st = Cross::new(src, rows, cols, eps);
    let mut next_row = argmax_unused(&st.ref_col.residual, &st.used_rows);
    let mut row = vec![T::zero(); n];
    let mut col = vec![T::zero(); m];
    let mut steps = 0usize;

    while let Some(i) = next_row {
        steps += 1;
        st.residual_row(i, &mut row);
        st.used_rows[i] = true;
        let tiny = 1e-30 * st.norm2;
        let Some(j) = argmax_unused(&row, &st.used_cols).filter(|&j| row[j].abs2() > tiny) else {
            // The row is already represented: take the next one from the references.
            st.refresh_references();
            next_row = st.pivot_from_references();
            continue;
        };
        if st.us.len() >= max_rank {
            return AcaOutcome::RankCap { steps };
        }
        st.residual_col(j, &mut col);
        st.used_cols[j] = true;
        let inv = T::one() / row[j];
        let v: Vec<T> = row.iter().map(|&x| x * inv).collect();
        let small = st.add_cross(col.clone(), v);
        st.refresh_references();
        next_row = if small {
            st.pivot_from_references()
        } else {
            argmax_unused(st.us.last().expect("a cross was just added"), &st.used_rows)
        };
    }
    let k = st.us.len();
    let u = DenseMatrix::from_column_major(m, k, st.us.concat()).expect("m·k entries");
    let v = DenseMatrix::from_column_major(n, k, st.vs.concat()).expect("n·k entries");
    AcaOutcome::Converged { block: LowRank { u, v }, steps }
}

/// A reference row or column whose residual is kept current.
struct Reference<T> {
    index: usize,
    residual: Vec<T>,
    /// References drawn so far (position in the golden-ratio sequence).
    draws: usize,
}

/// The state of one cross approximation.
struct Cross<'a, T, S: ?Sized> {
    src: &'a S,
    rows: &'a [usize],
    cols: &'a [usize],
    us: Vec<Vec<T>>,
    vs: Vec<Vec<T>>,
    used_rows: Vec<bool>,
    used_cols: Vec<bool>,
    /// `‖S_k‖_F²` of the current approximation.
    norm2: f64,
    eps2: f64,
    ref_row: Reference<T>,
    ref_col: Reference<T>,
}

impl<'a, T: Scalar, S: EntrySource<T> + ?Sized> Cross<'a, T, S> {
    fn new(src: &'a S, rows: &'a [usize], cols: &'a [usize], eps: f64) -> Self {
        let (m, n) = (rows.len(), cols.len());
        let mut st = Self {
            src,
            rows,
            cols,
            us: Vec::new(),
            vs: Vec::new(),
            used_rows: vec![false; m],
            used_cols: vec![false; n],
            norm2: 0.0,
            eps2: eps * eps,
            ref_row: Reference { index: weyl(0, m), residual: vec![T::zero(); n], draws: 1 },
            ref_col: Reference { index: weyl(0, n), residual: vec![T::zero(); m], draws: 1 },
        };
        let (i, j) = (st.ref_row.index, st.ref_col.index);
        let mut r = std::mem::take(&mut st.ref_row.residual);
        st.residual_row(i, &mut r);
        st.ref_row.residual = r;
        let mut c = std::mem::take(&mut st.ref_col.residual);
        st.residual_col(j, &mut c);
        st.ref_col.residual = c;
        st
    }

    /// Residual of row `i`: `A[i, :] − Σ_l U[i, l] V[:, l]`.
    fn residual_row(&self, i: usize, out: &mut [T]) {
        self.src.fill_block(&[self.rows[i]], self.cols, out);
        for (u, v) in self.us.iter().zip(&self.vs) {
            axpy(-u[i], v, out);
        }
    }

    /// Residual of column `j`: `A[:, j] − Σ_l V[j, l] U[:, l]`.
    fn residual_col(&self, j: usize, out: &mut [T]) {
        self.src.fill_block(self.rows, &[self.cols[j]], out);
        for (u, v) in self.us.iter().zip(&self.vs) {
            axpy(-v[j], u, out);
        }
    }

    /// Appends the cross `u vᵀ`, updates `‖S‖_F²` and the reference residuals; returns whether
    /// the step was small (`‖u‖ ‖v‖ ≤ eps ‖S‖_F`).
    fn add_cross(&mut self, u: Vec<T>, v: Vec<T>) -> bool {
        let (nu2, nv2) = (sq_norm(&u), sq_norm(&v));
        let cross: f64 = self.us.iter().zip(&self.vs).map(|(ul, vl)| (dot(ul, &u) * dot(vl, &v)).re()).sum();
        self.norm2 = (self.norm2 + 2.0 * cross + nu2 * nv2).max(0.0);
        axpy(-u[self.ref_row.index], &v, &mut self.ref_row.residual);
        axpy(-v[self.ref_col.index], &u, &mut self.ref_col.residual);
        self.us.push(u);
        self.vs.push(v);
        nu2 * nv2 <= self.eps2 * self.norm2
    }

    /// Replaces a reference that has become a pivot (its residual is then zero and says
    /// nothing) by the next unused one in the golden-ratio sequence.
    fn refresh_references(&mut self) {
        if self.used_rows[self.ref_row.index] {
            let start = weyl(self.ref_row.draws, self.rows.len());
            if let Some(i) = first_unused(&self.used_rows, start) {
                self.set_ref_row(i);
            }
        }
        if self.used_cols[self.ref_col.index] {
            let start = weyl(self.ref_col.draws, self.cols.len());
            if let Some(j) = first_unused(&self.used_cols, start) {
                self.set_ref_col(j);
            }
        }
    }

    fn set_ref_row(&mut self, i: usize) {
        let mut r = std::mem::take(&mut self.ref_row.residual);
        self.residual_row(i, &mut r);
        self.ref_row = Reference { index: i, residual: r, draws: self.ref_row.draws + 1 };
    }

    fn set_ref_col(&mut self, j: usize) {
        let mut c = std::mem::take(&mut self.ref_col.residual);
        self.residual_col(j, &mut c);
        self.ref_col = Reference { index: j, residual: c, draws: self.ref_col.draws + 1 };
    }

    /// `(row passes, column passes)` for the guard on the current references.
    fn references_pass(&self) -> (bool, bool) {
        let (m, n) = (self.rows.len() as f64, self.cols.len() as f64);
        let limit = self.eps2 * self.norm2;
        let row_ok = self.used_rows[self.ref_row.index] || m * sq_norm(&self.ref_row.residual) <= limit;
        let col_ok = self.used_cols[self.ref_col.index] || n * sq_norm(&self.ref_col.residual) <= limit;
        (row_ok, col_ok)
    }

    /// Next pivot row after a small or empty step, or `None` to stop: checks the running
    /// references, then the least-represented row and column (see [`aca`]).
    fn pivot_from_references(&mut self) -> Option<usize> {
        for attempt in 0..2 {
            let (row_ok, col_ok) = self.references_pass();
            if !col_ok {
                // Pivot on the reference column's largest residual entry.
                if let Some(i) = argmax_unused(&self.ref_col.residual, &self.used_rows) {
                    return Some(i);
                }
            }
            if !row_ok || !col_ok {
                // The reference row itself is the next pivot row (it is unused by construction).
                if !self.used_rows[self.ref_row.index] {
                    return Some(self.ref_row.index);
                }
            }
            if attempt == 0 {
                // Second opinion: the row and column the crosses have touched least.
                if let Some(i) = argmin_weight(&self.us, &self.used_rows) {
                    self.set_ref_row(i);
                }
                if let Some(j) = argmin_weight(&self.vs, &self.used_cols) {
                    self.set_ref_col(j);
                }
            }
        }
        None
    }
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

/// Unused index with the largest modulus in `v` (`None` when all are used).
fn argmax_unused<T: Scalar>(v: &[T], used: &[bool]) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (i, (&x, &u)) in v.iter().zip(used).enumerate() {
        if !u {
            let a = x.abs2();
            if best.is_none_or(|(_, b)| a > b) {
                best = Some((i, a));
            }
        }
    }
    best.map(|(i, _)| i)
}

/// Unused index `i` with the smallest `Σ_l |f_l[i]|²` over the factor columns `f`.
fn argmin_weight<T: Scalar>(factors: &[Vec<T>], used: &[bool]) -> Option<usize> {
    let mut w = vec![0.0f64; used.len()];
    for f in factors {
        for (wi, x) in w.iter_mut().zip(f) {
            *wi += x.abs2();
        }
    }
    (0..used.len()).filter(|&i| !used[i]).min_by(|&a, &b| w[a].total_cmp(&w[b]))
}

fn sq_norm<T: Scalar>(x: &[T]) -> f64 {
    x.iter().map(|v| v.abs2()).sum()
}
