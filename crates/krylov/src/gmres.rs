//! Restarted GMRES(m) with right preconditioning.
//!
//! Method: Saad & Schultz, "GMRES: a generalized minimal residual algorithm for solving
//! nonsymmetric linear systems", SIAM J. Sci. Stat. Comput. 7 (1986); right preconditioning and
//! restarts as in Saad, *Iterative Methods for Sparse Linear Systems*, 2nd ed. (2003), §9.3.2.
//! Arnoldi with modified Gram–Schmidt and one re-orthogonalisation pass; the Hessenberg least
//! squares problem is kept triangular by complex Givens rotations, whose last entry gives the
//! residual norm after every iteration without forming `x`.

use crate::{KrylovError, LinearOperator, Preconditioner};
use rafter_linalg::Scalar;
use rafter_linalg::dense::{axpy, dot, norm2};
use serde::Serialize;

/// Options of [`gmres`].
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct GmresOptions {
    /// Restart length `m` (Krylov vectors kept per cycle); ≥ 1. Memory is `(m + 1) n` scalars.
    pub restart: usize,
    /// Target relative residual `‖b − A x‖ / ‖b‖`, in (0, 1). With an approximate operator of
    /// relative accuracy ε (an H-matrix), keep it at least ~10 ε: below that the residual of
    /// the approximate system no longer measures the error of the true one.
    pub tolerance: f64,
    /// Cap on the total number of iterations (operator applications, restarts included); ≥ 1.
    pub max_iterations: usize,
}

impl Default for GmresOptions {
    /// `m = 50`, tolerance 1e-6, at most 1000 iterations.
    fn default() -> Self {
        Self { restart: 50, tolerance: 1e-6, max_iterations: 1000 }
    }
}

impl GmresOptions {
    /// Checks every field.
    pub fn validate(&self) -> Result<(), KrylovError> {
        if self.restart == 0 {
            return Err(KrylovError::BadOption { field: "restart", value: "0".into(), hint: "use 20–100" });
        }
        if !(self.tolerance > 0.0 && self.tolerance < 1.0) {
            return Err(KrylovError::BadOption {
                field: "tolerance",
                value: format!("{}", self.tolerance),
                hint: "must lie in (0, 1), e.g. 1e-6",
            });
        }
        if self.max_iterations == 0 {
            return Err(KrylovError::BadOption {
                field: "max_iterations",
                value: "0".into(),
                hint: "must be at least 1",
            });
        }
        Ok(())
    }
}

/// What [`gmres`] did.
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct GmresReport {
    /// Iterations (operator applications in the Arnoldi process).
    pub iterations: usize,
    /// Restart cycles started.
    pub cycles: usize,
    /// Final true relative residual `‖b − A x‖ / ‖b‖` (recomputed, not the recurrence value).
    pub residual: f64,
    /// Relative residual after each iteration (from the Givens recurrence); entry 0 is the
    /// initial residual.
    pub history: Vec<f64>,
}

/// Solves `A x = b` by GMRES(m) with right preconditioner `M`, starting from the `x` given
/// (use zeros for no initial guess), which is overwritten with the solution.
///
/// Converges when the true relative residual `‖b − A x‖/‖b‖ ≤ tolerance`; returns
/// [`KrylovError::NotConverged`] (with the residual history) when the iteration cap is reached
/// first. `b = 0` gives `x = 0` at once.
pub fn gmres<T: Scalar, A: LinearOperator<T> + ?Sized, M: Preconditioner<T> + ?Sized>(
    a: &A,
    m_inv: &M,
    b: &[T],
    x: &mut [T],
    opts: &GmresOptions,
) -> Result<GmresReport, KrylovError> {
    gmres_monitored(a, m_inv, b, x, opts, &mut |_, _| {})
}

/// [`gmres`] that also calls `monitor(iteration, relative residual)` after every iteration
/// (the residual from the Givens recurrence), for progress displays.
pub fn gmres_monitored<T: Scalar, A: LinearOperator<T> + ?Sized, M: Preconditioner<T> + ?Sized>(
    a: &A,
    m_inv: &M,
    b: &[T],
    x: &mut [T],
    opts: &GmresOptions,
    monitor: &mut dyn FnMut(usize, f64),
) -> Result<GmresReport, KrylovError> {
    opts.validate()?;
    let n = a.dim();
    for (what, got) in
        [("right-hand side b", b.len()), ("solution vector x", x.len()), ("preconditioner", m_inv.dim())]
    {
        if got != n {
            return Err(KrylovError::DimensionMismatch { what, expected: n, got });
        }
    }
    let bnorm = norm2(b);
    if !bnorm.is_finite() {
        return Err(KrylovError::NonFinite { iteration: 0 });
    }
    if bnorm == 0.0 {
        x.fill(T::zero());
        return Ok(GmresReport { iterations: 0, cycles: 0, residual: 0.0, history: vec![0.0] });
    }
    let m = opts.restart.min(n.max(1));
    let mut r = vec![T::zero(); n];
    let mut w = vec![T::zero(); n];
    let mut z = vec![T::zero(); n];
    let mut basis: Vec<Vec<T>> = Vec::with_capacity(m + 1);
    // Hessenberg columns h[j] of length j + 2, rotations (c, s), and the rotated rhs g.
    let mut h: Vec<Vec<T>> = Vec::with_capacity(m);
    let mut rot: Vec<(f64, T)> = Vec::with_capacity(m);
    let mut g: Vec<T> = Vec::with_capacity(m + 1);

    let residual = |x: &[T], r: &mut [T], w: &mut [T]| {
        a.apply(x, w);
        for ((ri, &bi), &wi) in r.iter_mut().zip(b).zip(w.iter()) {
            *ri = bi - wi;
        }
        norm2(r)
    };
    let mut beta = residual(x, &mut r, &mut w);
    let mut history = vec![beta / bnorm];
    let (mut iterations, mut cycles) = (0usize, 0usize);
    loop {
        let rel = beta / bnorm;
        if !rel.is_finite() {
            return Err(KrylovError::NonFinite { iteration: iterations });
        }
        if rel <= opts.tolerance {
            return Ok(GmresReport { iterations, cycles, residual: rel, history });
        }
        if iterations >= opts.max_iterations {
            return Err(KrylovError::NotConverged {
                iterations,
                residual: rel,
                tolerance: opts.tolerance,
                history,
            });
        }
        cycles += 1;
        basis.clear();
        h.clear();
        rot.clear();
        g.clear();
        basis.push(r.iter().map(|&v| v.scale(1.0 / beta)).collect());
        g.push(T::from_f64(beta));
        for j in 0..m {
            m_inv.apply(&basis[j], &mut z);
            a.apply(&z, &mut w);
            let mut col = vec![T::zero(); j + 2];
            // Modified Gram–Schmidt, then one more pass to keep the basis orthogonal.
            for _pass in 0..2 {
                for (i, v) in basis.iter().enumerate() {
                    let hij = dot(v, &w);
                    col[i] += hij;
                    axpy(-hij, v, &mut w);
                }
            }
            let hnext = norm2(&w);
            col[j + 1] = T::from_f64(hnext);
            for (i, &(c, s)) in rot.iter().enumerate() {
                let (p, q) = (col[i], col[i + 1]);
                col[i] = p.scale(c) + s * q;
                col[i + 1] = -(s.conj() * p) + q.scale(c);
            }
            let (c, s, rho) = givens(col[j], col[j + 1]);
            col[j] = rho;
            col[j + 1] = T::zero();
            let gj = g[j];
            g[j] = gj.scale(c);
            g.push(-(s.conj() * gj));
            rot.push((c, s));
            h.push(col);
            iterations += 1;
            let est = g[j + 1].abs() / bnorm;
            history.push(est);
            monitor(iterations, est);
            if !est.is_finite() {
                return Err(KrylovError::NonFinite { iteration: iterations });
            }
            if est <= opts.tolerance || hnext == 0.0 || iterations >= opts.max_iterations {
                break;
            }
            basis.push(w.iter().map(|&v| v.scale(1.0 / hnext)).collect());
        }
        // Solve the triangular system R y = g and update x ← x + M⁻¹ (V y).
        let k = h.len();
        let mut y = vec![T::zero(); k];
        for i in (0..k).rev() {
            let mut s = g[i];
            for (l, yl) in y.iter().enumerate().skip(i + 1) {
                s -= h[l][i] * *yl;
            }
            y[i] = s / h[i][i];
        }
        let mut u = vec![T::zero(); n];
        for (v, &yi) in basis.iter().zip(&y) {
            axpy(yi, v, &mut u);
        }
        m_inv.apply(&u, &mut z);
        axpy(T::one(), &z, x);
        beta = residual(x, &mut r, &mut w);
        if let Some(last) = history.last_mut() {
            *last = beta / bnorm;
        }
    }
}

/// Complex Givens rotation `(c, s)` with real `c` such that
/// `[c, s; −conj(s), c] · [a; b] = [ρ; 0]`; returns `(c, s, ρ)`.
fn givens<T: Scalar>(a: T, b: T) -> (f64, T, T) {
    let (na, nb) = (a.abs(), b.abs());
    if nb == 0.0 {
        return (1.0, T::zero(), a);
    }
    if na == 0.0 {
        return (0.0, b.conj().scale(1.0 / nb), T::from_f64(nb));
    }
    let rho = na.hypot(nb);
    let phase = a.scale(1.0 / na);
    (na / rho, phase * b.conj().scale(1.0 / rho), phase.scale(rho))
}

/// Solves `A x_r = b_r` for several right-hand sides with the same operator and
/// preconditioner (nothing is rebuilt between them); returns the solutions and reports in
/// order, or the first error.
pub fn solve_many<T: Scalar, A: LinearOperator<T> + ?Sized, M: Preconditioner<T> + ?Sized>(
    a: &A,
    m_inv: &M,
    rhs: &[Vec<T>],
    opts: &GmresOptions,
) -> Result<Vec<(Vec<T>, GmresReport)>, KrylovError> {
    rhs.iter()
        .map(|b| {
            let mut x = vec![T::zero(); a.dim()];
            gmres(a, m_inv, b, &mut x, opts).map(|rep| (x, rep))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::Identity;
    use rafter_linalg::{Complex64, DenseLu, DenseMatrix};

    struct Dense<T>(DenseMatrix<T>);
    impl<T: Scalar> LinearOperator<T> for Dense<T> {
        fn dim(&self) -> usize {
            self.0.nrows()
        }
        fn apply(&self, x: &[T], y: &mut [T]) {
            y.fill(T::zero());
            self.0.gemv_add(x, y);
        }
    }

    // Reference: faer's dense LU (a general-purpose library) on a non-symmetric complex
    // system; GMRES with restarts must reach the same solution.
    #[test]
    fn complex_nonsymmetric_system_matches_lu() {
        let n = 60;
        let a = DenseMatrix::from_fn(n, n, |i, j| {
            let d = if i == j { Complex64::new(3.0, 1.0) } else { Complex64::new(0.0, 0.0) };
            d + Complex64::new(((i * 7 + j * 3) % 11) as f64 / 20.0, ((i + 2 * j) % 5) as f64 / 30.0)
        });
        let b: Vec<Complex64> = (0..n).map(|i| Complex64::new(1.0 + i as f64, -(i as f64) / 3.0)).collect();
        let mut xr = b.clone();
        DenseLu::factor(&a).unwrap().solve_in_place(&mut xr).unwrap();
        let mut x = vec![Complex64::new(0.0, 0.0); n];
        let opts = GmresOptions { restart: 7, tolerance: 1e-12, max_iterations: 2000 };
        let rep = gmres(&Dense(a), &Identity(n), &b, &mut x, &opts).unwrap();
        assert!(rep.residual <= 1e-12);
        assert!(rep.cycles > 1, "restarts exercised");
        let err: f64 = x.iter().zip(&xr).map(|(p, q)| (p - q).norm_sqr()).sum::<f64>().sqrt();
        assert!(err <= 1e-9 * norm2(&xr), "error {err}");
    }

    #[test]
    fn cap_reached_is_an_error_and_bad_input_refused() {
        let n = 50;
        let a = DenseMatrix::from_fn(n, n, |i, j| if i == j { 1.0 + i as f64 } else { 0.0 });
        let b = vec![1.0; n];
        let mut x = vec![0.0; n];
        let opts = GmresOptions { restart: 5, tolerance: 1e-12, max_iterations: 3 };
        match gmres(&Dense(a.clone()), &Identity(n), &b, &mut x, &opts) {
            Err(KrylovError::NotConverged { iterations, history, .. }) => {
                assert_eq!(iterations, 3);
                assert_eq!(history.len(), 4);
            }
            other => panic!("expected NotConverged, got {other:?}"),
        }
        let mut short = vec![0.0; n - 1];
        assert!(matches!(
            gmres(&Dense(a.clone()), &Identity(n), &b, &mut short, &GmresOptions::default()),
            Err(KrylovError::DimensionMismatch { .. })
        ));
        let bad = GmresOptions { tolerance: 1.5, ..Default::default() };
        assert!(matches!(
            gmres(&Dense(a), &Identity(n), &b, &mut x, &bad),
            Err(KrylovError::BadOption { .. })
        ));
    }
}
