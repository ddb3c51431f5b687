//! The surface current density of a solved full-wave problem, sampled once per panel.
//!
//! The current is `J(r) = Σ_n I_n f_n(r)` (A/m, complex phasor) over the functions of a
//! [`CurrentBasis`]: interior rooftop/RWG functions and port feeds alike. Every function is
//! linear on each of its halves, so `J` is linear on every panel and its value at the panel's
//! centroid is the panel's area average. Rooftops and RWG functions can represent a uniform
//! current exactly on a panel all of whose edges carry a function (`I_n = J·n̂_n`, `n̂_n` the
//! unit normal of edge `n` pointing out of its `+` panel); at an open conductor edge the normal
//! current is zero, so the panels along it show what the basis allows there.

use crate::MomError;
use crate::current::CurrentBasis;
use num_complex::Complex64;
use rafter_green::Panel;

/// The complex surface current density `J = Σ_n I_n f_n` (A/m, phasor, components `[Jx, Jy]`)
/// at the centroid of each panel of `panels`, in panel order.
///
/// `coefficients[n]` is `I_n` (A/m) of `basis.functions[n]`, the ordering of the solver's
/// unknowns; the functions' halves index into `panels`. The result is exact (to rounding)
/// for the given coefficients: each function is evaluated in closed form by
/// [`CurrentFunction::value`](crate::current::CurrentFunction::value). Panels that no
/// function touches get zero.
///
/// # Errors
/// [`MomError::Input`] when `coefficients` and `basis.functions` differ in length, or when a
/// function refers to a panel beyond `panels`.
pub fn panel_currents(
    basis: &CurrentBasis,
    panels: &[Panel],
    coefficients: &[Complex64],
) -> Result<Vec<[Complex64; 2]>, MomError> {
    if coefficients.len() != basis.functions.len() {
        return Err(MomError::Input(format!(
            "current map: {} coefficients for {} basis functions; there must be one per function, in basis order",
            coefficients.len(),
            basis.functions.len()
        )));
    }
    let zero = Complex64::new(0.0, 0.0);
    let mut out = vec![[zero; 2]; panels.len()];
    for (n, (f, &c)) in basis.functions.iter().zip(coefficients).enumerate() {
        for h in f.iter() {
            let Some(panel) = panels.get(h.panel) else {
                return Err(MomError::Input(format!(
                    "current map: basis function {n} lies on panel {} but the mesh has {} panels",
                    h.panel,
                    panels.len()
                )));
            };
            let [x, y, _] = panel.center();
            let v = f.value(h, [x, y]);
            let j = &mut out[h.panel];
            j[0] += c * v[0];
            j[1] += c * v[1];
        }
    }
    Ok(out)
}

/// The phasor norm `‖J‖ = √(|Jx|² + |Jy|²)` (A/m) of a current density phasor.
///
/// This is not the peak over a cycle in general. With `j(t) = Re(J e^{jωt})`, the cycle mean
/// of `|j(t)|²` is `‖J‖²/2`, so `‖J‖` is `√2` times the rms of `|j(t)|` (and equals that rms
/// when the phasors are rms-scaled); the cycle peak of `|j(t)|` is
/// `√((‖J‖² + |Jx² + Jy²|)/2) ≤ ‖J‖`, equal to `‖J‖` when `Jx` and `Jy` are in phase (linear
/// polarisation, the common case along a trace) and `‖J‖/√2` for circular polarisation.
pub fn magnitude(j: &[Complex64; 2]) -> f64 {
    j[0].norm().hypot(j[1].norm())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::current::{FeedReturn, FeedSpec, current_basis};
    use crate::edges::edge_basis;

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    /// A strip along x, `[0, xs[m]] × [0, ys[n]]`, cut into an m × n grid of rectangles.
    fn strip(xs: &[f64], ys: &[f64]) -> Vec<Panel> {
        let mut p = Vec::new();
        for i in 0..xs.len() - 1 {
            for j in 0..ys.len() - 1 {
                p.push(Panel::Rect { x0: xs[i], x1: xs[i + 1], y0: ys[j], y1: ys[j + 1], z: 2e-4 });
            }
        }
        p
    }

    /// Unit normal of the edge `ends`, pointing away from the point `inside` (a centroid of
    /// the panel the current leaves): computed from the geometry alone.
    fn normal_away(ends: [[f64; 2]; 2], inside: [f64; 2]) -> [f64; 2] {
        let (e0, e1) = (ends[0], ends[1]);
        let l = (e1[0] - e0[0]).hypot(e1[1] - e0[1]);
        let n = [(e1[1] - e0[1]) / l, -(e1[0] - e0[0]) / l];
        let mid = [0.5 * (e0[0] + e1[0]), 0.5 * (e0[1] + e1[1])];
        if (mid[0] - inside[0]) * n[0] + (mid[1] - inside[1]) * n[1] > 0.0 { n } else { [-n[0], -n[1]] }
    }

    fn centroid(p: &Panel) -> [f64; 2] {
        let [x, y, _] = p.center();
        [x, y]
    }

    /// Coefficients `I_n = J·n̂_n` of the interior functions for a uniform `J` (Rao, Wilton &
    /// Glisson 1982, IEEE Trans. Antennas Propag. 30(3): the normal component of `f_n` across
    /// its edge is 1, from the `+` panel to the `−` panel; from memory), followed by those of
    /// the feeds (current entering across the boundary edge: `I = J·n̂_in`).
    fn uniform_coefficients(
        panels: &[Panel],
        net_of: &[usize],
        feeds: &[FeedSpec],
        j: [Complex64; 2],
    ) -> (CurrentBasis, Vec<Complex64>) {
        let edges = edge_basis(panels, net_of).unwrap();
        let basis = current_basis(panels, net_of, &edges, feeds).unwrap();
        let mut coef = Vec::new();
        for f in &edges.functions {
            let n = normal_away(f.ends, centroid(&panels[f.plus.panel]));
            coef.push(j[0] * n[0] + j[1] * n[1]);
        }
        for port in &basis.ports {
            for &k in port {
                let f = &basis.functions[k];
                let h = f.halves[0].unwrap();
                // The boundary edge of this feed: the edge of its panel through `mid`.
                let p = &panels[h.panel];
                let vs = p.vertices();
                let ends = (0..vs.len())
                    .map(|i| [vs[i], vs[(i + 1) % vs.len()]])
                    .find(|e| {
                        let m = [0.5 * (e[0][0] + e[1][0]), 0.5 * (e[0][1] + e[1][1])];
                        (m[0] - f.mid[0]).abs() + (m[1] - f.mid[1]).abs() < 1e-15
                    })
                    .unwrap();
                let out = normal_away(ends, centroid(p));
                coef.push(-(j[0] * out[0] + j[1] * out[1]));
            }
        }
        assert_eq!(coef.len(), basis.functions.len());
        (basis, coef)
    }

    fn close(a: [Complex64; 2], b: [Complex64; 2], tol: f64) -> bool {
        (a[0] - b[0]).norm() <= tol && (a[1] - b[1]).norm() <= tol
    }

    /// Rooftops on a graded strip, no feeds, coefficient 1 on every edge across the length:
    /// `J = (1, 0)` exactly at the centroids of the inner columns (a uniform current is in the
    /// span of the two rooftops of a rectangle: (x − x0)/dx + (x1 − x)/dx = 1; rooftop
    /// definition as in Glisson & Wilton 1980, IEEE Trans. Antennas Propag. 28(5), from
    /// memory), and `(1/2, 0)` on the two end columns, where the open end forces zero normal
    /// current and the rooftop ramps linearly from 1 to 0 across the cell.
    #[test]
    fn rooftops_reproduce_a_uniform_current_along_a_strip() {
        let xs: Vec<f64> = (0..=7).map(|i| 1e-3 * (i as f64).powf(1.2)).collect();
        let ys = [0.0, 0.7e-4, 1.1e-4, 2.0e-4];
        let panels = strip(&xs, &ys);
        let net_of = vec![0; panels.len()];
        let (basis, coef) = uniform_coefficients(&panels, &net_of, &[], [c(1.0, 0.0), c(0.0, 0.0)]);
        // The coefficients are what the brief says: 1 across the length, 0 along it.
        let edges = edge_basis(&panels, &net_of).unwrap();
        for (f, i) in edges.functions.iter().zip(&coef) {
            let across = f.ends[0][0] == f.ends[1][0];
            assert_eq!(*i, c(if across { 1.0 } else { 0.0 }, 0.0), "{f:?}");
        }
        let j = panel_currents(&basis, &panels, &coef).unwrap();
        let last = xs[xs.len() - 2];
        for (p, jk) in panels.iter().zip(&j) {
            let Panel::Rect { x0, .. } = *p else { unreachable!() };
            let expect = if x0 == 0.0 || x0 == last { 0.5 } else { 1.0 };
            assert!(close(*jk, [c(expect, 0.0), c(0.0, 0.0)], 1e-12), "{p:?}: {jk:?}");
        }
    }

    /// The same strip fed from ground at both ends: the feeds carry the normal current across
    /// the end edges, and `J = (1, 0)` is exact on every cell, ends included.
    #[test]
    fn rooftops_with_end_feeds_reproduce_a_uniform_current_everywhere() {
        let xs: Vec<f64> = (0..=6).map(|i| 1e-3 * (i as f64).powf(1.3)).collect();
        let ys = [0.0, 0.5e-4, 2.0e-4];
        let panels = strip(&xs, &ys);
        let net_of = vec![0; panels.len()];
        let feed = |name: &str, x: f64| FeedSpec {
            name: name.into(),
            net: 0,
            z: 2e-4,
            at: [x, 1e-4],
            to: FeedReturn::Ground,
            tolerance: 1e-9,
        };
        let feeds = [feed("in", 0.0), feed("out", xs[xs.len() - 1])];
        let (basis, coef) = uniform_coefficients(&panels, &net_of, &feeds, [c(0.0, 2.0), c(0.0, 0.0)]);
        assert_eq!(basis.ports.iter().map(Vec::len).collect::<Vec<_>>(), [2, 2]);
        let j = panel_currents(&basis, &panels, &coef).unwrap();
        for (p, jk) in panels.iter().zip(&j) {
            assert!(close(*jk, [c(0.0, 2.0), c(0.0, 0.0)], 1e-12), "{p:?}: {jk:?}");
        }
    }

    /// A square cut into 2k² triangles; the three sides of a triangle.
    fn triangulated_square(k: usize, h: f64) -> Vec<Panel> {
        let mut p = Vec::new();
        for i in 0..k {
            for j in 0..k {
                let (x, y) = (i as f64 * h, j as f64 * h);
                // Alternate the diagonal so that both orientations occur.
                if (i + j) % 2 == 0 {
                    p.push(Panel::Triangle { v: [[x, y], [x + h, y], [x + h, y + h]], z: 0.0 });
                    p.push(Panel::Triangle { v: [[x, y], [x + h, y + h], [x, y + h]], z: 0.0 });
                } else {
                    p.push(Panel::Triangle { v: [[x, y], [x + h, y], [x, y + h]], z: 0.0 });
                    p.push(Panel::Triangle { v: [[x + h, y], [x + h, y + h], [x, y + h]], z: 0.0 });
                }
            }
        }
        p
    }

    /// RWG functions with `I_n = J·n̂_n` reproduce a uniform complex `J` exactly on every
    /// triangle whose three edges carry a function (the lowest-order RWG / Raviart–Thomas space
    /// contains the constants: Rao, Wilton & Glisson 1982, from memory). Without feeds that is
    /// the inner triangles; with a ground feed on each side of the square, every triangle.
    #[test]
    fn rwg_reproduce_a_uniform_current_on_a_triangulated_square() {
        let (k, h) = (4, 1e-4);
        let panels = triangulated_square(k, h);
        let net_of = vec![0; panels.len()];
        let jv = [c(1.0, 2.0), c(-0.5, 0.3)];

        let (basis, coef) = uniform_coefficients(&panels, &net_of, &[], jv);
        let j = panel_currents(&basis, &panels, &coef).unwrap();
        let edges = edge_basis(&panels, &net_of).unwrap();
        let on_boundary: Vec<bool> =
            (0..panels.len()).map(|p| edges.boundary.iter().any(|b| b.panel == p)).collect();
        let inner = on_boundary.iter().filter(|b| !**b).count();
        assert_eq!(inner, panels.len() - 4 * k, "one boundary edge per boundary triangle here");
        let mut boundary_off = 0.0f64;
        for (p, jk) in j.iter().enumerate() {
            if on_boundary[p] {
                boundary_off = boundary_off.max((jk[0] - jv[0]).norm() + (jk[1] - jv[1]).norm());
            } else {
                assert!(close(*jk, jv, 1e-12), "triangle {p}: {jk:?}");
            }
        }
        // The boundary triangles miss a normal component: the check above would notice.
        assert!(boundary_off > 0.1, "{boundary_off}");

        let side = |name: &str, at: [f64; 2]| FeedSpec {
            name: name.into(),
            net: 0,
            z: 0.0,
            at,
            to: FeedReturn::Ground,
            tolerance: 1e-12,
        };
        let l = k as f64 * h;
        let feeds = [
            side("south", [0.5 * l, 0.0]),
            side("east", [l, 0.5 * l]),
            side("north", [0.5 * l, l]),
            side("west", [0.0, 0.5 * l]),
        ];
        let (basis, coef) = uniform_coefficients(&panels, &net_of, &feeds, jv);
        assert_eq!(basis.functions.len() - basis.interior, 4 * k);
        let j = panel_currents(&basis, &panels, &coef).unwrap();
        for (p, jk) in j.iter().enumerate() {
            assert!(close(*jk, jv, 1e-12), "triangle {p}: {jk:?}");
        }
    }

    /// `‖J‖² / 2` is the cycle mean of `|Re(J e^{jωt})|²` (the time-average rule for phasors,
    /// e.g. Harrington, Time-Harmonic Electromagnetic Fields, 1961, ch. 1, from memory),
    /// checked by sampling a cycle (exact for 3 or more equally spaced phases); the cycle peak
    /// stays at or below `‖J‖`, with equality for in-phase components.
    #[test]
    fn magnitude_is_the_phasor_norm() {
        let cases = [[c(3.0, 0.0), c(0.0, 4.0)], [c(0.6, -0.8), c(1.2, -1.6)], [c(-2.0, 1.0), c(0.5, 0.25)]];
        for j in cases {
            let m = magnitude(&j);
            let samples = 360;
            let (mut mean, mut peak) = (0.0, 0.0f64);
            for s in 0..samples {
                let w = Complex64::from_polar(1.0, std::f64::consts::TAU * s as f64 / samples as f64);
                let v = [(j[0] * w).re, (j[1] * w).re];
                let a2 = v[0] * v[0] + v[1] * v[1];
                mean += a2 / samples as f64;
                peak = peak.max(a2.sqrt());
            }
            assert!((mean - 0.5 * m * m).abs() <= 1e-12 * m * m, "{j:?}: {mean} vs {m}");
            // Peak of the polarisation ellipse: √((‖J‖² + |J·J|)/2), sampled to within
            // 1 − cos(π/360) ≈ 4e-5 relative.
            let ellipse = (0.5 * (m * m + (j[0] * j[0] + j[1] * j[1]).norm())).sqrt();
            assert!(peak <= ellipse * (1.0 + 1e-12) && peak >= ellipse * (1.0 - 1e-4), "{j:?}: {peak}");
            assert!(peak <= m * (1.0 + 1e-12), "{j:?}");
        }
        // (3, 4j): norm 5, the ellipse's semi-axes 3 and 4, so the peak is 4.
        assert!((magnitude(&cases[0]) - 5.0).abs() < 1e-15);
        // In phase: the norm √(1 + 4) = √5 is also the peak.
        assert!((magnitude(&cases[1]) - 5f64.sqrt()).abs() < 1e-15);
    }

    #[test]
    fn mismatched_input_is_an_error() {
        let panels = strip(&[0.0, 1.0, 2.0], &[0.0, 1.0]);
        let edges = edge_basis(&panels, &[0, 0]).unwrap();
        let basis = current_basis(&panels, &[0, 0], &edges, &[]).unwrap();
        let e = panel_currents(&basis, &panels, &[]).unwrap_err();
        assert!(e.to_string().contains("0 coefficients for 1 basis functions"), "{e}");
        let e = panel_currents(&basis, &panels[..1], &[c(1.0, 0.0)]).unwrap_err();
        assert!(e.to_string().contains("panel 1") && e.to_string().contains("1 panels"), "{e}");
    }
}
