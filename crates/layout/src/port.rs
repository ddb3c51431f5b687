//! Ports of `[[port]]`: where the coming full-wave solver (`rafter sweep`) feeds and measures
//! the layout. The capacitance extraction ignores them.
//!
//! A port sits at a point `at` on the edge of one net's conductor and is referenced either to a
//! ground layer of the stack-up or to another net (a differential port). Its face is the face
//! of the net's conductor whose edge contains `at`.
//!
//! "On the edge" means within [`port_edge_tolerance`] of the boundary of the net's region on
//! that face ([`Region::nearest_boundary_point`]): the outline of the union of the net's shapes
//! there, holes included. For a Manhattan region that boundary is made of the sides of its
//! rectangles minus the parts where two of them lie against each other, so a point on a seam
//! between two merged shapes is inside, not on the edge; for other regions it is the edges of
//! the outline contours. Points farther than the tolerance from the boundary, inside the
//! conductor or outside it, are refused, as are points within the tolerance of the edges on
//! more than one face.

use crate::error::{Ctx, LayoutError, MISSING, fmt_coords, fmt_str};
use crate::file::RawPort;
use crate::net::{Net, Region};
use crate::shapes::point;
use crate::stackup::{LayerKind, Stackup};
use crate::units::{Unit, format_in_units};

/// Reference impedance (Ω) of a port whose `impedance` is not given.
pub const DEFAULT_IMPEDANCE: f64 = 50.0;

/// Fraction of `mesh.max_cell` by which a port's `at` may miss the conductor edge.
pub const PORT_EDGE_RELATIVE: f64 = 1e-3;

/// Smallest tolerance (m) by which a port's `at` may miss the conductor edge.
pub const PORT_EDGE_MIN: f64 = 1e-9;

/// How far (m) a port's `at` may lie from the conductor edge: the larger of
/// [`PORT_EDGE_RELATIVE`] × `max_cell` (m) and [`PORT_EDGE_MIN`].
pub fn port_edge_tolerance(max_cell: f64) -> f64 {
    (PORT_EDGE_RELATIVE * max_cell).max(PORT_EDGE_MIN)
}

/// A validated port. Lengths are in metres.
#[derive(Clone, Debug, PartialEq)]
pub struct Port {
    /// Name, unique among the ports.
    pub name: String,
    /// Index into [`Layout::nets`](crate::Layout::nets) of the net the port feeds.
    pub net: usize,
    /// Where the port sits (m): a point on the edge of the net's conductor on `face`.
    pub at: [f64; 2],
    /// The face whose conductor edge holds `at`, named as in [`Region::face`].
    pub face: String,
    /// Height of that face (m).
    pub z: f64,
    /// What the port is referenced to.
    pub to: PortReference,
    /// Reference impedance (Ω), finite and positive; 50 unless given.
    pub impedance: f64,
}

/// The return side of a port.
#[derive(Clone, Debug, PartialEq)]
pub enum PortReference {
    /// A ground layer of the stack-up, by name.
    Ground(String),
    /// Another net (a differential port), by index into [`Layout::nets`](crate::Layout::nets).
    Net(usize),
}

/// Validates the `[[port]]` tables against the built nets (metres) and stack-up; `max_cell`
/// (m) sets the edge tolerance.
pub(crate) fn build(
    raw: &[RawPort],
    nets: &[Net],
    stackup: &Stackup,
    unit: Unit,
    max_cell: f64,
    ctx: Ctx<'_>,
) -> Result<Vec<Port>, LayoutError> {
    let tol = port_edge_tolerance(max_cell);
    let mut ports: Vec<Port> = Vec::with_capacity(raw.len());
    for (i, p) in raw.iter().enumerate() {
        let at_key = |key: &str| format!("port[{i}].{key}");
        let name = match &p.name {
            None => {
                return Err(ctx.invalid(
                    at_key("name"),
                    MISSING,
                    "every port needs a name",
                    "add name = \"...\"",
                ));
            }
            Some(s) if s.trim().is_empty() => {
                return Err(ctx.invalid(
                    at_key("name"),
                    fmt_str(s),
                    "port names must not be empty",
                    "name the port, e.g. p1, p2, ... in the order of the S-parameter indices",
                ));
            }
            Some(s) => s.clone(),
        };
        if let Some(j) = ports.iter().position(|o| o.name == name) {
            return Err(ctx.invalid(
                at_key("name"),
                fmt_str(&name),
                format!("the name is already used by port[{j}]"),
                "port names must be unique; rename one of them",
            ));
        }
        let net_list = || nets.iter().map(|n| fmt_str(&n.name)).collect::<Vec<_>>().join(", ");
        let net = match &p.net {
            None => {
                return Err(ctx.invalid(
                    at_key("net"),
                    MISSING,
                    format!("port {} needs the net it feeds", fmt_str(&name)),
                    format!("add net = \"...\", one of the nets: {}", net_list()),
                ));
            }
            Some(s) => nets.iter().position(|n| n.name == *s).ok_or_else(|| {
                ctx.invalid(
                    at_key("net"),
                    fmt_str(s),
                    "no net of that name",
                    format!("use one of the nets: {}", net_list()),
                )
            })?,
        };
        let (at, region) = place(p, i, &name, &nets[net], unit, tol, ctx)?;
        let to = reference(p, i, net, nets, stackup, ctx)?;
        let impedance = match p.impedance {
            None => DEFAULT_IMPEDANCE,
            Some(z) if !(z.is_finite() && z > 0.0) => {
                return Err(ctx.invalid(
                    at_key("impedance"),
                    format!("{z}"),
                    "must be positive and finite",
                    format!(
                        "give the port's reference impedance in ohms, or omit it for {DEFAULT_IMPEDANCE}"
                    ),
                ));
            }
            Some(z) => z,
        };
        ports.push(Port { name, net, at, face: region.face.clone(), z: region.z, to, impedance });
    }
    Ok(ports)
}

/// The port's `at` in metres and the region of `net` whose edge holds it.
fn place<'n>(
    p: &RawPort,
    i: usize,
    name: &str,
    net: &'n Net,
    unit: Unit,
    tol: f64,
    ctx: Ctx<'_>,
) -> Result<([f64; 2], &'n Region), LayoutError> {
    let field = format!("port[{i}].at");
    let Some(raw) = &p.at else {
        return Err(ctx.invalid(
            field,
            MISSING,
            format!("port {} needs its position", fmt_str(name)),
            format!(
                "add at = [x, y] (in the layout units): a point on the edge of net {}",
                fmt_str(&net.name)
            ),
        ));
    };
    let written = point(raw, &field, ctx)?;
    let at = written.map(|v| unit.to_metres(v));
    if !at.iter().all(|v| v.is_finite()) {
        return Err(ctx.invalid(
            field,
            fmt_coords(raw),
            "the point is too far out to be converted to metres",
            "check the coordinates and the units",
        ));
    }
    let unit_m = unit.metres();
    let len = |m: f64| format_in_units(m, unit_m);
    let pt = |q: [f64; 2]| format!("({}, {}) {}", len(q[0]), len(q[1]), unit.name());
    // Nearest boundary point and distance on every face of the net.
    let near: Vec<(&Region, [f64; 2], f64)> =
        net.regions.iter().filter_map(|r| r.nearest_boundary_point(at).map(|(q, d)| (r, q, d))).collect();
    let on: Vec<&(&Region, [f64; 2], f64)> = near.iter().filter(|n| n.2 <= tol).collect();
    match on.as_slice() {
        [one] => Ok((at, one.0)),
        [] => {
            let Some(&(region, q, d)) = near.iter().min_by(|a, b| a.2.total_cmp(&b.2)) else {
                // Nets always have at least one non-empty region; refuse rather than panic.
                return Err(ctx.invalid(
                    field,
                    fmt_coords(raw),
                    format!("net {} has no conductor edge to put the port on", fmt_str(&net.name)),
                    "give the net some shapes",
                ));
            };
            let side = if region.contains(at) { "inside the conductor" } else { "outside the conductor" };
            let face = if net.regions.len() > 1 {
                format!(" on face {}", fmt_str(&region.face))
            } else {
                String::new()
            };
            Err(ctx.invalid(
                field,
                fmt_coords(raw),
                format!(
                    "port {} at {} is not on the edge of net {}: it lies {side}; the nearest edge point{face} is {}, {} {} away",
                    fmt_str(name),
                    pt(at),
                    fmt_str(&net.name),
                    pt(q),
                    rounded(d / unit_m),
                    unit.name(),
                ),
                format!(
                    "a port sits on the outline of its net's conductor (within {} {}); move `at` there, e.g. to [{}, {}]",
                    len(tol),
                    unit.name(),
                    len(q[0]),
                    len(q[1]),
                ),
            ))
        }
        several => {
            let faces: Vec<String> = several.iter().map(|n| fmt_str(&n.0.face)).collect();
            Err(ctx.invalid(
                field,
                fmt_coords(raw),
                format!(
                    "port {} at {} lies on the edge of net {} on more than one face ({}), so its face is ambiguous",
                    fmt_str(name),
                    pt(at),
                    fmt_str(&net.name),
                    faces.join(", "),
                ),
                "move the point to an edge that the net's conductor has on one face only; the port's face is \
                 the one whose conductor edge holds `at`",
            ))
        }
    }
}

/// The port's `to`: a ground layer or another net than `own`.
fn reference(
    p: &RawPort,
    i: usize,
    own: usize,
    nets: &[Net],
    stackup: &Stackup,
    ctx: Ctx<'_>,
) -> Result<PortReference, LayoutError> {
    let field = format!("port[{i}].to");
    let grounds: Vec<String> =
        stackup.layers.iter().filter(|l| l.kind == LayerKind::Ground).map(|l| fmt_str(&l.name)).collect();
    let others: Vec<String> =
        nets.iter().enumerate().filter(|&(j, _)| j != own).map(|(_, n)| fmt_str(&n.name)).collect();
    let choices = || {
        let mut parts = Vec::new();
        if !grounds.is_empty() {
            parts.push(format!("a ground layer ({})", grounds.join(", ")));
        }
        if !others.is_empty() {
            parts.push(format!("another net for a differential port ({})", others.join(", ")));
        }
        if parts.is_empty() {
            "the layout has no ground layer and no other net: add a { kind = \"ground\" } layer to the \
             stack-up, or a second net"
                .to_string()
        } else {
            format!("use {}", parts.join(", or "))
        }
    };
    let Some(to) = &p.to else {
        return Err(ctx.invalid(
            field,
            MISSING,
            "every port needs the reference it is measured against",
            choices(),
        ));
    };
    let layer = stackup.layer(to);
    let net = nets.iter().position(|n| n.name == *to);
    match (layer, net) {
        (Some(_), Some(_)) => Err(ctx.invalid(
            field,
            fmt_str(to),
            "names both a layer of the stack-up and a net, so the reference is ambiguous",
            "rename the net or the layer so that `to` names only one of them",
        )),
        (Some(l), None) if l.kind == LayerKind::Ground => Ok(PortReference::Ground(l.name.clone())),
        (Some(_), None) => Err(ctx.invalid(
            field,
            fmt_str(to),
            "names a dielectric layer, not a ground; a port is referenced to a ground plane or to another net",
            choices(),
        )),
        (None, Some(j)) if j == own => Err(ctx.invalid(
            field,
            fmt_str(to),
            "names the port's own net; a port needs a return on another conductor",
            choices(),
        )),
        (None, Some(j)) => Ok(PortReference::Net(j)),
        (None, None) => Err(ctx.invalid(field, fmt_str(to), "no ground layer or net of that name", choices())),
    }
}

/// `v` rounded to 4 significant digits and printed plainly (e.g. `0.12`), for distances.
fn rounded(v: f64) -> String {
    match format!("{v:.3e}").parse::<f64>() {
        Ok(r) if r.is_finite() => format!("{r}"),
        _ => format!("{v}"),
    }
}
