//! Divergence-conforming current basis on a panel mesh: one function per interior edge.
//!
//! Every edge shared by exactly two panels of the same net on the same face carries one basis
//! function — a rooftop on rectangles, the Rao–Wilton–Glisson function on triangles (S. M. Rao,
//! D. R. Wilton and A. W. Glisson, "Electromagnetic scattering by surfaces of arbitrary shape",
//! IEEE Trans. Antennas Propag. 30(3), 1982) — normalised so that the current density crossing
//! the edge has unit normal component everywhere along it:
//!
//! - on a triangle `T` of area `A` with the edge of length `l` opposite vertex `p`:
//!   `f(r) = ±(l / 2A)(r − p)`;
//! - on a rectangle of area `A` with the edge of length `l` and `q` a point of the opposite
//!   side, `n̂` the unit normal of the edge: `f(r) = ±(l / A)((r − q)·n̂) n̂`;
//!
//! with `+` on the panel the current leaves (`T⁺`) and `−` on the one it enters. In both cases
//! `∇·f = ±l/A` is constant on each panel, so the charge of a basis function is `+l` on `T⁺`
//! and `−l` on `T⁻` (divided by `−jω`): the pulse-charge unknowns of the electrostatic job are
//! exactly the divergences of these currents. The meshes of `rafter_layout` are conforming
//! within one net and face (tensor grids for Manhattan regions, constrained Delaunay
//! triangulations otherwise), so every interior edge is shared whole by its two panels. An edge
//! seen by more than two panels (overlapping panels) is reported as an error. A T-junction (an
//! edge of one panel spanning two edges of its neighbours) is *not* detected here: its pieces
//! would count as boundary edges; the layout meshes have none.
//!
//! Edges on the boundary of a net's conductor carry no basis function (the normal current
//! vanishes there); ports attach to them.

use rafter_green::Panel;
use std::collections::HashMap;

/// How a panel supports one side of an edge function.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Side {
    /// Triangle: the vertex opposite the edge (m).
    Triangle {
        /// Opposite vertex `p`.
        free: [f64; 2],
    },
    /// Rectangle: a point `q` of the side opposite the edge and the edge's unit normal `n̂`
    /// pointing from `q` toward the edge.
    Rect {
        /// Point of the opposite side.
        base: [f64; 2],
        /// Unit normal of the edge, pointing away from `base`.
        normal: [f64; 2],
    },
}

/// One half (one panel) of an edge function.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Half {
    /// Panel index.
    pub panel: usize,
    /// Panel area (m²).
    pub area: f64,
    /// Support geometry.
    pub side: Side,
}

/// A basis function on an interior edge (see the module docs).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EdgeFunction {
    /// End points of the edge (m).
    pub ends: [[f64; 2]; 2],
    /// Height of the face (m).
    pub z: f64,
    /// Edge length `l` (m).
    pub length: f64,
    /// The panel the current leaves (`+`).
    pub plus: Half,
    /// The panel the current enters (`−`).
    pub minus: Half,
}

impl EdgeFunction {
    /// `f(r)` (dimensionless: current density per unit edge current) on the `plus` (`true`)
    /// or `minus` half, at a point `r` of that panel.
    pub fn value(&self, plus: bool, r: [f64; 2]) -> [f64; 2] {
        let (h, s) = if plus { (&self.plus, 1.0) } else { (&self.minus, -1.0) };
        match h.side {
            Side::Triangle { free } => {
                let c = s * self.length / (2.0 * h.area);
                [c * (r[0] - free[0]), c * (r[1] - free[1])]
            }
            Side::Rect { base, normal } => {
                let d = (r[0] - base[0]) * normal[0] + (r[1] - base[1]) * normal[1];
                let c = s * self.length / h.area * d;
                [c * normal[0], c * normal[1]]
            }
        }
    }

    /// `∇·f` on the `plus` or `minus` half (1/m): `±l/A`.
    pub fn divergence(&self, plus: bool) -> f64 {
        if plus { self.length / self.plus.area } else { -self.length / self.minus.area }
    }
}

/// An edge on the boundary of a net's conductor: one panel, no basis function.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BoundaryEdge {
    /// The panel.
    pub panel: usize,
    /// End points (m).
    pub ends: [[f64; 2]; 2],
    /// Height of the face (m).
    pub z: f64,
}

/// The edge functions and boundary edges of a mesh.
#[derive(Clone, Debug, Default)]
pub struct EdgeBasis {
    /// One per interior edge.
    pub functions: Vec<EdgeFunction>,
    /// The conductors' boundary edges.
    pub boundary: Vec<BoundaryEdge>,
}

/// Why a mesh has no edge basis.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum EdgeError {
    /// `panels` and `net_of` differ in length.
    #[error("{panels} panels but {nets} net assignments")]
    Lengths {
        /// Panels.
        panels: usize,
        /// Net assignments.
        nets: usize,
    },
    /// An edge is shared by more than two panels (overlapping panels).
    #[error(
        "the edge from ({:.6e}, {:.6e}) to ({:.6e}, {:.6e}) m at z = {z:.6e} m is shared by {count} panels \
         (a conforming mesh shares each interior edge between exactly two)",
        ends[0][0], ends[0][1], ends[1][0], ends[1][1]
    )]
    NotConforming {
        /// End points.
        ends: [[f64; 2]; 2],
        /// Height.
        z: f64,
        /// Panels that have it.
        count: usize,
    },
}

/// The edges of a panel, each with the support of an edge function on that panel.
pub(crate) fn panel_edges(p: &Panel) -> Vec<([[f64; 2]; 2], Side)> {
    match *p {
        Panel::Triangle { v, .. } => {
            (0..3).map(|i| ([v[(i + 1) % 3], v[(i + 2) % 3]], Side::Triangle { free: v[i] })).collect()
        }
        Panel::Rect { x0, x1, y0, y1, .. } => vec![
            ([[x0, y0], [x1, y0]], Side::Rect { base: [x0, y1], normal: [0.0, -1.0] }),
            ([[x1, y0], [x1, y1]], Side::Rect { base: [x0, y0], normal: [1.0, 0.0] }),
            ([[x1, y1], [x0, y1]], Side::Rect { base: [x0, y0], normal: [0.0, 1.0] }),
            ([[x0, y1], [x0, y0]], Side::Rect { base: [x1, y0], normal: [-1.0, 0.0] }),
        ],
    }
}

/// Exact key of an undirected edge on a face of a net (mesh vertices are shared bit for bit).
fn key(net: usize, z: f64, [a, b]: [[f64; 2]; 2]) -> (usize, u64, [u64; 4]) {
    let (p, q) = if (a[0], a[1]) <= (b[0], b[1]) { (a, b) } else { (b, a) };
    (net, z.to_bits(), [p[0].to_bits(), p[1].to_bits(), q[0].to_bits(), q[1].to_bits()])
}

/// The edge basis of `panels` (`net_of[k]` the net of panel `k`): one function per edge shared
/// by two panels of one net on one face, in a deterministic order (first panel, then its edge
/// order); boundary edges likewise.
pub fn edge_basis(panels: &[Panel], net_of: &[usize]) -> Result<EdgeBasis, EdgeError> {
    if panels.len() != net_of.len() {
        return Err(EdgeError::Lengths { panels: panels.len(), nets: net_of.len() });
    }
    type Key = (usize, u64, [u64; 4]);
    type Sides = Vec<(usize, [[f64; 2]; 2], Side)>;
    let mut seen: HashMap<Key, Sides> = HashMap::new();
    let mut order: Vec<Key> = Vec::new();
    for (k, p) in panels.iter().enumerate() {
        for (ends, side) in panel_edges(p) {
            let key = key(net_of[k], p.z(), ends);
            let e = seen.entry(key).or_default();
            if e.is_empty() {
                order.push(key);
            }
            e.push((k, ends, side));
        }
    }
    let mut basis = EdgeBasis::default();
    for key in order {
        let sides = &seen[&key];
        let (k0, ends, s0) = sides[0];
        let z = panels[k0].z();
        match sides.len() {
            1 => basis.boundary.push(BoundaryEdge { panel: k0, ends, z }),
            2 => {
                let (k1, _, s1) = sides[1];
                let length = ((ends[1][0] - ends[0][0]).powi(2) + (ends[1][1] - ends[0][1]).powi(2)).sqrt();
                basis.functions.push(EdgeFunction {
                    ends,
                    z,
                    length,
                    plus: Half { panel: k0, area: panels[k0].area(), side: s0 },
                    minus: Half { panel: k1, area: panels[k1].area(), side: s1 },
                });
            }
            count => return Err(EdgeError::NotConforming { ends, z, count }),
        }
    }
    Ok(basis)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid(m: usize, n: usize) -> Vec<Panel> {
        let xs: Vec<f64> = (0..=m).map(|i| (i as f64).powf(1.3) * 1e-4).collect();
        let ys: Vec<f64> = (0..=n).map(|j| j as f64 * 0.7e-4).collect();
        let mut p = Vec::new();
        for i in 0..m {
            for j in 0..n {
                p.push(Panel::Rect { x0: xs[i], x1: xs[i + 1], y0: ys[j], y1: ys[j + 1], z: 1e-4 });
            }
        }
        p
    }

    /// Normal component of `f` across its edge at a point `t` along it, from one half.
    fn normal_flux(f: &EdgeFunction, plus: bool, t: f64) -> f64 {
        let [a, b] = f.ends;
        let r = [a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])];
        // Unit normal pointing from the plus panel's interior across the edge.
        let c = match f.plus.side {
            Side::Triangle { free } => free,
            Side::Rect { base, .. } => base,
        };
        let (ex, ey) = ((b[0] - a[0]) / f.length, (b[1] - a[1]) / f.length);
        let mut n = [ey, -ex];
        if (c[0] - a[0]) * n[0] + (c[1] - a[1]) * n[1] > 0.0 {
            n = [-n[0], -n[1]];
        }
        let v = f.value(plus, r);
        v[0] * n[0] + v[1] * n[1]
    }

    /// An m × n grid: (m−1)n + m(n−1) interior edges and 2(m + n) boundary edges (counting);
    /// every function has unit normal flux density across its edge from both sides
    /// (continuity, the defining property) and charges ±l.
    #[test]
    fn rooftops_on_a_graded_grid() {
        let (m, n) = (5, 3);
        let p = grid(m, n);
        let b = edge_basis(&p, &vec![0; p.len()]).unwrap();
        assert_eq!(b.functions.len(), (m - 1) * n + m * (n - 1));
        assert_eq!(b.boundary.len(), 2 * (m + n));
        for f in &b.functions {
            for t in [0.0, 0.3, 1.0] {
                assert!((normal_flux(f, true, t) - 1.0).abs() < 1e-12);
                assert!((normal_flux(f, false, t) - 1.0).abs() < 1e-12);
            }
            assert!((f.divergence(true) * f.plus.area - f.length).abs() < 1e-12 * f.length);
            assert!((f.divergence(false) * f.minus.area + f.length).abs() < 1e-12 * f.length);
        }
    }

    /// Triangles: a square cut into 2k² triangles: interior edges by Euler's formula
    /// (E_int = (3F − E_boundary)/2), unit normal flux from both sides, and the divergence
    /// theorem on each half (∫∇·f = flux through the edge = l) by a one-point rule (f is
    /// linear, ∇·f constant).
    #[test]
    fn rwg_on_a_triangulated_square() {
        let k = 4;
        let h = 1e-4;
        let mut p = Vec::new();
        for i in 0..k {
            for j in 0..k {
                let (x, y) = (i as f64 * h, j as f64 * h);
                p.push(Panel::Triangle { v: [[x, y], [x + h, y], [x + h, y + h]], z: 0.0 });
                p.push(Panel::Triangle { v: [[x, y], [x + h, y + h], [x, y + h]], z: 0.0 });
            }
        }
        let b = edge_basis(&p, &vec![0; p.len()]).unwrap();
        assert_eq!(b.boundary.len(), 4 * k);
        assert_eq!(b.functions.len(), (3 * p.len() - 4 * k) / 2);
        for f in &b.functions {
            for t in [0.0, 0.5, 1.0] {
                assert!((normal_flux(f, true, t) - 1.0).abs() < 1e-9, "{f:?}");
                assert!((normal_flux(f, false, t) - 1.0).abs() < 1e-9);
            }
        }
    }

    /// Panels of different nets or faces never share a function; overlapping panels are
    /// refused.
    #[test]
    fn nets_faces_and_non_conforming_meshes() {
        let a = Panel::Rect { x0: 0.0, x1: 1.0, y0: 0.0, y1: 1.0, z: 0.0 };
        let b = Panel::Rect { x0: 1.0, x1: 2.0, y0: 0.0, y1: 1.0, z: 0.0 };
        assert_eq!(edge_basis(&[a, b], &[0, 0]).unwrap().functions.len(), 1);
        assert_eq!(edge_basis(&[a, b], &[0, 1]).unwrap().functions.len(), 0);
        let b_up = Panel::Rect { x0: 1.0, x1: 2.0, y0: 0.0, y1: 1.0, z: 1.0 };
        assert_eq!(edge_basis(&[a, b_up], &[0, 0]).unwrap().functions.len(), 0);
        let e = edge_basis(&[a, b, b], &[0, 0, 0]).unwrap_err();
        assert!(matches!(e, EdgeError::NotConforming { count: 3, .. }), "{e}");
        assert!(matches!(edge_basis(&[a], &[]), Err(EdgeError::Lengths { .. })));
    }
}
