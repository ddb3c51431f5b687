//! Meshing: the regions of every net cut into cells graded toward edges, rectangles for
//! Manhattan regions and triangles for the others.
//!
//! Manhattan region: the distinct x (resp. y) coordinates of its rectangles are the
//! breakpoints of that axis. Each interval between consecutive breakpoints is subdivided on
//! its own ([`subdivide`]): uniformly, or with `edge_refine` geometrically graded toward both
//! of its ends, where the surface charge of a thin conductor is singular. The cells are the
//! tensor-product cells lying inside the region's rectangles; since every rectangle edge is a
//! breakpoint, they tile the region exactly.
//!
//! Non-Manhattan region (an outline): a constrained Delaunay triangulation of the outline,
//! its boundary cut into segments of [`TRIANGLE_EDGE_FRACTION`]` · max_cell` (`max_cell`
//! without `edge_refine`), refined to a smallest angle of [`TRIANGLE_MIN_ANGLE_DEG`] and to
//! longest edges of at most `min(max_cell, edge + `[`TRIANGLE_GRADING`]` · distance from the
//! boundary)`. The triangles tile the outline exactly.

use crate::error::{Ctx, LayoutError, fmt_str};
use crate::layout::{Layout, MeshOptions};
use crate::net::Region;
use crate::rect::Rect;
use crate::triangulate::{self, TriangulateError};
use crate::units::format_in_units;

/// Largest number of cells [`mesh`] will produce.
pub const MAX_CELLS: usize = 2_000_000;

/// Largest ratio between the sizes of neighbouring graded cells.
pub const GROWTH_RATIO: f64 = 1.5;

/// Target size of the cell at an edge, as a fraction of `max_cell` (before the interval
/// length caps it at a fifth of the interval).
pub const EDGE_CELL_FRACTION: f64 = 1.0 / 8.0;

/// Slack when rounding a cell count up, so that an interval of exactly k·max_cell (up to
/// rounding) gets k cells rather than k + 1.
const COUNT_SLACK: f64 = 1e-9;

/// Length of the boundary segments of a triangle-meshed region, as a fraction of `max_cell`
/// (with `edge_refine`; the triangles along the boundary are about this size).
pub const TRIANGLE_EDGE_FRACTION: f64 = 0.15;

/// Growth of the triangle size target with the distance d from the region's boundary: the
/// longest edge of a triangle is at most `min(max_cell, edge + TRIANGLE_GRADING · d)`.
pub const TRIANGLE_GRADING: f64 = 0.5;

/// Smallest angle (degrees) the triangle refinement aims for (angles between input edges
/// smaller than this are kept as they are).
pub const TRIANGLE_MIN_ANGLE_DEG: f64 = 25.0;

/// The plane shape of a cell, in metres.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum CellShape {
    /// An axis-aligned rectangle.
    Rect(Rect),
    /// A triangle, vertices `[x, y]` in counter-clockwise order.
    Triangle([[f64; 2]; 3]),
}

impl CellShape {
    /// Area (m²).
    pub fn area(&self) -> f64 {
        match self {
            CellShape::Rect(r) => r.area(),
            CellShape::Triangle([a, b, c]) => {
                0.5 * ((b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]))
            }
        }
    }

    /// Area centroid `[x, y]` (m): the centre of a rectangle, the vertex mean of a triangle.
    pub fn centroid(&self) -> [f64; 2] {
        match self {
            CellShape::Rect(r) => r.center(),
            CellShape::Triangle([a, b, c]) => [(a[0] + b[0] + c[0]) / 3.0, (a[1] + b[1] + c[1]) / 3.0],
        }
    }
}

/// One mesh cell: a rectangle or triangle of conductor at height `z`, belonging to net `net`.
#[derive(Clone, Copy, Debug)]
pub struct Cell {
    /// Index of the net in [`Layout::nets`].
    pub net: usize,
    /// The cell's plane shape (m).
    pub shape: CellShape,
    /// Height of its face (m).
    pub z: f64,
}

impl Cell {
    /// Area (m²).
    pub fn area(&self) -> f64 {
        self.shape.area()
    }

    /// Area centroid `[x, y, z]` (m).
    pub fn centroid(&self) -> [f64; 3] {
        let [x, y] = self.shape.centroid();
        [x, y, self.z]
    }
}

/// The cells of all nets, ordered net by net.
#[derive(Clone, Debug)]
pub struct Mesh {
    /// Cells; those of net 0 first, then net 1, and so on.
    pub cells: Vec<Cell>,
    /// Number of cells of each net, indexed like [`Layout::nets`].
    pub cells_per_net: Vec<usize>,
}

impl Mesh {
    /// Area centroid `[x, y, z]` (m) of every cell, in cell order.
    pub fn centroids(&self) -> Vec<[f64; 3]> {
        self.cells.iter().map(Cell::centroid).collect()
    }

    /// Range of cell indices of net `net` (empty if out of range).
    pub fn net_range(&self, net: usize) -> std::ops::Range<usize> {
        let start: usize = self.cells_per_net.iter().take(net).sum();
        let len = self.cells_per_net.get(net).copied().unwrap_or(0);
        start..start + len
    }

    /// Total cell area (m²).
    pub fn area(&self) -> f64 {
        self.cells.iter().map(Cell::area).sum()
    }
}

/// Number of cells [`subdivide`] makes of an interval of length `len` (m); saturates at
/// `usize::MAX` for absurd inputs instead of failing.
fn interval_cells(len: f64, opts: MeshOptions) -> usize {
    let count = if opts.edge_refine {
        let g = Grading::new(len, opts.max_cell);
        (2.0 * g.phi(0.5 * len) - COUNT_SLACK).ceil()
    } else {
        (len / opts.max_cell - COUNT_SLACK).ceil()
    };
    if count.is_nan() || count >= usize::MAX as f64 { usize::MAX } else { (count as usize).max(1) }
}

/// Cell sizes growing linearly with the distance d from the nearest end, h(d) = h0 + g·d,
/// up to `max_cell`; g = ln(GROWTH_RATIO). Nodes are equally spaced in the stretched
/// coordinate φ(d) = ∫ dd / h(d), so neighbouring cells differ by the factor exp(g·Δφ) ≤
/// GROWTH_RATIO, and no cell exceeds max h = `max_cell` as long as Δφ ≤ 1.
struct Grading {
    h0: f64,
    g: f64,
    max_cell: f64,
    phi_star: f64,
    d_star: f64,
}

impl Grading {
    fn new(len: f64, max_cell: f64) -> Grading {
        let h0 = (max_cell * EDGE_CELL_FRACTION).min(len / 5.0);
        let g = GROWTH_RATIO.ln();
        Grading { h0, g, max_cell, phi_star: (max_cell / h0).ln() / g, d_star: (max_cell - h0) / g }
    }

    /// Stretched coordinate at distance `d` from the end.
    fn phi(&self, d: f64) -> f64 {
        if d <= self.d_star {
            (self.g * d / self.h0).ln_1p() / self.g
        } else {
            self.phi_star + (d - self.d_star) / self.max_cell
        }
    }

    /// Distance from the end at stretched coordinate `phi` (inverse of [`Grading::phi`]).
    fn dist(&self, phi: f64) -> f64 {
        if phi <= self.phi_star {
            self.h0 * (self.g * phi).exp_m1() / self.g
        } else {
            self.d_star + (phi - self.phi_star) * self.max_cell
        }
    }
}

/// Nodes `a = t0 < t1 < … < tn = b` cutting `[a, b]` into cells no longer than
/// `opts.max_cell` (to rounding): uniform, or with `opts.edge_refine` graded symmetrically
/// toward both ends, the end cells about `max_cell`/8 (at most a quarter of the interval) and
/// neighbours differing by at most [`GROWTH_RATIO`]. Same unit as `a`, `b` and `max_cell`.
/// Requires `a < b` and a positive `max_cell`; returns `[a, b]` otherwise.
pub fn subdivide(a: f64, b: f64, opts: MeshOptions) -> Vec<f64> {
    let len = b - a;
    if !(len > 0.0 && opts.max_cell > 0.0) {
        return vec![a, b];
    }
    let n = interval_cells(len, opts);
    let mut nodes = Vec::with_capacity(n.saturating_add(1));
    nodes.push(a);
    if opts.edge_refine {
        let g = Grading::new(len, opts.max_cell);
        let total = 2.0 * g.phi(0.5 * len);
        for k in 1..n {
            let phi = total * k as f64 / n as f64;
            let x = if 2.0 * phi <= total { a + g.dist(phi) } else { b - g.dist(total - phi) };
            nodes.push(x);
        }
    } else {
        for k in 1..n {
            nodes.push(a + len * k as f64 / n as f64);
        }
    }
    nodes.push(b);
    nodes
}

/// The breakpoints of one axis of a region and the cumulative cell counts at each.
struct Axis {
    breaks: Vec<f64>,
    /// `prefix[k]` = number of cells before breakpoint k.
    prefix: Vec<usize>,
}

impl Axis {
    fn new(mut breaks: Vec<f64>, opts: MeshOptions) -> Axis {
        breaks.sort_by(f64::total_cmp);
        breaks.dedup();
        let mut prefix = Vec::with_capacity(breaks.len());
        let mut sum = 0usize;
        prefix.push(0);
        for w in breaks.windows(2) {
            sum = sum.saturating_add(interval_cells(w[1] - w[0], opts));
            prefix.push(sum);
        }
        Axis { breaks, prefix }
    }

    /// Node index of breakpoint `v` (a rectangle coordinate of the region).
    fn node(&self, v: f64) -> usize {
        let k = self.breaks.binary_search_by(|p| p.total_cmp(&v)).unwrap_or_else(|k| k);
        self.prefix.get(k).copied().unwrap_or(0)
    }

    /// All nodes of the axis.
    fn nodes(&self, opts: MeshOptions) -> Vec<f64> {
        let mut nodes = Vec::with_capacity(self.prefix.last().map_or(1, |n| n.saturating_add(1)));
        if let Some(&first) = self.breaks.first() {
            nodes.push(first);
        }
        for w in self.breaks.windows(2) {
            nodes.extend_from_slice(&subdivide(w[0], w[1], opts)[1..]);
        }
        nodes
    }
}

/// The two axes of a region.
fn axes(region: &Region, opts: MeshOptions) -> (Axis, Axis) {
    let xs = region.rects.iter().flat_map(|r| [r.x0, r.x1]).collect();
    let ys = region.rects.iter().flat_map(|r| [r.y0, r.y1]).collect();
    (Axis::new(xs, opts), Axis::new(ys, opts))
}

fn region_cells(region: &Region, opts: MeshOptions) -> usize {
    if !region.is_manhattan() {
        return triangulate::estimate(&region.outline, opts);
    }
    let (ax, ay) = axes(region, opts);
    region.rects.iter().fold(0usize, |sum, r| {
        let nx = ax.node(r.x1).saturating_sub(ax.node(r.x0));
        let ny = ay.node(r.y1).saturating_sub(ay.node(r.y0));
        sum.saturating_add(nx.saturating_mul(ny))
    })
}

/// Number of cells [`mesh`] would make, without building any cell; saturates at `usize::MAX`.
///
/// Exact for Manhattan regions (computed from the 1-D cell counts). For triangle-meshed
/// regions it is an estimate from the region's area and perimeter and the size target (see
/// the module documentation), typically within 20 % of the actual count.
pub fn estimate_cells(layout: &Layout) -> usize {
    layout
        .nets
        .iter()
        .flat_map(|n| &n.regions)
        .fold(0usize, |sum, r| sum.saturating_add(region_cells(r, layout.mesh)))
}

/// Cuts every net of `layout` into cells (see the module documentation). Fails when
/// `mesh.max_cell` is not positive, when the mesh would exceed [`MAX_CELLS`] cells (as
/// estimated beforehand, or as found while triangulating), or when a region's outline cannot
/// be triangulated.
pub fn mesh(layout: &Layout) -> Result<Mesh, LayoutError> {
    let ctx = Ctx { file: &layout.file };
    let opts = layout.mesh;
    let shown = format_in_units(opts.max_cell, layout.unit_m);
    if !(opts.max_cell.is_finite() && opts.max_cell > 0.0) {
        return Err(ctx.invalid(
            "mesh.max_cell",
            shown,
            "must be positive and finite",
            "give the largest cell side",
        ));
    }
    let estimate = estimate_cells(layout);
    if estimate > MAX_CELLS {
        return Err(ctx.invalid(
            "mesh.max_cell",
            shown,
            format!("the mesh would have about {estimate} cells, more than the limit of {MAX_CELLS}"),
            "raise max_cell (the count grows as 1/max_cell^2), or set edge_refine = false",
        ));
    }
    let mut cells = Vec::with_capacity(estimate);
    let mut cells_per_net = Vec::with_capacity(layout.nets.len());
    for (i, net) in layout.nets.iter().enumerate() {
        let before = cells.len();
        for region in &net.regions {
            if region.is_manhattan() {
                rect_cells(region, i, opts, &mut cells);
                continue;
            }
            let budget = MAX_CELLS.saturating_sub(cells.len());
            let triangles = triangulate::triangulate(&region.outline, opts, budget).map_err(|e| {
                let at = format!("net {} on face {}", fmt_str(&net.name), fmt_str(&region.face));
                match e {
                    TriangulateError::TooMany => ctx.invalid(
                        "mesh.max_cell",
                        shown.clone(),
                        format!(
                            "the triangle mesh of {at} takes the mesh past the limit of {MAX_CELLS} cells \
                             (estimated {estimate} in all)"
                        ),
                        "raise max_cell (the count grows as 1/max_cell^2), or set edge_refine = false",
                    ),
                    TriangulateError::Crossing => ctx.invalid(
                        format!("net[{i}]"),
                        at,
                        "the outline of the merged shapes has edges that cross after rounding, so it cannot \
                         be triangulated",
                        "make parts of the net that nearly touch either overlap clearly or keep a clear gap",
                    ),
                    TriangulateError::Insertion(why) => ctx.invalid(
                        format!("net[{i}]"),
                        at,
                        format!("a point of the outline could not be triangulated ({why})"),
                        "check the coordinates for huge or tiny values",
                    ),
                    TriangulateError::Area(got, want) => ctx.invalid(
                        format!("net[{i}]"),
                        at,
                        format!("the triangles cover {got:e} m² instead of the outline's {want:e} m²"),
                        "this is a meshing failure; simplify the shapes near tight corners and report the layout",
                    ),
                }
            })?;
            cells.extend(triangles.into_iter().map(|t| Cell {
                net: i,
                shape: CellShape::Triangle(t),
                z: region.z,
            }));
        }
        cells_per_net.push(cells.len() - before);
    }
    Ok(Mesh { cells, cells_per_net })
}

/// Appends the rectangular cells of the Manhattan `region` of net `net`.
fn rect_cells(region: &Region, net: usize, opts: MeshOptions, cells: &mut Vec<Cell>) {
    let (ax, ay) = axes(region, opts);
    let (xn, yn) = (ax.nodes(opts), ay.nodes(opts));
    for r in &region.rects {
        let (i0, i1) = (ax.node(r.x0), ax.node(r.x1));
        let (j0, j1) = (ay.node(r.y0), ay.node(r.y1));
        for j in j0..j1.min(yn.len().saturating_sub(1)) {
            for k in i0..i1.min(xn.len().saturating_sub(1)) {
                let rect = Rect { x0: xn[k], x1: xn[k + 1], y0: yn[j], y1: yn[j + 1] };
                cells.push(Cell { net, shape: CellShape::Rect(rect), z: region.z });
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn opts(max_cell: f64, edge_refine: bool) -> MeshOptions {
        MeshOptions { max_cell, edge_refine }
    }

    fn sizes(nodes: &[f64]) -> Vec<f64> {
        nodes.windows(2).map(|w| w[1] - w[0]).collect()
    }

    #[test]
    fn uniform_subdivision() {
        let n = subdivide(0.0, 1.0, opts(0.25, false));
        assert_eq!(n.len(), 5, "1 / 0.25 = 4 cells exactly, no extra sliver");
        let n = subdivide(0.0, 1.0, opts(0.3, false));
        assert_eq!(n.len(), 5, "ceil(1 / 0.3) = 4 cells");
        assert!(sizes(&n).iter().all(|&h| (h - 0.25).abs() < 1e-15));
    }

    #[test]
    fn graded_subdivision_properties() {
        for &(len, max_cell) in &[(1.0, 0.05), (1.0, 0.3), (0.01, 0.05), (7.3, 0.11), (1e-3, 2e-5)] {
            let n = subdivide(2.0, 2.0 + len, opts(max_cell, true));
            let h = sizes(&n);
            assert_eq!(n[0], 2.0);
            assert_eq!(*n.last().unwrap(), 2.0 + len);
            assert!(h.iter().all(|&s| s > 0.0), "monotone nodes");
            let largest = h.iter().cloned().fold(0.0, f64::max);
            assert!(largest <= max_cell * (1.0 + 1e-8), "len {len}: largest {largest} > {max_cell}");
            // End cells: small, and symmetric.
            assert!(h[0] <= (max_cell / 4.0).min(len / 4.0), "len {len}: first cell {}", h[0]);
            assert!((h[0] - h[h.len() - 1]).abs() <= 1e-9 * len);
            for w in h.windows(2) {
                let ratio = (w[1] / w[0]).max(w[0] / w[1]);
                assert!(ratio <= GROWTH_RATIO * (1.0 + 1e-8), "len {len}: ratio {ratio}");
            }
        }
    }
}
