//! Union of possibly overlapping rectangles into non-overlapping ones, union of polygons into
//! boundary contours, and snapping of nearly equal coordinates.

use std::collections::HashMap;

use i_overlay::core::fill_rule::FillRule;
use i_overlay::core::overlay_rule::OverlayRule;
use i_overlay::float::overlay::FloatOverlay;

use crate::polygon::{perimeter, point_segment_distance, signed_area};
use crate::rect::Rect;

/// Relative tolerance below which two coordinates of one face count as the same line.
///
/// Coordinates computed as, e.g., `10 + 0.15/2` and written as `10.075` differ by one rounding
/// error; left apart they would create sliver cells. The tolerance is relative to the largest
/// of the face's extent and coordinate magnitude.
pub const SNAP_RELATIVE: f64 = 1e-9;

/// Maps each coordinate to the first of a run of sorted coordinates that lie within a tolerance
/// of their predecessor.
#[derive(Debug)]
pub(crate) struct Snapper {
    values: Vec<f64>,
    snapped: Vec<f64>,
}

impl Snapper {
    /// Builds the map over `values` (any order, finite) with absolute tolerance `tol`.
    pub fn new(mut values: Vec<f64>, tol: f64) -> Snapper {
        values.sort_by(f64::total_cmp);
        values.dedup();
        let mut snapped = Vec::with_capacity(values.len());
        for (i, &v) in values.iter().enumerate() {
            if i > 0 && v - values[i - 1] <= tol {
                let rep = snapped[i - 1];
                snapped.push(rep);
            } else {
                snapped.push(v);
            }
        }
        Snapper { values, snapped }
    }

    /// The representative of `v` (`v` itself if it was not among the values).
    pub fn snap(&self, v: f64) -> f64 {
        match self.values.binary_search_by(|p| p.total_cmp(&v)) {
            Ok(i) => self.snapped[i],
            Err(_) => v,
        }
    }
}

/// Snaps the x and y coordinates of all `rects` (one face, all nets); see [`snap_face`].
#[cfg(test)]
pub(crate) fn snap_rects(rects: &mut [Rect]) {
    snap_face(rects, &mut []);
}

/// Snaps the x and y coordinates of all `rects` and polygon vertices `polys` (one face, all
/// nets) with tolerance [`SNAP_RELATIVE`] times the largest of the extent and the coordinate
/// magnitudes, and returns that tolerance (0 when there is nothing to snap). A rectangle may
/// become degenerate (zero width) if it was thinner than the tolerance.
pub(crate) fn snap_face(rects: &mut [Rect], polys: &mut [Vec<[f64; 2]>]) -> f64 {
    let xs = || rects.iter().flat_map(|r| [r.x0, r.x1]).chain(polys.iter().flatten().map(|p| p[0]));
    let ys = || rects.iter().flat_map(|r| [r.y0, r.y1]).chain(polys.iter().flatten().map(|p| p[1]));
    let (mut lo, mut hi, mut mag) = (f64::INFINITY, f64::NEG_INFINITY, 0.0f64);
    for v in xs().chain(ys()) {
        lo = lo.min(v);
        hi = hi.max(v);
        mag = mag.max(v.abs());
    }
    if lo > hi {
        return 0.0;
    }
    let tol = SNAP_RELATIVE * (hi - lo).max(mag);
    let sx = Snapper::new(xs().collect(), tol);
    let sy = Snapper::new(ys().collect(), tol);
    for r in rects.iter_mut() {
        *r = Rect { x0: sx.snap(r.x0), x1: sx.snap(r.x1), y0: sy.snap(r.y0), y1: sy.snap(r.y1) };
    }
    for p in polys.iter_mut().flatten() {
        *p = [sx.snap(p[0]), sy.snap(p[1])];
    }
    tol
}

/// Boundary contours of the union of the polygons `polys` (each simple and
/// counter-clockwise): outer boundaries counter-clockwise, holes clockwise, so that the
/// shoelace areas of all contours add up to the area of the union.
///
/// The union is computed by `i_overlay` on a 64-bit integer grid about 2⁻⁶⁰ of the extent
/// fine, so its vertices are the input vertices and edge crossings up to rounding. Vertices
/// closer than `tol` to the chord joining their neighbours are then dropped (this removes the
/// near-collinear joints and notches left by rounding), and so are contours left thinner than
/// `tol` (area at most `tol` times the perimeter).
pub(crate) fn union_polygons(polys: &[Vec<[f64; 2]>], tol: f64) -> Vec<Vec<[f64; 2]>> {
    if polys.is_empty() {
        return Vec::new();
    }
    let shapes =
        FloatOverlay::<[f64; 2], i64>::from_subj(polys).overlay(OverlayRule::Subject, FillRule::NonZero);
    shapes
        .into_iter()
        .flatten()
        .map(|c| simplify(c, tol))
        .filter(|c| c.len() >= 3 && signed_area(c).abs() > tol * perimeter(c))
        .collect()
}

/// Drops, pass after pass, the vertices within `tol` of the chord joining their neighbours
/// (never two neighbours in one pass), until none is left or fewer than 3 vertices remain.
fn simplify(mut pts: Vec<[f64; 2]>, tol: f64) -> Vec<[f64; 2]> {
    loop {
        let n = pts.len();
        if n < 3 {
            return pts;
        }
        let mut drop = vec![false; n];
        let mut any = false;
        for i in 0..n {
            let prev = (i + n - 1) % n;
            if drop[prev] || (i == n - 1 && drop[0]) {
                continue;
            }
            if point_segment_distance(pts[i], pts[prev], pts[(i + 1) % n]) <= tol {
                drop[i] = true;
                any = true;
            }
        }
        if !any {
            return pts;
        }
        let mut k = 0;
        pts.retain(|_| {
            k += 1;
            !drop[k - 1]
        });
    }
}

/// Non-overlapping rectangles whose union equals the union of `rects` (which may overlap).
///
/// The distinct y coordinates cut the plane into slabs; in each slab the x-intervals of the
/// rectangles spanning it are merged. A slab's interval continues the rectangle of the slab
/// below when both x ends agree, so a plain rectangle comes out as one piece. Rectangles with
/// non-positive extent are ignored. The output is ordered by `y0`, then `x0`.
pub fn union(rects: &[Rect]) -> Vec<Rect> {
    let rects: Vec<Rect> = rects.iter().copied().filter(|r| r.x0 < r.x1 && r.y0 < r.y1).collect();
    let mut ys: Vec<f64> = rects.iter().flat_map(|r| [r.y0, r.y1]).collect();
    ys.sort_by(f64::total_cmp);
    ys.dedup();
    // Sort by y0 so that the rectangles spanning a slab are found among a prefix.
    let mut by_y0 = rects.clone();
    by_y0.sort_by(|a, b| a.y0.total_cmp(&b.y0));

    let mut out: Vec<Rect> = Vec::new();
    // Open output rectangles ending at the current slab's bottom, keyed by their x ends.
    let mut open: HashMap<(u64, u64), usize> = HashMap::new();
    let mut intervals: Vec<(f64, f64)> = Vec::new();
    for w in ys.windows(2) {
        let (y0, y1) = (w[0], w[1]);
        intervals.clear();
        for r in by_y0.iter().take_while(|r| r.y0 <= y0) {
            if r.y1 >= y1 {
                intervals.push((r.x0, r.x1));
            }
        }
        intervals.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut merged: Vec<(f64, f64)> = Vec::new();
        for &(a, b) in &intervals {
            match merged.last_mut() {
                Some(last) if a <= last.1 => last.1 = last.1.max(b),
                _ => merged.push((a, b)),
            }
        }
        let mut next_open = HashMap::with_capacity(merged.len());
        for (a, b) in merged {
            let key = (a.to_bits(), b.to_bits());
            match open.get(&key) {
                Some(&k) => {
                    out[k].y1 = y1;
                    next_open.insert(key, k);
                }
                None => {
                    next_open.insert(key, out.len());
                    out.push(Rect { x0: a, x1: b, y0, y1 });
                }
            }
        }
        open = next_open;
    }
    out.sort_by(|a, b| a.y0.total_cmp(&b.y0).then(a.x0.total_cmp(&b.x0)));
    out
}

/// The boundary of the union of non-overlapping rectangles (such as [`union`] returns), as
/// axis-aligned segments `[start, end]`: every rectangle side minus the parts where another
/// rectangle lies against it on the other side (its opposite side on the same line, compared
/// exactly, as the coordinates of one region are snapped and shared). Inner boundaries (holes)
/// are included; the segments come out in no particular order, and collinear pieces from
/// different rectangles are not joined.
pub fn rect_boundary(rects: &[Rect]) -> Vec<[[f64; 2]; 2]> {
    // `+ 0.0` turns −0 into +0, so that both spellings of zero share a key.
    let key = |v: f64| (v + 0.0).to_bits();
    let mut by_side: [HashMap<u64, Vec<usize>>; 4] = Default::default();
    for (i, r) in rects.iter().enumerate() {
        for (side, v) in [r.x0, r.x1, r.y0, r.y1].into_iter().enumerate() {
            by_side[side].entry(key(v)).or_default().push(i);
        }
    }
    let mut out = Vec::new();
    for r in rects {
        // (line coordinate, vertical?, the side of the neighbours that would cover it, extent).
        let sides = [
            (r.x0, true, 1, r.y0, r.y1),
            (r.x1, true, 0, r.y0, r.y1),
            (r.y0, false, 3, r.x0, r.x1),
            (r.y1, false, 2, r.x0, r.x1),
        ];
        for (line, vertical, opposite, lo, hi) in sides {
            let covers: Vec<(f64, f64)> = by_side[opposite]
                .get(&key(line))
                .into_iter()
                .flatten()
                .map(|&j| {
                    let n = &rects[j];
                    if vertical { (n.y0, n.y1) } else { (n.x0, n.x1) }
                })
                .collect();
            for (a, b) in subtract(lo, hi, covers) {
                out.push(if vertical { [[line, a], [line, b]] } else { [[a, line], [b, line]] });
            }
        }
    }
    out
}

/// The parts of `[lo, hi]` not covered by any of the intervals `covers`, as non-empty intervals.
fn subtract(lo: f64, hi: f64, mut covers: Vec<(f64, f64)>) -> Vec<(f64, f64)> {
    covers.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out = Vec::new();
    let mut from = lo;
    for (a, b) in covers {
        if a > from {
            out.push((from, a.min(hi)));
        }
        from = from.max(b);
        if from >= hi {
            break;
        }
    }
    if from < hi {
        out.push((from, hi));
    }
    out.retain(|&(a, b)| a < b);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn r(x0: f64, x1: f64, y0: f64, y1: f64) -> Rect {
        Rect { x0, x1, y0, y1 }
    }

    fn no_overlaps(rs: &[Rect]) -> bool {
        rs.iter().enumerate().all(|(i, a)| {
            rs[i + 1..].iter().all(|b| a.x1 <= b.x0 || b.x1 <= a.x0 || a.y1 <= b.y0 || b.y1 <= a.y0)
        })
    }

    #[test]
    fn union_of_two_overlapping_squares() {
        // Inclusion–exclusion (elementary geometry): 4 + 4 - 1 = 7.
        let u = union(&[r(0.0, 2.0, 0.0, 2.0), r(1.0, 3.0, 1.0, 3.0)]);
        assert!(no_overlaps(&u));
        assert_eq!(u.iter().map(Rect::area).sum::<f64>(), 7.0);
        assert_eq!(u.len(), 3);
    }

    #[test]
    fn union_keeps_a_single_rectangle_whole() {
        let u = union(&[r(0.0, 1.0, 0.0, 5.0), r(0.0, 1.0, 1.0, 2.0), r(0.0, 1.0, 2.0, 3.0)]);
        assert_eq!(u, vec![r(0.0, 1.0, 0.0, 5.0)]);
    }

    #[test]
    fn union_of_two_squares_as_polygons() {
        // Inclusion–exclusion (elementary geometry): 4 + 4 − 1 = 7, one outer contour with
        // 8 corners (counter-clockwise, hence positive shoelace area).
        let a = vec![[0.0, 0.0], [2.0, 0.0], [2.0, 2.0], [0.0, 2.0]];
        let b = vec![[1.0, 1.0], [3.0, 1.0], [3.0, 3.0], [1.0, 3.0]];
        let u = union_polygons(&[a, b], 1e-9);
        assert_eq!(u.len(), 1);
        assert_eq!(u[0].len(), 8);
        assert!((signed_area(&u[0]) - 7.0).abs() < 1e-12);
    }

    #[test]
    fn union_keeps_holes_clockwise() {
        // A square ring from four bars: outer 3 × 3 minus the 1 × 1 hole = 8.
        let bar = |x0: f64, y0: f64, x1: f64, y1: f64| vec![[x0, y0], [x1, y0], [x1, y1], [x0, y1]];
        let bars = [
            bar(0.0, 0.0, 3.0, 1.0),
            bar(2.0, 0.0, 3.0, 3.0),
            bar(0.0, 2.0, 3.0, 3.0),
            bar(0.0, 0.0, 1.0, 3.0),
        ];
        let u = union_polygons(&bars, 1e-9);
        assert_eq!(u.len(), 2);
        let areas: Vec<f64> = u.iter().map(|c| signed_area(c)).collect();
        assert!(areas.iter().any(|&a| (a - 9.0).abs() < 1e-12), "{areas:?}");
        assert!(areas.iter().any(|&a| (a + 1.0).abs() < 1e-12), "{areas:?}");
    }

    #[test]
    fn simplify_drops_near_collinear_vertices() {
        let sq = vec![[0.0, 0.0], [1.0, 1e-12], [2.0, 0.0], [2.0, 2.0], [1.0, 2.0], [0.0, 2.0]];
        assert_eq!(simplify(sq, 1e-9), vec![[0.0, 0.0], [2.0, 0.0], [2.0, 2.0], [0.0, 2.0]]);
    }

    /// Total length of a set of segments.
    fn length(segs: &[[[f64; 2]; 2]]) -> f64 {
        segs.iter().map(|[a, b]| (b[0] - a[0]).hypot(b[1] - a[1])).sum()
    }

    #[test]
    fn boundary_of_rectangle_unions() {
        // A lone rectangle: its perimeter 2·(2 + 1) = 6, in four sides.
        let one = rect_boundary(&[r(0.0, 2.0, 0.0, 1.0)]);
        assert_eq!((one.len(), length(&one)), (4, 6.0));
        // The L of the 3 × 1 bar and the 1 × 2 leg (two rectangles sharing the segment
        // y = 1, x in [0, 1]): its outline has length 3 + 1 + 2 + 2 + 1 + 3 = 12, and the
        // shared segment is not part of it.
        let l = union(&[r(0.0, 3.0, 0.0, 1.0), r(0.0, 1.0, 0.0, 3.0)]);
        assert_eq!(l.len(), 2);
        let b = rect_boundary(&l);
        assert_eq!(length(&b), 12.0);
        assert!(b.iter().all(|[p, q]| !(p[1] == 1.0 && q[1] == 1.0 && p[0].max(q[0]) <= 1.0)), "{b:?}");
        // A square ring (outer 3 × 3, hole 1 × 1): outer 12 plus hole 4.
        let ring = union(&[
            r(0.0, 3.0, 0.0, 1.0),
            r(2.0, 3.0, 0.0, 3.0),
            r(0.0, 3.0, 2.0, 3.0),
            r(0.0, 1.0, 0.0, 3.0),
        ]);
        assert_eq!(length(&rect_boundary(&ring)), 16.0);
        assert_eq!(subtract(0.0, 4.0, vec![(3.0, 5.0), (-1.0, 1.0)]), vec![(1.0, 3.0)]);
        assert_eq!(subtract(0.0, 4.0, vec![(-1.0, 5.0)]), vec![]);
    }

    #[test]
    fn snapping_joins_rounding_twins_only() {
        let near = 0.1 + 0.2;
        assert_ne!(near, 0.3, "the two spellings must differ by a rounding error for this test");
        let mut rs = [r(0.0, near, 0.0, 1.0), r(0.3, 2.0, 0.0, 1.0), r(2.001, 3.0, 0.0, 1.0)];
        snap_rects(&mut rs);
        assert_eq!(rs[0].x1, rs[1].x0);
        assert_eq!(rs[2].x0, 2.001);
    }
}
