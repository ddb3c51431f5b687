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
//! conductivity = 5.8e7               # optional, S/m; with `thickness` (in `units`): both or
//! thickness = 0.035                  # neither (neither = perfect conductor, zero thickness)
//! # `on = LAYER` puts a zero-thickness conductor on the TOP face of that layer; with
//! # layers = [] use `z = 0.0` instead of `on` (in `units`).
//!
//! [mesh]
//! max_cell = 0.05                    # target cell size, in `units`
//! edge_refine = true                 # graded cells at conductor edges (default true)
//!
//! [solve]
//! tolerance = 1e-4                   # H-matrix relative tolerance (in (0,1); default 1e-4)
//!
//! # Ports and sweep: for the full-wave solver; the capacitance extraction ignores them.
//! [[port]]
//! name = "p1"                        # unique among ports
//! net = "d0"                         # the net it feeds
//! at = [-0.075, 0]                   # a point on the edge of that net's conductor (`units`)
//! to = "gnd"                         # a ground layer, or another net (differential port)
//! impedance = 50                     # reference impedance in ohms (default 50)
//!
//! [sweep]
//! start = 1e8                        # Hz
//! stop = 1e10                        # Hz, >= start (== start only with points = 1)
//! points = 21                        # at least 1
//! spacing = "log"                    # "linear" (default) or "log"
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
//! - Ports: `at` must lie on the edge of the net's conductor, within [`port_edge_tolerance`]
//!   (the larger of 1e-3 `max_cell` and 1 nm) of the outline of the union of its shapes on one
//!   face, which becomes the port's face; see [`port`]. `to` names a `kind = "ground"` layer or
//!   another net. `[sweep]` frequencies: see [`Sweep::frequencies`].
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
//! [[port]]
//! name = "in"
//! net = "a"
//! at = [-0.1, 0]
//! to = "gnd"
//! [sweep]
//! start = 1e9
//! stop = 3e9
//! points = 3
//! "#;
//! let layout = rafter_layout::parse_str(text, "pair.toml").unwrap();
//! assert_eq!(layout.stackup.face_z("core"), Some(0.2e-3));
//! let mesh = rafter_layout::mesh(&layout).unwrap();
//! assert_eq!(mesh.cells.len(), rafter_layout::estimate_cells(&layout));
//! assert_eq!(layout.ports[0].face, "core");
//! assert_eq!(layout.sweep.unwrap().frequencies(), vec![1e9, 2e9, 3e9]);
//! ```
//!
//! Modules, one concept each: [`units`] (length units), `file` (the raw TOML structure),
//! [`stackup`] (layers and heights), `polygon` (plane polygon geometry), `shapes`
//! (shapes to rectangles or polygons), [`union`] (union of rectangles, and of polygons into
//! outlines), [`net`] (nets, regions and conductor metal), [`port`] (ports), [`sweep`]
//! (frequency sweep), [`mod@layout`] (the validated layout),
//! [`mod@mesh`] (cells), `triangulate` (triangle meshes of outlines), [`error`] (the error
//! type).

#![warn(missing_docs)]

pub mod error;
mod file;
pub mod layout;
pub mod mesh;
pub mod net;
mod polygon;
pub mod port;
pub mod rect;
mod shapes;
pub mod stackup;
pub mod sweep;
mod triangulate;
pub mod union;
pub mod units;

pub use error::LayoutError;
pub use layout::{DEFAULT_TOLERANCE, Layout, MeshOptions, SolveOptions, load, parse_str};
pub use mesh::{Cell, CellShape, MAX_CELLS, Mesh, estimate_cells, mesh, subdivide};
pub use net::{Conductor, Net, Region};
pub use port::{DEFAULT_IMPEDANCE, Port, PortReference, port_edge_tolerance};
pub use rect::Rect;
pub use stackup::{Layer, LayerKind, Stackup};
pub use sweep::{Spacing, Sweep};
pub use units::Unit;
