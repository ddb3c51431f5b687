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
    /// relative accuracy ε (an H-matrix), keep it above ε (2–10 ε): below that the residual of
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
    if x.len() != a.dim() {
        return Err(KrylovError::DimensionMismatch {
            what: "solution vector x",
            expected: a.dim(),
            got: x.len(),
        });
    }
    let mut out = run(a, m_inv, &[b], vec![x.to_vec()], opts, &mut |_, it, r| monitor(it, r))?;
    let (sol, rep) = out.pop().expect("one system in, one out");
    x.copy_from_slice(&sol);
    Ok(rep)
}

/// Solves `A x_r = b_r` for several right-hand sides with the same operator and
/// preconditioner (nothing is rebuilt between them), from zero initial guesses.
///
/// The systems run GMRES(m) independently — each has its own Krylov space, residual and stop —
/// but in lockstep: every round, the operator is applied to one vector of every system still
/// running through [`LinearOperator::apply_multi`], so an operator that streams its data
/// (an H-matrix) reads it once per round for all systems. `monitor(system, iteration,
/// residual)` follows every iteration. Returns the solutions and reports in order, or the
/// first error.
pub fn solve_many<T: Scalar, A: LinearOperator<T> + ?Sized, M: Preconditioner<T> + ?Sized>(
    a: &A,
    m_inv: &M,
    rhs: &[Vec<T>],
    opts: &GmresOptions,
    monitor: &mut dyn FnMut(usize, usize, f64),
) -> Result<Vec<(Vec<T>, GmresReport)>, KrylovError> {
    let bs: Vec<&[T]> = rhs.iter().map(Vec::as_slice).collect();
    let x0 = vec![vec![T::zero(); a.dim()]; rhs.len()];
    run(a, m_inv, &bs, x0, opts, monitor)
}

/// What a system needs from the operator next.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Phase {
    /// `A x` for the true residual (start of a cycle).
    Residual,
    /// `A M⁻¹ v_j` for the next Arnoldi step.
    Arnoldi,
    /// Finished.
    Done,
}

/// The state of one GMRES(m) system.
struct System<'a, T> {
    b: &'a [T],
    bnorm: f64,
    x: Vec<T>,
    phase: Phase,
    basis: Vec<Vec<T>>,
    /// Hessenberg columns `h[j]` (length `j + 2`), rotated into triangular form.
    h: Vec<Vec<T>>,
    rot: Vec<(f64, T)>,
    g: Vec<T>,
    /// `M⁻¹ v_j` of the pending Arnoldi step.
    z: Vec<T>,
    iterations: usize,
    cycles: usize,
    history: Vec<f64>,
}

impl<T: Scalar> System<'_, T> {
    fn report(&mut self, residual: f64) -> GmresReport {
        GmresReport {
            iterations: self.iterations,
            cycles: self.cycles,
            residual,
            history: std::mem::take(&mut self.history),
        }
    }

    /// Consumes `ax = A x`: the true residual; stops, or starts a new cycle.
    fn after_residual(&mut self, ax: &[T], opts: &GmresOptions) -> Result<Option<GmresReport>, KrylovError> {
        let r: Vec<T> = self.b.iter().zip(ax).map(|(&bi, &ai)| bi - ai).collect();
        let beta = norm2(&r);
        let rel = beta / self.bnorm;
        if self.cycles == 0 {
            self.history.push(rel);
        } else if let Some(last) = self.history.last_mut() {
            *last = rel;
        }
        if !rel.is_finite() {
            return Err(KrylovError::NonFinite { iteration: self.iterations });
        }
        if rel <= opts.tolerance {
            self.phase = Phase::Done;
            return Ok(Some(self.report(rel)));
        }
        if self.iterations >= opts.max_iterations {
            return Err(KrylovError::NotConverged {
                iterations: self.iterations,
                residual: rel,
                tolerance: opts.tolerance,
                history: std::mem::take(&mut self.history),
            });
        }
        self.cycles += 1;
        self.basis.clear();
        self.h.clear();
        self.rot.clear();
        self.g.clear();
        self.basis.push(r.iter().map(|&v| v.scale(1.0 / beta)).collect());
        self.g.push(T::from_f64(beta));
        self.phase = Phase::Arnoldi;
        Ok(None)
    }

    /// Consumes `w = A M⁻¹ v_j`: one Arnoldi step; at the end of a cycle updates `x`.
    fn after_arnoldi<M: Preconditioner<T> + ?Sized>(
        &mut self,
        mut w: Vec<T>,
        m_inv: &M,
        restart: usize,
        opts: &GmresOptions,
        monitor: &mut dyn FnMut(usize, f64),
    ) -> Result<(), KrylovError> {
        let j = self.h.len();
        let mut col = vec![T::zero(); j + 2];
        // Modified Gram–Schmidt, then one more pass to keep the basis orthogonal.
        for _pass in 0..2 {
            for (i, v) in self.basis.iter().enumerate() {
                let hij = dot(v, &w);
                col[i] += hij;
                axpy(-hij, v, &mut w);
            }
        }
        let hnext = norm2(&w);
        col[j + 1] = T::from_f64(hnext);
        for (i, &(c, s)) in self.rot.iter().enumerate() {
            let (p, q) = (col[i], col[i + 1]);
            col[i] = p.scale(c) + s * q;
            col[i + 1] = -(s.conj() * p) + q.scale(c);
        }
        let (c, s, rho) = givens(col[j], col[j + 1]);
        col[j] = rho;
        col[j + 1] = T::zero();
        let gj = self.g[j];
        self.g[j] = gj.scale(c);
        self.g.push(-(s.conj() * gj));
        self.rot.push((c, s));
        self.h.push(col);
        self.iterations += 1;
        let est = self.g[j + 1].abs() / self.bnorm;
        self.history.push(est);
        monitor(self.iterations, est);
        if !est.is_finite() {
            return Err(KrylovError::NonFinite { iteration: self.iterations });
        }
        let end = est <= opts.tolerance
            || hnext == 0.0
            || self.iterations >= opts.max_iterations
            || self.h.len() >= restart;
        if !end {
            self.basis.push(w.iter().map(|&v| v.scale(1.0 / hnext)).collect());
            return Ok(());
        }
        // Solve the triangular system R y = g and update x ← x + M⁻¹ (V y).
        let k = self.h.len();
        let mut y = vec![T::zero(); k];
        for i in (0..k).rev() {
            let mut s = self.g[i];
            for (l, yl) in y.iter().enumerate().skip(i + 1) {
                s -= self.h[l][i] * *yl;
            }
            y[i] = s / self.h[i][i];
        }
        let mut u = vec![T::zero(); self.x.len()];
        for (v, &yi) in self.basis.iter().zip(&y) {
            axpy(yi, v, &mut u);
        }
        m_inv.apply(&u, &mut self.z);
        axpy(T::one(), &self.z, &mut self.x);
        self.phase = Phase::Residual;
        Ok(())
    }
}

/// The lockstep driver behind [`gmres`] and [`solve_many`].
fn run<T: Scalar, A: LinearOperator<T> + ?Sized, M: Preconditioner<T> + ?Sized>(
    a: &A,
    m_inv: &M,
    rhs: &[&[T]],
    x0: Vec<Vec<T>>,
    opts: &GmresOptions,
    monitor: &mut dyn FnMut(usize, usize, f64),
) -> Result<Vec<(Vec<T>, GmresReport)>, KrylovError> {
    opts.validate()?;
    let n = a.dim();
    if m_inv.dim() != n {
        return Err(KrylovError::DimensionMismatch { what: "preconditioner", expected: n, got: m_inv.dim() });
    }
    let restart = opts.restart.min(n.max(1));
    let mut systems = Vec::with_capacity(rhs.len());
    let mut reports: Vec<Option<GmresReport>> = vec![None; rhs.len()];
    for (k, (&b, x)) in rhs.iter().zip(x0).enumerate() {
        if b.len() != n {
            return Err(KrylovError::DimensionMismatch {
                what: "right-hand side b",
                expected: n,
                got: b.len(),
            });
        }
        let bnorm = norm2(b);
        if !bnorm.is_finite() {
            return Err(KrylovError::NonFinite { iteration: 0 });
        }
        let mut s = System {
            b,
            bnorm,
            x,
            phase: Phase::Residual,
            basis: Vec::with_capacity(restart + 1),
            h: Vec::with_capacity(restart),
            rot: Vec::with_capacity(restart),
            g: Vec::with_capacity(restart + 1),
            z: vec![T::zero(); n],
            iterations: 0,
            cycles: 0,
            history: Vec::new(),
        };
        if bnorm == 0.0 {
            s.x.fill(T::zero());
            s.phase = Phase::Done;
            s.history.push(0.0);
            reports[k] = Some(s.report(0.0));
        } else if s.x.iter().all(|&v| v == T::zero()) {
            // A x = 0 for the zero guess: no operator application needed.
            reports[k] = s.after_residual(&vec![T::zero(); n], opts)?;
        }
        systems.push(s);
    }
    loop {
        let active: Vec<usize> = (0..systems.len()).filter(|&k| systems[k].phase != Phase::Done).collect();
        if active.is_empty() {
            break;
        }
        // One operator application for every running system.
        let mut xs = vec![T::zero(); n * active.len()];
        for (c, &k) in active.iter().enumerate() {
            let s = &mut systems[k];
            let col = &mut xs[c * n..(c + 1) * n];
            match s.phase {
                Phase::Residual => col.copy_from_slice(&s.x),
                Phase::Arnoldi => {
                    let v = s.basis.last().expect("a cycle starts with one basis vector");
                    m_inv.apply(v, col);
                }
                Phase::Done => unreachable!("only running systems are active"),
            }
        }
        let mut ys = vec![T::zero(); n * active.len()];
        a.apply_multi(&xs, &mut ys, active.len());
        for (c, &k) in active.iter().enumerate() {
            let y = &ys[c * n..(c + 1) * n];
            let s = &mut systems[k];
            match s.phase {
                Phase::Residual => reports[k] = s.after_residual(y, opts)?,
                Phase::Arnoldi => {
                    s.after_arnoldi(y.to_vec(), m_inv, restart, opts, &mut |it, r| monitor(k, it, r))?
                }
                Phase::Done => {}
            }
        }
    }
    Ok(systems
        .into_iter()
        .zip(reports)
        .map(|(s, r)| (s.x, r.expect("every finished system has a report")))
        .collect())
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

#[cfg(test)]
mod lockstep_tests {
    use super::*;
    use crate::Identity;
    use rafter_linalg::DenseMatrix;

    struct Dense(DenseMatrix<f64>);
    impl LinearOperator<f64> for Dense {
        fn dim(&self) -> usize {
            self.0.nrows()
        }
        fn apply(&self, x: &[f64], y: &mut [f64]) {
            y.fill(0.0);
            self.0.gemv_add(x, y);
        }
    }

    /// Solving several right-hand sides in lockstep gives, system by system, exactly what
    /// separate solves give (same iterates, same iteration counts), including a zero
    /// right-hand side and systems that finish at different rounds.
    #[test]
    fn lockstep_equals_separate_solves() {
        let n = 40;
        let a = DenseMatrix::from_fn(n, n, |i, j| {
            if i == j { 2.0 + i as f64 / 10.0 } else { 1.0 / (1.0 + (i + 2 * j) as f64) }
        });
        let rhs: Vec<Vec<f64>> = vec![
            (0..n).map(|i| 1.0 + i as f64).collect(),
            vec![0.0; n],
            (0..n).map(|i| if i == 3 { 1.0 } else { 0.0 }).collect(),
            (0..n).map(|i| (i as f64).sin()).collect(),
        ];
        let opts = GmresOptions { restart: 6, tolerance: 1e-10, max_iterations: 500 };
        let op = Dense(a);
        let together = solve_many(&op, &Identity(n), &rhs, &opts, &mut |_, _, _| {}).unwrap();
        for (b, (x, rep)) in rhs.iter().zip(&together) {
            let mut xs = vec![0.0; n];
            let alone = gmres(&op, &Identity(n), b, &mut xs, &opts).unwrap();
            assert_eq!(rep.iterations, alone.iterations);
            assert_eq!(rep.history, alone.history);
            assert!(x.iter().zip(&xs).all(|(p, q)| p == q));
        }
        assert_eq!(together[1].1.iterations, 0);
    }
}
