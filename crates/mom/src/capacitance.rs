//! Capacitance matrices from the compressed collocation operator.

use crate::{MomError, PanelCollocation};
use rafter_green::{Panel, StaticGreen};
use rafter_hmatrix::{HMatrix, HOptions, HSummary, reference};
use rafter_krylov::{GmresOptions, GmresReport, LinearOperator, solve_many};
use rafter_linalg::{DenseLu, DenseMatrix};
use serde::Serialize;
use std::time::Instant;

/// Accuracy and solver settings of [`capacitance`].
#[derive(Clone, Copy, Debug)]
pub struct CapacitanceOptions {
    /// H-matrix options (relative per-block tolerance ε, η, leaf size).
    pub hmatrix: HOptions,
    /// GMRES relative residual target; keep it above ε (see [`CapacitanceOptions::for_tolerance`]).
    pub gmres: GmresOptions,
    /// Use the dense reference path (dense fill + faer LU) instead of the H-matrix: for
    /// verification of small problems only.
    pub dense: bool,
}

impl CapacitanceOptions {
    /// Options for H-matrix tolerance `eps`: GMRES to `max(2 ε, 1e-12)` (above the operator's
    /// accuracy, as it must be; tighter than 10 ε because weak couplings inherit an error of
    /// order τ·√(C_ii C_jj) even after the adjoint correction — measured on the crossed-bus demo
    /// at 10k unknowns, couplings of 10⁻⁴–10⁻³ of the self terms: 8.2·10⁻⁴ relative at 10 ε,
    /// 2.8·10⁻⁴ at 2 ε), restart 60,
    /// at most 2000 iterations; η = 2 and the default leaf size.
    pub fn for_tolerance(eps: f64) -> Self {
        Self {
            hmatrix: HOptions { tolerance: eps, ..HOptions::default() },
            gmres: GmresOptions { restart: 60, tolerance: (2.0 * eps).max(1e-12), max_iterations: 2000 },
            dense: false,
        }
    }
}

/// Seconds spent per stage.
#[derive(Clone, Debug, Default, Serialize)]
pub struct StageTimes {
    /// Building the operator (H-matrix compression, or dense fill).
    pub assemble_s: f64,
    /// Preconditioner set-up (or dense LU).
    pub preconditioner_s: f64,
    /// All right-hand sides.
    pub solve_s: f64,
}

/// The result of [`capacitance`].
#[derive(Clone, Debug, Serialize)]
pub struct CapacitanceResult {
    /// Maxwell capacitance matrix (F): `C[i][j]` is the charge on net `i` when net `j` is at
    /// 1 V and all others at 0 V.
    pub maxwell: Vec<Vec<f64>>,
    /// `‖C − Cᵀ‖_F / ‖C‖_F`: zero for an exact solution; collocation and compression leave a
    /// small asymmetry, a quality figure.
    pub asymmetry: f64,
    /// GMRES reports, one per net (empty on the dense path).
    pub gmres: Vec<GmresReport>,
    /// H-matrix totals (`None` on the dense path).
    pub hmatrix: Option<HSummary>,
    /// Stage timings.
    pub timing: StageTimes,
    /// Panel charges (C) of each solve, net by net (`charges[j][k]`: panel `k`, net `j` at 1 V).
    #[serde(skip)]
    pub charges: Vec<Vec<f64>>,
}

/// Solves `P q = v_j` for each net `j` (its panels at 1 V, all others at 0 V) and sums the
/// panel charges per net: `C_ij = Σ_{k ∈ net i} q_k^{(j)} = v_iᵀ P⁻¹ v_j`.
///
/// Iterative solves stop at a residual `r_j = v_j − P x_j` of relative size `τ` (the GMRES
/// tolerance), which would leave an error `v_iᵀ P⁻¹ r_j` of order `τ C_ii` in every entry —
/// large, relatively, for weak couplings. The entries are therefore evaluated with the
/// adjoint-corrected functional `C_ij ≈ v_iᵀ x_j + y_iᵀ r_j`, `y_i ≈ P⁻ᵀ v_i`, whose error
/// `(y_i − P⁻ᵀ v_i)ᵀ r_j` is second order in the solver error (N. A. Pierce and M. B. Giles,
/// "Adjoint recovery of superconvergent functionals from PDE approximations", *SIAM Review*
/// 42(2), 2000 — from memory). The collocation matrix is symmetric up to discretisation
/// error, so the solution `x_i` of net `i` serves as `y_i`: one extra multi-vector product for
/// all nets. Measured against the dense path at 10k unknowns (ε = 10⁻⁴, GMRES then at 10 ε):
/// on the sensor-bus demo the worst entry moved from 18 % to 0.028 % of itself, on the
/// crossed-bus demo the worst entry from 1.2·10⁻⁴ to 3.6·10⁻⁶ of `√(C_ii C_jj)`.
///
/// `net_of[k]` is the net of panel `k` (0-based, < `nets`). `progress` receives stage
/// messages; `gmres_progress(net, iteration, residual)` follows each solve.
pub fn capacitance(
    panels: &[Panel],
    net_of: &[usize],
    nets: usize,
    green: &dyn StaticGreen,
    opts: &CapacitanceOptions,
    build_progress: Option<&(dyn Fn(usize, usize) + Sync)>,
    gmres_progress: &mut dyn FnMut(usize, usize, f64),
) -> Result<CapacitanceResult, MomError> {
    if panels.len() != net_of.len() {
        return Err(MomError::Input(format!("{} panels but {} net assignments", panels.len(), net_of.len())));
    }
    check_nets(net_of, nets)?;
    let src = PanelCollocation::new(panels, green);
    let t = Instant::now();
    let result = if opts.dense {
        let a = reference::assemble_dense(&src)?;
        let assemble_s = t.elapsed().as_secs_f64();
        let mut r = solve_dense(a, net_of, nets)?;
        r.timing.assemble_s = assemble_s;
        r
    } else {
        let h = HMatrix::build_square(&src, src.centres(), &opts.hmatrix, build_progress)?;
        let assemble_s = t.elapsed().as_secs_f64();
        let mut r = solve_compressed(&h, net_of, nets, &opts.gmres, gmres_progress)?;
        r.timing.assemble_s = assemble_s;
        r
    };
    Ok(result)
}

/// Every net index below `nets`, and every net present.
fn check_nets(net_of: &[usize], nets: usize) -> Result<(), MomError> {
    if let Some(&bad) = net_of.iter().find(|&&k| k >= nets) {
        return Err(MomError::Input(format!("panel assigned to net {bad}, but there are only {nets} nets")));
    }
    if (0..nets).any(|k| !net_of.contains(&k)) {
        return Err(MomError::Input("every net needs at least one panel".into()));
    }
    Ok(())
}

/// The excitations `v_j`: net `j`'s panels at 1 V, all others at 0 V.
fn excitations(net_of: &[usize], nets: usize) -> Vec<Vec<f64>> {
    (0..nets).map(|j| net_of.iter().map(|&k| if k == j { 1.0 } else { 0.0 }).collect()).collect()
}

/// [`capacitance`] on an already built collocation H-matrix `h` (rows and columns = panels,
/// `net_of[k]` the net of panel `k`): block-Jacobi GMRES for all nets in lockstep, then the
/// adjoint-corrected entries. `timing.assemble_s` is left at 0 for the caller to fill.
pub fn solve_compressed(
    h: &HMatrix<f64>,
    net_of: &[usize],
    nets: usize,
    gmres: &GmresOptions,
    gmres_progress: &mut dyn FnMut(usize, usize, f64),
) -> Result<CapacitanceResult, MomError> {
    if h.nrows() != net_of.len() || h.ncols() != net_of.len() {
        return Err(MomError::Input(format!(
            "operator is {} × {} but there are {} panels",
            h.nrows(),
            h.ncols(),
            net_of.len()
        )));
    }
    check_nets(net_of, nets)?;
    let rhs = excitations(net_of, nets);
    let mut timing = StageTimes::default();
    let t = Instant::now();
    let pc = h.block_jacobi()?;
    timing.preconditioner_s = t.elapsed().as_secs_f64();
    let t = Instant::now();
    // All nets in lockstep: one multi-vector H-matrix product per round serves every net.
    let solved = solve_many(h, &pc, &rhs, gmres, gmres_progress)?;
    let (charges, reports): (Vec<Vec<f64>>, Vec<GmresReport>) = solved.into_iter().unzip();
    let x: Vec<f64> = charges.concat();
    let mut px = vec![0.0; x.len()];
    h.apply_multi(&x, &mut px, nets);
    let residuals: Vec<f64> = rhs.concat().iter().zip(&px).map(|(v, p)| v - p).collect();
    timing.solve_s = t.elapsed().as_secs_f64();
    Ok(finish(charges, Some(&residuals), net_of, nets, reports, Some(h.summary()), timing))
}

/// [`capacitance`] by dense LU of the full collocation matrix `a` (consumed: factored in
/// place). `timing.assemble_s` is left at 0 for the caller to fill.
pub fn solve_dense(
    a: DenseMatrix<f64>,
    net_of: &[usize],
    nets: usize,
) -> Result<CapacitanceResult, MomError> {
    if a.nrows() != net_of.len() || a.ncols() != net_of.len() {
        return Err(MomError::Input(format!(
            "matrix is {} × {} but there are {} panels",
            a.nrows(),
            a.ncols(),
            net_of.len()
        )));
    }
    check_nets(net_of, nets)?;
    let n = net_of.len();
    let mut timing = StageTimes::default();
    let t = Instant::now();
    let lu = DenseLu::factor_in_place(a)?;
    timing.preconditioner_s = t.elapsed().as_secs_f64();
    let t = Instant::now();
    let mut all: Vec<f64> = excitations(net_of, nets).concat();
    lu.solve_in_place(&mut all)?;
    timing.solve_s = t.elapsed().as_secs_f64();
    let charges = all.chunks(n).map(<[f64]>::to_vec).collect();
    Ok(finish(charges, None, net_of, nets, Vec::new(), None, timing))
}

/// Maxwell matrix from the panel charges (adjoint-corrected with the residuals when given;
/// see [`capacitance`]), asymmetry, and the result record.
fn finish(
    charges: Vec<Vec<f64>>,
    residuals: Option<&[f64]>,
    net_of: &[usize],
    nets: usize,
    gmres: Vec<GmresReport>,
    hmatrix: Option<HSummary>,
    timing: StageTimes,
) -> CapacitanceResult {
    let n = net_of.len();
    let mut maxwell = vec![vec![0.0; nets]; nets];
    for (j, q) in charges.iter().enumerate() {
        for (&k, &qk) in net_of.iter().zip(q) {
            maxwell[k][j] += qk;
        }
    }
    // Adjoint correction (see `capacitance`): C_ij += x_i · r_j.
    if let Some(r) = residuals {
        for (i, row) in maxwell.iter_mut().enumerate() {
            for (j, c) in row.iter_mut().enumerate() {
                *c += rafter_linalg::dense::dot(&charges[i], &r[j * n..(j + 1) * n]);
            }
        }
    }
    let norm: f64 = maxwell.iter().flatten().map(|c| c * c).sum::<f64>().sqrt();
    let asym: f64 = (0..nets)
        .flat_map(|i| (0..nets).map(move |j| (i, j)))
        .map(|(i, j)| (maxwell[i][j] - maxwell[j][i]).powi(2))
        .sum::<f64>()
        .sqrt();
    CapacitanceResult {
        maxwell,
        asymmetry: if norm > 0.0 { asym / norm } else { 0.0 },
        gmres,
        hmatrix,
        timing,
        charges,
    }
}

/// SPICE (branch) form of a Maxwell matrix, symmetrised as `(C + Cᵀ)/2`: returns
/// `(to_ground, between)` with `to_ground[i] = Σ_j C_ij` (capacitance from net `i` to the
/// reference) and `between[i][j] = −C_ij` for `i ≠ j` (0 on the diagonal).
pub fn spice_form(maxwell: &[Vec<f64>]) -> (Vec<f64>, Vec<Vec<f64>>) {
    let n = maxwell.len();
    let sym = |i: usize, j: usize| 0.5 * (maxwell[i][j] + maxwell[j][i]);
    let to_ground = (0..n).map(|i| (0..n).map(|j| sym(i, j)).sum()).collect();
    let between = (0..n).map(|i| (0..n).map(|j| if i == j { 0.0 } else { -sym(i, j) }).collect()).collect();
    (to_ground, between)
}
