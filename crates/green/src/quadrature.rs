//! Gauss–Legendre product rules on panels, with the order chosen from the distance.

use crate::Panel;
use std::sync::OnceLock;

/// Highest order per side used by [`order_for`].
pub const MAX_ORDER: usize = 6;

/// Error constants `K_n` of the rule `err ≲ K_n (s/D)^{2n}` for an `n`-point Gauss–Legendre
/// rule along a side `s` of a panel integrating `1/R` at distance `D` from the panel
/// (measured on squares and 4:1 rectangles against the closed form, then rounded up; the test
/// `panel::tests::adaptive_rule_meets_accuracy` checks the resulting rule).
const ERROR_CONSTANT: [f64; MAX_ORDER + 1] = [f64::INFINITY, 0.1, 0.01, 5e-4, 5e-5, 1e-5, 1e-6];

/// Nodes and weights of the `n`-point Gauss–Legendre rule on `[−1, 1]`.
///
/// Roots of the Legendre polynomial `P_n` by Newton's method from the Chebyshev-like guess
/// `cos(π(i − ¼)/(n + ½))`, weights `2 / ((1 − x²) P_n′(x)²)` (Abramowitz & Stegun, *Handbook
/// of Mathematical Functions*, 1964, 25.4.29). Cached for `n ≤ MAX_ORDER`.
pub fn gauss_legendre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let mut x = vec![0.0; n];
    let mut w = vec![0.0; n];
    for i in 0..n {
        let mut t = (std::f64::consts::PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
        let mut dp = 1.0;
        for _ in 0..100 {
            // P_n(t) and P_n'(t) by the three-term recurrence.
            let (mut p0, mut p1) = (1.0, t);
            for k in 2..=n {
                let p2 = ((2 * k - 1) as f64 * t * p1 - (k - 1) as f64 * p0) / k as f64;
                p0 = p1;
                p1 = p2;
            }
            let pn = if n == 0 { 1.0 } else { p1 };
            let pm = if n <= 1 { 1.0 } else { p0 };
            dp = n as f64 * (t * pn - pm) / (t * t - 1.0);
            let dt = pn / dp;
            t -= dt;
            if dt.abs() < 1e-16 {
                break;
            }
        }
        x[i] = t;
        w[i] = 2.0 / ((1.0 - t * t) * dp * dp);
    }
    (x, w)
}

fn cached(n: usize) -> &'static (Vec<f64>, Vec<f64>) {
    static RULES: OnceLock<Vec<(Vec<f64>, Vec<f64>)>> = OnceLock::new();
    &RULES.get_or_init(|| (0..=MAX_ORDER).map(gauss_legendre).collect())[n]
}

/// Smallest order `n ≤ MAX_ORDER` with `K_n (side/dist)^{2n} ≤ accuracy/2`, or `None` when
/// the point is too close for any (use the closed form then).
pub fn order_for(side: f64, dist: f64, accuracy: f64) -> Option<usize> {
    if dist <= 0.0 {
        return None;
    }
    let t2 = (side / dist).powi(2);
    (1..=MAX_ORDER).find(|&n| ERROR_CONSTANT[n] * t2.powi(n as i32) <= 0.5 * accuracy)
}

/// Rule orders for integrating `1/R`-like kernels over `panel` from a point at distance `dist`
/// to relative `accuracy`: `(nx, ny)` per side for a rectangle, `(n + 1, n)` from the longest
/// side for a triangle; `None` when the point is too close (use a closed form).
pub fn rule_for(panel: &Panel, dist: f64, accuracy: f64) -> Option<(usize, usize)> {
    match *panel {
        Panel::Rect { x0, x1, y0, y1, .. } => {
            Some((order_for(x1 - x0, dist, accuracy)?, order_for(y1 - y0, dist, accuracy)?))
        }
        Panel::Triangle { .. } => {
            // The collapsed rule's weight u costs one degree in u: one more point there.
            let n = order_for(panel.max_side(), dist, accuracy)?;
            (n < MAX_ORDER).then_some((n + 1, n))
        }
    }
}

/// `∫∫_panel f dA`: for a rectangle the `nx × ny` Gauss–Legendre product rule; for a
/// triangle `ABC` the collapsed (conical product) rule
/// `2|T| ∫₀¹∫₀¹ f(A + u((B − A) + v(C − B))) u du dv` with `nx` points in `u` and `ny` in `v`
/// (Stroud, *Approximate Calculation of Multiple Integrals*, 1971). Orders ≤ MAX_ORDER.
pub fn panel_rule(panel: &Panel, nx: usize, ny: usize, f: impl Fn([f64; 3]) -> f64) -> f64 {
    let (gx, wx) = cached(nx.clamp(1, MAX_ORDER));
    let (gy, wy) = cached(ny.clamp(1, MAX_ORDER));
    match *panel {
        Panel::Rect { x0, x1, y0, y1, z } => {
            let (cx, hx) = (0.5 * (x0 + x1), 0.5 * (x1 - x0));
            let (cy, hy) = (0.5 * (y0 + y1), 0.5 * (y1 - y0));
            let mut s = 0.0;
            for (xi, wi) in gx.iter().zip(wx) {
                for (yj, wj) in gy.iter().zip(wy) {
                    s += wi * wj * f([cx + hx * xi, cy + hy * yj, z]);
                }
            }
            s * hx * hy
        }
        Panel::Triangle { v, z } => triangle_rule(v, z, gx, wx, gy, wy, &f) * panel.area(),
    }
}

/// The nodes and weights of [`panel_rule`] (`nx × ny` points; weights sum to the panel's area),
/// appended to `out` as `(point, weight)`: for callers that integrate several functions, or
/// complex ones, on the same points. Orders are clamped to `1..=MAX_ORDER`.
pub fn panel_points(panel: &Panel, nx: usize, ny: usize, out: &mut Vec<([f64; 3], f64)>) {
    let (gx, wx) = cached(nx.clamp(1, MAX_ORDER));
    let (gy, wy) = cached(ny.clamp(1, MAX_ORDER));
    match *panel {
        Panel::Rect { x0, x1, y0, y1, z } => {
            let (cx, hx) = (0.5 * (x0 + x1), 0.5 * (x1 - x0));
            let (cy, hy) = (0.5 * (y0 + y1), 0.5 * (y1 - y0));
            for (xi, wi) in gx.iter().zip(wx) {
                for (yj, wj) in gy.iter().zip(wy) {
                    out.push(([cx + hx * xi, cy + hy * yj, z], wi * wj * hx * hy));
                }
            }
        }
        Panel::Triangle { v, z } => {
            let area = panel.area();
            let (a, b, c) = (v[0], v[1], v[2]);
            for (ui, wi) in gx.iter().zip(wx) {
                let u = 0.5 * (ui + 1.0);
                for (vj, wj) in gy.iter().zip(wy) {
                    let t = 0.5 * (vj + 1.0);
                    let x = a[0] + u * ((b[0] - a[0]) + t * (c[0] - b[0]));
                    let y = a[1] + u * ((b[1] - a[1]) + t * (c[1] - b[1]));
                    out.push(([x, y, z], 0.5 * wi * wj * u * area));
                }
            }
        }
    }
}

/// `(1/|T|) ∫∫_T f dA` by the collapsed rule on nodes/weights of `[−1, 1]`.
fn triangle_rule(
    v: [[f64; 2]; 3],
    z: f64,
    gu: &[f64],
    wu: &[f64],
    gv: &[f64],
    wv: &[f64],
    f: &impl Fn([f64; 3]) -> f64,
) -> f64 {
    let (a, b, c) = (v[0], v[1], v[2]);
    let mut s = 0.0;
    for (ui, wi) in gu.iter().zip(wu) {
        let u = 0.5 * (ui + 1.0);
        for (vj, wj) in gv.iter().zip(wv) {
            let t = 0.5 * (vj + 1.0);
            let x = a[0] + u * ((b[0] - a[0]) + t * (c[0] - b[0]));
            let y = a[1] + u * ((b[1] - a[1]) + t * (c[1] - b[1]));
            // dA = 2|T| u du dt; du dt = (1/4) dξ dη on [−1, 1]².
            s += wi * wj * u * f([x, y, z]);
        }
    }
    0.5 * s
}

/// `∫∫_panel f dA` with the panel cut into `sub × sub` rectangles (or `sub²` similar
/// triangles), each by an `n × n` rule: a brute-force reference for tests.
pub fn panel_rule_subdivided(panel: &Panel, sub: usize, n: usize, f: impl Fn([f64; 3]) -> f64) -> f64 {
    let (g, w) = gauss_legendre(n);
    match *panel {
        Panel::Rect { x0, x1, y0, y1, z } => {
            let dx = (x1 - x0) / sub as f64;
            let dy = (y1 - y0) / sub as f64;
            let mut s = 0.0;
            for a in 0..sub {
                for b in 0..sub {
                    let (cx, cy) = (x0 + (a as f64 + 0.5) * dx, y0 + (b as f64 + 0.5) * dy);
                    for (xi, wi) in g.iter().zip(&w) {
                        for (yj, wj) in g.iter().zip(&w) {
                            s += wi * wj * f([cx + 0.5 * dx * xi, cy + 0.5 * dy * yj, z]);
                        }
                    }
                }
            }
            s * 0.25 * dx * dy
        }
        Panel::Triangle { v, z } => {
            let pt = |i: usize, j: usize| {
                let (s, t) = (i as f64 / sub as f64, j as f64 / sub as f64);
                [
                    v[0][0] + s * (v[1][0] - v[0][0]) + t * (v[2][0] - v[0][0]),
                    v[0][1] + s * (v[1][1] - v[0][1]) + t * (v[2][1] - v[0][1]),
                ]
            };
            let small = panel.area() / (sub * sub) as f64;
            let mut s = 0.0;
            for i in 0..sub {
                for j in 0..sub - i {
                    s += triangle_rule([pt(i, j), pt(i + 1, j), pt(i, j + 1)], z, &g, &w, &g, &w, &f);
                    if i + j + 1 < sub {
                        s += triangle_rule(
                            [pt(i + 1, j), pt(i + 1, j + 1), pt(i, j + 1)],
                            z,
                            &g,
                            &w,
                            &g,
                            &w,
                            &f,
                        );
                    }
                }
            }
            s * small
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Nodes of the 3- and 5-point rules against Abramowitz & Stegun Table 25.4:
    /// ±0.774596669241483, 0 (weights 5/9, 8/9); ±0.906179845938664, ±0.538469310105683, 0.
    /// And exactness on polynomials of degree 2n − 1.
    #[test]
    fn nodes_match_tables_and_integrate_polynomials() {
        let (x3, w3) = gauss_legendre(3);
        let mut s3 = x3.clone();
        s3.sort_by(f64::total_cmp);
        assert!((s3[2] - 0.774_596_669_241_483).abs() < 1e-14 && s3[1].abs() < 1e-15);
        assert!((w3.iter().sum::<f64>() - 2.0).abs() < 1e-14);
        let (x5, _) = gauss_legendre(5);
        assert!(x5.iter().any(|x| (x - 0.906_179_845_938_664).abs() < 1e-14));
        assert!(x5.iter().any(|x| (x - 0.538_469_310_105_683).abs() < 1e-14));
        for n in 1..=MAX_ORDER {
            let (x, w) = gauss_legendre(n);
            for deg in 0..2 * n {
                let got: f64 = x.iter().zip(&w).map(|(x, w)| w * x.powi(deg as i32)).sum();
                let exact = if deg % 2 == 1 { 0.0 } else { 2.0 / (deg as f64 + 1.0) };
                assert!((got - exact).abs() < 1e-13, "n={n} deg={deg}");
            }
        }
    }
}
