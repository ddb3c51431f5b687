//! Plane polygon geometry: signed area, simplicity, distances and containment, the outline of
//! a widened trace segment, and the decomposition of a Manhattan polygon into rectangles.
//!
//! A polygon is a list of vertices, closed implicitly (edge `i` runs from vertex `i` to vertex
//! `i + 1 mod n`). Everything is general except the decomposition, which needs axis-aligned edges.

use crate::rect::Rect;

/// Signed area by the shoelace formula (elementary geometry): positive for counter-clockwise
/// vertex order. Coordinates are taken relative to the first vertex, which leaves the area
/// unchanged but avoids cancellation for a small polygon far from the origin.
pub(crate) fn signed_area(pts: &[[f64; 2]]) -> f64 {
    let n = pts.len();
    let Some(&[ox, oy]) = pts.first() else { return 0.0 };
    let mut twice = 0.0;
    for i in 0..n {
        let [x0, y0] = pts[i];
        let [x1, y1] = pts[(i + 1) % n];
        twice += (x0 - ox) * (y1 - oy) - (x1 - ox) * (y0 - oy);
    }
    0.5 * twice
}

/// Orientation of `c` relative to the directed line `a → b`: the cross product
/// `(b - a) × (c - a)` (positive when `c` is to the left).
fn orient(a: [f64; 2], b: [f64; 2], c: [f64; 2]) -> f64 {
    (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])
}

/// Whether `c`, known to be collinear with `a`–`b`, lies within their bounding box.
fn within(a: [f64; 2], b: [f64; 2], c: [f64; 2]) -> bool {
    a[0].min(b[0]) <= c[0] && c[0] <= a[0].max(b[0]) && a[1].min(b[1]) <= c[1] && c[1] <= a[1].max(b[1])
}

/// Whether the closed segments `p1–p2` and `q1–q2` have a point in common (the classical
/// orientation test of computational geometry, with the collinear cases).
pub(crate) fn segments_intersect(p1: [f64; 2], p2: [f64; 2], q1: [f64; 2], q2: [f64; 2]) -> bool {
    let d1 = orient(q1, q2, p1);
    let d2 = orient(q1, q2, p2);
    let d3 = orient(p1, p2, q1);
    let d4 = orient(p1, p2, q2);
    if ((d1 > 0.0 && d2 < 0.0) || (d1 < 0.0 && d2 > 0.0))
        && ((d3 > 0.0 && d4 < 0.0) || (d3 < 0.0 && d4 > 0.0))
    {
        return true;
    }
    (d1 == 0.0 && within(q1, q2, p1))
        || (d2 == 0.0 && within(q1, q2, p2))
        || (d3 == 0.0 && within(p1, p2, q1))
        || (d4 == 0.0 && within(p1, p2, q2))
}

/// The first pair of edges `(i, j)`, `i < j`, that makes the polygon non-simple: two
/// non-adjacent edges that meet, or two adjacent edges that fold back over each other.
/// `None` for a simple polygon. Assumes consecutive vertices are distinct.
pub(crate) fn self_intersection(pts: &[[f64; 2]]) -> Option<(usize, usize)> {
    let n = pts.len();
    let edge = |i: usize| (pts[i], pts[(i + 1) % n]);
    for i in 0..n {
        // Adjacent edges i and i+1 share vertex i+1; they overlap only when collinear and
        // pointing in opposite directions.
        let j = (i + 1) % n;
        let (a0, a1) = edge(i);
        let (_, b1) = edge(j);
        let da = [a1[0] - a0[0], a1[1] - a0[1]];
        let db = [b1[0] - a1[0], b1[1] - a1[1]];
        let cross = da[0] * db[1] - da[1] * db[0];
        let dot = da[0] * db[0] + da[1] * db[1];
        if n > 2 && cross == 0.0 && dot < 0.0 {
            return Some((i.min(j), i.max(j)));
        }
    }
    for i in 0..n {
        for j in i + 2..n {
            if i == 0 && j == n - 1 {
                continue; // adjacent through the closing vertex
            }
            let (p1, p2) = edge(i);
            let (q1, q2) = edge(j);
            if segments_intersect(p1, p2, q1, q2) {
                return Some((i, j));
            }
        }
    }
    None
}

/// Length of the boundary (sum of the edge lengths).
pub(crate) fn perimeter(pts: &[[f64; 2]]) -> f64 {
    let n = pts.len();
    (0..n).map(|i| dist(pts[i], pts[(i + 1) % n])).sum()
}

/// Euclidean distance between two points.
pub(crate) fn dist(a: [f64; 2], b: [f64; 2]) -> f64 {
    (b[0] - a[0]).hypot(b[1] - a[1])
}

/// The polygon with its vertices in counter-clockwise order (positive shoelace area).
pub(crate) fn counter_clockwise(mut pts: Vec<[f64; 2]>) -> Vec<[f64; 2]> {
    if signed_area(&pts) < 0.0 {
        pts.reverse();
    }
    pts
}

/// The four corners, counter-clockwise, of the rectangle covered by the segment `a–b` widened
/// to `width` and extended by `width/2` past both ends. `a ≠ b`.
pub(crate) fn widened_segment(a: [f64; 2], b: [f64; 2], width: f64) -> Vec<[f64; 2]> {
    let len = dist(a, b);
    let h = 0.5 * width;
    // Unit direction u and left normal n, scaled by the half width.
    let u = [h * (b[0] - a[0]) / len, h * (b[1] - a[1]) / len];
    let n = [-u[1], u[0]];
    vec![
        [a[0] - u[0] - n[0], a[1] - u[1] - n[1]],
        [b[0] + u[0] - n[0], b[1] + u[1] - n[1]],
        [b[0] + u[0] + n[0], b[1] + u[1] + n[1]],
        [a[0] - u[0] + n[0], a[1] - u[1] + n[1]],
    ]
}

/// Distance from point `p` to the closed segment `a–b`.
pub(crate) fn point_segment_distance(p: [f64; 2], a: [f64; 2], b: [f64; 2]) -> f64 {
    dist(p, nearest_on_segment(p, a, b))
}

/// The point of the closed segment `a–b` nearest to `p` (its orthogonal projection, clamped to
/// the ends). Axis-aligned segments give their own x (or y) exactly.
pub(crate) fn nearest_on_segment(p: [f64; 2], a: [f64; 2], b: [f64; 2]) -> [f64; 2] {
    let d = [b[0] - a[0], b[1] - a[1]];
    let len2 = d[0] * d[0] + d[1] * d[1];
    let t =
        if len2 > 0.0 { (((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1]) / len2).clamp(0.0, 1.0) } else { 0.0 };
    if t == 1.0 {
        return b;
    }
    [a[0] + t * d[0], a[1] + t * d[1]]
}

/// Distance between the closed segments `p1–p2` and `q1–q2`: zero when they meet, otherwise
/// attained at an endpoint of one of them.
pub(crate) fn segment_distance(p1: [f64; 2], p2: [f64; 2], q1: [f64; 2], q2: [f64; 2]) -> f64 {
    if segments_intersect(p1, p2, q1, q2) {
        return 0.0;
    }
    point_segment_distance(p1, q1, q2)
        .min(point_segment_distance(p2, q1, q2))
        .min(point_segment_distance(q1, p1, p2))
        .min(point_segment_distance(q2, p1, p2))
}

/// Whether `p` lies inside the polygon, by the even–odd crossing rule (a horizontal ray from
/// `p`); points on the boundary may go either way.
pub(crate) fn contains(pts: &[[f64; 2]], p: [f64; 2]) -> bool {
    let n = pts.len();
    let mut inside = false;
    for i in 0..n {
        let a = pts[i];
        let b = pts[(i + 1) % n];
        if (a[1] > p[1]) != (b[1] > p[1]) {
            let x = a[0] + (p[1] - a[1]) / (b[1] - a[1]) * (b[0] - a[0]);
            if p[0] < x {
                inside = !inside;
            }
        }
    }
    inside
}

/// Whether two simple polygons come within `tol` of each other (touch, overlap, or one
/// contains the other).
///
/// Either some edge of `a` is within `tol` of some edge of `b`, or the boundaries are apart
/// and then the interiors meet only if one polygon lies inside the other (a simple polygon's
/// boundary is connected), which a vertex of each, tested against the other, reveals.
pub(crate) fn polygons_touch(a: &[[f64; 2]], b: &[[f64; 2]], tol: f64) -> bool {
    let (na, nb) = (a.len(), b.len());
    for i in 0..na {
        let (p1, p2) = (a[i], a[(i + 1) % na]);
        for j in 0..nb {
            if segment_distance(p1, p2, b[j], b[(j + 1) % nb]) <= tol {
                return true;
            }
        }
    }
    (na > 0 && contains(b, a[0])) || (nb > 0 && contains(a, b[0]))
}

/// Index of the first edge that is not axis-aligned, if any.
pub(crate) fn first_oblique_edge(pts: &[[f64; 2]]) -> Option<usize> {
    let n = pts.len();
    (0..n).find(|&i| {
        let a = pts[i];
        let b = pts[(i + 1) % n];
        a[0] != b[0] && a[1] != b[1]
    })
}

/// Rectangles whose union is the interior of a simple polygon with axis-aligned edges.
///
/// The distinct vertex y coordinates cut the plane into horizontal slabs; within a slab the
/// vertical edges that span it, sorted by x, alternate between entering and leaving the
/// polygon (even–odd rule), so consecutive pairs bound the covered x-intervals.
pub(crate) fn manhattan_to_rects(pts: &[[f64; 2]]) -> Vec<Rect> {
    let n = pts.len();
    let mut ys: Vec<f64> = pts.iter().map(|p| p[1]).collect();
    ys.sort_by(f64::total_cmp);
    ys.dedup();
    // Vertical edges as (x, y_low, y_high).
    let verticals: Vec<(f64, f64, f64)> = (0..n)
        .filter_map(|i| {
            let a = pts[i];
            let b = pts[(i + 1) % n];
            (a[0] == b[0] && a[1] != b[1]).then(|| (a[0], a[1].min(b[1]), a[1].max(b[1])))
        })
        .collect();
    let mut rects = Vec::new();
    let mut xs = Vec::new();
    for w in ys.windows(2) {
        let (y0, y1) = (w[0], w[1]);
        let ym = 0.5 * (y0 + y1);
        xs.clear();
        xs.extend(verticals.iter().filter(|&&(_, lo, hi)| lo < ym && ym < hi).map(|&(x, _, _)| x));
        xs.sort_by(f64::total_cmp);
        for pair in xs.chunks_exact(2) {
            if pair[0] < pair[1] {
                rects.push(Rect { x0: pair[0], x1: pair[1], y0, y1 });
            }
        }
    }
    rects
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An L shape: the 3 × 1 bar plus the 1 × 2 leg on its left end.
    const L: [[f64; 2]; 6] = [[0.0, 0.0], [3.0, 0.0], [3.0, 1.0], [1.0, 1.0], [1.0, 3.0], [0.0, 3.0]];

    #[test]
    fn shoelace_area_of_l_shape() {
        // Elementary geometry: 3·1 + 1·2 = 5, counter-clockwise hence positive.
        assert_eq!(signed_area(&L), 5.0);
        let mut cw = L;
        cw.reverse();
        assert_eq!(signed_area(&cw), -5.0);
    }

    #[test]
    fn decomposition_covers_the_area() {
        let rects = manhattan_to_rects(&L);
        let area: f64 = rects.iter().map(Rect::area).sum();
        assert_eq!(area, 5.0);
        // Every rectangle is inside the L (its centre lies in the bar or the leg).
        for r in &rects {
            let [cx, cy] = r.center();
            assert!((cy < 1.0 && cx < 3.0) || (cx < 1.0 && cy < 3.0), "{r:?}");
        }
    }

    #[test]
    fn simplicity() {
        assert_eq!(self_intersection(&L), None);
        // Bow tie: edges 0 and 2 cross.
        let bow = [[0.0, 0.0], [2.0, 2.0], [2.0, 0.0], [0.0, 2.0]];
        assert_eq!(self_intersection(&bow), Some((0, 2)));
        // Figure eight made of two squares touching at a vertex (1, 1).
        let eight =
            [[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [2.0, 1.0], [2.0, 2.0], [1.0, 2.0], [1.0, 1.0], [0.0, 1.0]];
        assert!(self_intersection(&eight).is_some());
        // Folding back along a line.
        let fold = [[0.0, 0.0], [2.0, 0.0], [1.0, 0.0], [1.0, 1.0]];
        assert!(self_intersection(&fold).is_some());
        assert_eq!(first_oblique_edge(&L), None);
        assert_eq!(first_oblique_edge(&bow), Some(0));
    }

    #[test]
    fn widened_segment_is_a_counter_clockwise_rectangle() {
        // The 3-4-5 right triangle (elementary geometry): a segment of length 5, widened to 0.2
        // and extended by 0.1 at both ends, covers 5.2 × 0.2 = 1.04.
        let r = widened_segment([0.0, 0.0], [3.0, 4.0], 0.2);
        assert!((signed_area(&r) - 1.04).abs() < 1e-14, "{}", signed_area(&r));
        assert!((perimeter(&r) - 2.0 * (5.2 + 0.2)).abs() < 1e-13);
        assert!(contains(&r, [1.5, 2.0]) && !contains(&r, [2.0, 1.0]));
    }

    #[test]
    fn distances_and_touching() {
        // Pythagoras: from (3, 4) to the origin end of the x axis segment [−1, 0]..[0, 0] is 5.
        assert_eq!(point_segment_distance([3.0, 4.0], [-1.0, 0.0], [0.0, 0.0]), 5.0);
        assert_eq!(point_segment_distance([0.5, 2.0], [0.0, 0.0], [1.0, 0.0]), 2.0);
        assert_eq!(segment_distance([0.0, 0.0], [2.0, 2.0], [0.0, 2.0], [2.0, 0.0]), 0.0);
        assert_eq!(segment_distance([0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.0]), 1.0);
        let tri = counter_clockwise(vec![[0.0, 0.0], [0.0, 1.0], [1.0, 0.0]]);
        assert!(signed_area(&tri) > 0.0);
        // Touching along the hypotenuse x + y = 1, apart, and nested.
        let other = [[1.0, 0.0], [1.0, 1.0], [0.0, 1.0]];
        assert!(polygons_touch(&tri, &other, 0.0));
        let apart = [[1.0, 0.1], [1.0, 1.0], [0.1, 1.0]];
        assert!(!polygons_touch(&tri, &apart, 1e-9));
        assert!(polygons_touch(&tri, &apart, 0.1));
        let inner = [[0.1, 0.1], [0.3, 0.1], [0.1, 0.3]];
        assert!(polygons_touch(&tri, &inner, 0.0) && polygons_touch(&inner, &tri, 0.0));
    }
}
