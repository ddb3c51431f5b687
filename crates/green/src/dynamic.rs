//! Panel integrals of the Helmholtz kernel `e^{−jkR}/R`, singular and near-singular included.
//!
//! `I(r) = ∫∫_panel e^{−jkR}/R dA′`, `R = |r − r′|`, for a flat polygon (rectangle or
//! triangle) at height `z′` and any observation point `r` — on the panel, near it or far —
//! with complex `k` allowed (lossy media, `Im k < 0`). This is the building block of the
//! mixed-potential full-wave operator (vector and scalar potentials of rooftop/RWG currents).
//!
//! # Method: polar integration about the projected observation point
//!
//! Let `p` be the projection of `r` on the panel's plane and `d = z − z′`. In polar
//! coordinates `(ρ, φ)` about `p` the area element is `ρ dρ dφ` and `R = √(ρ² + d²)`, so the
//! radial integral is elementary:
//!
//! `∫₀^{ρ_e} e^{−jk√(ρ² + d²)} ρ/√(ρ² + d²) dρ = (e^{−jk|d|} − e^{−jkR_e}) / (jk)`,
//!
//! `R_e = √(ρ_e² + d²)` at the panel's edge — no singularity is left, whether `p` lies on the
//! panel or not. The polygon is swept edge by edge with signed angles (the sweeps of a point
//! outside cancel where they overlap), the same decomposition that gives `∫∫ 1/R dA` in closed
//! form (D. R. Wilton, S. M. Rao, A. W. Glisson et al., "Potential integrals for uniform and
//! linear source distributions on polygonal and polyhedral domains", IEEE Trans. Antennas
//! Propag. 32(3), 1984). Along an edge at signed distance `h` from `p`, the point at position
//! `s` from the foot of the perpendicular has `ρ = √(h² + s²)` and `dφ = h ds/(h² + s²)`; with
//! `s = |h| sinh u` this becomes `dφ = sign(h) du / cosh u`, `ρ = |h| cosh u`, and the edge's
//! share is
//!
//! `sign(h) ∫ g(|h| cosh u) / cosh u du`,  `g(ρ) = (e^{−jk|d|} − e^{−jk√(ρ² + d²)})/(jk)`,
//!
//! a smooth integrand over a `u`-interval whose length grows only like `ln(edge/|h|)` as `p`
//! approaches the edge's line. It is integrated by composite 8-point Gauss–Legendre panels
//! of width at most ½ in `u` and fine enough for the oscillation (at most about a quarter
//! wavelength of edge per panel). `g` is evaluated as `e^{−jk|d|}(R − |d|)E(jk(R − |d|))`,
//! `E(z) = (1 − e^{−z})/z` by its series for small `|z|`, so the static limit `k → 0` gives
//! `∫∫ 1/R dA` without cancellation.

use crate::Panel;
use crate::quadrature::gauss_legendre;
use num_complex::Complex64;
use std::sync::OnceLock;

/// Speed of light in vacuum (m/s, exact by definition of the metre).
pub const C0: f64 = 299_792_458.0;

/// Wavenumber `k = ω √(μr εr (1 − j tan δ)) / c0` (1/m) of a homogeneous medium at
/// `frequency_hz`, with the branch `Re k ≥ 0`, `Im k ≤ 0`, so that `e^{−jkR}` decays with
/// distance in a lossy dielectric (time convention `e^{jωt}`). For small `tan δ`,
/// `k ≈ k0 √(μr εr) (1 − j tan δ / 2)`.
pub fn wavenumber(frequency_hz: f64, eps_r: f64, loss_tangent: f64, mu_r: f64) -> Complex64 {
    let omega = 2.0 * std::f64::consts::PI * frequency_hz;
    let eps = Complex64::new(eps_r, -eps_r * loss_tangent);
    let k = (eps * mu_r).sqrt() * (omega / C0);
    if k.re < 0.0 { -k } else { k }
}

/// Gauss–Legendre points per composite panel in `u`.
const ORDER: usize = 8;
/// Largest width of a composite panel in `u`.
const MAX_DU: f64 = 0.5;

fn rule() -> &'static (Vec<f64>, Vec<f64>) {
    static RULE: OnceLock<(Vec<f64>, Vec<f64>)> = OnceLock::new();
    RULE.get_or_init(|| gauss_legendre(ORDER))
}

/// `E(z) = (1 − e^{−z})/z`, accurate for every `z` (series below `|z| = 10⁻³`).
fn e1(z: Complex64) -> Complex64 {
    if z.norm() < 1e-3 {
        Complex64::new(1.0, 0.0) - z / 2.0 + z * z / 6.0 - z * z * z / 24.0
    } else {
        (Complex64::new(1.0, 0.0) - (-z).exp()) / z
    }
}

/// The angular sweep of the polar decomposition (see the module docs): for every quadrature
/// node along every edge, `f(ρ_e, ê, weight)` with `ρ_e` the distance from the projected
/// observer `p` to the edge point at that angle, `ê` the unit vector from `p` toward it, and
/// `weight = sign(h) w du / cosh u` the signed angle element (`Σ weight = 2π` for `p` inside
/// the panel, 0 far outside). Composite Gauss–Legendre in `u = asinh(s/|h|)`, panels of at
/// most `MAX_DU` and about a quarter wavelength of edge each.
fn polar_sweep(obs: [f64; 3], panel: &Panel, k: Complex64, mut f: impl FnMut(f64, [f64; 2], f64)) {
    let v = panel.vertices();
    let (gx, gw) = rule();
    let n = v.len();
    // Signed angles assume a counter-clockwise polygon; a clockwise one flips every sign.
    let orient: f64 =
        (0..n).map(|i| v[i][0] * v[(i + 1) % n][1] - v[(i + 1) % n][0] * v[i][1]).sum::<f64>().signum();
    for i in 0..n {
        let (a, b) = (v[i], v[(i + 1) % n]);
        let (ex, ey) = (b[0] - a[0], b[1] - a[1]);
        let len = (ex * ex + ey * ey).sqrt();
        if len == 0.0 {
            continue;
        }
        let (tx, ty) = (ex / len, ey / len);
        // Signed distance of p to the edge's line: positive when p lies to the left (inside
        // for a counter-clockwise polygon).
        let (px, py) = (obs[0] - a[0], obs[1] - a[1]);
        let h = tx * py - ty * px;
        // Position of the edge's first end along it, from the foot of the perpendicular.
        let s0 = -(px * tx + py * ty);
        let ah = h.abs();
        if ah <= 1e-14 * len {
            // p on the edge's line: the edge subtends no angle.
            continue;
        }
        let (u0, u1) = ((s0 / ah).asinh(), ((s0 + len) / ah).asinh());
        let waves = k.norm() * len / (std::f64::consts::PI / 2.0);
        let m = (((u1 - u0) / MAX_DU).ceil().max(waves.ceil())).max(1.0) as usize;
        let du = (u1 - u0) / m as f64;
        for j in 0..m {
            let c = u0 + (j as f64 + 0.5) * du;
            for (x, w) in gx.iter().zip(gw) {
                let u = c + 0.5 * du * x;
                let ch = u.cosh();
                let rho_e = ah * ch;
                let s = ah * u.sinh();
                let q = [a[0] + (s - s0) * tx, a[1] + (s - s0) * ty];
                let dir = [(q[0] - obs[0]) / rho_e, (q[1] - obs[1]) / rho_e];
                f(rho_e, dir, orient * h.signum() * w * 0.5 * du / ch);
            }
        }
    }
}

/// `∫∫_panel e^{−jkR}/R dA′` (m) at `obs` (see the module docs). `k` in 1/m; `k = 0` gives
/// the static `∫∫ 1/R dA′`.
pub fn helmholtz_panel_integral(obs: [f64; 3], panel: &Panel, k: Complex64) -> Complex64 {
    let d = (obs[2] - panel.z()).abs();
    let jk = Complex64::new(0.0, 1.0) * k;
    let phase_d = (-jk * d).exp();
    // g(ρ) = e^{−jk|d|} (R − |d|) E(jk(R − |d|)), R − |d| = ρ²/(R + |d|).
    let g = |rho: f64| {
        let r = (rho * rho + d * d).sqrt();
        let excess = rho * rho / (r + d);
        phase_d * excess * e1(jk * excess)
    };
    let mut total = Complex64::new(0.0, 0.0);
    polar_sweep(obs, panel, k, |rho_e, _, weight| total += g(rho_e) * weight);
    // g already carries the 1/(jk) of the radial integral (inside E), so `total` is the
    // integral itself, with the static limit R − |d| built in.
    total
}

/// `∫∫_panel (r′ − p) e^{−jkR}/R dA′` (m², the two in-plane components), `p` the projection
/// of `obs` on the panel's plane: the first moment that, with
/// [`helmholtz_panel_integral`], integrates any linear vector basis (rooftop, RWG) against the
/// kernel: `∫∫ (r′ − c) G = moment + (p − c) ∫∫ G`.
///
/// Same polar decomposition as [`helmholtz_panel_integral`]; the radial integral
/// `∫₀^{ρ_e} ρ² e^{−jkR}/R dρ` has a bounded, smooth integrand (`ρ²/R ≤ ρ`) and is done by
/// composite Gauss–Legendre in `ρ` (8 points per panel, panels growing geometrically from
/// `|d|`, where it bends, and at most about a quarter wavelength).
pub fn helmholtz_panel_moment(obs: [f64; 3], panel: &Panel, k: Complex64) -> [Complex64; 2] {
    let d = (obs[2] - panel.z()).abs();
    let jk = Complex64::new(0.0, 1.0) * k;
    let (gx, gw) = rule();
    // ∫₀^{ρe} ρ² e^{−jkR}/R dρ: the integrand bends on the scale |d| near ρ = |d|, so the
    // panels grow geometrically from |d| (0, d, 2d, 4d, …), each cut further to about a
    // quarter wavelength.
    let radial = |rho_e: f64| {
        let mut acc = Complex64::new(0.0, 0.0);
        let mut lo = 0.0;
        let mut hi = if d > 0.0 { d.min(rho_e) } else { rho_e };
        while lo < rho_e {
            let m = ((k.norm() * (hi - lo) / (std::f64::consts::PI / 2.0)).ceil() as usize).max(1);
            let dr = (hi - lo) / m as f64;
            for j in 0..m {
                let c = lo + (j as f64 + 0.5) * dr;
                for (x, w) in gx.iter().zip(gw) {
                    let rho = c + 0.5 * dr * x;
                    let r = (rho * rho + d * d).sqrt();
                    if r > 0.0 {
                        acc += (-jk * r).exp() * (rho * rho / r * w * 0.5 * dr);
                    }
                }
            }
            lo = hi;
            hi = (2.0 * hi).min(rho_e);
        }
        acc
    };
    let mut total = [Complex64::new(0.0, 0.0); 2];
    polar_sweep(obs, panel, k, |rho_e, dir, weight| {
        let f = radial(rho_e) * weight;
        total[0] += f * dir[0];
        total[1] += f * dir[1];
    });
    total
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::panel::inverse_distance_exact;
    use crate::quadrature::panel_rule_subdivided;
    use std::f64::consts::PI;

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    /// Lossless: `k = ω√(εr μr)/c0` (a 1 GHz wave in εr = 4 has a 7.49 cm wavelength, i.e.
    /// half the vacuum one); lossy: `Im k < 0`, and the small-loss form `k0√εr (1 − j tan δ/2)`
    /// holds to first order (the remainder is of order tan²δ/8).
    #[test]
    fn wavenumber_of_lossless_and_lossy_media() {
        let k = wavenumber(1e9, 4.0, 0.0, 1.0);
        assert!((2.0 * PI / k.re - 0.5 * C0 / 1e9).abs() < 1e-12 && k.im == 0.0);
        let td = 0.02;
        let k = wavenumber(2e9, 4.4, td, 1.0);
        let k0 = 2.0 * PI * 2e9 / C0 * 4.4f64.sqrt();
        assert!(k.im < 0.0);
        // √(1 − jδ) = 1 − jδ/2 + δ²/8 + …: the first-order form is off by about δ²/8.
        let err = (k - c(k0, -k0 * td / 2.0)).norm();
        assert!(err <= 0.25 * td * td * k0 && err >= 0.05 * td * td * k0, "{k}");
    }

    /// `k → 0`: the closed-form `∫∫ 1/R dA` (Wilton et al. 1984) on, near and far from a
    /// rectangle and a triangle, in and out of plane.
    #[test]
    fn static_limit_is_the_closed_form() {
        let rect = Panel::Rect { x0: 0.0, x1: 2e-3, y0: 0.0, y1: 1e-3, z: 0.0 };
        let tri = Panel::Triangle { v: [[0.0, 0.0], [2e-3, 0.2e-3], [0.5e-3, 1.5e-3]], z: 0.0 };
        for panel in [rect, tri] {
            for obs in [
                [0.7e-3, 0.3e-3, 0.0],
                [0.7e-3, 0.3e-3, 0.2e-3],
                [2e-3, 0.5e-3, 0.0],
                [-1e-3, 3e-3, 0.5e-3],
                [1e-3, 1e-9, 0.0],
                [30e-3, 2e-3, 1e-3],
            ] {
                let got = helmholtz_panel_integral(obs, &panel, c(0.0, 0.0));
                let want = inverse_distance_exact(obs, &panel);
                assert!((got.re - want).abs() <= 1e-11 * want.abs(), "{panel:?} {obs:?}: {got} vs {want}");
                assert!(got.im.abs() <= 1e-14 * want.abs());
            }
        }
    }

    /// A disk of radius a (a regular 2048-gon), observer on the axis at height d: exactly
    /// `2π (e^{−jkd} − e^{−jk√(a² + d²)})/(jk)` for the disk; the polygon's area differs by
    /// `O(1/N²)` (≈ 2·10⁻⁶ here).
    #[test]
    fn disk_on_axis_is_exact() {
        let a = 1e-3;
        let nv = 2048;
        let poly: Vec<[f64; 2]> =
            (0..nv).map(|i| 2.0 * PI * i as f64 / nv as f64).map(|t| [a * t.cos(), a * t.sin()]).collect();
        // Fan of triangles from the centre, each a panel.
        let tris: Vec<Panel> = (0..nv)
            .map(|i| Panel::Triangle { v: [[0.0, 0.0], poly[i], poly[(i + 1) % nv]], z: 0.0 })
            .collect();
        for (k, d) in [
            (c(500.0, 0.0), 0.0),
            (c(2000.0, 0.0), 0.3e-3),
            (c(3000.0, -200.0), 1e-3),
            (c(1e-9, 0.0), 0.2e-3),
        ] {
            let got: Complex64 = tris.iter().map(|t| helmholtz_panel_integral([0.0, 0.0, d], t, k)).sum();
            let jk = c(0.0, 1.0) * k;
            let want = 2.0 * PI * ((-jk * d).exp() - (-jk * (a * a + d * d).sqrt()).exp()) / jk;
            assert!((got - want).norm() <= 1e-5 * want.norm(), "k {k}, d {d}: {got} vs {want}");
        }
    }

    /// Off the panel, against a finely subdivided Gauss product rule of the kernel itself
    /// (smooth there), up to a few wavelengths across, lossy k included.
    #[test]
    fn matches_brute_force_quadrature_off_the_panel() {
        let rect = Panel::Rect { x0: 0.0, x1: 3e-3, y0: 0.0, y1: 1e-3, z: 0.0 };
        let tri = Panel::Triangle { v: [[0.0, 0.0], [3e-3, 0.5e-3], [1e-3, 2e-3]], z: 0.0 };
        for panel in [rect, tri] {
            for k in [c(1000.0, 0.0), c(5000.0, -300.0)] {
                for obs in [[1.5e-3, 0.5e-3, 0.4e-3], [4e-3, 3e-3, 0.1e-3], [1.0e-3, -0.3e-3, 0.0]] {
                    let got = helmholtz_panel_integral(obs, &panel, k);
                    let f = |q: [f64; 3]| {
                        let r = ((obs[0] - q[0]).powi(2) + (obs[1] - q[1]).powi(2) + (obs[2] - q[2]).powi(2))
                            .sqrt();
                        (-c(0.0, 1.0) * k * r).exp() / r
                    };
                    let re = panel_rule_subdivided(&panel, 64, 6, |q| f(q).re);
                    let im = panel_rule_subdivided(&panel, 64, 6, |q| f(q).im);
                    let want = c(re, im);
                    assert!(
                        (got - want).norm() <= 1e-8 * want.norm(),
                        "{panel:?} k {k} {obs:?}: {got} vs {want}"
                    );
                }
            }
        }
    }

    /// The first moment against a subdivided product rule of `(r′ − p) e^{−jkR}/R` (bounded
    /// everywhere, so the brute force converges even on the panel), rectangles and triangles,
    /// on, near and off the panel, lossy k included.
    #[test]
    fn moment_matches_brute_force() {
        let rect = Panel::Rect { x0: 0.0, x1: 2e-3, y0: 0.0, y1: 1e-3, z: 0.0 };
        let tri = Panel::Triangle { v: [[0.0, 0.0], [2e-3, 0.4e-3], [0.6e-3, 1.5e-3]], z: 0.0 };
        // In-plane observers on a node of the brute force's subdivision (96 per side), so that
        // its rule never samples the direction's jump at the observer.
        let node = |panel: &Panel| match *panel {
            Panel::Rect { .. } => [36.0 / 96.0 * 2e-3, 48.0 / 96.0 * 1e-3],
            Panel::Triangle { v, .. } => {
                let (s, t) = (40.0 / 96.0, 30.0 / 96.0);
                [
                    v[0][0] + s * (v[1][0] - v[0][0]) + t * (v[2][0] - v[0][0]),
                    v[0][1] + s * (v[1][1] - v[0][1]) + t * (v[2][1] - v[0][1]),
                ]
            }
        };
        for panel in [rect, tri] {
            let p = node(&panel);
            for k in [c(1e-9, 0.0), c(3000.0, -100.0)] {
                for obs in [[p[0], p[1], 0.0], [0.8e-3, 0.45e-3, 0.3e-3], [3e-3, 2e-3, 0.1e-3]] {
                    let got = helmholtz_panel_moment(obs, &panel, k);
                    for (axis, g) in got.iter().enumerate() {
                        let f = |q: [f64; 3]| {
                            let r =
                                ((obs[0] - q[0]).powi(2) + (obs[1] - q[1]).powi(2) + (obs[2] - q[2]).powi(2))
                                    .sqrt();
                            (-c(0.0, 1.0) * k * r).exp() * ((q[axis] - obs[axis]) / r)
                        };
                        let re = panel_rule_subdivided(&panel, 96, 6, |q| f(q).re);
                        let im = panel_rule_subdivided(&panel, 96, 6, |q| f(q).im);
                        let want = c(re, im);
                        let scale = panel.area();
                        assert!(
                            (g - want).norm() <= 1e-6 * scale,
                            "{panel:?} k {k} {obs:?} axis {axis}: {g} vs {want}"
                        );
                    }
                }
            }
        }
    }

    /// On the panel (the singular case): the static part is exact, the rest `∫∫(e^{−jkR} − 1)/R`
    /// is bounded and smooth — checked against a subdivided rule on the difference, which is
    /// finite (→ −jk) at the observation point.
    #[test]
    fn self_term_matches_singularity_subtraction() {
        let rect = Panel::Rect { x0: 0.0, x1: 2e-3, y0: 0.0, y1: 1e-3, z: 0.0 };
        let k = c(4000.0, -100.0);
        for obs in [[1e-3, 0.5e-3, 0.0], [0.3e-3, 0.9e-3, 0.0]] {
            let got = helmholtz_panel_integral(obs, &rect, k);
            let diff = |q: [f64; 3]| {
                let r = ((obs[0] - q[0]).powi(2) + (obs[1] - q[1]).powi(2)).sqrt();
                ((-c(0.0, 1.0) * k * r).exp() - 1.0) / r
            };
            let re = panel_rule_subdivided(&rect, 128, 6, |q| diff(q).re);
            let im = panel_rule_subdivided(&rect, 128, 6, |q| diff(q).im);
            let want = c(re + inverse_distance_exact(obs, &rect), im);
            assert!((got - want).norm() <= 1e-7 * want.norm(), "{obs:?}: {got} vs {want}");
        }
    }
}
