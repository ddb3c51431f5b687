//! The vertical current of ground feeds over one ground plane.
//!
//! A port to a ground plane drives current from the plane up to the conductor edge. Over a
//! single ground that short vertical current matters for the power balance: without it the
//! current distribution is not closed (current would appear at the conductor edge from
//! nowhere), and the computed port conductance of a weakly radiating structure can come out
//! negative — a non-passive result. Each ground-feed function therefore carries, besides its
//! half on the conductor, a vertical "wall": the rectangle below its edge from the ground plane
//! `z_g` up to the conductor face `z`, with uniform vertical current density equal to the
//! function's coefficient (the same `I l` amperes that cross the edge). The wall carries no
//! charge (its current is uniform; the charge stays on the conductor and, through the image,
//! on the ground).
//!
//! Vertical currents couple only to vertical currents (the vector potential of a perfectly
//! conducting plane's image is parallel to the source current), and the image of a vertical
//! current over a ground plane has the same sign, so a wall and its image form one wall of
//! height `2(z − z_g)` in the unbounded medium: the wall term of `A_mn` is
//! `∫_{W_m} ∫_{W_n ∪ W_n'} e^{−jkR}/(4πR) dA′ dA`, integrated like the horizontal panels
//! (closed-form static part plus Gauss rule for the bounded remainder when the walls share a
//! plane; product Gauss rules otherwise).
//!
//! Between two grounds the walls are not modelled: the closed guide does not radiate, its
//! kernel is real for lossless media, and the wall's reactance is part of the port
//! discontinuity that de-embedding removes.

use crate::current::CurrentBasis;
use num_complex::Complex64;
use rafter_green::Panel;
use rafter_green::panel::inverse_distance_exact;
use rafter_green::quadrature::panel_points;
use std::f64::consts::PI;

type C = Complex64;

/// One wall: the edge `a → b` (m) from the ground height `zg` up to the face `z`.
#[derive(Clone, Copy, Debug)]
struct Wall {
    a: [f64; 2],
    b: [f64; 2],
    zg: f64,
    z: f64,
}

/// The walls of the ground feeds of a basis over one ground plane (see the module docs).
pub struct FeedWalls {
    walls: Vec<Option<Wall>>,
    k: C,
}

impl FeedWalls {
    /// Walls for every single-half (ground feed) function of `basis`, over a ground at `zg`,
    /// in a medium of wavenumber `k`.
    pub fn new(basis: &CurrentBasis, zg: f64, k: C) -> Self {
        let walls = basis
            .functions
            .iter()
            .map(|f| {
                (f.halves[1].is_none() && f.z > zg).then_some(Wall { a: f.ends[0], b: f.ends[1], zg, z: f.z })
            })
            .collect();
        Self { walls, k }
    }

    /// `∫_{W_m} ∫_{W_n ∪ W_n'} G dA′ dA` (m³), zero unless both functions have walls.
    pub fn interaction(&self, m: usize, n: usize) -> C {
        let (Some(wm), Some(wn)) = (self.walls[m], self.walls[n]) else {
            return C::new(0.0, 0.0);
        };
        // Local frame of wall m: s along a → b, t = z, q = offset from m's plane.
        let (ex, ey) = (wm.b[0] - wm.a[0], wm.b[1] - wm.a[1]);
        let lm = ex.hypot(ey);
        let u = [ex / lm, ey / lm];
        let local = |p: [f64; 2]| {
            let (dx, dy) = (p[0] - wm.a[0], p[1] - wm.a[1]);
            (dx * u[0] + dy * u[1], dx * u[1] - dy * u[0])
        };
        let (sa, qa) = local(wn.a);
        let (sb, qb) = local(wn.b);
        let coplanar = qa.abs() <= 1e-9 * lm && qb.abs() <= 1e-9 * lm;
        let obs_panel = Panel::Rect { x0: 0.0, x1: lm, y0: wm.zg, y1: wm.z, z: 0.0 };
        let mut outer = Vec::new();
        panel_points(&obs_panel, 4, 4, &mut outer);
        let jk = C::new(0.0, 1.0) * self.k;
        let g_rem = |d: f64| {
            if d * self.k.norm() < 1e-6 { -jk / (4.0 * PI) } else { ((-jk * d).exp() - 1.0) / (4.0 * PI * d) }
        };
        let mut total = C::new(0.0, 0.0);
        if coplanar {
            let src =
                Panel::Rect { x0: sa.min(sb), x1: sa.max(sb), y0: 2.0 * wn.zg - wn.z, y1: wn.z, z: 0.0 };
            let mut inner = Vec::new();
            panel_points(&src, 4, 6, &mut inner);
            for &(r, w) in &outer {
                let mut s = C::new(inverse_distance_exact(r, &src) / (4.0 * PI), 0.0);
                for &(q, v) in &inner {
                    s += g_rem(((r[0] - q[0]).powi(2) + (r[1] - q[1]).powi(2)).sqrt()) * v;
                }
                total += s * w;
            }
        } else {
            // Different planes: product Gauss rules in 3-D (walls of different port sides).
            let src = Panel::Rect { x0: 0.0, x1: 1.0, y0: 2.0 * wn.zg - wn.z, y1: wn.z, z: 0.0 };
            let mut inner = Vec::new();
            panel_points(&src, 6, 6, &mut inner);
            let ln = (wn.b[0] - wn.a[0]).hypot(wn.b[1] - wn.a[1]);
            for &(r, w) in &outer {
                let pr = [wm.a[0] + r[0] * u[0], wm.a[1] + r[0] * u[1], r[1]];
                for &(q, v) in &inner {
                    let ps =
                        [wn.a[0] + q[0] * (wn.b[0] - wn.a[0]), wn.a[1] + q[0] * (wn.b[1] - wn.a[1]), q[1]];
                    let d =
                        ((pr[0] - ps[0]).powi(2) + (pr[1] - ps[1]).powi(2) + (pr[2] - ps[2]).powi(2)).sqrt();
                    total += (-jk * d).exp() / (4.0 * PI * d) * (w * v * ln);
                }
            }
        }
        total
    }
}
