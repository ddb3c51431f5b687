//! Green's functions of homogeneous media: free space, one ground plane, two ground planes.

use crate::panel::{inverse_distance, inverse_distance_exact};
use crate::quadrature::{panel_rule, rule_for};
use crate::{EPS0, GreenError, Panel, StaticGreen};
use std::f64::consts::PI;

fn check(eps_r: f64, accuracy: f64) -> Result<(), GreenError> {
    if !(eps_r.is_finite() && eps_r >= 1.0) {
        return Err(GreenError::BadPermittivity(eps_r));
    }
    if !(accuracy > 0.0 && accuracy < 1.0) {
        return Err(GreenError::BadAccuracy(accuracy));
    }
    Ok(())
}

#[inline]
fn dist(a: [f64; 3], b: [f64; 3]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

/// Quadrature orders for a panel seen from `obs`, when the point is far enough (see
/// [`order_for`]).
fn orders(obs: [f64; 3], panel: &Panel, accuracy: f64) -> Option<(usize, usize)> {
    rule_for(panel, panel.distance(obs), accuracy)
}

/// Unbounded homogeneous medium: `G = 1 / (4π ε0 εr R)`.
#[derive(Clone, Debug)]
pub struct FreeSpace {
    eps: f64,
    accuracy: f64,
}

impl FreeSpace {
    /// Medium of relative permittivity `eps_r`; panel integrals to relative `accuracy`.
    pub fn new(eps_r: f64, accuracy: f64) -> Result<Self, GreenError> {
        check(eps_r, accuracy)?;
        Ok(Self { eps: EPS0 * eps_r, accuracy })
    }
}

impl StaticGreen for FreeSpace {
    fn potential(&self, obs: [f64; 3], src: [f64; 3]) -> f64 {
        1.0 / (4.0 * PI * self.eps * dist(obs, src))
    }
    fn panel_potential(&self, obs: [f64; 3], panel: &Panel) -> f64 {
        inverse_distance(obs, panel, self.accuracy) / (4.0 * PI * self.eps * panel.area())
    }
    fn describe(&self) -> String {
        format!("homogeneous medium, εr = {}", self.eps / EPS0)
    }
}

/// Half space above a perfectly conducting plane `z = z_ground`, homogeneous medium:
/// `G = (1/(4πε)) (1/R − 1/R′)` with the image charge mirrored in the plane (method of images;
/// e.g. Jackson, *Classical Electrodynamics*, 3rd ed., §2.1).
#[derive(Clone, Debug)]
pub struct GroundBelow {
    eps: f64,
    z_ground: f64,
    accuracy: f64,
}

impl GroundBelow {
    /// Ground plane at `z_ground` (m) under a medium of relative permittivity `eps_r`.
    pub fn new(z_ground: f64, eps_r: f64, accuracy: f64) -> Result<Self, GreenError> {
        check(eps_r, accuracy)?;
        Ok(Self { eps: EPS0 * eps_r, z_ground, accuracy })
    }
    fn mirror(&self, z: f64) -> f64 {
        2.0 * self.z_ground - z
    }
}

impl StaticGreen for GroundBelow {
    fn potential(&self, obs: [f64; 3], src: [f64; 3]) -> f64 {
        let img = [src[0], src[1], self.mirror(src[2])];
        (1.0 / dist(obs, src) - 1.0 / dist(obs, img)) / (4.0 * PI * self.eps)
    }
    fn panel_potential(&self, obs: [f64; 3], panel: &Panel) -> f64 {
        let zi = self.mirror(panel.z());
        // Far: integrate the (smooth, dipole-like) difference kernel directly, so its relative
        // accuracy is that of the quadrature, not of two large cancelling terms.
        let integral = match orders(obs, panel, self.accuracy) {
            Some((nx, ny)) => {
                panel_rule(panel, nx, ny, |q| 1.0 / dist(obs, q) - 1.0 / dist(obs, [q[0], q[1], zi]))
            }
            None => inverse_distance_exact(obs, panel) - inverse_distance(obs, &panel.at(zi), self.accuracy),
        };
        integral / (4.0 * PI * self.eps * panel.area())
    }
    fn describe(&self) -> String {
        format!("ground plane at z = {} m (image), εr = {}", self.z_ground, self.eps / EPS0)
    }
}

/// Homogeneous medium between two perfectly conducting planes `z = z0` and `z = z0 + b`
/// (stripline). With `z, z′` measured from the lower plane and `ρ` the horizontal distance:
///
/// - near (`ρ < b/2`): the doubly infinite image series
///   `G = (1/4πε) Σ_n [1/√(ρ² + (z − z′ − 2nb)²) − 1/√(ρ² + (z + z′ − 2nb)²)]`, summed for
///   `|n| ≤ 12` with the remainder replaced by its integral (midpoint rule in `n`, which the
///   antiderivative `asinh` gives in closed form);
/// - far (`ρ ≥ b/2`): the modal series
///   `G = (1/(π ε b)) Σ_{m≥1} sin(mπz/b) sin(mπz′/b) K0(mπρ/b)`, which converges
///   exponentially there.
///
/// Both forms are standard (e.g. Collin, *Field Theory of Guided Waves*, 2nd ed., 1991, ch. 2
/// — from memory); their agreement at the switch is tested.
#[derive(Clone, Debug)]
pub struct TwoGrounds {
    eps: f64,
    z0: f64,
    b: f64,
    accuracy: f64,
}

/// Image pairs summed explicitly on each side in [`TwoGrounds`].
const IMAGES: i32 = 12;
/// `ρ/b` above which [`TwoGrounds`] uses the modal series.
const MODAL_FROM: f64 = 0.5;

impl TwoGrounds {
    /// Planes at `z0` and `z0 + b` (m), medium `eps_r`.
    pub fn new(z0: f64, b: f64, eps_r: f64, accuracy: f64) -> Result<Self, GreenError> {
        check(eps_r, accuracy)?;
        if !(b.is_finite() && b > 0.0) {
            return Err(GreenError::Geometry(format!("ground spacing must be positive (got {b} m)")));
        }
        Ok(Self { eps: EPS0 * eps_r, z0, b, accuracy })
    }

    /// Image series with the integral tail (see the type docs), times `4πε`.
    fn images_sum(&self, rho: f64, z: f64, zs: f64) -> f64 {
        self.images_explicit(rho, z, zs) + self.images_tails(rho, z, zs)
    }

    /// The images with `|n| > IMAGES`, times `4πε`: `Σ_{n>M} f(n) = ∫_T^∞ f dt + f′(T)/24 + …`,
    /// `T = M + ½` (Euler–Maclaurin for the midpoint rule). With `p = 2tb ∓ d`,
    /// `∫ dt/√(ρ² + p²) = asinh(p/ρ)/(2b)` and `d/dt (ρ² + p²)^(−½) = ∓2b p (ρ² + p²)^(−3/2)`.
    /// Finite for every `ρ ≥ 0`.
    fn images_tails(&self, rho: f64, z: f64, zs: f64) -> f64 {
        let b = self.b;
        let (d1, d2) = (z - zs, z + zs);
        let t = IMAGES as f64 + 0.5;
        let tail = |p2: f64, p1: f64| {
            let integral =
                ((p2 + (p2 * p2 + rho * rho).sqrt()) / (p1 + (p1 * p1 + rho * rho).sqrt())).ln() / (2.0 * b);
            let slope = |p: f64| -2.0 * b * p / (rho * rho + p * p).powf(1.5);
            integral + (slope(p1) - slope(p2)) / 24.0
        };
        tail(2.0 * t * b - d2, 2.0 * t * b - d1) + tail(2.0 * t * b + d2, 2.0 * t * b + d1)
    }

    /// Modal series, times `4πε`.
    fn modal_sum(&self, rho: f64, z: f64, zs: f64) -> f64 {
        let b = self.b;
        let mut s = 0.0;
        for m in 1..=2000 {
            let k = puruspe::bessel::Kn(0, m as f64 * PI * rho / b);
            s += ((m as f64) * PI * z / b).sin() * ((m as f64) * PI * zs / b).sin() * k;
            if k <= 1e-17 * s.abs() || k < 1e-300 {
                break;
            }
        }
        4.0 * s / b
    }

    fn sum(&self, obs: [f64; 3], src: [f64; 3]) -> f64 {
        let rho = ((obs[0] - src[0]).powi(2) + (obs[1] - src[1]).powi(2)).sqrt();
        let (z, zs) = (obs[2] - self.z0, src[2] - self.z0);
        if rho >= MODAL_FROM * self.b { self.modal_sum(rho, z, zs) } else { self.images_sum(rho, z, zs) }
    }
}

impl StaticGreen for TwoGrounds {
    fn potential(&self, obs: [f64; 3], src: [f64; 3]) -> f64 {
        self.sum(obs, src) / (4.0 * PI * self.eps)
    }

    fn panel_potential(&self, obs: [f64; 3], panel: &Panel) -> f64 {
        let integral = match orders(obs, panel, self.accuracy) {
            Some((nx, ny)) => panel_rule(panel, nx, ny, |q| self.sum(obs, q)),
            None => {
                // Near: every image panel integrated on its own (closed form where close), plus
                // the smooth tails at the panel centre.
                let (b, zs) = (self.b, panel.z() - self.z0);
                let mut s = inverse_distance_exact(obs, panel);
                for n in -IMAGES..=IMAGES {
                    let shift = 2.0 * n as f64 * b;
                    if n != 0 {
                        s += inverse_distance(obs, &panel.at(self.z0 + zs + shift), self.accuracy);
                    }
                    s -= inverse_distance(obs, &panel.at(self.z0 - zs + shift), self.accuracy);
                }
                let c = panel.center();
                let rho = ((obs[0] - c[0]).powi(2) + (obs[1] - c[1]).powi(2)).sqrt();
                let z = obs[2] - self.z0;
                s + self.images_tails(rho, z, zs) * panel.area()
            }
        };
        integral / (4.0 * PI * self.eps * panel.area())
    }

    fn describe(&self) -> String {
        format!("two ground planes {} m apart (images near, modes far), εr = {}", self.b, self.eps / EPS0)
    }
}

impl TwoGrounds {
    /// The explicit part of [`TwoGrounds::images_sum`] (without the tails).
    fn images_explicit(&self, rho: f64, z: f64, zs: f64) -> f64 {
        let (d1, d2) = (z - zs, z + zs);
        (-IMAGES..=IMAGES)
            .map(|n| {
                let shift = 2.0 * n as f64 * self.b;
                1.0 / (rho * rho + (d1 - shift).powi(2)).sqrt()
                    - 1.0 / (rho * rho + (d2 - shift).powi(2)).sqrt()
            })
            .sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Grounded half space, εr = 1, source and observer at height h: `4π ε0 h φ / q` from the
    /// table in the project's shared references (§5, εr = 1 row: 9.50062, 1.51493, 0.552786,
    /// 0.146447, 0.0143047 at ρ/h = 0.1, 0.5, 1, 2, 5), which is the image formula.
    #[test]
    fn ground_plane_matches_table() {
        let h = 1e-3;
        let g = GroundBelow::new(0.0, 1.0, 1e-8).unwrap();
        for (r, want) in [(0.1, 9.50062), (0.5, 1.51493), (1.0, 0.552786), (2.0, 0.146447), (5.0, 0.0143047)]
        {
            let got = 4.0 * PI * EPS0 * h * g.potential([r * h, 0.0, h], [0.0, 0.0, h]);
            assert!((got - want).abs() < 6e-6 * want, "ρ/h = {r}: {got} vs {want}");
        }
    }

    /// Between two grounds: `4π ε b φ / q` against the shared references' table (§5):
    /// (ρ/b, z/b, z′/b) = (0.1, 0.5, 0.5) → 8.62265; (0.5, 0.5, 0.5) → 0.801475;
    /// (1, 0.5, 0.5) → 0.118165; (0.5, 0.3, 0.6) → 0.528913; (2, 0.25, 0.25) → 0.00183806.
    #[test]
    fn stripline_matches_table_and_forms_agree() {
        let b = 2e-3;
        let g = TwoGrounds::new(0.0, b, 2.2, 1e-8).unwrap();
        let eps = EPS0 * 2.2;
        for (r, z, zs, want) in [
            (0.1, 0.5, 0.5, 8.62265),
            (0.5, 0.5, 0.5, 0.801475),
            (1.0, 0.5, 0.5, 0.118165),
            (0.5, 0.3, 0.6, 0.528913),
            (2.0, 0.25, 0.25, 0.00183806),
        ] {
            let got = 4.0 * PI * eps * b * g.potential([r * b, 0.0, z * b], [0.0, 0.0, zs * b]);
            assert!((got - want).abs() < 6e-6 * want, "({r}, {z}, {zs}): {got} vs {want}");
        }
        // Image and modal forms agree where both converge.
        for (r, z, zs) in [(0.3, 0.5, 0.5), (0.5, 0.2, 0.7), (0.8, 0.9, 0.1), (0.4, 0.5, 0.45)] {
            let img = g.images_sum(r * b, z * b, zs * b);
            let modal = g.modal_sum(r * b, z * b, zs * b);
            assert!((img - modal).abs() < 1e-7 * modal.abs(), "({r},{z},{zs}): {img} vs {modal}");
        }
    }

    /// Panel potentials agree with a fine quadrature of the point potential, near and far,
    /// for every medium (the near branch integrates the singular part in closed form).
    #[test]
    fn panel_potentials_match_fine_quadrature() {
        let b = 1e-3;
        let greens: Vec<Box<dyn StaticGreen>> = vec![
            Box::new(FreeSpace::new(1.0, 1e-7).unwrap()),
            Box::new(GroundBelow::new(0.0, 1.0, 1e-7).unwrap()),
            Box::new(TwoGrounds::new(0.0, b, 4.4, 1e-7).unwrap()),
        ];
        let panel = Panel::Rect { x0: 0.0, x1: 0.2e-3, y0: 0.0, y1: 0.05e-3, z: 0.5e-3 };
        for g in &greens {
            for obs in [[0.6e-3, 0.02e-3, 0.5e-3], [3e-3, 1e-3, 0.5e-3], [0.25e-3, 0.2e-3, 0.3e-3]] {
                let got = g.panel_potential(obs, &panel);
                let fine = crate::quadrature::panel_rule_subdivided(&panel, 24, 6, |q| g.potential(obs, q))
                    / panel.area();
                assert!((got - fine).abs() < 1e-6 * fine.abs(), "{}: {obs:?}: {got} vs {fine}", g.describe());
            }
        }
    }
}
