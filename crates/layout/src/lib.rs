//! Layout files: the stack-up, the nets and their conductor shapes, read from TOML, validated,
//! and meshed into cells graded toward the conductor edges: rectangles where a net's shapes on
//! a face are all axis-aligned (Manhattan), triangles where any of them is oblique.
//!
//! [`load`] (or [`parse_str`]) returns a [`Layout`] whose lengths are all in metres; every
//! problem in the file comes back as a [`LayoutError`] naming the file, the field path, the
//! offending value and a hint. [`mesh()`] then cuts every net into [`Cell`]s.
//!
//! # The file format
//!
//! ```toml
//! name = "example"
//! units = "mm"                       # m | mm | um | mil | in   (mil = 25.4e-6 m, in = 25.4e-3 m)
//!
//! [stackup]                          # listed bottom to top
//! layers = [
//!   { name = "gnd",  kind = "ground" },      # perfect conductor plane, zero thickness
//!   { name = "core", kind = "dielectric", thickness = 0.2, eps_r = 4.4, loss_tangent = 0.02 },
//!   { name = "pre",  kind = "dielectric", thickness = 0.1, eps_r = 3.6 },
//!   # a second { kind = "ground" } at the top closes the stack (stripline); otherwise air above
//! ]
//! # free space: layers = [] (no ground, no dielectric)
//!
//! [[net]]
//! name = "d0"
//! shapes = [
//!   { trace = { on = "core", width = 0.15, path = [[0, 0], [10, 0], [10, 5]] } },
//!   { rect = { on = "core", min = [0, 0], max = [1, 1] } },
//!   { polygon = { on = "pre", points = [[0, 0], [2, 0], [2, 1], [0, 1]] } },
//! ]
//! # `on = LAYER` puts a zero-thickness conductor on the TOP face of that layer; with
//! # layers = [] use `z = 0.0` instead of `on` (in `units`).
//!
//! [mesh]
//! max_cell = 0.05                    # target cell size, in `units`
//! edge_refine = true                 # graded cells at conductor edges (default true)
//!
//! [solve]
//! tolerance = 1e-4                   # H-matrix relative tolerance (in (0,1); default 1e-4)
//! ```
//!
//! Rules:
//! - z = 0 is the bottom of the stack (the top face of a bottom ground); a layer's top face
//!   lies at the sum of the thicknesses of it and all layers below.
//! - Grounds may be only the first and/or the last layer; they take no `thickness`, `eps_r`
//!   or `loss_tangent`. A dielectric needs `thickness > 0` and `eps_r >= 1`;
//!   `loss_tangent >= 0` defaults to 0.
//! - Conductors sit on dielectric faces (`on`), never on a ground; without layers they take
//!   a height `z` instead.
//! - Shapes: `rect` (`min < max` on both axes), `trace` (`width > 0`, at least 2 distinct
//!   consecutive points; each segment is widened to `width` and extended by `width/2` past
//!   its ends), `polygon` (at least 3 points, non-zero area, not self-intersecting; closes
//!   by itself). Segments and edges may be oblique.
//! - Shapes of one net may overlap; they are merged. Different nets must not touch or
//!   overlap on the same face (up to a billionth of the face's extent). Unknown keys are
//!   errors everywhere.
//! - Meshing: a net's region on one face is cut into rectangles when all its shapes there
//!   are Manhattan (the count is then exact, see [`estimate_cells`]); otherwise the union of
//!   its shapes is triangulated, with boundary segments of 0.15 `max_cell` and triangles
//!   growing from there to at most `max_cell` inside (the count is then estimated).
//!
//! # Example
//!
//! ```
//! let text = r#"
//! name = "pair"
//! units = "mm"
//! [stackup]
//! layers = [
//!   { name = "gnd", kind = "ground" },
//!   { name = "core", kind = "dielectric", thickness = 0.2, eps_r = 4.4 },
//! ]
//! [[net]]
//! name = "a"
//! shapes = [{ trace = { on = "core", width = 0.2, path = [[0, 0], [2, 0]] } }]
//! [mesh]
//! max_cell = 0.1
//! "#;
//! let layout = rafter_layout::parse_str(text, "pair.toml").unwrap();
//! assert_eq!(layout.stackup.face_z("core"), Some(0.2e-3));
//! let mesh = rafter_layout::mesh(&layout).unwrap();
//! assert_eq!(mesh.cells.len(), rafter_layout::estimate_cells(&layout));
//! ```
//!
//! Modules, one concept each: [`units`] (length units), `file` (the raw TOML structure),
//! [`stackup`] (layers and heights), `polygon` (plane polygon geometry), `shapes`
//! (shapes to rectangles or polygons), [`union`] (union of rectangles, and of polygons into
//! outlines), [`net`] (nets and regions), [`mod@layout`] (the validated layout),
//! [`mod@mesh`] (cells), `triangulate` (triangle meshes of outlines), [`error`] (the error
//! type).

#![warn(missing_docs)]

pub mod error;
mod file;
pub mod layout;
pub mod mesh;
pub mod net;
mod polygon;
pub mod rect;
mod shapes;
pub mod stackup;
mod triangulate;
pub mod union;
pub mod units;

pub use error::LayoutError;
pub use layout::{DEFAULT_TOLERANCE, Layout, MeshOptions, SolveOptions, load, parse_str};
pub use mesh::{Cell, CellShape, MAX_CELLS, Mesh, estimate_cells, mesh, subdivide};
pub use net::{Net, Region};
pub use rect::Rect;
pub use stackup::{Layer, LayerKind, Stackup};
pub use units::Unit;
