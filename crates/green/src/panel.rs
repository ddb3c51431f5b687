//! Closed-form potential integrals of uniformly charged rectangular panels.

use crate::quadrature;

/// A flat panel parallel to the `xy` plane at height `z` (metres): an axis-aligned rectangle or
/// a triangle (vertices counter-clockwise).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Panel {
    /// `[x0, x1] × [y0, y1]` at height `z`.
    Rect {
        /// Lower x.
        x0: f64,
        /// Upper x.
        x1: f64,
        /// Lower y.
        y0: f64,
        /// Upper y.
        y1: f64,
        /// Height of the plane.
        z: f64,
    },
    /// Triangle with vertices `v` (counter-clockwise) at height `z`.
    Triangle {
        /// Vertices `(x, y)`.
        v: [[f64; 2]; 3],
        /// Height of the plane.
        z: f64,
    },
}

impl Panel {
    /// Height of the panel's plane.
    pub fn z(&self) -> f64 {
        match *self {
            Panel::Rect { z, .. } | Panel::Triangle { z, .. } => z,
        }
    }
    /// Area (m²).
    pub fn area(&self) -> f64 {
        match *self {
            Panel::Rect { x0, x1, y0, y1, .. } => (x1 - x0) * (y1 - y0),
            Panel::Triangle { v, .. } => {
                0.5 * ((v[1][0] - v[0][0]) * (v[2][1] - v[0][1]) - (v[2][0] - v[0][0]) * (v[1][1] - v[0][1]))
                    .abs()
            }
        }
    }
    /// Area centroid.
    pub fn center(&self) -> [f64; 3] {
        match *self {
            Panel::Rect { x0, x1, y0, y1, z } => [0.5 * (x0 + x1), 0.5 * (y0 + y1), z],
            Panel::Triangle { v, z } => {
                [(v[0][0] + v[1][0] + v[2][0]) / 3.0, (v[0][1] + v[1][1] + v[2][1]) / 3.0, z]
            }
        }
    }
    /// The same panel moved to height `z`.
    pub fn at(&self, z: f64) -> Self {
        match *self {
            Panel::Rect { x0, x1, y0, y1, .. } => Panel::Rect { x0, x1, y0, y1, z },
            Panel::Triangle { v, .. } => Panel::Triangle { v, z },
        }
    }
    /// Longest side.
    pub fn max_side(&self) -> f64 {
        match *self {
            Panel::Rect { x0, x1, y0, y1, .. } => (x1 - x0).max(y1 - y0),
            Panel::Triangle { v, .. } => (0..3)
                .map(|i| {
                    ((v[(i + 1) % 3][0] - v[i][0]).powi(2) + (v[(i + 1) % 3][1] - v[i][1]).powi(2)).sqrt()
                })
                .fold(0.0, f64::max),
        }
    }
    /// The boundary as a counter-clockwise polygon.
    pub fn vertices(&self) -> Vec<[f64; 2]> {
        match *self {
            Panel::Rect { x0, x1, y0, y1, .. } => vec![[x0, y0], [x1, y0], [x1, y1], [x0, y1]],
            Panel::Triangle { v, .. } => v.to_vec(),
        }
    }
    /// Distance from `p` to the nearest point of the panel.
    pub fn distance(&self, p: [f64; 3]) -> f64 {
        let dz = p[2] - self.z();
        let dxy2 = match *self {
            Panel::Rect { x0, x1, y0, y1, .. } => {
                let dx = (x0 - p[0]).max(p[0] - x1).max(0.0);
                let dy = (y0 - p[1]).max(p[1] - y1).max(0.0);
                dx * dx + dy * dy
            }
            Panel::Triangle { v, .. } => {
                let q = [p[0], p[1]];
                let c: [f64; 3] = std::array::from_fn(|i| cross(v[i], v[(i + 1) % 3], q));
                let inside = c.iter().all(|&x| x >= 0.0) || c.iter().all(|&x| x <= 0.0);
                if inside {
                    0.0
                } else {
                    (0..3).map(|i| segment_dist2(q, v[i], v[(i + 1) % 3])).fold(f64::INFINITY, f64::min)
                }
            }
        };
        (dxy2 + dz * dz).sqrt()
    }
}

/// `(b − a) × (c − a)` (z component).
fn cross(a: [f64; 2], b: [f64; 2], c: [f64; 2]) -> f64 {
    (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
}

/// Squared distance from `q` to the segment `ab`.
fn segment_dist2(q: [f64; 2], a: [f64; 2], b: [f64; 2]) -> f64 {
    let (ex, ey) = (b[0] - a[0], b[1] - a[1]);
    let len2 = ex * ex + ey * ey;
    let t = if len2 > 0.0 { (((q[0] - a[0]) * ex + (q[1] - a[1]) * ey) / len2).clamp(0.0, 1.0) } else { 0.0 };
    let (dx, dy) = (a[0] + t * ex - q[0], a[1] + t * ey - q[1]);
    dx * dx + dy * dy
}

/// `v + √(u² + v² + d²)` without cancellation when `v < 0`.
#[inline]
fn v_plus_r(u: f64, v: f64, d: f64, r: f64) -> f64 {
    if v >= 0.0 { v + r } else { (u * u + d * d) / (r - v) }
}

/// Antiderivative `F(u, v) = u ln(v + R) + v ln(u + R) − d atan(u v / (d R))`,
/// `R = √(u² + v² + d²)`, with `∂²F/∂u∂v = 1/R`.
#[inline]
fn corner(u: f64, v: f64, d: f64) -> f64 {
    let r = (u * u + v * v + d * d).sqrt();
    let mut f = 0.0;
    if u != 0.0 {
        let a = v_plus_r(u, v, d, r);
        if a > 0.0 {
            f += u * a.ln();
        }
    }
    if v != 0.0 {
        let b = v_plus_r(v, u, d, r);
        if b > 0.0 {
            f += v * b.ln();
        }
    }
    if d != 0.0 && r > 0.0 {
        f -= d * (u * v / (d * r)).atan();
    }
    f
}

/// `∫∫_panel dA′ / |p − r′|` (metres) in closed form.
///
/// With `u = x′ − x`, `v = y′ − y`, `d = z − z′`, the integral is
/// `F(u₁,v₁) − F(u₀,v₁) − F(u₁,v₀) + F(u₀,v₀)` for the antiderivative
/// `F = u ln(v + R) + v ln(u + R) − d atan(uv / (dR))` — the classical result for the potential
/// of a uniformly charged rectangle (e.g. Durand, *Électrostatique*, 1964; the general polygon
/// form is Wilton, Rao, Glisson, Schaubert et al., IEEE Trans. AP-32(3), 1984). Exact for any
/// observation point, including points on the panel itself (the integrable singularity is
/// handled analytically). Loses relative accuracy through cancellation far from the panel:
/// use [`inverse_distance`] there.
pub fn inverse_distance_exact(p: [f64; 3], panel: &Panel) -> f64 {
    match *panel {
        Panel::Rect { x0, x1, y0, y1, z } => {
            let d = p[2] - z;
            let (u0, u1) = (x0 - p[0], x1 - p[0]);
            let (v0, v1) = (y0 - p[1], y1 - p[1]);
            corner(u1, v1, d) - corner(u0, v1, d) - corner(u1, v0, d) + corner(u0, v0, d)
        }
        Panel::Triangle { .. } => polygon_inverse_distance(p, &panel.vertices(), panel.z()),
    }
}

/// `∫∫_polygon dA′ / |p − r′|` for a convex polygon (vertices in either orientation) in the plane
/// `z`, in closed form edge by edge (Wilton, Rao, Glisson, Schaubert, Al-Bundak, Butler,
/// "Potential integrals for uniform and linear source distributions on polygonal and
/// polyhedral domains", IEEE Trans. AP-32(3), 1984, eq. (5)):
///
/// `Σ_i s_i [ P⁰_i ln((R⁺_i + l⁺_i)/(R⁻_i + l⁻_i)) − |d| (atan(P⁰_i l⁺_i / ((R⁰_i)² + |d| R⁺_i))
///  − atan(P⁰_i l⁻_i / ((R⁰_i)² + |d| R⁻_i))) ]`
///
/// where, for edge `i` seen from the projection of `p` onto the plane, `P⁰_i` is the distance
/// to the edge's line, `s_i = ±1` tells on which side the projection lies, `l^±_i` are the
/// signed positions of the edge's end points along it, `R^±_i` the distances from `p` to the
/// end points and `R⁰_i = √((P⁰_i)² + d²)`.
pub fn polygon_inverse_distance(p: [f64; 3], verts: &[[f64; 2]], z: f64) -> f64 {
    let d = (p[2] - z).abs();
    let n = verts.len();
    // Written for counter-clockwise vertices; a clockwise polygon flips every edge's sign.
    let orient: f64 = (0..n)
        .map(|i| verts[i][0] * verts[(i + 1) % n][1] - verts[(i + 1) % n][0] * verts[i][1])
        .sum::<f64>()
        .signum();
    let mut total = 0.0;
    for i in 0..n {
        let (a, b) = (verts[i], verts[(i + 1) % n]);
        let (ex, ey) = (b[0] - a[0], b[1] - a[1]);
        let len = (ex * ex + ey * ey).sqrt();
        if len == 0.0 {
            continue;
        }
        let (lx, ly) = (ex / len, ey / len);
        // Outward normal of a counter-clockwise polygon: (ly, −lx).
        let (ux, uy) = (ly, -lx);
        let (ax, ay) = (a[0] - p[0], a[1] - p[1]);
        let (bx, by) = (b[0] - p[0], b[1] - p[1]);
        let signed = ax * ux + ay * uy; // (ρ⁻ − ρ)·û
        let p0 = signed.abs();
        let (lm, lp) = (ax * lx + ay * ly, bx * lx + by * ly);
        let (rm, rp) = ((ax * ax + ay * ay + d * d).sqrt(), (bx * bx + by * by + d * d).sqrt());
        let r0sq = p0 * p0 + d * d;
        let mut term = 0.0;
        if p0 > 0.0 {
            // R + l without cancellation when l < 0: (R² − l²)/(R − l) = R0²/(R − l).
            let rl = |r: f64, l: f64| if l >= 0.0 { r + l } else { r0sq / (r - l) };
            term += p0 * (rl(rp, lp) / rl(rm, lm)).ln();
            if d > 0.0 {
                term -= d * ((p0 * lp / (r0sq + d * rp)).atan() - (p0 * lm / (r0sq + d * rm)).atan());
            }
        }
        total += signed.signum() * term;
    }
    orient * total
}

/// `∫∫_panel (ρ′ − ρ) / |p − r′| dA′` (m², the two in-plane components), `ρ` the projection
/// of `p` on the panel's plane: the first moment of the static kernel, in closed form.
///
/// In the plane `∇′R = (ρ′ − ρ)/R`, so by the divergence theorem the integral is the contour
/// integral `∮ m̂ R dl` (`m̂` the outward unit normal of each edge), and along an edge at
/// distance `R⁰ = √(P⁰² + d²)` from `p`, `∫ R dl = ½[l R + (R⁰)² ln(l + R)]` between its end
/// points `l⁻, l⁺`:
///
/// `Σ_i m̂_i · ½ [ l⁺R⁺ − l⁻R⁻ + (R⁰_i)² ln((R⁺ + l⁺)/(R⁻ + l⁻)) ]`
///
/// (the same edge quantities as [`polygon_inverse_distance`]; Wilton, Rao, Glisson et al.,
/// IEEE Trans. AP-32(3), 1984, give this moment for linear sources). Exact for every `p`,
/// including points on the panel and on its edges.
pub fn inverse_distance_moment(p: [f64; 3], panel: &Panel) -> [f64; 2] {
    let verts = panel.vertices();
    let d = p[2] - panel.z();
    let n = verts.len();
    // Orientation: the outward normal of a counter-clockwise polygon is (ly, −lx).
    let twice_area: f64 =
        (0..n).map(|i| verts[i][0] * verts[(i + 1) % n][1] - verts[(i + 1) % n][0] * verts[i][1]).sum();
    let orient = twice_area.signum();
    let mut total = [0.0; 2];
    for i in 0..n {
        let (a, b) = (verts[i], verts[(i + 1) % n]);
        let (ex, ey) = (b[0] - a[0], b[1] - a[1]);
        let len = (ex * ex + ey * ey).sqrt();
        if len == 0.0 {
            continue;
        }
        let (lx, ly) = (ex / len, ey / len);
        let (mx, my) = (orient * ly, -orient * lx);
        let (ax, ay) = (a[0] - p[0], a[1] - p[1]);
        let (bx, by) = (b[0] - p[0], b[1] - p[1]);
        let p0 = ax * mx + ay * my;
        let (lm, lp) = (ax * lx + ay * ly, bx * lx + by * ly);
        let r0sq = p0 * p0 + d * d;
        let (rm, rp) = ((lm * lm + r0sq).sqrt(), (lp * lp + r0sq).sqrt());
        let mut term = lp * rp - lm * rm;
        if r0sq > 0.0 {
            let rl = |r: f64, l: f64| if l >= 0.0 { r + l } else { r0sq / (r - l) };
            term += r0sq * (rl(rp, lp) / rl(rm, lm)).ln();
        }
        total[0] += 0.5 * term * mx;
        total[1] += 0.5 * term * my;
    }
    total
}

/// `∫∫_panel dA′ / |p − r′|` to relative accuracy `accuracy`: a Gauss–Legendre product rule
/// when the point is far enough for one of order ≤ 6 per side to meet the accuracy (see
/// [`quadrature::order_for`]), the closed form [`inverse_distance_exact`] otherwise.
pub fn inverse_distance(p: [f64; 3], panel: &Panel, accuracy: f64) -> f64 {
    match quadrature::rule_for(panel, panel.distance(p), accuracy) {
        Some((nx, ny)) => quadrature::panel_rule(panel, nx, ny, |q| {
            let (dx, dy, dz) = (p[0] - q[0], p[1] - q[1], p[2] - q[2]);
            1.0 / (dx * dx + dy * dy + dz * dz).sqrt()
        }),
        None => inverse_distance_exact(p, panel),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// At the centre of a square of side h: `∫∫ dA/r = 4 h ln(1 + √2)` (integrate in polar
    /// coordinates over the eight triangles; e.g. Durand, Électrostatique, 1964 — from memory).
    #[test]
    fn square_centre_closed_form() {
        let h = 0.3;
        let p = Panel::Rect { x0: -h / 2.0, x1: h / 2.0, y0: -h / 2.0, y1: h / 2.0, z: 0.0 };
        let exact = 4.0 * h * (1.0 + 2f64.sqrt()).ln();
        assert!((inverse_distance_exact([0.0, 0.0, 0.0], &p) - exact).abs() < 1e-14 * exact);
    }

    /// Points off the panel and off its plane, against a fine subdivided Gauss–Legendre
    /// quadrature (an independent computation).
    #[test]
    fn off_plane_points_match_fine_quadrature() {
        let p = Panel::Rect { x0: 0.1, x1: 0.5, y0: -0.2, y1: 0.05, z: 0.3 };
        for obs in [[0.2, 0.0, 0.35], [0.9, 0.4, 0.3], [0.3, -0.1, 0.0], [-0.5, 0.7, 1.2]] {
            let exact = inverse_distance_exact(obs, &p);
            let fine = quadrature::panel_rule_subdivided(&p, 64, 8, |q| {
                let (dx, dy, dz) = (obs[0] - q[0], obs[1] - q[1], obs[2] - q[2]);
                1.0 / (dx * dx + dy * dy + dz * dz).sqrt()
            });
            assert!((exact - fine).abs() < 1e-9 * exact, "{obs:?}: {exact} vs {fine}");
        }
    }

    /// The adaptive rule meets its accuracy against the closed form, for panels of aspect ratio
    /// 1 to 16, accuracies 1e-3 … 1e-9, and points in all directions at 1.5 … 40 sides.
    #[test]
    fn adaptive_rule_meets_accuracy() {
        for aspect in [1.0, 4.0, 16.0] {
            let p = Panel::Rect { x0: 0.0, x1: 1.0, y0: 0.0, y1: 1.0 / aspect, z: 0.0 };
            for acc in [1e-3, 1e-5, 1e-7, 1e-9] {
                for r in [1.5, 2.0, 3.0, 5.0, 8.0, 13.0, 20.0, 40.0] {
                    for k in 0..12 {
                        let th = k as f64 * 0.55;
                        let ph = (k % 4) as f64 * 0.4;
                        let obs =
                            [0.5 + r * th.cos() * ph.cos(), 0.3 + r * th.sin() * ph.cos(), r * ph.sin()];
                        let exact = inverse_distance_exact(obs, &p);
                        let got = inverse_distance(obs, &p, acc);
                        // The closed form itself carries ~1e-13 relative error at these ranges.
                        assert!(
                            (got - exact).abs() <= (acc + 1e-12) * exact,
                            "aspect {aspect} acc {acc:e} r {r}: rel {}",
                            (got - exact).abs() / exact
                        );
                    }
                }
            }
        }
    }

    /// The polygon formula reproduces the rectangle formula on rectangles (two independent
    /// closed forms), and triangles against fine quadrature, on and off the plane, inside and
    /// outside the triangle.
    #[test]
    fn polygon_formula_agrees() {
        let r = Panel::Rect { x0: 0.1, x1: 0.5, y0: -0.2, y1: 0.05, z: 0.3 };
        for obs in [[0.2, 0.0, 0.3], [0.2, 0.0, 0.35], [0.9, 0.4, 0.3], [0.3, -0.1, 0.0], [0.1, 0.05, 0.3]] {
            let a = inverse_distance_exact(obs, &r);
            let b = polygon_inverse_distance(obs, &r.vertices(), 0.3);
            assert!((a - b).abs() < 1e-13 * a, "{obs:?}: {a} vs {b}");
        }
        let v = [[0.0, 0.0], [0.4, 0.1], [0.1, 0.3]];
        let t = Panel::Triangle { v, z: 0.0 };
        // On the plane inside the triangle: split at the point into three triangles with the
        // singularity at their first vertex, where the collapsed rule removes it.
        for q in [t.center(), [0.3, 0.12, 0.0]] {
            let exact = inverse_distance_exact(q, &t);
            let fine: f64 = (0..3)
                .map(|i| {
                    let sub = Panel::Triangle { v: [[q[0], q[1]], v[i], v[(i + 1) % 3]], z: 0.0 };
                    quadrature::panel_rule_subdivided(&sub, 1, 40, |r| {
                        1.0 / ((q[0] - r[0]).powi(2) + (q[1] - r[1]).powi(2)).sqrt()
                    })
                })
                .sum();
            assert!((exact - fine).abs() < 1e-10 * exact, "{q:?}: {exact} vs {fine}");
        }
        // At a vertex: the collapsed rule with that vertex first.
        let rotated = Panel::Triangle { v: [v[1], v[2], v[0]], z: 0.0 };
        let at_vertex = inverse_distance_exact([0.4, 0.1, 0.0], &t);
        let fine = quadrature::panel_rule_subdivided(&rotated, 1, 40, |r| {
            1.0 / ((0.4 - r[0]).powi(2) + (0.1 - r[1]).powi(2)).sqrt()
        });
        assert!((at_vertex - fine).abs() < 1e-10 * fine, "{at_vertex} vs {fine}");
        for obs in [[0.2, 0.1, 0.05], [0.6, 0.6, 0.0], [-0.2, 0.1, 0.3], [0.7, 0.1, 0.0]] {
            let exact = inverse_distance_exact(obs, &t);
            let fine = quadrature::panel_rule_subdivided(&t, 96, 6, |q| {
                let (dx, dy, dz) = (obs[0] - q[0], obs[1] - q[1], obs[2] - q[2]);
                1.0 / (dx * dx + dy * dy + dz * dz).sqrt()
            });
            assert!((exact - fine).abs() < 2e-6 * exact, "{obs:?}: {exact} vs {fine}");
        }
    }

    /// The adaptive rule meets its accuracy on triangles too (against the polygon formula).
    #[test]
    fn adaptive_rule_meets_accuracy_on_triangles() {
        for v in [[[0.0, 0.0], [1.0, 0.0], [0.5, 0.866]], [[0.0, 0.0], [1.0, 0.0], [0.9, 0.15]]] {
            let t = Panel::Triangle { v, z: 0.0 };
            for acc in [1e-3, 1e-6, 1e-9] {
                for r in [1.5, 3.0, 6.0, 12.0, 30.0] {
                    for k in 0..10 {
                        let th = k as f64 * 0.63;
                        let ph = (k % 3) as f64 * 0.5;
                        let obs =
                            [0.5 + r * th.cos() * ph.cos(), 0.3 + r * th.sin() * ph.cos(), r * ph.sin()];
                        let exact = inverse_distance_exact(obs, &t);
                        let got = inverse_distance(obs, &t, acc);
                        assert!((got - exact).abs() <= (acc + 1e-12) * exact, "acc {acc:e} r {r}");
                    }
                }
            }
        }
    }

    /// The closed-form moment `∫∫ (ρ′ − ρ)/R` against two independent computations: the polar
    /// sweep of `dynamic::helmholtz_panel_moment` at `k = 0` (on the panel, on its edges, at a
    /// vertex, near and off it) and a fine subdivided Gauss rule (off the panel).
    #[test]
    fn first_moment_matches_polar_sweep_and_quadrature() {
        let panels = [
            Panel::Rect { x0: 0.1, x1: 0.5, y0: -0.2, y1: 0.05, z: 0.3 },
            Panel::Triangle { v: [[0.0, 0.0], [0.4, 0.1], [0.1, 0.3]], z: -0.1 },
            Panel::Triangle { v: [[0.0, 0.0], [0.1, 0.3], [0.4, 0.1]], z: 0.0 },
        ];
        for p in &panels {
            let c = p.center();
            let v = p.vertices();
            let on_edge = [0.5 * (v[0][0] + v[1][0]), 0.5 * (v[0][1] + v[1][1]), p.z()];
            for obs in [
                c,
                on_edge,
                [v[1][0], v[1][1], p.z()],
                [c[0] + 0.07, c[1] - 0.03, p.z() + 0.02],
                [0.9, 0.4, p.z()],
                [-0.3, 0.2, p.z() + 0.5],
            ] {
                let closed = inverse_distance_moment(obs, p);
                let polar =
                    crate::dynamic::helmholtz_panel_moment(obs, p, num_complex::Complex64::new(0.0, 0.0));
                let scale = p.area() * p.max_side();
                for i in 0..2 {
                    assert!(
                        (closed[i] - polar[i].re).abs() < 1e-9 * scale,
                        "{obs:?} {i}: {} vs {}",
                        closed[i],
                        polar[i].re
                    );
                }
                if p.distance(obs) > 0.05 {
                    for (i, closed) in closed.iter().enumerate() {
                        let fine = quadrature::panel_rule_subdivided(p, 64, 6, |q| {
                            let r =
                                ((obs[0] - q[0]).powi(2) + (obs[1] - q[1]).powi(2) + (obs[2] - q[2]).powi(2))
                                    .sqrt();
                            (q[i] - obs[i]) / r
                        });
                        assert!((closed - fine).abs() < 1e-10 * scale, "{obs:?} {i}: {closed} vs {fine}");
                    }
                }
            }
        }
    }
}
