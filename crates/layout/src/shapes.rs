//! Conductor shapes (trace, rect, polygon): validation, the face each sits on, and their
//! decomposition into pieces (in layout units; they may overlap).
//!
//! A Manhattan shape (every trace segment and polygon edge axis-aligned) becomes rectangles.
//! A shape with an oblique segment or edge becomes simple counter-clockwise polygons instead:
//! the polygon itself, or one widened rectangle per trace segment.

use crate::error::{Ctx, LayoutError, MISSING, fmt_coords, fmt_point, fmt_points, fmt_str};
use crate::file::{RawPoint, RawPolygon, RawRect, RawShape, RawTrace};
use crate::polygon;
use crate::rect::Rect;
use crate::stackup::{LayerKind, Stackup};
use crate::units::Unit;

/// The face a shape sits on.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Face {
    /// Layer name, or `z=<value>` (value in layout units, as written) in free space.
    pub name: String,
    /// Height in metres.
    pub z: f64,
}

/// A validated shape: its face and the pieces (layout units) whose union is the shape, either
/// rectangles (a Manhattan shape) or simple counter-clockwise polygons (otherwise).
#[derive(Clone, Debug)]
pub(crate) struct Placed {
    pub face: Face,
    pub rects: Vec<Rect>,
    pub polys: Vec<Vec<[f64; 2]>>,
}

/// Validates shape `raw`, found at field path `at` (e.g. `net[0].shapes[2]`).
pub(crate) fn place(
    raw: &RawShape,
    at: &str,
    stackup: &Stackup,
    unit: Unit,
    ctx: Ctx<'_>,
) -> Result<Placed, LayoutError> {
    match raw {
        RawShape::Trace(t) => trace(t, &format!("{at}.trace"), stackup, unit, ctx),
        RawShape::Rect(r) => rect(r, &format!("{at}.rect"), stackup, unit, ctx),
        RawShape::Polygon(p) => polygon(p, &format!("{at}.polygon"), stackup, unit, ctx),
    }
}

/// The face named by `on` (with a stack-up) or `z` (free space), for the shape at `at`.
fn face(
    on: Option<&str>,
    z: Option<f64>,
    at: &str,
    stackup: &Stackup,
    unit: Unit,
    ctx: Ctx<'_>,
) -> Result<Face, LayoutError> {
    if stackup.layers.is_empty() {
        if let Some(on) = on {
            return Err(ctx.invalid(
                format!("{at}.on"),
                fmt_str(on),
                "the layout has no stack-up (stackup.layers is empty), so there is no layer to sit on",
                "in free space give the height instead, e.g. z = 0.0 (in the layout units)",
            ));
        }
        return match z {
            None => Err(ctx.invalid(
                format!("{at}.z"),
                MISSING,
                "in free space every shape needs a height",
                "add z = ... (in the layout units)",
            )),
            Some(z) if !z.is_finite() => Err(ctx.invalid(
                format!("{at}.z"),
                format!("{z}"),
                "must be finite",
                "give the height in the layout units",
            )),
            Some(z) => Ok(Face { name: format!("z={z}"), z: unit.to_metres(z) }),
        };
    }
    if let Some(z) = z {
        return Err(ctx.invalid(
            format!("{at}.z"),
            format!("{z}"),
            "with a stack-up, conductors are placed on layer faces, not at free heights",
            "remove z and write on = \"LAYER\" (the conductor sits on that layer's top face)",
        ));
    }
    let Some(on) = on else {
        return Err(ctx.invalid(
            format!("{at}.on"),
            MISSING,
            "every shape needs the layer it sits on",
            "add on = \"LAYER\" (a dielectric layer's name; the conductor sits on its top face)",
        ));
    };
    let Some(layer) = stackup.layer(on) else {
        let names: Vec<String> =
            stackup.layers.iter().filter(|l| l.kind != LayerKind::Ground).map(|l| fmt_str(&l.name)).collect();
        return Err(ctx.invalid(
            format!("{at}.on"),
            fmt_str(on),
            "no layer of that name in stackup.layers",
            format!("use one of the dielectric layers: {}", names.join(", ")),
        ));
    };
    if layer.kind == LayerKind::Ground {
        return Err(ctx.invalid(
            format!("{at}.on"),
            fmt_str(on),
            "conductors cannot sit on a ground face",
            "put them on the dielectric layer above (its top face), or leave the ground out of the nets: \
             grounds are part of the stack-up",
        ));
    }
    if stackup.ground_above.is_some_and(|zg| layer.z_top >= zg) {
        return Err(ctx.invalid(
            format!("{at}.on"),
            fmt_str(on),
            "the top face of this layer is the top ground plane: the conductor would be shorted to it",
            "put the conductor on a lower dielectric layer (stripline: split the dielectric into two \
             layers and use the lower one)",
        ));
    }
    Ok(Face { name: layer.name.clone(), z: layer.z_top })
}

/// The point written at field `at`: exactly two finite coordinates.
pub(crate) fn point(raw: &RawPoint, at: &str, ctx: Ctx<'_>) -> Result<[f64; 2], LayoutError> {
    let &[x, y] = raw.as_slice() else {
        return Err(ctx.invalid(
            at,
            fmt_coords(raw),
            format!("a point has exactly 2 coordinates, not {}", raw.len()),
            "write points as [x, y] (in the layout units)",
        ));
    };
    if !(x.is_finite() && y.is_finite()) {
        return Err(ctx.invalid(
            at,
            fmt_coords(raw),
            "coordinates must be finite",
            "give the point in the layout units",
        ));
    }
    Ok([x, y])
}

/// The points of the list at field `at`.
fn points(raw: &[RawPoint], at: &str, ctx: Ctx<'_>) -> Result<Vec<[f64; 2]>, LayoutError> {
    raw.iter().enumerate().map(|(k, p)| point(p, &format!("{at}[{k}]"), ctx)).collect()
}

/// Checks that consecutive points (cyclically when `closed`) are distinct.
fn distinct_consecutive(pts: &[[f64; 2]], closed: bool, at: &str, ctx: Ctx<'_>) -> Result<(), LayoutError> {
    let n = pts.len();
    let pairs = if closed { n } else { n - 1 };
    for k in 0..pairs {
        let next = (k + 1) % n;
        if pts[k] == pts[next] {
            return Err(ctx.invalid(
                format!("{at}[{next}]"),
                fmt_point(pts[next]),
                format!("repeats the point before it ({at}[{k}]), making a zero-length segment"),
                "remove the repeated point",
            ));
        }
    }
    Ok(())
}

fn trace(t: &RawTrace, at: &str, stackup: &Stackup, unit: Unit, ctx: Ctx<'_>) -> Result<Placed, LayoutError> {
    let face = face(t.on.as_deref(), t.z, at, stackup, unit, ctx)?;
    let width = match t.width {
        None => {
            return Err(ctx.invalid(
                format!("{at}.width"),
                MISSING,
                "a trace needs a width",
                "add width = ... (in the layout units)",
            ));
        }
        Some(w) if !(w.is_finite() && w > 0.0) => {
            return Err(ctx.invalid(
                format!("{at}.width"),
                format!("{w}"),
                "must be positive",
                "give the trace width in the layout units",
            ));
        }
        Some(w) => w,
    };
    let path_at = format!("{at}.path");
    let path = match &t.path {
        Some(p) => points(p, &path_at, ctx)?,
        None => Vec::new(),
    };
    if path.len() < 2 {
        return Err(ctx.invalid(
            path_at,
            if t.path.is_none() { MISSING.to_string() } else { fmt_points(&path) },
            "a trace path needs at least 2 points",
            "write path = [[x0, y0], [x1, y1], ...] (in the layout units)",
        ));
    }
    distinct_consecutive(&path, false, &path_at, ctx)?;
    // Each segment becomes a rectangle of the trace width, extended by half the width past both
    // ends so that bends are filled (the overlaps are merged later); axis-aligned rectangles
    // when all segments are axis-aligned, rotated ones (polygons) otherwise.
    if path.windows(2).any(|w| w[0][0] != w[1][0] && w[0][1] != w[1][1]) {
        let polys: Vec<Vec<[f64; 2]>> =
            path.windows(2).map(|w| polygon::widened_segment(w[0], w[1], width)).collect();
        check_finite(&polys, at, ctx)?;
        return Ok(Placed { face, rects: Vec::new(), polys });
    }
    let h = 0.5 * width;
    let rects: Vec<Rect> = path
        .windows(2)
        .map(|w| {
            let (a, b) = (w[0], w[1]);
            Rect {
                x0: a[0].min(b[0]) - h,
                x1: a[0].max(b[0]) + h,
                y0: a[1].min(b[1]) - h,
                y1: a[1].max(b[1]) + h,
            }
        })
        .collect();
    check_proper(&rects, at, ctx)?;
    Ok(Placed { face, rects, polys: Vec::new() })
}

fn rect(r: &RawRect, at: &str, stackup: &Stackup, unit: Unit, ctx: Ctx<'_>) -> Result<Placed, LayoutError> {
    let face = face(r.on.as_deref(), r.z, at, stackup, unit, ctx)?;
    let mut corners = [[0.0; 2]; 2];
    for (c, key) in corners.iter_mut().zip(["min", "max"]) {
        let field = if key == "min" { &r.min } else { &r.max };
        let Some(p) = field else {
            return Err(ctx.invalid(
                format!("{at}.{key}"),
                MISSING,
                "a rect needs both corners",
                format!("add {key} = [x, y] (in the layout units)"),
            ));
        };
        *c = point(p, &format!("{at}.{key}"), ctx)?;
    }
    let [min, max] = corners;
    for (axis, name) in [(0, "x"), (1, "y")] {
        if min[axis] >= max[axis] {
            return Err(ctx.invalid(
                format!("{at}.max"),
                fmt_point(max),
                format!("max {name} ({}) must be greater than min {name} ({})", max[axis], min[axis]),
                "min is the lower-left corner and max the upper-right one; the rect needs a positive size",
            ));
        }
    }
    let rects = vec![Rect { x0: min[0], x1: max[0], y0: min[1], y1: max[1] }];
    Ok(Placed { face, rects, polys: Vec::new() })
}

fn polygon(
    p: &RawPolygon,
    at: &str,
    stackup: &Stackup,
    unit: Unit,
    ctx: Ctx<'_>,
) -> Result<Placed, LayoutError> {
    let face = face(p.on.as_deref(), p.z, at, stackup, unit, ctx)?;
    let pts_at = format!("{at}.points");
    let mut pts = match &p.points {
        Some(v) => points(v, &pts_at, ctx)?,
        None => {
            return Err(ctx.invalid(
                pts_at,
                MISSING,
                "a polygon needs its points",
                "write points = [[x0, y0], [x1, y1], [x2, y2], ...] (in the layout units)",
            ));
        }
    };
    // The polygon closes by itself; accept an explicit repetition of the first point at the end.
    if pts.len() > 3 && pts.first() == pts.last() {
        pts.pop();
    }
    if pts.len() < 3 {
        return Err(ctx.invalid(
            pts_at,
            fmt_points(&pts),
            "a polygon needs at least 3 points",
            "list the corners in order; the last one connects back to the first",
        ));
    }
    distinct_consecutive(&pts, true, &pts_at, ctx)?;
    let area = polygon::signed_area(&pts);
    if !area.is_finite() || area == 0.0 {
        return Err(ctx.invalid(
            pts_at,
            fmt_points(&pts),
            "the polygon has zero area (its points are collinear, or it crosses itself so that its parts cancel)",
            "list the corners in order around the outline of a region",
        ));
    }
    if let Some((i, j)) = polygon::self_intersection(&pts) {
        let n = pts.len();
        return Err(ctx.invalid(
            pts_at,
            fmt_points(&pts),
            format!(
                "the polygon intersects itself: edge {at}.points[{i}]..[{}] meets edge [{j}]..[{}]",
                (i + 1) % n,
                (j + 1) % n
            ),
            "list the corners in order around the outline; split a figure-eight into two polygons",
        ));
    }
    if polygon::first_oblique_edge(&pts).is_some() {
        return Ok(Placed { face, rects: Vec::new(), polys: vec![polygon::counter_clockwise(pts)] });
    }
    let rects = polygon::manhattan_to_rects(&pts);
    check_proper(&rects, at, ctx)?;
    Ok(Placed { face, rects, polys: Vec::new() })
}

/// Guards against overflow to infinity in the corners of widened oblique segments.
fn check_finite(polys: &[Vec<[f64; 2]>], at: &str, ctx: Ctx<'_>) -> Result<(), LayoutError> {
    match polys.iter().find(|p| p.iter().flatten().any(|v| !v.is_finite())) {
        Some(p) => Err(ctx.invalid(
            at,
            fmt_points(p),
            "the outline of a widened segment is not finite",
            "check the coordinates and the width for huge values",
        )),
        None => Ok(()),
    }
}

/// Guards against overflow to infinity in derived coordinates.
fn check_proper(rects: &[Rect], at: &str, ctx: Ctx<'_>) -> Result<(), LayoutError> {
    match rects.iter().find(|r| !r.is_proper()) {
        Some(r) => Err(ctx.invalid(
            at,
            format!("[{}, {}] x [{}, {}]", r.x0, r.x1, r.y0, r.y1),
            "the shape's extent is not a finite, positive rectangle",
            "check the coordinates and the width for huge values",
        )),
        None => Ok(()),
    }
}
