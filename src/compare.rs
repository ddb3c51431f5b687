//! `rafter bench-extract`: the compressed extraction against the dense reference (dense fill +
//! faer LU) on the same discretisation, in one run of the same binary, at chosen sizes.

use crate::extract::{green_for, panels};
use anyhow::bail;
use rafter_layout::{Layout, estimate_cells};
use rafter_mom::{CapacitanceOptions, capacitance};
use serde::Serialize;
use std::time::Instant;

/// One solver's figures at one size.
#[derive(Clone, Debug, Serialize)]
pub struct SolverRun {
    /// Wall time of operator build + preconditioner/LU + all solves (s).
    pub total_s: f64,
    /// Operator build (H-matrix compression or dense fill), s.
    pub assemble_s: f64,
    /// Preconditioner set-up or LU factorisation, s.
    pub factor_s: f64,
    /// All right-hand sides, s.
    pub solve_s: f64,
}

/// The comparison at one size.
#[derive(Clone, Debug, Serialize)]
pub struct SizeReport {
    /// Unknowns.
    pub unknowns: usize,
    /// `mesh.max_cell` used to reach that size (m).
    pub max_cell_m: f64,
    /// Compressed path.
    pub compressed: SolverRun,
    /// Dense path.
    pub dense: SolverRun,
    /// `dense.total_s / compressed.total_s`.
    pub speedup: f64,
    /// Largest `|C_h − C_d| / |C_d|` over all entries.
    pub max_rel_diff: f64,
    /// Largest `|C_h − C_d|` relative to the largest `|C_d|`.
    pub max_diff_of_largest: f64,
    /// Largest `|C_h,ij − C_d,ij| / √(C_d,ii C_d,jj)`: each entry against the self
    /// capacitances of its two nets (the scale at which a coupling matters).
    pub max_diff_of_self: f64,
    /// Largest `|C_h − C_d| / |C_d|` over the entries with `|C_d,ij| ≥ RESOLVED √(C_d,ii C_d,jj)`
    /// (see [`RESOLVED`]).
    pub max_rel_diff_resolved: f64,
    /// Entries below that threshold (left out of `max_rel_diff_resolved`).
    pub entries_below_resolved: usize,
    /// The entry with the largest relative difference among the resolved ones:
    /// `(i, j, C_h,ij, C_d,ij)` in farads.
    pub worst_resolved_entry: (usize, usize, f64, f64),
}

/// Couplings weaker than this fraction of `√(C_ii C_jj)` are compared in absolute terms
/// (`max_diff_of_self`) rather than relative ones. The adjoint-corrected iterative result
/// carries an error that falls with the GMRES tolerance `τ = 2 ε` (measured ≈ 3·10⁻⁸
/// `√(C_ii C_jj)` at ε = 10⁻⁴ on the crossed-bus demo), so a relative 10⁻³ is within reach
/// above 10⁻⁴; the dense LU's own rounding error is of order `cond(P) ε_mach`. Between
/// two grounds couplings fall off like `e^{−πρ/b}` and reach 10⁻²⁰ across a bus: no solver
/// resolves those relatively, and they are counted and reported.
pub const RESOLVED: f64 = 1e-4;

/// `|h − d| / max(|d|, RESOLVED √|d_ii d_jj|)`: the difference of a capacitance entry `h`
/// from its reference `d`, relative to the entry itself, floored for couplings too weak to
/// resolve relatively (`d_ii`, `d_jj` the reference self terms of its two nets).
pub fn floored_rel_diff(h: f64, d: f64, d_ii: f64, d_jj: f64) -> f64 {
    (h - d).abs() / d.abs().max(RESOLVED * (d_ii * d_jj).abs().sqrt())
}

/// The layout with `mesh.max_cell` scaled so that the mesh has about `target` cells.
pub fn resized(layout: &Layout, target: usize) -> anyhow::Result<Layout> {
    let mut l = layout.clone();
    for _ in 0..6 {
        let n = estimate_cells(&l).max(1);
        if (n as f64 - target as f64).abs() <= 0.03 * target as f64 {
            break;
        }
        l.mesh.max_cell *= (n as f64 / target as f64).sqrt();
    }
    Ok(l)
}

/// Runs both paths at each of `sizes` (unknowns).
pub fn compare(layout: &Layout, sizes: &[usize]) -> anyhow::Result<Vec<SizeReport>> {
    if sizes.is_empty() {
        bail!("--unknowns needs at least one size, e.g. --unknowns 10000,20000");
    }
    let green = green_for(layout)?;
    let mut out = Vec::new();
    for &target in sizes {
        let l = resized(layout, target)?;
        let mesh = rafter_layout::mesh(&l)?;
        let (p, net_of) = panels(&mesh);
        let mut opts = CapacitanceOptions::for_tolerance(l.solve.tolerance);
        let run = |opts: &CapacitanceOptions| -> anyhow::Result<(Vec<Vec<f64>>, SolverRun)> {
            let t = Instant::now();
            let r = capacitance(&p, &net_of, l.nets.len(), green.as_ref(), opts, None, &mut |_, _, _| {})?;
            let total_s = t.elapsed().as_secs_f64();
            Ok((
                r.maxwell,
                SolverRun {
                    total_s,
                    assemble_s: r.timing.assemble_s,
                    factor_s: r.timing.preconditioner_s,
                    solve_s: r.timing.solve_s,
                },
            ))
        };
        let (ch, compressed) = run(&opts)?;
        opts.dense = true;
        let (cd, dense) = run(&opts)?;
        let largest = cd.iter().flatten().fold(0.0f64, |m, c| m.max(c.abs()));
        let pairs = ch.iter().flatten().zip(cd.iter().flatten());
        let max_rel_diff = pairs.clone().map(|(a, b)| (a - b).abs() / b.abs()).fold(0.0, f64::max);
        let max_diff = pairs.map(|(a, b)| (a - b).abs()).fold(0.0, f64::max);
        let nn = cd.len();
        let max_diff_of_self = (0..nn)
            .flat_map(|i| (0..nn).map(move |j| (i, j)))
            .map(|(i, j)| (ch[i][j] - cd[i][j]).abs() / (cd[i][i] * cd[j][j]).sqrt())
            .fold(0.0, f64::max);
        let mut below = 0;
        let mut worst = (0, 0, 0.0, 0.0);
        let mut max_rel_diff_resolved = 0.0f64;
        for i in 0..nn {
            for j in 0..nn {
                if cd[i][j].abs() < RESOLVED * (cd[i][i] * cd[j][j]).sqrt() {
                    below += 1;
                    continue;
                }
                let rel = (ch[i][j] - cd[i][j]).abs() / cd[i][j].abs();
                if rel >= max_rel_diff_resolved {
                    max_rel_diff_resolved = rel;
                    worst = (i, j, ch[i][j], cd[i][j]);
                }
            }
        }
        out.push(SizeReport {
            unknowns: p.len(),
            max_cell_m: l.mesh.max_cell,
            speedup: dense.total_s / compressed.total_s,
            compressed,
            dense,
            max_rel_diff,
            max_diff_of_largest: max_diff / largest,
            max_diff_of_self,
            max_rel_diff_resolved,
            entries_below_resolved: below,
            worst_resolved_entry: worst,
        });
    }
    Ok(out)
}
