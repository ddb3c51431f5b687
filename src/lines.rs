//! `rafter lines`: per-unit-length parameters of uniform parallel lines.
//!
//! The layout describes N straight lines, each net one rectangle (a straight trace), all
//! parallel and spanning the same stretch along their common axis. The capacitance matrix is
//! extracted twice, at the layout's length `ℓ` and at `2ℓ`; the difference divided by `ℓ`
//! cancels the end effects and leaves the per-length matrix `C′` (F/m). The same is done with
//! every dielectric replaced by air (`C′_air`). Then, for quasi-TEM lines (Pozar, *Microwave
//! Engineering*, ch. 2–3; from memory):
//!
//! - `L′ = C′_air⁻¹ / c²` (H/m);
//! - per line `i`: `εeff,i = C′_ii / C′_air,ii`, `Z0,i = 1 / (c √(C′_ii C′_air,ii))`;
//! - for a symmetric pair: even mode `Ce = C′_11 + C′_12`, odd mode `Co = C′_11 − C′_12`
//!   (Maxwell form, `C′_12 < 0`), `Z0e,o = 1/(c √(Ce,o Ce,o_air))`, `εeff e,o = Ce,o / Ce,o_air`.

use crate::extract::{green_for, green_for_air, panels};
use anyhow::{Context, bail};
use rafter_layout::Layout;
use rafter_linalg::{DenseLu, DenseMatrix, Scalar};
use rafter_mom::{CapacitanceOptions, capacitance};
use serde::Serialize;

/// Speed of light in vacuum (m/s).
pub const C0: f64 = 299_792_458.0;

/// Even- and odd-mode parameters of a symmetric pair.
#[derive(Clone, Debug, Serialize)]
pub struct PairModes {
    /// Even-mode impedance (Ω) of one line.
    pub z0_even: f64,
    /// Odd-mode impedance (Ω) of one line.
    pub z0_odd: f64,
    /// Even-mode effective permittivity.
    pub eps_eff_even: f64,
    /// Odd-mode effective permittivity.
    pub eps_eff_odd: f64,
}

/// One propagation mode of the coupled lines.
#[derive(Clone, Debug, Serialize)]
pub struct Mode {
    /// Modal effective permittivity `εeff,k` (phase velocity `c/√εeff,k`).
    pub eps_eff: f64,
    /// Modal impedance `√(vᵀ L′ v / vᵀ C′ v)` (Ω) of the voltage eigenvector `v`.
    pub z0: f64,
    /// Voltage eigenvector, scaled so that its largest entry is +1.
    pub voltages: Vec<f64>,
}

/// Everything `lines.json` holds.
#[derive(Clone, Debug, Serialize)]
pub struct LineParameters {
    /// Layout name.
    pub layout: String,
    /// Line (net) names.
    pub lines: Vec<String>,
    /// The two lengths extracted (m); their difference cancels the end effects.
    pub lengths_m: [f64; 2],
    /// How the per-length values were obtained, in words.
    pub method: String,
    /// Per-length Maxwell capacitance with dielectrics (F/m).
    pub capacitance_per_m: Vec<Vec<f64>>,
    /// Per-length Maxwell capacitance with every dielectric replaced by air (F/m).
    pub capacitance_air_per_m: Vec<Vec<f64>>,
    /// Per-length inductance `C′_air⁻¹/c²` (H/m).
    pub inductance_per_m: Vec<Vec<f64>>,
    /// Characteristic impedance of each line with the others held at 0 V (Ω).
    pub z0: Vec<f64>,
    /// Effective permittivity of each line.
    pub eps_eff: Vec<f64>,
    /// Even/odd modes, for a symmetric pair.
    pub pair: Option<PairModes>,
    /// Propagation modes (eigenvectors of `C′_air⁻¹ C′`), by increasing `εeff`. In a
    /// homogeneous medium all modes travel at one speed and the split into modes is not unique.
    pub modes: Vec<Mode>,
    /// Unknowns of the longer model.
    pub unknowns: usize,
}

/// Axis (0 = x, 1 = y) and extent `[a, b]` shared by all lines; errors explain what is wrong.
fn line_axis(layout: &Layout) -> anyhow::Result<(usize, f64, f64)> {
    let mut common: Option<(usize, f64, f64)> = None;
    for (i, net) in layout.nets.iter().enumerate() {
        let [region] = net.regions.as_slice() else {
            bail!(
                "{}: net[{i}] ({}): a line must lie on one face (found {})",
                layout.file,
                net.name,
                net.regions.len()
            );
        };
        let [r] = region.rects.as_slice() else {
            bail!(
                "{}: net[{i}] ({}): a line must be one straight rectangle or trace (hint: describe the uniform \
                 section only; bends and pads belong in `rafter extract`)",
                layout.file,
                net.name
            );
        };
        let axis = if r.x1 - r.x0 >= r.y1 - r.y0 { 0 } else { 1 };
        let (a, b) = if axis == 0 { (r.x0, r.x1) } else { (r.y0, r.y1) };
        match common {
            None => common = Some((axis, a, b)),
            Some((ax, ca, cb)) => {
                let tol = 1e-9 * (cb - ca).abs();
                if ax != axis || (a - ca).abs() > tol || (b - cb).abs() > tol {
                    bail!(
                        "{}: net[{i}] ({}): every line must run along the same axis over the same stretch \
                         (hint: give all lines the same start and end coordinate along their length)",
                        layout.file,
                        net.name
                    );
                }
            }
        }
    }
    common.context("the layout has no nets")
}

/// The layout with every line's extent along `axis` set to `[a, a + len]`.
fn stretched(layout: &Layout, axis: usize, a: f64, len: f64) -> Layout {
    let mut l = layout.clone();
    for net in &mut l.nets {
        for region in &mut net.regions {
            for r in &mut region.rects {
                if axis == 0 {
                    (r.x0, r.x1) = (a, a + len);
                } else {
                    (r.y0, r.y1) = (a, a + len);
                }
            }
        }
    }
    l
}

/// The Maxwell matrix (F) of `layout` with dielectrics, or with air when `air`.
fn maxwell(layout: &Layout, air: bool) -> anyhow::Result<(Vec<Vec<f64>>, usize)> {
    let green = if air { green_for_air(layout)? } else { green_for(layout)? };
    let mesh = rafter_layout::mesh(layout)?;
    let (p, net_of) = panels(&mesh);
    let opts = CapacitanceOptions::for_tolerance(layout.solve.tolerance);
    let res = capacitance(&p, &net_of, layout.nets.len(), green.as_ref(), &opts, None, &mut |_, _, _| {})?;
    Ok((res.maxwell, p.len()))
}

/// Per-length line parameters of the layout's lines (see the module docs).
pub fn line_parameters(layout: &Layout) -> anyhow::Result<LineParameters> {
    let (axis, a, b) = line_axis(layout)?;
    let len = b - a;
    let (short, long) = (stretched(layout, axis, a, len), stretched(layout, axis, a, 2.0 * len));
    let per_length = |air: bool| -> anyhow::Result<(Vec<Vec<f64>>, usize)> {
        let (c1, _) = maxwell(&short, air)?;
        let (c2, n) = maxwell(&long, air)?;
        let d = c1
            .iter()
            .zip(&c2)
            .map(|(r1, r2)| r1.iter().zip(r2).map(|(x, y)| (y - x) / len).collect())
            .collect();
        Ok((d, n))
    };
    let (c, unknowns) = per_length(false)?;
    let (c_air, _) = per_length(true)?;
    let l: Vec<Vec<f64>> =
        inverse(&c_air)?.iter().map(|row| row.iter().map(|v| v / (C0 * C0)).collect()).collect();
    let n = c.len();
    let z0 = (0..n).map(|i| 1.0 / (C0 * (c[i][i] * c_air[i][i]).sqrt())).collect();
    let eps_eff = (0..n).map(|i| c[i][i] / c_air[i][i]).collect();
    let pair = (n == 2 && (c[0][0] - c[1][1]).abs() <= 1e-3 * c[0][0]).then(|| {
        let (cm, cam) = (0.5 * (c[0][0] + c[1][1]), 0.5 * (c_air[0][0] + c_air[1][1]));
        let (c12, ca12) = (0.5 * (c[0][1] + c[1][0]), 0.5 * (c_air[0][1] + c_air[1][0]));
        let (ce, co, cae, cao) = (cm + c12, cm - c12, cam + ca12, cam - ca12);
        PairModes {
            z0_even: 1.0 / (C0 * (ce * cae).sqrt()),
            z0_odd: 1.0 / (C0 * (co * cao).sqrt()),
            eps_eff_even: ce / cae,
            eps_eff_odd: co / cao,
        }
    });
    let modes = modes(&c, &c_air, &l)?;
    Ok(LineParameters {
        modes,
        layout: layout.name.clone(),
        lines: layout.nets.iter().map(|n| n.name.clone()).collect(),
        lengths_m: [len, 2.0 * len],
        method: format!(
            "per-length values from two extractions of lengths {:.6e} m and {:.6e} m: C′ = (C(2ℓ) − C(ℓ))/ℓ, \
             so that the end effects cancel",
            len,
            2.0 * len
        ),
        capacitance_per_m: c,
        capacitance_air_per_m: c_air,
        inductance_per_m: l,
        z0,
        eps_eff,
        pair,
        unknowns,
    })
}

fn to_dense(m: &[Vec<f64>]) -> DenseMatrix<f64> {
    DenseMatrix::from_fn(m.len(), m.len(), |i, j| m[i][j])
}

fn quad(m: &[Vec<f64>], v: &[f64]) -> f64 {
    m.iter().zip(v).map(|(row, vi)| vi * row.iter().zip(v).map(|(a, b)| a * b).sum::<f64>()).sum()
}

/// Modes of quasi-TEM coupled lines: with `C′_air = Q Λ Qᵀ`, `S = C′_air^(−½) = Q Λ^(−½) Qᵀ`, the
/// symmetric matrix `S C′ S = W diag(εeff) Wᵀ` has the eigenvalues of `C′_air⁻¹ C′` (similar
/// matrices) and the voltage eigenvectors are `v = S w` (faer's self-adjoint eigen-solver for
/// both decompositions).
fn modes(c: &[Vec<f64>], c_air: &[Vec<f64>], l: &[Vec<f64>]) -> anyhow::Result<Vec<Mode>> {
    let n = c.len();
    let (lam, q) = f64::self_adjoint_eigen(&to_dense(c_air))?;
    if lam.iter().any(|&x| x.is_nan() || x <= 0.0) {
        bail!("the per-length air capacitance matrix is not positive definite; are two lines identical?");
    }
    let s =
        DenseMatrix::from_fn(n, n, |i, j| (0..n).map(|k| q.get(i, k) * q.get(j, k) / lam[k].sqrt()).sum());
    let m = s.matmul(&to_dense(c))?.matmul(&s)?;
    let (eps, w) = f64::self_adjoint_eigen(&m)?;
    let v = s.matmul(&w)?;
    Ok((0..n)
        .map(|k| {
            let mut vk: Vec<f64> = (0..n).map(|i| v.get(i, k)).collect();
            let peak = vk.iter().copied().fold(0.0f64, |a, x| if x.abs() > a.abs() { x } else { a });
            vk.iter_mut().for_each(|x| *x /= peak);
            Mode { eps_eff: eps[k], z0: (quad(l, &vk) / quad(c, &vk)).sqrt(), voltages: vk }
        })
        .collect())
}

/// Inverse of a small square matrix by faer's LU (the linalg crate's `DenseLu`): solves
/// `M X = I`; fails when the matrix is singular.
fn inverse(m: &[Vec<f64>]) -> anyhow::Result<Vec<Vec<f64>>> {
    let n = m.len();
    let lu = DenseLu::factor(&to_dense(m))
        .context("the per-length air capacitance matrix is singular; are two lines identical?")?;
    let mut x = DenseMatrix::from_fn(n, n, |i, j| if i == j { 1.0 } else { 0.0 });
    lu.solve_in_place(x.as_mut_slice())?;
    Ok((0..n).map(|i| (0..n).map(|j| x.get(i, j)).collect()).collect())
}

/// A terminal summary.
pub fn table_text(p: &LineParameters) -> String {
    use std::fmt::Write as _;
    let mut s = format!("{}\n", p.method);
    let _ =
        writeln!(s, "{:>12} {:>10} {:>8} {:>12} {:>12}", "line", "Z0 (Ω)", "εeff", "C′ (pF/m)", "L′ (nH/m)");
    for (i, name) in p.lines.iter().enumerate() {
        let _ = writeln!(
            s,
            "{name:>12} {:>10.3} {:>8.4} {:>12.3} {:>12.3}",
            p.z0[i],
            p.eps_eff[i],
            p.capacitance_per_m[i][i] * 1e12,
            p.inductance_per_m[i][i] * 1e9
        );
    }
    for (k, m) in p.modes.iter().enumerate() {
        let _ = writeln!(s, "mode {k}: εeff {:.4}, Z {:.3} Ω, voltages {:?}", m.eps_eff, m.z0, m.voltages);
    }
    if let Some(m) = &p.pair {
        let _ = writeln!(
            s,
            "pair: Z0 even {:.3} Ω (εeff {:.4}), odd {:.3} Ω (εeff {:.4})",
            m.z0_even, m.eps_eff_even, m.z0_odd, m.eps_eff_odd
        );
    }
    s
}
