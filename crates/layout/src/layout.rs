//! The validated layout: stack-up, nets, mesh and solver options, ports and frequency sweep,
//! all lengths in metres.

use std::path::Path;

use crate::error::{Ctx, LayoutError, MISSING, fmt_str};
use crate::file::{self, RawLayout};
use crate::net::{self, Net};
use crate::port::{self, Port};
use crate::stackup::{self, Stackup};
use crate::sweep::{self, Sweep};
use crate::units::{Unit, format_in_units};

/// Default H-matrix relative tolerance when `[solve]` gives none.
pub const DEFAULT_TOLERANCE: f64 = 1e-4;

/// A layout file, read and validated. All lengths are in metres.
#[derive(Clone, Debug, PartialEq)]
pub struct Layout {
    /// The `name` of the layout.
    pub name: String,
    /// The file path as given, for messages.
    pub file: String,
    /// Metres per layout unit (e.g. 1e-3 for `units = "mm"`), for printing lengths back.
    pub unit_m: f64,
    /// The layout unit as written: `m`, `mm`, `um`, `mil` or `in`.
    pub unit_name: String,
    /// Layers, bottom to top.
    pub stackup: Stackup,
    /// Nets in file order.
    pub nets: Vec<Net>,
    /// Meshing options.
    pub mesh: MeshOptions,
    /// Solver options.
    pub solve: SolveOptions,
    /// Ports for the full-wave solver, in file order (empty when the file has no `[[port]]`).
    /// The capacitance extraction ignores them.
    pub ports: Vec<Port>,
    /// Frequency sweep for the full-wave solver (`None` when the file has no `[sweep]`). The
    /// capacitance extraction ignores it.
    pub sweep: Option<Sweep>,
}

/// How to cut the conductors into cells.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MeshOptions {
    /// Largest cell side (m).
    pub max_cell: f64,
    /// Grade the cells geometrically toward conductor edges, where the charge density peaks.
    pub edge_refine: bool,
}

/// Options of the solver.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SolveOptions {
    /// Relative tolerance of the H-matrix compression, in (0, 1).
    pub tolerance: f64,
}

impl Layout {
    /// A length given in metres written in the layout units, e.g. `"0.15 mm"`.
    pub fn show_length(&self, metres: f64) -> String {
        format!("{} {}", format_in_units(metres, self.unit_m), self.unit_name)
    }

    /// Total number of rectangles over all nets and regions (Manhattan regions only; those
    /// with an outline have none).
    pub fn rect_count(&self) -> usize {
        self.nets.iter().flat_map(|n| &n.regions).map(|r| r.rects.len()).sum()
    }
}

/// Reads and validates the layout file at `path`. Errors name the path as given.
pub fn load(path: &Path) -> Result<Layout, LayoutError> {
    let file = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| LayoutError::Read {
        file: file.clone(),
        reason: e.to_string(),
        hint: "check the path; a layout is a UTF-8 TOML text file".to_string(),
    })?;
    parse_str(&text, &file)
}

/// Parses and validates layout `text`; `file` names it in messages.
pub fn parse_str(text: &str, file: &str) -> Result<Layout, LayoutError> {
    let raw = file::read(text, file)?;
    validate(raw, Ctx { file })
}

fn validate(raw: RawLayout, ctx: Ctx<'_>) -> Result<Layout, LayoutError> {
    let name = match raw.name {
        None => {
            return Err(ctx.invalid(
                "name",
                MISSING,
                "the layout needs a name",
                "add name = \"...\" at the top",
            ));
        }
        Some(s) if s.trim().is_empty() => {
            return Err(ctx.invalid("name", fmt_str(&s), "must not be empty", "give the layout a name"));
        }
        Some(s) => s,
    };
    let unit = match raw.units.as_deref() {
        None => {
            return Err(ctx.invalid(
                "units",
                MISSING,
                "the layout must say which length unit it uses",
                format!("add units = \"mm\" (one of {})", Unit::names()),
            ));
        }
        Some(u) => Unit::from_name(u).ok_or_else(|| {
            ctx.invalid("units", fmt_str(u), "unknown length unit", format!("use one of {}", Unit::names()))
        })?,
    };
    let unit_m = unit.metres();
    let layers = raw.stackup.map(|s| s.layers).unwrap_or_default();
    let stackup = stackup::build(&layers, unit, ctx)?;
    let nets = net::build(&raw.net, &stackup, unit, ctx)?;

    let (max_cell, edge_refine) = match raw.mesh {
        None => (None, None),
        Some(m) => (m.max_cell, m.edge_refine),
    };
    let max_cell = match max_cell {
        None => {
            return Err(ctx.invalid(
                "mesh.max_cell",
                MISSING,
                "the target cell size is required",
                "add [mesh] with max_cell = ... (in the layout units), e.g. a third of the narrowest trace width",
            ));
        }
        Some(c) if !(c.is_finite() && c > 0.0) => {
            return Err(ctx.invalid(
                "mesh.max_cell",
                format!("{c}"),
                "must be positive and finite",
                "give the largest cell side in the layout units",
            ));
        }
        Some(c) => unit.to_metres(c),
    };
    let tolerance = match raw.solve.and_then(|s| s.tolerance) {
        None => DEFAULT_TOLERANCE,
        Some(t) if !(t > 0.0 && t < 1.0) => {
            return Err(ctx.invalid(
                "solve.tolerance",
                format!("{t}"),
                "must lie strictly between 0 and 1",
                "a relative tolerance such as 1e-4 (smaller is more accurate and slower)",
            ));
        }
        Some(t) => t,
    };
    let ports = port::build(&raw.port, &nets, &stackup, unit, max_cell, ctx)?;
    let sweep = sweep::build(raw.sweep.as_ref(), ctx)?;
    Ok(Layout {
        name,
        file: ctx.file.to_string(),
        unit_m,
        unit_name: unit.name().to_string(),
        stackup,
        nets,
        mesh: MeshOptions { max_cell, edge_refine: edge_refine.unwrap_or(true) },
        solve: SolveOptions { tolerance },
        ports,
        sweep,
    })
}
