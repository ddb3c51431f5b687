//! The full-wave current basis: interior edge functions plus the port functions that feed them.
//!
//! Unknown `n` is the coefficient `I_n` (A/m) of a function `f_n` (dimensionless) whose normal
//! component is 1 along its edge, so `I_n l_n` amperes cross the edge. Three kinds:
//!
//! - **interior** — the rooftop/RWG function of [`crate::edges`], two halves;
//! - **ground feed** — one half on the panel behind a boundary edge where a port to a ground
//!   plane sits: current enters the conductor across that edge from the port's return
//!   (`∇·f = −l/A` on the panel, so the panel gains charge `I l/(jω)`); the return current and
//!   charge live on the ground, which the Green's function already holds (its images);
//! - **gap bridge** — a differential port between two nets facing each other across a narrow
//!   gap: one half leaves the reference net across its edge, one half enters the port's net
//!   across the facing edge, with equal edge lengths so that the current is conserved.
//!
//! A port covers the whole straight side of the conductor outline through its `at` point: every
//! boundary edge collinear with the one holding `at` and connected to it. A delta-gap voltage
//! `V` across the port tests as `V l_e` on each of its functions, and the port current is
//! `Σ_e l_e I_e` (flowing into the port's net), so with `u` the vector of those lengths
//! `Y = uᵀ Z⁻¹ u`.
//!
//! The feed's own vertical current (from the ground plane to the conductor edge) is not
//! modelled: the port is a gap source at the edge, and what it adds is part of the port
//! discontinuity.

use crate::edges::{EdgeBasis, Side, panel_edges};
use rafter_green::Panel;

/// One half (one panel) of a current function.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurrentHalf {
    /// Panel index.
    pub panel: usize,
    /// Panel area (m²).
    pub area: f64,
    /// Support geometry (see [`Side`]).
    pub side: Side,
    /// `+1` where the current leaves the panel across the edge, `−1` where it enters.
    pub sign: f64,
}

/// A basis function of the full-wave current: one or two halves sharing an edge length.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurrentFunction {
    /// Edge length `l` (m).
    pub length: f64,
    /// Face height (m).
    pub z: f64,
    /// Midpoint of the edge (m): the function's point for clustering.
    pub mid: [f64; 2],
    /// End points of the edge (m).
    pub ends: [[f64; 2]; 2],
    /// The halves; `halves[1]` is `None` for a ground feed.
    pub halves: [Option<CurrentHalf>; 2],
}

impl CurrentFunction {
    /// `f(r)` on half `h` at a point `r` of its panel: `± (l/2A)(r − p)` on a triangle with
    /// free vertex `p`, `± (l/A)((r − q)·n̂) n̂` on a rectangle.
    #[inline]
    pub fn value(&self, h: &CurrentHalf, r: [f64; 2]) -> [f64; 2] {
        match h.side {
            Side::Triangle { free } => {
                let c = h.sign * self.length / (2.0 * h.area);
                [c * (r[0] - free[0]), c * (r[1] - free[1])]
            }
            Side::Rect { base, normal } => {
                let d = (r[0] - base[0]) * normal[0] + (r[1] - base[1]) * normal[1];
                let c = h.sign * self.length / h.area * d;
                [c * normal[0], c * normal[1]]
            }
        }
    }

    /// `f` on half `h` as `M (r − o)`: the 2×2 matrix `M` (row-major) and the origin `o`.
    #[inline]
    pub fn linear(&self, h: &CurrentHalf) -> ([f64; 4], [f64; 2]) {
        match h.side {
            Side::Triangle { free } => {
                let c = h.sign * self.length / (2.0 * h.area);
                ([c, 0.0, 0.0, c], free)
            }
            Side::Rect { base, normal: n } => {
                let c = h.sign * self.length / h.area;
                ([c * n[0] * n[0], c * n[0] * n[1], c * n[1] * n[0], c * n[1] * n[1]], base)
            }
        }
    }

    /// `∫_panel ∇·f dA = ± l` on half `h` (m): the entry of the divergence matrix.
    #[inline]
    pub fn charge(&self, h: &CurrentHalf) -> f64 {
        h.sign * self.length
    }

    /// The halves present.
    pub fn iter(&self) -> impl Iterator<Item = &CurrentHalf> {
        self.halves.iter().flatten()
    }
}

/// Where a port's return current comes from.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum FeedReturn {
    /// A ground plane of the medium.
    Ground,
    /// Another net (index into the caller's nets), facing the port's edge across a gap.
    Net(usize),
}

/// A port as the basis builder needs it (lengths in metres).
#[derive(Clone, Debug, PartialEq)]
pub struct FeedSpec {
    /// Name (for messages).
    pub name: String,
    /// Net of the port.
    pub net: usize,
    /// Face height.
    pub z: f64,
    /// A point on the conductor edge.
    pub at: [f64; 2],
    /// Return side.
    pub to: FeedReturn,
    /// Distance within which `at` counts as on an edge (m).
    pub tolerance: f64,
}

/// The full-wave basis of a mesh: functions `0..interior` are the interior edge functions, the
/// rest feed the ports.
#[derive(Clone, Debug)]
pub struct CurrentBasis {
    /// All functions.
    pub functions: Vec<CurrentFunction>,
    /// Number of interior functions (they come first).
    pub interior: usize,
    /// Per port (in the order given): its functions (indices into `functions`).
    pub ports: Vec<Vec<usize>>,
}

/// Why a port cannot be fed.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum FeedError {
    /// No boundary edge of the port's net on its face passes within tolerance of `at`.
    #[error(
        "port '{port}': no conductor edge of its net at ({:.6e}, {:.6e}) m on the face at z = {z:.6e} m \
         (the mesh has no boundary edge there; put `at` on the outline of the conductor)",
        at[0], at[1]
    )]
    NoEdge {
        /// Port name.
        port: String,
        /// The point.
        at: [f64; 2],
        /// Face height.
        z: f64,
    },
    /// A differential port whose edge does not face an edge of the reference net.
    #[error(
        "port '{port}': the edge at ({:.6e}, {:.6e}) m has no matching edge of the reference net facing it \
         across a gap (a differential port joins two conductor sides that face each other, parallel, of \
         equal extent; mesh both sides alike)",
        at[0], at[1]
    )]
    NoFacingEdge {
        /// Port name.
        port: String,
        /// Midpoint of the unmatched edge (m).
        at: [f64; 2],
    },
    /// Two ports share a conductor edge.
    #[error("ports '{first}' and '{second}' feed the same conductor edge; give each port its own side")]
    Shared {
        /// First port.
        first: String,
        /// Second port.
        second: String,
    },
}

fn sub(a: [f64; 2], b: [f64; 2]) -> [f64; 2] {
    [a[0] - b[0], a[1] - b[1]]
}
fn dot(a: [f64; 2], b: [f64; 2]) -> f64 {
    a[0] * b[0] + a[1] * b[1]
}
fn norm(a: [f64; 2]) -> f64 {
    dot(a, a).sqrt()
}

/// Distance from `q` to the segment `ab`.
fn segment_distance(q: [f64; 2], [a, b]: [[f64; 2]; 2]) -> f64 {
    let e = sub(b, a);
    let len2 = dot(e, e);
    let t = if len2 > 0.0 { (dot(sub(q, a), e) / len2).clamp(0.0, 1.0) } else { 0.0 };
    norm(sub([a[0] + t * e[0], a[1] + t * e[1]], q))
}

/// The half of a function on `panel` behind its edge `ends` (`sign` as in [`CurrentHalf`]).
fn half_on(panels: &[Panel], panel: usize, ends: [[f64; 2]; 2], sign: f64) -> CurrentHalf {
    let same = |a: [f64; 2], b: [f64; 2]| a[0] == b[0] && a[1] == b[1];
    let side = panel_edges(&panels[panel])
        .into_iter()
        .find(|(e, _)| {
            (same(e[0], ends[0]) && same(e[1], ends[1])) || (same(e[0], ends[1]) && same(e[1], ends[0]))
        })
        .map(|(_, s)| s)
        .expect("a boundary edge is an edge of its panel");
    CurrentHalf { panel, area: panels[panel].area(), side, sign }
}

/// Builds the full-wave basis: the interior functions of `edges` and, per port of `feeds`, the
/// functions that feed it (see the module docs). `net_of[k]` is the net of panel `k`.
pub fn current_basis(
    panels: &[Panel],
    net_of: &[usize],
    edges: &EdgeBasis,
    feeds: &[FeedSpec],
) -> Result<CurrentBasis, FeedError> {
    let mut functions: Vec<CurrentFunction> = edges
        .functions
        .iter()
        .map(|f| CurrentFunction {
            length: f.length,
            z: f.z,
            mid: [0.5 * (f.ends[0][0] + f.ends[1][0]), 0.5 * (f.ends[0][1] + f.ends[1][1])],
            ends: f.ends,
            halves: [
                Some(CurrentHalf { panel: f.plus.panel, area: f.plus.area, side: f.plus.side, sign: 1.0 }),
                Some(CurrentHalf {
                    panel: f.minus.panel,
                    area: f.minus.area,
                    side: f.minus.side,
                    sign: -1.0,
                }),
            ],
        })
        .collect();
    let interior = functions.len();
    let mut owner: Vec<Option<usize>> = vec![None; edges.boundary.len()];
    let mut ports = Vec::with_capacity(feeds.len());
    for (pi, feed) in feeds.iter().enumerate() {
        let on_face = |b: &crate::edges::BoundaryEdge, net: usize| net_of[b.panel] == net && b.z == feed.z;
        // The boundary edge holding `at`.
        let start = edges
            .boundary
            .iter()
            .enumerate()
            .filter(|(_, b)| on_face(b, feed.net))
            .map(|(i, b)| (i, segment_distance(feed.at, b.ends)))
            .filter(|&(_, d)| d <= feed.tolerance)
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(i, _)| i)
            .ok_or_else(|| FeedError::NoEdge { port: feed.name.clone(), at: feed.at, z: feed.z })?;
        // Every boundary edge of the net on this face collinear with it and connected to it.
        let [a0, a1] = edges.boundary[start].ends;
        let dir = {
            let e = sub(a1, a0);
            let l = norm(e);
            [e[0] / l, e[1] / l]
        };
        let off_line = |q: [f64; 2]| (dir[0] * (q[1] - a0[1]) - dir[1] * (q[0] - a0[0])).abs();
        let line_tol = feed.tolerance.max(1e-9 * norm(sub(a1, a0)));
        let collinear: Vec<usize> = edges
            .boundary
            .iter()
            .enumerate()
            .filter(|(_, b)| {
                on_face(b, feed.net) && off_line(b.ends[0]) <= line_tol && off_line(b.ends[1]) <= line_tol
            })
            .map(|(i, _)| i)
            .collect();
        // Grow the connected run from `start` along the line.
        let pos = |q: [f64; 2]| dot(sub(q, a0), dir);
        let span = |i: usize| {
            let (s, t) = (pos(edges.boundary[i].ends[0]), pos(edges.boundary[i].ends[1]));
            (s.min(t), s.max(t))
        };
        let (mut lo, mut hi) = span(start);
        let mut run = vec![start];
        loop {
            let mut grew = false;
            for &i in &collinear {
                if run.contains(&i) {
                    continue;
                }
                let (s, t) = span(i);
                if (t - lo).abs() <= line_tol || (s - hi).abs() <= line_tol {
                    lo = lo.min(s);
                    hi = hi.max(t);
                    run.push(i);
                    grew = true;
                }
            }
            if !grew {
                break;
            }
        }
        run.sort_by(|&a, &b| span(a).0.total_cmp(&span(b).0));
        let mut mine = Vec::with_capacity(run.len());
        for &i in &run {
            if let Some(other) = owner[i] {
                return Err(FeedError::Shared {
                    first: feeds[other].name.clone(),
                    second: feed.name.clone(),
                });
            }
            owner[i] = Some(pi);
            let b = edges.boundary[i];
            let length = norm(sub(b.ends[1], b.ends[0]));
            let mid = [0.5 * (b.ends[0][0] + b.ends[1][0]), 0.5 * (b.ends[0][1] + b.ends[1][1])];
            let enter = half_on(panels, b.panel, b.ends, -1.0);
            let leave = match feed.to {
                FeedReturn::Ground => None,
                FeedReturn::Net(other) => {
                    // The facing edge: a boundary edge of the other net on this face, parallel,
                    // whose midpoint lies on the normal through this midpoint, nearest.
                    let facing = edges
                        .boundary
                        .iter()
                        .enumerate()
                        .filter(|(_, c)| on_face(c, other))
                        .filter(|(_, c)| {
                            let lc = norm(sub(c.ends[1], c.ends[0]));
                            let e = sub(c.ends[1], c.ends[0]);
                            let cross = (e[0] * dir[1] - e[1] * dir[0]).abs() / lc;
                            let m =
                                [0.5 * (c.ends[0][0] + c.ends[1][0]), 0.5 * (c.ends[0][1] + c.ends[1][1])];
                            cross <= 1e-9
                                && (lc - length).abs() <= 1e-6 * length
                                && (dot(sub(m, mid), dir)).abs() <= 1e-6 * length
                        })
                        .min_by(|x, y| {
                            let d = |c: &crate::edges::BoundaryEdge| {
                                norm(sub(
                                    [
                                        0.5 * (c.ends[0][0] + c.ends[1][0]),
                                        0.5 * (c.ends[0][1] + c.ends[1][1]),
                                    ],
                                    mid,
                                ))
                            };
                            d(x.1).total_cmp(&d(y.1))
                        })
                        .map(|(j, _)| j)
                        .ok_or(FeedError::NoFacingEdge { port: feed.name.clone(), at: mid })?;
                    if let Some(o) = owner[facing] {
                        return Err(FeedError::Shared {
                            first: feeds[o].name.clone(),
                            second: feed.name.clone(),
                        });
                    }
                    owner[facing] = Some(pi);
                    let c = edges.boundary[facing];
                    Some(half_on(panels, c.panel, c.ends, 1.0))
                }
            };
            mine.push(functions.len());
            functions.push(CurrentFunction {
                length,
                z: b.z,
                mid,
                ends: b.ends,
                halves: [Some(enter), leave],
            });
        }
        ports.push(mine);
    }
    Ok(CurrentBasis { functions, interior, ports })
}
