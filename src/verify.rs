//! `rafter verify`: the compressed solve of a layout against the dense reference solve of the
//! same discretisation, with the evidence in between (operator, blocks, solver, results) and
//! the tolerance trade-off.
//!
//! Figures, all against the dense collocation matrix `A` (parallel fill) and its LU solve:
//!
//! - `matvec_rel_error`: largest `‖H x − A x‖₂ / ‖A x‖₂` over random vectors `x` (entries
//!   uniform in `[−1, 1]`, fixed seed): the operator's error as GMRES sees it;
//! - `block_max_rel_error`: largest `‖A_b − H_b‖_F / ‖A_b‖_F` over the leaf blocks `b`, exact,
//!   to set against the requested per-block tolerance ε;
//! - the GMRES iterations and final relative residuals of the compressed solve;
//! - every capacitance entry, compressed and dense, with `abs_diff = |C_h − C_d|` and
//!   `rel_diff = |C_h − C_d| / max(|C_d|, f √(C_d,ii C_d,jj))`, `f` =
//!   [`crate::compare::RESOLVED`]: relative to the entry itself, with a floor for couplings too
//!   weak for any solve to resolve relatively (between two grounds they reach 10⁻²⁰);
//!   `result_max_rel_diff` is the largest `rel_diff`;
//! - per extra tolerance: compression, memory, build and solve time and `result_max_rel_diff`.
//!
//! One Green's function serves every run, built to the finest tolerance asked for (its
//! accuracy is `ε_min/10`), so that the rows of the trade-off differ only in the compression
//! and the solver tolerance; the dense reference uses the same one. The main comparison runs at
//! the layout's `solve.tolerance` with the options of `rafter extract`.

use crate::compare::{RESOLVED, floored_rel_diff};
use crate::extract::{green_for, panels};
use anyhow::{Context, bail};
use rafter_hmatrix::{HMatrix, reference};
use rafter_layout::Layout;
use rafter_mom::{CapacitanceOptions, CapacitanceResult, PanelCollocation, solve_compressed, solve_dense};
use rand::rngs::StdRng;
use rand::{RngExt, SeedableRng};
use serde::Serialize;
use std::time::Instant;

/// What `rafter verify` runs.
#[derive(Clone, Debug)]
pub struct VerifyOptions {
    /// Extra H-matrix tolerances for the trade-off table (each in (0, 1)); may be empty.
    pub tolerances: Vec<f64>,
    /// Random vectors for the matvec error (≥ 1).
    pub vectors: usize,
}

/// One capacitance entry, compressed against dense.
#[derive(Clone, Debug, Serialize)]
pub struct EntryDiff {
    /// Net of the row (the charge's net).
    pub row: String,
    /// Net of the column (the excited net).
    pub col: String,
    /// Compressed result (F).
    pub compressed: f64,
    /// Dense reference (F).
    pub dense: f64,
    /// `|C_h − C_d|` (F).
    pub abs_diff: f64,
    /// `|C_h − C_d| / max(|C_d|, RESOLVED √(C_d,ii C_d,jj))`.
    pub rel_diff: f64,
}

/// One row of the tolerance trade-off.
#[derive(Clone, Debug, Serialize)]
pub struct TradeoffRow {
    /// H-matrix tolerance ε.
    pub tolerance: f64,
    /// Stored bytes over dense bytes.
    pub compression: f64,
    /// Stored bytes.
    pub memory_bytes: u64,
    /// H-matrix build (s).
    pub build_s: f64,
    /// Preconditioner and all GMRES solves (s).
    pub solve_s: f64,
    /// Largest GMRES iteration count over the nets.
    pub gmres_max_iterations: usize,
    /// Largest `rel_diff` of the capacitance entries against the dense reference.
    pub result_max_rel_diff: f64,
}

/// Timings of the dense reference.
#[derive(Clone, Debug, Serialize)]
pub struct DenseTimes {
    /// Parallel fill (s).
    pub fill_s: f64,
    /// LU factorisation (s).
    pub factor_s: f64,
    /// Solves (s).
    pub solve_s: f64,
    /// Bytes of the dense matrix.
    pub bytes: u64,
}

/// The report of `rafter verify` (written as `verify.json`).
#[derive(Clone, Debug, Serialize)]
pub struct VerifyReport {
    /// Layout name.
    pub layout: String,
    /// Layout file.
    pub file: String,
    /// Unknowns (cells).
    pub unknowns: usize,
    /// The layout's tolerance ε (the main comparison).
    pub tolerance: f64,
    /// Largest relative matvec error over the random vectors.
    pub matvec_rel_error: f64,
    /// Each vector's relative matvec error.
    pub matvec_rel_errors: Vec<f64>,
    /// Largest exact relative Frobenius error of a leaf block.
    pub block_max_rel_error: f64,
    /// Blocks whose exact error exceeds ε.
    pub blocks_over_tolerance: usize,
    /// Leaf blocks.
    pub blocks: usize,
    /// GMRES iterations per net.
    pub gmres_iterations: Vec<usize>,
    /// Final relative residual per net.
    pub gmres_residuals: Vec<f64>,
    /// GMRES tolerance.
    pub gmres_tolerance: f64,
    /// Largest `rel_diff` over the capacitance entries.
    pub result_max_rel_diff: f64,
    /// Largest `abs_diff` (F).
    pub result_max_abs_diff: f64,
    /// The floor `f` of `rel_diff`.
    pub result_floor: f64,
    /// Every capacitance entry (row-major).
    pub entries: Vec<EntryDiff>,
    /// Compression at ε.
    pub compression: f64,
    /// Compressed build and solve at ε (s).
    pub build_s: f64,
    /// Preconditioner + solves at ε (s).
    pub solve_s: f64,
    /// Dense reference timings.
    pub dense: DenseTimes,
    /// The trade-off, one row per requested tolerance.
    pub tradeoff: Vec<TradeoffRow>,
    /// Peak resident memory of the process (bytes).
    pub peak_memory_bytes: Option<u64>,
}

/// Checks a tolerance list: every value finite and in (0, 1).
pub fn check_tolerances(tolerances: &[f64]) -> anyhow::Result<()> {
    for &t in tolerances {
        if !(t.is_finite() && t > 0.0 && t < 1.0) {
            bail!(
                "--tolerances: {t} is not a relative tolerance (hint: each value must lie in (0, 1), e.g. \
                 --tolerances 1e-2,1e-3,1e-4)"
            );
        }
    }
    Ok(())
}

/// `rel_diff` of every entry of `ch` against `cd` (see the module docs).
fn entry_diffs(layout: &Layout, ch: &[Vec<f64>], cd: &[Vec<f64>]) -> Vec<EntryDiff> {
    let n = cd.len();
    let mut out = Vec::with_capacity(n * n);
    for i in 0..n {
        for j in 0..n {
            let (h, d) = (ch[i][j], cd[i][j]);
            out.push(EntryDiff {
                row: layout.nets[i].name.clone(),
                col: layout.nets[j].name.clone(),
                compressed: h,
                dense: d,
                abs_diff: (h - d).abs(),
                rel_diff: floored_rel_diff(h, d, cd[i][i], cd[j][j]),
            });
        }
    }
    out
}

fn max_rel(d: &[EntryDiff]) -> f64 {
    d.iter().map(|e| e.rel_diff).fold(0.0, f64::max)
}

/// Runs the comparison (see the module docs). `progress` receives stage messages.
pub fn verify(
    layout: &Layout,
    opts: &VerifyOptions,
    progress: &dyn Fn(&str),
) -> anyhow::Result<VerifyReport> {
    check_tolerances(&opts.tolerances)?;
    if opts.vectors == 0 {
        bail!("--vectors must be at least 1");
    }
    let mesh = rafter_layout::mesh(layout)?;
    let (p, net_of) = panels(&mesh);
    let n = p.len();
    let nets = layout.nets.len();
    // The dense reference must fit: refuse before any large allocation.
    let dense_bytes = reference::dense_bytes::<f64>(n, n);
    reference::check_fits::<f64>(
        "dense reference matrix",
        dense_bytes,
        "coarsen mesh.max_cell (the dense matrix grows as unknowns²) or compare at a smaller size with \
         `rafter bench-extract LAYOUT --unknowns N`",
    )
    .with_context(|| format!("{}: {n} unknowns", layout.file))?;
    // One Green's function, accurate enough for the finest tolerance asked for.
    let finest = opts.tolerances.iter().copied().fold(layout.solve.tolerance, f64::min);
    let mut fine = layout.clone();
    fine.solve.tolerance = finest;
    let green = green_for(&fine)?;
    let src = PanelCollocation::new(&p, green.as_ref());

    progress("building the H-matrix");
    let main = CapacitanceOptions::for_tolerance(layout.solve.tolerance);
    let t = Instant::now();
    let h = HMatrix::build_square(&src, src.centres(), &main.hmatrix, None)?;
    let build_s = t.elapsed().as_secs_f64();

    progress("filling the dense reference");
    let t = Instant::now();
    let a = reference::assemble_dense(&src)?;
    let fill_s = t.elapsed().as_secs_f64();

    progress("operator and block errors");
    let mut rng = StdRng::seed_from_u64(0x7261_6674);
    let mut matvec_rel_errors = Vec::with_capacity(opts.vectors);
    for _ in 0..opts.vectors {
        let x: Vec<f64> = (0..n).map(|_| rng.random_range(-1.0..=1.0)).collect();
        let mut yh = vec![0.0; n];
        h.matvec(&x, &mut yh)?;
        let mut yd = vec![0.0; n];
        a.gemv_add(&x, &mut yd);
        let num: f64 = yh.iter().zip(&yd).map(|(u, v)| (u - v) * (u - v)).sum::<f64>().sqrt();
        let den: f64 = yd.iter().map(|v| v * v).sum::<f64>().sqrt();
        matvec_rel_errors.push(if den > 0.0 { num / den } else { num });
    }
    let blockwise = reference::compare(&h, &a)?;
    let eps = layout.solve.tolerance;
    let blocks_over_tolerance = blockwise.block_rel_errors.iter().filter(|&&e| e > eps).count();

    progress("compressed solve");
    let ch = solve_compressed(&h, &net_of, nets, &main.gmres, &mut |_, _, _| {})?;
    progress("dense solve");
    let cd = solve_dense(a, &net_of, nets)?;
    let entries = entry_diffs(layout, &ch.maxwell, &cd.maxwell);
    let compression = h.summary().compression;
    let main_row = |c: &CapacitanceResult, hm: &HMatrix<f64>, tol: f64, build_s: f64, diffs: &[EntryDiff]| {
        let s = hm.summary();
        TradeoffRow {
            tolerance: tol,
            compression: s.compression,
            memory_bytes: s.memory_bytes,
            build_s,
            solve_s: c.timing.preconditioner_s + c.timing.solve_s,
            gmres_max_iterations: c.gmres.iter().map(|r| r.iterations).max().unwrap_or(0),
            result_max_rel_diff: max_rel(diffs),
        }
    };
    drop(h);

    let mut tradeoff = Vec::with_capacity(opts.tolerances.len());
    for &tol in &opts.tolerances {
        progress(&format!("trade-off at tolerance {tol:e}"));
        let o = CapacitanceOptions::for_tolerance(tol);
        let t = Instant::now();
        let ht = HMatrix::build_square(&src, src.centres(), &o.hmatrix, None)?;
        let bs = t.elapsed().as_secs_f64();
        let ct = solve_compressed(&ht, &net_of, nets, &o.gmres, &mut |_, _, _| {})?;
        let diffs = entry_diffs(layout, &ct.maxwell, &cd.maxwell);
        tradeoff.push(main_row(&ct, &ht, tol, bs, &diffs));
    }

    Ok(VerifyReport {
        layout: layout.name.clone(),
        file: layout.file.clone(),
        unknowns: n,
        tolerance: eps,
        matvec_rel_error: matvec_rel_errors.iter().copied().fold(0.0, f64::max),
        matvec_rel_errors,
        block_max_rel_error: blockwise.block_max_rel_error,
        blocks_over_tolerance,
        blocks: blockwise.block_rel_errors.len(),
        gmres_iterations: ch.gmres.iter().map(|r| r.iterations).collect(),
        gmres_residuals: ch.gmres.iter().map(|r| r.residual).collect(),
        gmres_tolerance: main.gmres.tolerance,
        result_max_rel_diff: max_rel(&entries),
        result_max_abs_diff: entries.iter().map(|e| e.abs_diff).fold(0.0, f64::max),
        result_floor: RESOLVED,
        entries,
        compression,
        build_s,
        solve_s: ch.timing.preconditioner_s + ch.timing.solve_s,
        dense: DenseTimes {
            fill_s,
            factor_s: cd.timing.preconditioner_s,
            solve_s: cd.timing.solve_s,
            bytes: dense_bytes,
        },
        tradeoff,
        peak_memory_bytes: crate::output::peak_memory_bytes(),
    })
}

/// The report as text for the terminal: summary lines and the trade-off table.
pub fn table(r: &VerifyReport) -> String {
    let mut s = String::new();
    s += &format!("{} ({}): {} unknowns, tolerance ε = {:e}\n", r.layout, r.file, r.unknowns, r.tolerance);
    s += &format!(
        "  matvec error (‖Hx − Ax‖/‖Ax‖, {} vectors): {:.2e}\n",
        r.matvec_rel_errors.len(),
        r.matvec_rel_error
    );
    s += &format!(
        "  worst block error (exact, Frobenius): {:.2e} = {:.2} ε; blocks over ε: {} of {}\n",
        r.block_max_rel_error,
        r.block_max_rel_error / r.tolerance,
        r.blocks_over_tolerance,
        r.blocks
    );
    s += &format!(
        "  GMRES to {:.0e}: {}–{} iterations, worst final residual {:.2e}\n",
        r.gmres_tolerance,
        r.gmres_iterations.iter().min().unwrap_or(&0),
        r.gmres_iterations.iter().max().unwrap_or(&0),
        r.gmres_residuals.iter().copied().fold(0.0, f64::max)
    );
    s += &format!(
        "  capacitance, compressed vs dense: worst relative difference {:.2e}, worst absolute {:.3e} F\n",
        r.result_max_rel_diff, r.result_max_abs_diff
    );
    s += &format!(
        "  compressed: build {:.2} s, solve {:.2} s, {:.2} % of dense; dense: fill {:.2} s, LU {:.2} s, solve {:.2} s\n",
        r.build_s,
        r.solve_s,
        100.0 * r.compression,
        r.dense.fill_s,
        r.dense.factor_s,
        r.dense.solve_s
    );
    if !r.tradeoff.is_empty() {
        s += "\n  tolerance  compression   memory (MB)  build (s)  solve (s)  GMRES its  result error\n";
        for t in &r.tradeoff {
            s += &format!(
                "  {:>9.0e}  {:>10.3} %  {:>11.1}  {:>9.2}  {:>9.2}  {:>9}  {:>12.2e}\n",
                t.tolerance,
                100.0 * t.compression,
                t.memory_bytes as f64 / 1e6,
                t.build_s,
                t.solve_s,
                t.gmres_max_iterations,
                t.result_max_rel_diff
            );
        }
    }
    s
}
