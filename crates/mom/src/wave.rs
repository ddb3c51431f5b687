//! One frequency of the full-wave solve: port admittances from the MPIE with H-matrix
//! operators, quasi-Helmholtz scaling and GMRES.
//!
//! # The system
//! With `A`, `P`, `D` of [`crate::mpie`] and the projectors `P_Σ`, `P_Λ = I − P_Σ` of
//! [`crate::projector`], the impedance operator normalised by the medium's wave impedance
//! `η = √(μ/ε)` is `Z̃ = jk A + (Z_s/η) T − (j/k) D P Dᵀ` (`T` the Gram matrix of the functions,
//! present only with conductor loss, `Z_s` the surface impedance). It is solved in the
//! rescaled form
//!
//! `Ẑ = S Z̃ S`,  `S = α⁻¹ P_Λ + α P_Σ`,  `α² = k ℓ`,
//!
//! (the frequency normalisation of loop and star parts: F. P. Andriulli et al., IEEE Trans.
//! AP 61(4), 2013; in loop–star form, G. Vecchi, "Loop-star decomposition of basis functions in
//! the discretization of the EFIE", IEEE Trans. AP 47(2), 1999). Because `Dᵀ P_Λ = 0`, the
//! scalar part is applied as `−j ℓ D P Dᵀ` with no `1/k` left, and the vector part on loops as
//! `(j/ℓ) P_Λ A P_Λ`: both stay of order one as `k → 0`, which is what keeps the solution
//! accurate at low frequency (the unscaled equation loses the loop currents below
//! `(k h)² ≈ 10⁻¹⁶`, and its iterative solution stalls long before). `ℓ` (m) balances the two
//! operators' diagonals.
//!
//! # Ports and admittances
//! A port's functions are excited by `u` (`u_e = l_e` on its edges, zero elsewhere) — a 1 V
//! delta gap. With `b_i = S u_i / η` and `Ẑ x_i = b_i` solved by GMRES for every port at once,
//! `I_i = S x_i` and the admittance is taken in its stationary (variational) form
//!
//! `Y_ij = η [ b_iᵀ x_j + x_iᵀ b_j − x_iᵀ Ẑ x_j ]`,
//!
//! exact for exact `x`, with an error quadratic in the GMRES residual, and exactly symmetric
//! whenever the applied `Ẑ` is (reciprocity is then not a matter of the solver tolerance).
//!
//! # Preconditioner
//! `M = (ℓ/j) P_Λ B_A P_Λ + (j/ℓ) D (DᵀD)⁺ B_P (DᵀD)⁺ Dᵀ`, with `B_A`, `B_P` the block-Jacobi
//! inverses of the near-field diagonal blocks of `A` and `P`: the inverse of the scaled
//! operator's two dominant parts, each in its own subspace.

use crate::MomError;
use crate::current::CurrentBasis;
use crate::mpie::{Interactions, ScalarPotential, VectorPotential, WaveGreen};
use crate::projector::StarProjector;
use num_complex::Complex64;
use rafter_green::Panel;
use rafter_hmatrix::{HMatrix, HOptions};
use rafter_krylov::{BlockDiagonal, GmresOptions, LinearOperator, Preconditioner, solve_many};
use rafter_linalg::{DenseMatrix, EntrySource};
use serde::Serialize;
use std::time::Instant;

type C = Complex64;

/// Accuracy settings of a frequency solve.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct WaveOptions {
    /// H-matrix options for both operators (`tolerance` is the per-block ε).
    pub hmatrix: HOptions,
    /// GMRES; its tolerance should sit above ε (2 ε by default).
    pub gmres: GmresOptions,
}

impl WaveOptions {
    /// ε per block, GMRES at 2 ε (restart 100, at most 3000 iterations).
    pub fn with_tolerance(eps: f64) -> Self {
        Self {
            hmatrix: HOptions { tolerance: eps, ..HOptions::default() },
            gmres: GmresOptions { restart: 100, tolerance: (2.0 * eps).max(1e-12), max_iterations: 3000 },
        }
    }
}

/// What one frequency produced.
#[derive(Clone, Debug)]
pub struct FrequencyResult {
    /// Frequency (Hz).
    pub frequency_hz: f64,
    /// Port admittance matrix (S), ports in the basis' order.
    pub y: DenseMatrix<C>,
    /// Unknowns (current functions).
    pub unknowns: usize,
    /// Panels (charge cells).
    pub panels: usize,
    /// GMRES iterations per port.
    pub iterations: Vec<usize>,
    /// Final relative residual per port.
    pub residuals: Vec<f64>,
    /// Stored / dense bytes of both operators together.
    pub compression: f64,
    /// Bytes stored by both operators.
    pub memory_bytes: u64,
    /// Wall time (s): operators, solve, total.
    pub seconds: [f64; 3],
    /// The balance length ℓ (m).
    pub balance_length: f64,
    /// Per port, the current coefficients `I = S x` (A/m per function) with 1 V across that
    /// port and the other ports shorted (for current pictures; empty when dropped).
    pub currents: Vec<Vec<C>>,
}

/// The frequency-independent part of the full-wave problem: mesh, basis, projector, port
/// vectors and clustering points. Built once per sweep.
pub struct WaveProblem<'a> {
    panels: &'a [Panel],
    basis: &'a CurrentBasis,
    projector: StarProjector,
    ports: Vec<Vec<C>>,
    function_points: Vec<[f64; 3]>,
    panel_points: Vec<[f64; 3]>,
}

impl<'a> WaveProblem<'a> {
    /// Prepares `basis` on `panels` (factorises `DᵀD`).
    pub fn new(panels: &'a [Panel], basis: &'a CurrentBasis) -> Result<Self, MomError> {
        if basis.ports.is_empty() {
            return Err(MomError::Input("no ports: a full-wave solve needs at least one port".into()));
        }
        let projector = StarProjector::new(basis, panels.len())?;
        let n = basis.functions.len();
        let ports = basis
            .ports
            .iter()
            .map(|fs| {
                let mut u = vec![C::new(0.0, 0.0); n];
                for &f in fs {
                    u[f] = C::new(basis.functions[f].length, 0.0);
                }
                u
            })
            .collect();
        let function_points = basis.functions.iter().map(|f| [f.mid[0], f.mid[1], f.z]).collect();
        let panel_points = panels.iter().map(Panel::center).collect();
        Ok(Self { panels, basis, projector, ports, function_points, panel_points })
    }

    /// Number of current unknowns.
    pub fn unknowns(&self) -> usize {
        self.basis.functions.len()
    }

    /// The projector (for tests and pictures).
    pub fn projector(&self) -> &StarProjector {
        &self.projector
    }

    /// Solves at `frequency_hz` with the kernel `green` (wavenumber `green.k()`) of a medium of
    /// wave impedance `eta` (Ω). `progress(stage)` reports the stages.
    ///
    /// `surface_impedance`, when given, holds `Z_s` (Ω) per panel (conductor loss, see
    /// [`crate::surface`]); `None` is a perfect conductor.
    pub fn solve(
        &self,
        frequency_hz: f64,
        green: &dyn WaveGreen,
        eta: C,
        surface_impedance: Option<&[C]>,
        opts: &WaveOptions,
        progress: &mut dyn FnMut(&str),
    ) -> Result<FrequencyResult, MomError> {
        let t0 = Instant::now();
        let k = green.k();
        let inter = Interactions::new(self.panels, green, opts.hmatrix.tolerance);
        let walls = green.feed_ground().map(|zg| crate::feedwall::FeedWalls::new(self.basis, zg, k));
        let asrc = VectorPotential::with_walls(&inter, self.basis, walls.as_ref());
        let psrc = ScalarPotential::new(&inter);
        let ell = balance_length(&asrc, &psrc, self.basis);
        progress("vector potential");
        let a = HMatrix::build_symmetric(&asrc, &self.function_points, &opts.hmatrix, None)?;
        progress("scalar potential");
        let p = HMatrix::build_symmetric(&psrc, &self.panel_points, &opts.hmatrix, None)?;
        let t_build = t0.elapsed().as_secs_f64();
        progress("solve");
        let alpha = (k * ell).sqrt();
        // Conductor loss: T̃ = (Z_s/η) T, sparse, added to jk A (both act on S x).
        let loss: Vec<(usize, usize, C)> = match surface_impedance {
            Some(zs) => {
                if zs.len() != self.panels.len() {
                    return Err(MomError::Input(format!(
                        "{} surface impedances for {} panels",
                        zs.len(),
                        self.panels.len()
                    )));
                }
                let w: Vec<C> = zs.iter().map(|z| z / eta).collect();
                crate::surface::gram(self.basis, self.panels, &w)
            }
            None => Vec::new(),
        };
        let op = Scaled { a: &a, p: &p, proj: &self.projector, k, ell, alpha, loss: &loss };
        // Block-Jacobi of jk A + T̃ (the loop part's operator up to 1/(kℓ)), scaled back to A's
        // size: (A + T̃/(jk)).
        let mut blocks = a.diagonal_blocks();
        if !loss.is_empty() {
            let jk = C::new(0.0, 1.0) * k;
            let mut place = vec![(usize::MAX, 0usize); self.basis.functions.len()];
            for (b, (idx, _)) in blocks.iter().enumerate() {
                for (i, &g) in idx.iter().enumerate() {
                    place[g] = (b, i);
                }
            }
            for &(m, n, v) in &loss {
                let ((bm, im), (bn, jn)) = (place[m], place[n]);
                if bm == bn && bm != usize::MAX {
                    let d = &mut blocks[bm].1;
                    d.set(im, jn, d.get(im, jn) + v / jk);
                }
            }
        }
        let ba = BlockDiagonal::new(self.basis.functions.len(), blocks)?;
        let pc = Precond { ba, bp: p.block_jacobi()?, proj: &self.projector, ell };
        let rhs: Vec<Vec<C>> = self
            .ports
            .iter()
            .map(|u| apply_s(&self.projector, alpha, u).into_iter().map(|v| v / eta).collect())
            .collect();
        let t1 = Instant::now();
        let solved = solve_many(&op, &pc, &rhs, &opts.gmres, &mut |_, _, _| {})?;
        // Stationary admittances.
        let n = self.basis.functions.len();
        let np = rhs.len();
        let xs: Vec<C> = solved.iter().flat_map(|(x, _)| x.iter().copied()).collect();
        let mut zx = vec![C::new(0.0, 0.0); n * np];
        op.apply_multi(&xs, &mut zx, np);
        let dotu = |a: &[C], b: &[C]| a.iter().zip(b).map(|(x, y)| x * y).sum::<C>();
        let y = DenseMatrix::from_fn(np, np, |i, j| {
            let (xi, xj) = (&solved[i].0, &solved[j].0);
            eta * (dotu(&rhs[i], xj) + dotu(xi, &rhs[j]) - dotu(xi, &zx[j * n..(j + 1) * n]))
        });
        let t_solve = t1.elapsed().as_secs_f64();
        let memory = a.memory_bytes() + p.memory_bytes();
        let dense = a.dense_bytes() + p.dense_bytes();
        Ok(FrequencyResult {
            frequency_hz,
            y,
            unknowns: n,
            panels: self.panels.len(),
            iterations: solved.iter().map(|(_, r)| r.iterations).collect(),
            residuals: solved.iter().map(|(_, r)| r.residual).collect(),
            compression: memory as f64 / dense as f64,
            memory_bytes: memory,
            seconds: [t_build, t_solve, t0.elapsed().as_secs_f64()],
            balance_length: ell,
            currents: solved.into_iter().map(|(x, _)| apply_s(&self.projector, alpha, &x)).collect(),
        })
    }
}

/// `ℓ = √(mean |A_nn| / mean |(D P Dᵀ)_nn|)` over a sample of interior functions (m).
fn balance_length(a: &VectorPotential<'_>, p: &ScalarPotential<'_>, basis: &CurrentBasis) -> f64 {
    let n = basis.functions.len();
    let step = (n / 64).max(1);
    let (mut sa, mut sp) = (0.0, 0.0);
    for m in (0..n).step_by(step) {
        let f = &basis.functions[m];
        sa += a.entry(m, m).norm();
        let mut s = C::new(0.0, 0.0);
        for ha in f.iter() {
            for hb in f.iter() {
                s += p.entry(ha.panel, hb.panel) * (f.charge(ha) * f.charge(hb));
            }
        }
        sp += s.norm();
    }
    (sa / sp).sqrt()
}

/// `S y = α⁻¹ y + (α − α⁻¹) P_Σ y`.
fn apply_s(proj: &StarProjector, alpha: C, y: &[C]) -> Vec<C> {
    let mut s = vec![C::new(0.0, 0.0); y.len()];
    proj.star(y, &mut s);
    let (ai, d) = (1.0 / alpha, alpha - 1.0 / alpha);
    y.iter().zip(&s).map(|(&v, &w)| v * ai + w * d).collect()
}

/// The scaled operator `Ẑ = S (jk A + T̃) S − jℓ D P Dᵀ` (see the module docs).
struct Scaled<'a> {
    a: &'a HMatrix<C>,
    p: &'a HMatrix<C>,
    proj: &'a StarProjector,
    k: C,
    ell: f64,
    alpha: C,
    /// `(m, n, (Z_s/η) T_mn)` of conductor loss.
    loss: &'a [(usize, usize, C)],
}

impl LinearOperator<C> for Scaled<'_> {
    fn dim(&self) -> usize {
        self.proj.functions()
    }
    fn apply(&self, x: &[C], y: &mut [C]) {
        self.apply_multi(x, y, 1)
    }
    fn apply_multi(&self, x: &[C], y: &mut [C], nrhs: usize) {
        let (n, np) = (self.proj.functions(), self.proj.panels());
        let mut sx = Vec::with_capacity(n * nrhs);
        let mut q = vec![C::new(0.0, 0.0); np * nrhs];
        for r in 0..nrhs {
            let xr = &x[r * n..(r + 1) * n];
            sx.extend(apply_s(self.proj, self.alpha, xr));
            self.proj.divergence(xr, &mut q[r * np..(r + 1) * np]);
        }
        let mut asx = vec![C::new(0.0, 0.0); n * nrhs];
        self.a.matvec_multi(&sx, &mut asx, nrhs).expect("lengths match");
        let mut pq = vec![C::new(0.0, 0.0); np * nrhs];
        self.p.matvec_multi(&q, &mut pq, nrhs).expect("lengths match");
        let jl = C::new(0.0, self.ell);
        let mut g = vec![C::new(0.0, 0.0); n];
        let jk = C::new(0.0, 1.0) * self.k;
        // (jk A + T̃) S x, then S of it.
        for v in asx.iter_mut() {
            *v *= jk;
        }
        for &(m, k, v) in self.loss {
            for r in 0..nrhs {
                asx[r * n + m] += v * sx[r * n + k];
            }
        }
        for r in 0..nrhs {
            let s_asx = apply_s(self.proj, self.alpha, &asx[r * n..(r + 1) * n]);
            self.proj.gradient(&pq[r * np..(r + 1) * np], &mut g);
            for ((yo, sa), gv) in y[r * n..(r + 1) * n].iter_mut().zip(&s_asx).zip(&g) {
                *yo = sa - jl * gv;
            }
        }
    }
}

/// The preconditioner of the module docs.
struct Precond<'a> {
    ba: BlockDiagonal<C>,
    bp: BlockDiagonal<C>,
    proj: &'a StarProjector,
    ell: f64,
}

impl Preconditioner<C> for Precond<'_> {
    fn dim(&self) -> usize {
        self.proj.functions()
    }
    fn apply(&self, r: &[C], z: &mut [C]) {
        let (n, np) = (self.proj.functions(), self.proj.panels());
        // Loop part: (ℓ/j) P_Λ B_A P_Λ r.
        let mut s = vec![C::new(0.0, 0.0); n];
        self.proj.star(r, &mut s);
        let lr: Vec<C> = r.iter().zip(&s).map(|(a, b)| a - b).collect();
        let mut t = vec![C::new(0.0, 0.0); n];
        self.ba.apply(&lr, &mut t);
        self.proj.star(&t, &mut s);
        let loop_part: Vec<C> = t.iter().zip(&s).map(|(a, b)| (a - b) * C::new(0.0, -self.ell)).collect();
        // Star part: (j/ℓ) D L⁺ B_P L⁺ Dᵀ r.
        let mut q = vec![C::new(0.0, 0.0); np];
        self.proj.divergence(r, &mut q);
        self.proj.laplacian_solve(&mut q);
        let mut w = vec![C::new(0.0, 0.0); np];
        self.bp.apply(&q, &mut w);
        self.proj.laplacian_solve(&mut w);
        self.proj.gradient(&w, z);
        let js = C::new(0.0, 1.0 / self.ell);
        for (zo, l) in z.iter_mut().zip(&loop_part) {
            *zo = *zo * js + l;
        }
    }
}
