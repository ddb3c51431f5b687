//! Nets: named conductors, each the union of its shapes, split by the face they sit on.
//!
//! Shapes of one net may overlap; they are merged per face into non-overlapping rectangles.
//! Shapes of different nets on the same face must keep a gap: touching (sharing an edge piece
//! or a corner) or overlapping is an error, since it would short the two nets.

use crate::error::{Ctx, LayoutError, MISSING, fmt_str};
use crate::file::RawNet;
use crate::rect::Rect;
use crate::shapes::{self, Face};
use crate::stackup::Stackup;
use crate::union::{snap_rects, union};
use crate::units::Unit;

/// A net: one conductor (possibly in several pieces and on several faces) at one potential.
#[derive(Clone, Debug, PartialEq)]
pub struct Net {
    /// Name, unique in the layout.
    pub name: String,
    /// Its conductor area, one region per face, in order of first appearance in the file.
    pub regions: Vec<Region>,
}

/// The part of a net on one face: non-overlapping rectangles in metres.
#[derive(Clone, Debug, PartialEq)]
pub struct Region {
    /// Layer name whose top face holds the region, or `z=<value>` (layout units) in free space.
    pub face: String,
    /// Height of the face (m).
    pub z: f64,
    /// Non-overlapping rectangles whose union is the region (m).
    pub rects: Vec<Rect>,
}

impl Net {
    /// Total conductor area (m²) over all faces.
    pub fn area(&self) -> f64 {
        self.regions.iter().map(Region::area).sum()
    }
}

impl Region {
    /// Area (m²): the sum of the rectangle areas, exact since they do not overlap.
    pub fn area(&self) -> f64 {
        self.rects.iter().map(Rect::area).sum()
    }
}

/// A rectangle of a shape, with where it came from.
#[derive(Clone, Copy, Debug)]
struct Piece {
    net: usize,
    shape: usize,
    rect: Rect,
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
            pieces[f].extend(placed.rects.iter().map(|&rect| Piece { net: i, shape: j, rect }));
        }
        net_faces.push(mine);
    }

    // Per face: snap nearly equal coordinates, refuse contacts between nets, merge per net.
    let mut regions: Vec<Vec<Option<Vec<Rect>>>> = vec![vec![None; faces.len()]; raw.len()];
    for (f, face_pieces) in pieces.iter_mut().enumerate() {
        let mut rects: Vec<Rect> = face_pieces.iter().map(|p| p.rect).collect();
        snap_rects(&mut rects);
        for (p, r) in face_pieces.iter_mut().zip(&rects) {
            if !(r.x0 < r.x1 && r.y0 < r.y1) {
                return Err(ctx.invalid(
                    format!("net[{}].shapes[{}]", p.net, p.shape),
                    format!("[{}, {}] x [{}, {}]", p.rect.x0, p.rect.x1, p.rect.y0, p.rect.y1),
                    "the shape is thinner than a billionth of the layout's extent",
                    "remove the sliver or widen it",
                ));
            }
            p.rect = *r;
        }
        check_contacts(face_pieces, &names, &faces[f], ctx)?;
        for (i, net_regions) in regions.iter_mut().enumerate() {
            let mine: Vec<Rect> = face_pieces.iter().filter(|p| p.net == i).map(|p| p.rect).collect();
            if !mine.is_empty() {
                net_regions[f] = Some(union(&mine));
            }
        }
    }

    let mut nets = Vec::with_capacity(raw.len());
    for (i, name) in names.into_iter().enumerate() {
        let mut net_regions = Vec::new();
        for &f in &net_faces[i] {
            let rects = regions[i][f].take().unwrap_or_default();
            net_regions.push(Region {
                face: faces[f].name.clone(),
                z: faces[f].z,
                rects: rects
                    .iter()
                    .map(|r| Rect {
                        x0: unit.to_metres(r.x0),
                        x1: unit.to_metres(r.x1),
                        y0: unit.to_metres(r.y0),
                        y1: unit.to_metres(r.y1),
                    })
                    .collect(),
            });
        }
        nets.push(Net { name, regions: net_regions });
    }
    Ok(nets)
}

/// Refuses any two pieces of different nets whose closed rectangles intersect.
fn check_contacts(pieces: &[Piece], names: &[String], face: &Face, ctx: Ctx<'_>) -> Result<(), LayoutError> {
    let mut order: Vec<&Piece> = pieces.iter().collect();
    order.sort_by(|a, b| a.rect.x0.total_cmp(&b.rect.x0).then(a.net.cmp(&b.net)).then(a.shape.cmp(&b.shape)));
    let mut found: Option<(&Piece, &Piece)> = None;
    for (k, a) in order.iter().enumerate() {
        for b in order[k + 1..].iter().take_while(|b| b.rect.x0 <= a.rect.x1) {
            if a.net != b.net && a.rect.touches(&b.rect) {
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
