//! Nets: named conductors, each the union of its shapes, split by the face they sit on.
//!
//! Shapes of one net may overlap; they are merged per face: into non-overlapping rectangles
//! when all of the net's shapes on that face are Manhattan, otherwise into the boundary
//! contours of their union. Shapes of different nets on the same face must keep a gap:
//! touching (sharing an edge piece or a corner, up to a billionth of the face's extent) or
//! overlapping is an error, since it would short the two nets.
//!
//! A net may give its metal's `conductivity` and `thickness` (both or neither): they are kept
//! for the full-wave solver as a [`Conductor`]; without them the net is a perfect conductor of
//! zero thickness. The electrostatic extraction ignores them.

use crate::error::{Ctx, LayoutError, MISSING, fmt_str};
use crate::file::RawNet;
use crate::polygon::{self, dist, nearest_on_segment, perimeter, signed_area};
use crate::rect::Rect;
use crate::shapes::{self, Face};
use crate::stackup::Stackup;
use crate::union::{rect_boundary, snap_face, union, union_polygons};
use crate::units::Unit;

/// A net: one conductor (possibly in several pieces and on several faces) at one potential.
#[derive(Clone, Debug, PartialEq)]
pub struct Net {
    /// Name, unique in the layout.
    pub name: String,
    /// Its conductor area, one region per face, in order of first appearance in the file.
    pub regions: Vec<Region>,
    /// The metal of the net, when the file gives its `conductivity` and `thickness`; `None`
    /// means a perfect conductor of zero thickness. Not used by the capacitance extraction.
    pub conductor: Option<Conductor>,
}

/// The metal of a net with finite conductivity: used by the full-wave solver for conductor
/// loss. The conductor still sits on its face as a sheet; `thickness` only enters the loss.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Conductor {
    /// Electrical conductivity (S/m), finite and positive (copper: about 5.8e7).
    pub conductivity: f64,
    /// Metal thickness (m), finite and positive.
    pub thickness: f64,
}

/// The part of a net on one face, in metres: non-overlapping rectangles when all the net's
/// shapes on that face are Manhattan, otherwise the boundary contours of their union.
#[derive(Clone, Debug, PartialEq)]
pub struct Region {
    /// Layer name whose top face holds the region, or `z=<value>` (layout units) in free space.
    pub face: String,
    /// Height of the face (m).
    pub z: f64,
    /// Manhattan region: non-overlapping rectangles whose union is the region (m). Empty for a
    /// non-Manhattan region.
    pub rects: Vec<Rect>,
    /// Non-Manhattan region: closed boundary contours of the region (m; each closes by
    /// itself), outer boundaries counter-clockwise and holes clockwise, so that their shoelace
    /// areas add up to the region's area. Empty for a Manhattan region.
    pub outline: Vec<Vec<[f64; 2]>>,
}

impl Net {
    /// Total conductor area (m²) over all faces.
    pub fn area(&self) -> f64 {
        self.regions.iter().map(Region::area).sum()
    }
}

impl Region {
    /// Area (m²): the sum of the rectangle areas (exact, since they do not overlap) plus the
    /// signed shoelace areas of the outline contours (holes count negative).
    pub fn area(&self) -> f64 {
        self.rects.iter().map(Rect::area).sum::<f64>()
            + self.outline.iter().map(|c| signed_area(c)).sum::<f64>()
    }

    /// Whether the region is made of rectangles (meshed into rectangular cells) rather than an
    /// outline (meshed into triangles).
    pub fn is_manhattan(&self) -> bool {
        self.outline.is_empty()
    }

    /// The region's boundary (outer edges and hole edges) as segments `[start, end]` (m): for
    /// a Manhattan region the rectangle sides not lying against another of its rectangles
    /// (see [`rect_boundary`]), otherwise the edges of the outline contours.
    pub fn boundary(&self) -> Vec<[[f64; 2]; 2]> {
        let mut segs = rect_boundary(&self.rects);
        for c in &self.outline {
            segs.extend((0..c.len()).map(|i| [c[i], c[(i + 1) % c.len()]]));
        }
        segs
    }

    /// The point of the region's [`boundary`](Region::boundary) nearest to `p` (m), and its
    /// distance from `p` (m); `None` for an empty region.
    pub fn nearest_boundary_point(&self, p: [f64; 2]) -> Option<([f64; 2], f64)> {
        self.boundary()
            .iter()
            .map(|&[a, b]| {
                let q = nearest_on_segment(p, a, b);
                (q, dist(p, q))
            })
            .min_by(|x, y| x.1.total_cmp(&y.1))
    }

    /// Whether `p` (m) lies in the region: in one of its (closed) rectangles, or inside its
    /// outline by the even–odd rule over all contours (so not in a hole). Points on the
    /// boundary may go either way.
    pub fn contains(&self, p: [f64; 2]) -> bool {
        self.rects.iter().any(|r| r.contains(p))
            || self.outline.iter().filter(|c| polygon::contains(c, p)).count() % 2 == 1
    }
}

/// A piece of a shape (layout units), with where it came from: a rectangle, or a simple
/// counter-clockwise polygon `poly` whose bounding box is `rect`.
#[derive(Clone, Debug)]
struct Piece {
    net: usize,
    shape: usize,
    rect: Rect,
    poly: Option<Vec<[f64; 2]>>,
}

impl Piece {
    /// The piece as a counter-clockwise polygon.
    fn outline(&self) -> Vec<[f64; 2]> {
        match &self.poly {
            Some(p) => p.clone(),
            None => {
                let r = self.rect;
                vec![[r.x0, r.y0], [r.x1, r.y0], [r.x1, r.y1], [r.x0, r.y1]]
            }
        }
    }
}

/// Bounding box of a polygon's vertices.
fn bounding_box(pts: &[[f64; 2]]) -> Rect {
    pts.iter().fold(
        Rect { x0: f64::INFINITY, x1: f64::NEG_INFINITY, y0: f64::INFINITY, y1: f64::NEG_INFINITY },
        |r, p| Rect { x0: r.x0.min(p[0]), x1: r.x1.max(p[0]), y0: r.y0.min(p[1]), y1: r.y1.max(p[1]) },
    )
}

/// Validates the nets and builds their regions (metres).
pub(crate) fn build(
    raw: &[RawNet],
    stackup: &Stackup,
    unit: Unit,
    ctx: Ctx<'_>,
) -> Result<Vec<Net>, LayoutError> {
    if raw.is_empty() {
        return Err(ctx.invalid(
            "net",
            "(none)",
            "the layout has no nets",
            "add at least one [[net]] with a name and shapes",
        ));
    }
    let mut names: Vec<String> = Vec::with_capacity(raw.len());
    let mut conductors: Vec<Option<Conductor>> = Vec::with_capacity(raw.len());
    let mut faces: Vec<Face> = Vec::new();
    // Pieces per face, in the order of `faces`.
    let mut pieces: Vec<Vec<Piece>> = Vec::new();
    // Faces of each net, in order of first appearance.
    let mut net_faces: Vec<Vec<usize>> = Vec::with_capacity(raw.len());
    for (i, net) in raw.iter().enumerate() {
        let name = match &net.name {
            None => {
                return Err(ctx.invalid(
                    format!("net[{i}].name"),
                    MISSING,
                    "every net needs a name",
                    "add name = \"...\"",
                ));
            }
            Some(s) if s.trim().is_empty() => {
                return Err(ctx.invalid(
                    format!("net[{i}].name"),
                    fmt_str(s),
                    "net names must not be empty",
                    "name the net, e.g. after its signal",
                ));
            }
            Some(s) => s.clone(),
        };
        if let Some(j) = names.iter().position(|n| *n == name) {
            return Err(ctx.invalid(
                format!("net[{i}].name"),
                fmt_str(&name),
                format!("the name is already used by net[{j}]"),
                "net names must be unique; shapes of one conductor belong in one [[net]]",
            ));
        }
        if net.shapes.is_empty() {
            return Err(ctx.invalid(
                format!("net[{i}].shapes"),
                "[]",
                format!("net {} has no shapes", fmt_str(&name)),
                "give the net at least one trace, rect or polygon, or remove it",
            ));
        }
        conductors.push(conductor(net, i, unit, ctx)?);
        names.push(name);
        let mut mine: Vec<usize> = Vec::new();
        for (j, shape) in net.shapes.iter().enumerate() {
            let placed = shapes::place(shape, &format!("net[{i}].shapes[{j}]"), stackup, unit, ctx)?;
            let f = match faces.iter().position(|f| f.z == placed.face.z) {
                Some(f) => f,
                None => {
                    faces.push(placed.face.clone());
                    pieces.push(Vec::new());
                    faces.len() - 1
                }
            };
            if !mine.contains(&f) {
                mine.push(f);
            }
            pieces[f].extend(placed.rects.iter().map(|&rect| Piece { net: i, shape: j, rect, poly: None }));
            pieces[f].extend(placed.polys.into_iter().map(|p| Piece {
                net: i,
                shape: j,
                rect: bounding_box(&p),
                poly: Some(p),
            }));
        }
        net_faces.push(mine);
    }

    // Per face: snap nearly equal coordinates, refuse contacts between nets, merge per net.
    let mut regions: Vec<Vec<Option<Merged>>> = vec![vec![None; faces.len()]; raw.len()];
    for (f, face_pieces) in pieces.iter_mut().enumerate() {
        let mut rects: Vec<Rect> = face_pieces.iter().filter(|p| p.poly.is_none()).map(|p| p.rect).collect();
        let mut polys: Vec<Vec<[f64; 2]>> = face_pieces.iter().filter_map(|p| p.poly.clone()).collect();
        let tol = snap_face(&mut rects, &mut polys);
        let (mut rects, mut polys) = (rects.into_iter(), polys.into_iter());
        for p in face_pieces.iter_mut() {
            // The extent as written (before snapping), for the message.
            let written = p.rect;
            let thin = match &mut p.poly {
                None => {
                    p.rect = rects.next().unwrap_or(p.rect);
                    !(p.rect.x0 < p.rect.x1 && p.rect.y0 < p.rect.y1)
                }
                Some(poly) => {
                    *poly = polys.next().unwrap_or_default();
                    p.rect = bounding_box(poly);
                    // Mean thickness (area over half the perimeter) at most twice the tolerance.
                    poly.len() < 3 || signed_area(poly) <= tol * perimeter(poly)
                }
            };
            if thin {
                return Err(ctx.invalid(
                    format!("net[{}].shapes[{}]", p.net, p.shape),
                    format!("[{}, {}] x [{}, {}]", written.x0, written.x1, written.y0, written.y1),
                    "the shape is thinner than a billionth of the layout's extent",
                    "remove the sliver or widen it",
                ));
            }
        }
        check_contacts(face_pieces, &names, &faces[f], tol, ctx)?;
        for (i, net_regions) in regions.iter_mut().enumerate() {
            let mine: Vec<&Piece> = face_pieces.iter().filter(|p| p.net == i).collect();
            if mine.is_empty() {
                continue;
            }
            net_regions[f] = Some(if mine.iter().all(|p| p.poly.is_none()) {
                Merged::Rects(union(&mine.iter().map(|p| p.rect).collect::<Vec<_>>()))
            } else {
                let outlines: Vec<Vec<[f64; 2]>> = mine.iter().map(|p| p.outline()).collect();
                Merged::Outline(union_polygons(&outlines, tol))
            });
        }
    }

    let mut nets = Vec::with_capacity(raw.len());
    for (i, name) in names.into_iter().enumerate() {
        let mut net_regions = Vec::new();
        for &f in &net_faces[i] {
            let (rects, outline) = match regions[i][f].take() {
                Some(Merged::Rects(r)) => (r, Vec::new()),
                Some(Merged::Outline(o)) => (Vec::new(), o),
                None => (Vec::new(), Vec::new()),
            };
            let m = |v: f64| unit.to_metres(v);
            net_regions.push(Region {
                face: faces[f].name.clone(),
                z: faces[f].z,
                rects: rects
                    .iter()
                    .map(|r| Rect { x0: m(r.x0), x1: m(r.x1), y0: m(r.y0), y1: m(r.y1) })
                    .collect(),
                outline: outline.iter().map(|c| c.iter().map(|p| [m(p[0]), m(p[1])]).collect()).collect(),
            });
        }
        nets.push(Net { name, regions: net_regions, conductor: conductors[i] });
    }
    Ok(nets)
}

/// The `conductivity` and `thickness` of net `i` (both or neither), thickness in metres.
fn conductor(net: &RawNet, i: usize, unit: Unit, ctx: Ctx<'_>) -> Result<Option<Conductor>, LayoutError> {
    let at = |key: &str| format!("net[{i}].{key}");
    let conductivity = match net.conductivity {
        None => None,
        Some(s) if !(s.is_finite() && s > 0.0) => {
            return Err(ctx.invalid(
                at("conductivity"),
                format!("{s}"),
                "must be positive and finite",
                "give the metal's conductivity in S/m (copper: about 5.8e7), or remove it and \
                 `thickness` for a perfect conductor",
            ));
        }
        Some(s) => Some(s),
    };
    let thickness = match net.thickness {
        None => None,
        Some(t) => {
            let metres = unit.to_metres(t);
            if !(t.is_finite() && t > 0.0 && metres.is_finite() && metres > 0.0) {
                return Err(ctx.invalid(
                    at("thickness"),
                    format!("{t}"),
                    "must be positive and finite",
                    "give the metal thickness in the layout units (e.g. 0.035 mm for 1 oz copper), or \
                     remove it and `conductivity` for a perfect conductor",
                ));
            }
            Some((t, metres))
        }
    };
    match (conductivity, thickness) {
        (Some(conductivity), Some((_, thickness))) => Ok(Some(Conductor { conductivity, thickness })),
        (None, None) => Ok(None),
        (Some(s), None) => Err(ctx.invalid(
            at("thickness"),
            MISSING,
            format!("the net gives conductivity = {s} but no thickness; a lossy conductor needs both"),
            "add thickness = ... (in the layout units), or remove conductivity: without both the net \
             is a perfect conductor of zero thickness",
        )),
        (None, Some((t, _))) => Err(ctx.invalid(
            at("conductivity"),
            MISSING,
            format!("the net gives thickness = {t} but no conductivity; a lossy conductor needs both"),
            "add conductivity = ... (S/m, copper: about 5.8e7), or remove thickness: without both the \
             net is a perfect conductor of zero thickness",
        )),
    }
}

/// The merged part of one net on one face (layout units).
#[derive(Clone, Debug)]
enum Merged {
    /// Non-overlapping rectangles (all pieces were rectangles).
    Rects(Vec<Rect>),
    /// Boundary contours of the union (some piece was an oblique polygon).
    Outline(Vec<Vec<[f64; 2]>>),
}

/// Whether two pieces of one face touch or overlap: exactly for two rectangles (whose
/// coordinates were snapped with tolerance `tol`), and within `tol` when a polygon is involved.
fn pieces_touch(a: &Piece, b: &Piece, tol: f64) -> bool {
    if a.poly.is_none() && b.poly.is_none() {
        return a.rect.touches(&b.rect);
    }
    let grown = Rect { x0: a.rect.x0 - tol, x1: a.rect.x1 + tol, y0: a.rect.y0 - tol, y1: a.rect.y1 + tol };
    grown.touches(&b.rect) && polygon::polygons_touch(&a.outline(), &b.outline(), tol)
}

/// Refuses any two pieces of different nets that touch or overlap (see [`pieces_touch`]).
fn check_contacts(
    pieces: &[Piece],
    names: &[String],
    face: &Face,
    tol: f64,
    ctx: Ctx<'_>,
) -> Result<(), LayoutError> {
    let mut order: Vec<&Piece> = pieces.iter().collect();
    order.sort_by(|a, b| a.rect.x0.total_cmp(&b.rect.x0).then(a.net.cmp(&b.net)).then(a.shape.cmp(&b.shape)));
    let mut found: Option<(&Piece, &Piece)> = None;
    for (k, a) in order.iter().enumerate() {
        for b in order[k + 1..].iter().take_while(|b| b.rect.x0 <= a.rect.x1 + tol) {
            if a.net != b.net && pieces_touch(a, b, tol) {
                let (lo, hi) = if (a.net, a.shape) < (b.net, b.shape) { (*a, *b) } else { (*b, *a) };
                // Report the contact between the lowest-numbered shapes, for a stable message.
                if found.is_none_or(|(l, h)| {
                    (lo.net, lo.shape, hi.net, hi.shape) < (l.net, l.shape, h.net, h.shape)
                }) {
                    found = Some((lo, hi));
                }
            }
        }
    }
    match found {
        None => Ok(()),
        Some((lo, hi)) => Err(ctx.invalid(
            format!("net[{}].shapes[{}]", hi.net, hi.shape),
            format!("net {} on face {}", fmt_str(&names[hi.net]), fmt_str(&face.name)),
            format!(
                "touches or overlaps net[{}].shapes[{}] of net {} on the same face; different nets would be shorted",
                lo.net,
                lo.shape,
                fmt_str(&names[lo.net])
            ),
            "leave a gap between the nets, or put the shapes in one net if they are meant to be connected",
        )),
    }
}
