//! Triangle meshes of non-Manhattan regions, graded toward the region's edges.
//!
//! The boundary contours of the region are cut into segments no longer than the boundary
//! cell size `e` (`TRIANGLE_EDGE_FRACTION · max_cell` with `edge_refine`, `max_cell`
//! without) and inserted as constraint edges of a constrained Delaunay triangulation
//! (`spade`). Delaunay refinement (Ruppert's algorithm, as implemented by `spade`) then adds
//! points until every triangle inside the region has its smallest angle above
//! `TRIANGLE_MIN_ANGLE_DEG` and its area below that of the equilateral triangle of side
//! `max_cell`; triangles in holes and outside are excluded by `spade`'s even–odd flood fill
//! across the constraint edges. Finally, passes of longest-edge bisection (each followed by
//! the same refinement) enforce the size target: no triangle edge longer than
//! `min(max_cell, e + TRIANGLE_GRADING · d)`, with d the distance of the triangle's centroid
//! from the region's boundary (measured to the nearest boundary point, found in a bucket grid). Cells are thus about
//! `e` at the edges, where the charge density is singular, and grow linearly to `max_cell`
//! inside.
//!
//! The work is done in a local frame, (x − x_min)/max_cell, so that the triangulation sees
//! coordinates of order one whatever the units.

use std::collections::{HashMap, HashSet};

use spade::handles::{FixedFaceHandle, FixedVertexHandle, InnerTag};
use spade::{
    AngleLimit, ConstrainedDelaunayTriangulation, Point2, RefinementParameters, RefinementResult,
    Triangulation,
};

use crate::layout::MeshOptions;
use crate::mesh::{TRIANGLE_EDGE_FRACTION, TRIANGLE_GRADING, TRIANGLE_MIN_ANGLE_DEG};
use crate::polygon::{dist, perimeter, signed_area};

/// Mean triangle area divided by the square of the size target (longest-edge bound), as
/// measured on disks, squares and traces meshed by [`triangulate`]; used by [`estimate`].
const MEAN_AREA_OVER_SIZE2: f64 = 0.185;

/// Largest number of bisection passes; each pass at least halves the offending edges, so a
/// few more than log2(max_cell / e) are needed.
const MAX_PASSES: usize = 64;

/// Relative mismatch between the triangle areas and the outline's area beyond which the
/// triangulation is rejected (it would mean misclassified inside/outside triangles).
const AREA_CHECK: f64 = 1e-6;

/// Why a region could not be triangulated.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum TriangulateError {
    /// The mesh would exceed the number of cells allowed.
    TooMany,
    /// Boundary edges cross each other (after rounding), so inside and outside are ambiguous.
    Crossing,
    /// A coordinate could not be inserted (not finite or out of range).
    Insertion(String),
    /// The triangles do not cover the outline's area: `(covered, expected)`, in m².
    Area(f64, f64),
}

type Cdt = ConstrainedDelaunayTriangulation<Point2<f64>>;

/// Boundary cell size and grading rate in units of `max_cell`.
fn sizes(opts: MeshOptions) -> (f64, f64) {
    if opts.edge_refine { (TRIANGLE_EDGE_FRACTION, TRIANGLE_GRADING) } else { (1.0, f64::INFINITY) }
}

/// Number of triangles [`triangulate`] makes of `outline` (m), estimated from its area A and
/// perimeter P (not exact): with the size target s(d) = min(1, e + g·d) in units of
/// `max_cell`, the boundary band of depth d_max = min((1 − e)/g, A/P) holds about
/// ∫ P dd / (c·s²) = P/(c·g)·(1/e − 1/s(d_max)) triangles and the rest (A − P·d_max)/c, with c
/// the mean triangle area over s² ([`MEAN_AREA_OVER_SIZE2`]). Saturates at `usize::MAX`.
pub(crate) fn estimate(outline: &[Vec<[f64; 2]>], opts: MeshOptions) -> usize {
    let h = opts.max_cell;
    let a = outline.iter().map(|c| signed_area(c)).sum::<f64>().abs() / (h * h);
    let p = outline.iter().map(|c| perimeter(c)).sum::<f64>() / h;
    let c = MEAN_AREA_OVER_SIZE2;
    let (e, g) = sizes(opts);
    let count = if p.is_nan() || p <= 0.0 {
        0.0
    } else if g.is_finite() {
        let d_max = ((1.0 - e) / g).min(a / p);
        p / (c * g) * (1.0 / e - 1.0 / (e + g * d_max)) + (a - p * d_max).max(0.0) / c
    } else {
        a / c + p
    };
    if count.is_nan() || count >= usize::MAX as f64 { usize::MAX } else { count.ceil() as usize }
}

/// Counter-clockwise triangles (m) covering the region bounded by `outline` (closed contours,
/// outer ones counter-clockwise, holes clockwise; see the module documentation), at most
/// `max_cells` of them.
pub(crate) fn triangulate(
    outline: &[Vec<[f64; 2]>],
    opts: MeshOptions,
    max_cells: usize,
) -> Result<Vec<[[f64; 2]; 3]>, TriangulateError> {
    let h = opts.max_cell;
    let (e, g) = sizes(opts);
    let x0 = outline.iter().flatten().map(|p| p[0]).fold(f64::INFINITY, f64::min);
    let y0 = outline.iter().flatten().map(|p| p[1]).fold(f64::INFINITY, f64::min);
    let local = |p: [f64; 2]| [(p[0] - x0) / h, (p[1] - y0) / h];

    // Boundary points and constraint edges; points shared by two contours are merged.
    let boundary_points: f64 =
        outline.iter().flat_map(|c| edges_of(c)).map(|(a, b)| (dist(local(a), local(b)) / e).ceil()).sum();
    if boundary_points.is_nan() || boundary_points > max_cells as f64 {
        return Err(TriangulateError::TooMany);
    }
    let mut index: HashMap<(u64, u64), usize> = HashMap::new();
    let mut points: Vec<Point2<f64>> = Vec::with_capacity(boundary_points as usize);
    let mut edges: Vec<[usize; 2]> = Vec::with_capacity(boundary_points as usize);
    for contour in outline {
        let mut ids: Vec<usize> = Vec::new();
        for (a, b) in edges_of(contour) {
            let (a, b) = (local(a), local(b));
            let m = ((dist(a, b) / e).ceil() as usize).max(1);
            for j in 0..m {
                let t = j as f64 / m as f64;
                let p = spade::mitigate_underflow(Point2::new(
                    a[0] + t * (b[0] - a[0]),
                    a[1] + t * (b[1] - a[1]),
                ));
                let id = *index.entry((p.x.to_bits(), p.y.to_bits())).or_insert_with(|| {
                    points.push(p);
                    points.len() - 1
                });
                ids.push(id);
            }
        }
        let n = ids.len();
        edges.extend((0..n).map(|k| [ids[k], ids[(k + 1) % n]]).filter(|[i, j]| i != j));
    }
    let insertion = |err: spade::InsertionError| TriangulateError::Insertion(err.to_string());
    let mut conflicts = 0usize;
    let mut cdt = Cdt::try_bulk_load_cdt(points.clone(), edges, |_| conflicts += 1).map_err(insertion)?;
    if conflicts > 0 {
        return Err(TriangulateError::Crossing);
    }
    // Beyond the distance (1 − e)/g from the boundary the size target is max_cell.
    let nearest = g.is_finite().then(|| Buckets::new(&points, (1.0 - e) / g));

    // Vertices allowed: a triangulation with V vertices, B of them on the boundary, has about
    // 2V − B triangles (Euler's formula), so at most max_cells triangles need no more than
    // (max_cells + B)/2 vertices; the margin covers holes and points outside the region.
    let vertex_cap = (max_cells / 2).saturating_add(points.len()).saturating_add(64);
    let refine = |cdt: &mut Cdt| -> Result<HashSet<FixedFaceHandle<InnerTag>>, TriangulateError> {
        let params = RefinementParameters::<f64>::new()
            .exclude_outer_faces(true)
            .with_max_allowed_area(3f64.sqrt() / 4.0)
            .with_angle_limit(AngleLimit::from_deg(TRIANGLE_MIN_ANGLE_DEG))
            .with_max_additional_vertices(vertex_cap.saturating_sub(cdt.num_vertices()));
        let RefinementResult { excluded_faces, refinement_complete } = cdt.refine(params);
        if refinement_complete {
            Ok(excluded_faces.into_iter().collect())
        } else {
            Err(TriangulateError::TooMany)
        }
    };
    let mut excluded = refine(&mut cdt)?;
    for _ in 0..MAX_PASSES {
        let mut splits: Vec<(Point2<f64>, FixedVertexHandle)> = Vec::new();
        let mut seen: HashSet<(u64, u64)> = HashSet::new();
        for face in cdt.inner_faces().filter(|f| !excluded.contains(&f.fix())) {
            let p = face.positions();
            let (k, longest) = (0..3)
                .map(|k| (k, dist([p[k].x, p[k].y], [p[(k + 1) % 3].x, p[(k + 1) % 3].y])))
                .fold((0, 0.0), |best, cur| if cur.1 > best.1 { cur } else { best });
            let target = match &nearest {
                Some(b) => {
                    let c = [(p[0].x + p[1].x + p[2].x) / 3.0, (p[0].y + p[1].y + p[2].y) / 3.0];
                    (e + g * b.distance(c)).min(1.0)
                }
                None => 1.0,
            };
            if longest > target * (1.0 + 1e-9) {
                let (a, b) = (p[k], p[(k + 1) % 3]);
                let mid = Point2::new(0.5 * (a.x + b.x), 0.5 * (a.y + b.y));
                if seen.insert((mid.x.to_bits(), mid.y.to_bits())) {
                    splits.push((mid, face.vertices()[k].fix()));
                }
            }
        }
        if splits.is_empty() {
            break;
        }
        if cdt.num_vertices().saturating_add(splits.len()) > vertex_cap {
            return Err(TriangulateError::TooMany);
        }
        for (p, hint) in splits {
            cdt.insert_with_hint(p, hint).map_err(insertion)?;
        }
        excluded = refine(&mut cdt)?;
    }

    let mut triangles = Vec::with_capacity(cdt.num_inner_faces().saturating_sub(excluded.len()));
    let mut covered = 0.0;
    let global = |p: Point2<f64>| [x0 + p.x * h, y0 + p.y * h];
    for face in cdt.inner_faces().filter(|f| !excluded.contains(&f.fix())) {
        let [a, b, c] = face.positions().map(global);
        let t = if signed_area(&[a, b, c]) >= 0.0 { [a, b, c] } else { [a, c, b] };
        let area = signed_area(&t);
        if area > 0.0 {
            covered += area;
            triangles.push(t);
        }
    }
    if triangles.len() > max_cells {
        return Err(TriangulateError::TooMany);
    }
    let expected: f64 = outline.iter().map(|c| signed_area(c)).sum();
    let mismatch = (covered - expected).abs();
    if mismatch.is_nan() || mismatch > AREA_CHECK * expected.abs() {
        return Err(TriangulateError::Area(covered, expected));
    }
    Ok(triangles)
}

/// Boundary points bucketed on a square grid of side `reach`, for distances up to `reach`.
struct Buckets {
    reach: f64,
    cells: HashMap<(i64, i64), Vec<[f64; 2]>>,
}

impl Buckets {
    fn new(points: &[Point2<f64>], reach: f64) -> Buckets {
        let mut cells: HashMap<(i64, i64), Vec<[f64; 2]>> = HashMap::new();
        for p in points {
            let key = ((p.x / reach).floor() as i64, (p.y / reach).floor() as i64);
            cells.entry(key).or_default().push([p.x, p.y]);
        }
        Buckets { reach, cells }
    }

    /// Distance from `q` to the nearest boundary point, or `reach` if none is closer.
    fn distance(&self, q: [f64; 2]) -> f64 {
        let (i, j) = ((q[0] / self.reach).floor() as i64, (q[1] / self.reach).floor() as i64);
        let mut best = self.reach;
        for di in -1..=1 {
            for dj in -1..=1 {
                for &p in self.cells.get(&(i + di, j + dj)).into_iter().flatten() {
                    best = best.min(dist(p, q));
                }
            }
        }
        best
    }
}

/// The edges `(p_k, p_{k+1})` of a closed contour.
fn edges_of(c: &[[f64; 2]]) -> impl Iterator<Item = ([f64; 2], [f64; 2])> + '_ {
    (0..c.len()).map(move |k| (c[k], c[(k + 1) % c.len()]))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn square(side: f64) -> Vec<Vec<[f64; 2]>> {
        vec![vec![[0.0, 0.0], [side, 0.0], [side, side], [0.0, side]]]
    }

    #[test]
    fn uniform_square_is_tiled_with_short_edges() {
        let opts = MeshOptions { max_cell: 1.0, edge_refine: false };
        let t = triangulate(&square(4.0), opts, 10_000).unwrap();
        // The square's area, 16 (elementary geometry), is tiled exactly.
        let area: f64 = t.iter().map(|t| signed_area(t)).sum();
        assert!((area - 16.0).abs() < 1e-12, "{area}");
        for tri in &t {
            assert!(signed_area(tri) > 0.0);
            assert!((0..3).all(|k| dist(tri[k], tri[(k + 1) % 3]) <= 1.0 + 1e-9), "{tri:?}");
        }
        let estimate = estimate(&square(4.0), opts) as f64;
        assert!((0.75..1.33).contains(&(estimate / t.len() as f64)), "{estimate} vs {}", t.len());
    }

    #[test]
    fn cell_budget_is_enforced_while_refining() {
        let opts = MeshOptions { max_cell: 0.1, edge_refine: true };
        assert_eq!(triangulate(&square(1.0), opts, 100), Err(TriangulateError::TooMany));
        // The boundary alone (4 / 0.015 ≈ 267 points) exceeds a budget of 200.
        assert_eq!(triangulate(&square(1.0), opts, 200), Err(TriangulateError::TooMany));
        assert!(triangulate(&square(1.0), opts, 100_000).is_ok());
    }

    #[test]
    fn crossing_contours_are_refused() {
        // Two overlapping squares given as separate contours (not a union): their edges cross,
        // and the even–odd rule would leave their overlap out (area 1 + 1 − 2·0.25 = 1.5, not
        // the union's 1.75). Either the crossing or the area check refuses it.
        let mut outline = square(1.0);
        outline.push(vec![[0.5, 0.5], [1.5, 0.5], [1.5, 1.5], [0.5, 1.5]]);
        let opts = MeshOptions { max_cell: 0.5, edge_refine: false };
        let e = triangulate(&outline, opts, 10_000).expect_err("crossing contours");
        assert!(matches!(e, TriangulateError::Crossing | TriangulateError::Area(..)), "{e:?}");
    }
}
