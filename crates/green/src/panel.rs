//! Closed-form potential integrals of uniformly charged rectangular panels.

use crate::quadrature;

/// An axis-aligned rectangle `[x0, x1] × [y0, y1]` in the plane `z`, metres.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Panel {
    /// Lower x.
    pub x0: f64,
    /// Upper x.
    pub x1: f64,
    /// Lower y.
    pub y0: f64,
    /// Upper y.
    pub y1: f64,
    /// Height of the plane.
    pub z: f64,
}

impl Panel {
    /// Area `(x1 − x0)(y1 − y0)`.
    pub fn area(&self) -> f64 {
        (self.x1 - self.x0) * (self.y1 - self.y0)
    }
    /// Centre point.
    pub fn center(&self) -> [f64; 3] {
        [0.5 * (self.x0 + self.x1), 0.5 * (self.y0 + self.y1), self.z]
    }
    /// The same rectangle moved to height `z`.
    pub fn at(&self, z: f64) -> Self {
        Self { z, ..*self }
    }
    /// Longer side.
    pub fn max_side(&self) -> f64 {
        (self.x1 - self.x0).max(self.y1 - self.y0)
    }
    /// Distance from `p` to the nearest point of the rectangle.
    pub fn distance(&self, p: [f64; 3]) -> f64 {
        let dx = (self.x0 - p[0]).max(p[0] - self.x1).max(0.0);
        let dy = (self.y0 - p[1]).max(p[1] - self.y1).max(0.0);
        let dz = p[2] - self.z;
        (dx * dx + dy * dy + dz * dz).sqrt()
    }
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
    let d = p[2] - panel.z;
    let (u0, u1) = (panel.x0 - p[0], panel.x1 - p[0]);
    let (v0, v1) = (panel.y0 - p[1], panel.y1 - p[1]);
    corner(u1, v1, d) - corner(u0, v1, d) - corner(u1, v0, d) + corner(u0, v0, d)
}

/// `∫∫_panel dA′ / |p − r′|` to relative accuracy `accuracy`: a Gauss–Legendre product rule
/// when the point is far enough for one of order ≤ 6 per side to meet the accuracy (see
/// [`quadrature::order_for`]), the closed form [`inverse_distance_exact`] otherwise.
pub fn inverse_distance(p: [f64; 3], panel: &Panel, accuracy: f64) -> f64 {
    let dist = panel.distance(p);
    let (a, b) = (panel.x1 - panel.x0, panel.y1 - panel.y0);
    match (quadrature::order_for(a, dist, accuracy), quadrature::order_for(b, dist, accuracy)) {
        (Some(nx), Some(ny)) => quadrature::panel_rule(panel, nx, ny, |q| {
            let (dx, dy, dz) = (p[0] - q[0], p[1] - q[1], p[2] - q[2]);
            1.0 / (dx * dx + dy * dy + dz * dz).sqrt()
        }),
        _ => inverse_distance_exact(p, panel),
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
        let p = Panel { x0: -h / 2.0, x1: h / 2.0, y0: -h / 2.0, y1: h / 2.0, z: 0.0 };
        let exact = 4.0 * h * (1.0 + 2f64.sqrt()).ln();
        assert!((inverse_distance_exact([0.0, 0.0, 0.0], &p) - exact).abs() < 1e-14 * exact);
    }

    /// Points off the panel and off its plane, against a fine subdivided Gauss–Legendre
    /// quadrature (an independent computation).
    #[test]
    fn off_plane_points_match_fine_quadrature() {
        let p = Panel { x0: 0.1, x1: 0.5, y0: -0.2, y1: 0.05, z: 0.3 };
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
            let p = Panel { x0: 0.0, x1: 1.0, y0: 0.0, y1: 1.0 / aspect, z: 0.0 };
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
}
