//! The stack-up: ground planes and dielectric layers from bottom to top, with their heights.

use crate::error::{Ctx, LayoutError, MISSING, fmt_str};
use crate::file::RawLayer;
use crate::units::Unit;

/// The layers of the board, bottom to top, with heights in metres.
///
/// z = 0 is the bottom of the stack, which is the top face of the bottom ground when there is
/// one (grounds have zero thickness). With no layers the conductors are in free space.
#[derive(Clone, Debug, PartialEq)]
pub struct Stackup {
    /// Layers bottom to top.
    pub layers: Vec<Layer>,
    /// z (m) of the ground plane below everything, when the first layer is a ground (then 0).
    pub ground_below: Option<f64>,
    /// z (m) of the ground plane above everything, when the last layer (not also the first)
    /// is a ground.
    pub ground_above: Option<f64>,
}

/// One layer of the stack-up.
#[derive(Clone, Debug, PartialEq)]
pub struct Layer {
    /// Name, unique within the stack-up; conductors refer to it with `on = NAME`.
    pub name: String,
    /// Ground plane or dielectric.
    pub kind: LayerKind,
    /// z (m) of the bottom face.
    pub z_bottom: f64,
    /// z (m) of the top face (equal to `z_bottom` for a ground).
    pub z_top: f64,
}

/// What a layer is made of.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum LayerKind {
    /// A perfectly conducting plane of zero thickness.
    Ground,
    /// A homogeneous dielectric slab.
    Dielectric {
        /// Relative permittivity (≥ 1, dimensionless).
        eps_r: f64,
        /// Loss tangent tan δ (≥ 0, dimensionless).
        loss_tangent: f64,
    },
}

impl Stackup {
    /// A stack-up with no layers: conductors in free space.
    pub fn free_space() -> Stackup {
        Stackup { layers: Vec::new(), ground_below: None, ground_above: None }
    }

    /// Some(eps_r) when every dielectric layer has the same relative permittivity (1.0 when
    /// there are none), None otherwise.
    pub fn uniform_eps_r(&self) -> Option<f64> {
        let mut eps = self.layers.iter().filter_map(|l| match l.kind {
            LayerKind::Dielectric { eps_r, .. } => Some(eps_r),
            LayerKind::Ground => None,
        });
        let Some(first) = eps.next() else {
            return Some(1.0);
        };
        eps.all(|e| e == first).then_some(first)
    }

    /// z (m) of the top face of layer `name`, None if there is no such layer.
    pub fn face_z(&self, name: &str) -> Option<f64> {
        self.layer(name).map(|l| l.z_top)
    }

    /// The layer called `name`.
    pub fn layer(&self, name: &str) -> Option<&Layer> {
        self.layers.iter().find(|l| l.name == name)
    }

    /// Total height (m) from z = 0 to the top face of the last layer (0 for free space).
    pub fn height(&self) -> f64 {
        self.layers.last().map_or(0.0, |l| l.z_top)
    }
}

/// Validates `stackup.layers` (lengths in `unit`) and computes the heights in metres.
pub(crate) fn build(raw: &[RawLayer], unit: Unit, ctx: Ctx<'_>) -> Result<Stackup, LayoutError> {
    let mut layers: Vec<Layer> = Vec::with_capacity(raw.len());
    // Height in layout units, converted once per layer so that each face is the double
    // nearest to its height in metres (up to the summation).
    let mut z_units = 0.0;
    let n = raw.len();
    for (i, l) in raw.iter().enumerate() {
        let at = |key: &str| format!("stackup.layers[{i}].{key}");
        let name = match &l.name {
            None => {
                return Err(ctx.invalid(
                    at("name"),
                    MISSING,
                    "every layer needs a name",
                    "add name = \"...\"",
                ));
            }
            Some(s) if s.trim().is_empty() => {
                return Err(ctx.invalid(
                    at("name"),
                    fmt_str(s),
                    "layer names must not be empty",
                    "give the layer a name that conductors can refer to with on = \"...\"",
                ));
            }
            Some(s) => s.clone(),
        };
        if let Some(j) = layers.iter().position(|o| o.name == name) {
            return Err(ctx.invalid(
                at("name"),
                fmt_str(&name),
                format!("the name is already used by stackup.layers[{j}]"),
                "layer names must be unique; rename one of them",
            ));
        }
        let kind = match l.kind.as_deref() {
            None => {
                return Err(ctx.invalid(
                    at("kind"),
                    MISSING,
                    "every layer needs a kind",
                    "add kind = \"ground\" or kind = \"dielectric\"",
                ));
            }
            Some("ground") => {
                for (key, v) in
                    [("thickness", l.thickness), ("eps_r", l.eps_r), ("loss_tangent", l.loss_tangent)]
                {
                    if let Some(v) = v {
                        return Err(ctx.invalid(
                            at(key),
                            format!("{v}"),
                            format!("a ground layer is a perfectly conducting plane of zero thickness and takes no `{key}`"),
                            format!("remove `{key}`; for a slab with that property use kind = \"dielectric\""),
                        ));
                    }
                }
                if i != 0 && i != n - 1 {
                    return Err(ctx.unsupported(
                        at("kind"),
                        fmt_str("ground"),
                        "a ground plane between other layers",
                        "grounds may only be the first (bottom) and/or the last (top) layer",
                    ));
                }
                if i > 0 && i == n - 1 && layers.iter().all(|o| o.kind == LayerKind::Ground) {
                    return Err(ctx.invalid(
                        at("kind"),
                        fmt_str("ground"),
                        "the top ground would lie directly on the bottom ground",
                        "put at least one dielectric layer between the two grounds",
                    ));
                }
                LayerKind::Ground
            }
            Some("dielectric") => {
                let thickness = match l.thickness {
                    None => {
                        return Err(ctx.invalid(
                            at("thickness"),
                            MISSING,
                            "a dielectric layer needs a thickness",
                            "add thickness = ... in the layout units",
                        ));
                    }
                    Some(t) if !(t.is_finite() && t > 0.0) => {
                        return Err(ctx.invalid(
                            at("thickness"),
                            format!("{t}"),
                            "must be positive and finite",
                            "give the slab thickness in the layout units",
                        ));
                    }
                    Some(t) => t,
                };
                let eps_r = match l.eps_r {
                    None => {
                        return Err(ctx.invalid(
                            at("eps_r"),
                            MISSING,
                            "a dielectric layer needs a relative permittivity",
                            "add eps_r = ... (1 for air, about 4.4 for FR-4)",
                        ));
                    }
                    Some(e) if !(e.is_finite() && e >= 1.0) => {
                        return Err(ctx.invalid(
                            at("eps_r"),
                            format!("{e}"),
                            "must be at least 1 and finite",
                            "relative permittivities of real dielectrics are >= 1 (1 for air)",
                        ));
                    }
                    Some(e) => e,
                };
                let loss_tangent = match l.loss_tangent {
                    None => 0.0,
                    Some(d) if !(d.is_finite() && d >= 0.0) => {
                        return Err(ctx.invalid(
                            at("loss_tangent"),
                            format!("{d}"),
                            "must be non-negative and finite",
                            "omit it for a lossless dielectric, or give tan(delta) such as 0.02",
                        ));
                    }
                    Some(d) => d,
                };
                let top_units = z_units + thickness;
                let top = unit.to_metres(top_units);
                if !top.is_finite() {
                    return Err(ctx.invalid(
                        at("thickness"),
                        format!("{thickness}"),
                        "the stack-up height overflows",
                        "check the thickness and the units",
                    ));
                }
                layers.push(Layer {
                    name,
                    kind: LayerKind::Dielectric { eps_r, loss_tangent },
                    z_bottom: unit.to_metres(z_units),
                    z_top: top,
                });
                z_units = top_units;
                continue;
            }
            Some(other) => {
                return Err(ctx.invalid(
                    at("kind"),
                    fmt_str(other),
                    "unknown layer kind",
                    "use kind = \"ground\" or kind = \"dielectric\"",
                ));
            }
        };
        let z = unit.to_metres(z_units);
        layers.push(Layer { name, kind, z_bottom: z, z_top: z });
    }
    let ground_below = layers.first().filter(|l| l.kind == LayerKind::Ground).map(|l| l.z_top);
    let ground_above =
        layers.last().filter(|l| layers.len() > 1 && l.kind == LayerKind::Ground).map(|l| l.z_top);
    Ok(Stackup { layers, ground_below, ground_above })
}
