//! `rafter extract`: layout → mesh → compressed collocation operator → capacitance matrix,
//! and the files that report it.

use crate::output::{Staging, peak_memory_bytes};
use anyhow::Context;
use rafter_green::{FreeSpace, GroundBelow, LayerSpec, LayeredGreen, Panel, StaticGreen};
use rafter_layout::{CellShape, LayerKind, Layout, Mesh};
use rafter_mom::{CapacitanceOptions, CapacitanceResult, capacitance, spice_form};
use serde::Serialize;
use std::fmt::Write as _;
use std::time::Instant;

/// Progress hooks of [`extract`].
pub struct Hooks<'a> {
    /// A new stage starts (its name).
    pub stage: &'a mut dyn FnMut(&str),
    /// (blocks done, total) while the H-matrix is built.
    pub build: &'a (dyn Fn(usize, usize) + Sync),
    /// (net, iteration, relative residual) during each solve.
    pub gmres: &'a mut dyn FnMut(usize, usize, f64),
}

/// Seconds per stage of an extraction.
#[derive(Clone, Debug, Default, Serialize)]
pub struct Timing {
    /// Reading and validating the layout.
    pub parse_s: f64,
    /// Meshing.
    pub mesh_s: f64,
    /// Operator build (H-matrix compression, or dense fill).
    pub assemble_s: f64,
    /// Preconditioner set-up (or dense LU).
    pub preconditioner_s: f64,
    /// All solves.
    pub solve_s: f64,
    /// Wall time from start to results.
    pub total_s: f64,
}

/// H-matrix figures in the report.
#[derive(Clone, Debug, Serialize)]
pub struct HReport {
    /// Stored bytes / dense bytes.
    pub compression: f64,
    /// Stored bytes.
    pub memory_bytes: u64,
    /// Largest block rank.
    pub max_rank: usize,
    /// Relative per-block tolerance.
    pub tolerance: f64,
    /// Leaf blocks.
    pub blocks: usize,
}

/// GMRES figures in the report.
#[derive(Clone, Debug, Serialize)]
pub struct GmresSummary {
    /// Iterations per right-hand side (one per net, in net order).
    pub iterations: Vec<usize>,
    /// Final relative residual per right-hand side.
    pub residual: Vec<f64>,
    /// Residual target.
    pub tolerance: f64,
}

/// SPICE (branch) form.
#[derive(Clone, Debug, Serialize)]
pub struct SpiceReport {
    /// Capacitance from each net to the reference (F).
    pub to_ground: Vec<f64>,
    /// Capacitance between nets (F), symmetric, zero diagonal.
    pub between: Vec<Vec<f64>>,
}

/// The cells, their charges and the solver histories of an extraction.
#[derive(Clone, Debug, Default)]
pub struct Solution {
    /// The mesh cells (m), in unknown order.
    pub cells: Vec<rafter_layout::Cell>,
    /// Cell charges (C) per excited net: `charges[j][k]` on cell `k` with net `j` at 1 V.
    pub charges: Vec<Vec<f64>>,
    /// GMRES relative residual after each iteration, per net (empty on the dense path).
    pub histories: Vec<Vec<f64>>,
    /// Metres per layout unit, and the unit's name (for axes).
    pub unit_m: f64,
    /// The layout unit's name.
    pub unit_name: String,
}

/// Pictures of the solution that `rafter extract` draws besides the numbers.
#[derive(Clone, Debug, Default, PartialEq)]
pub enum Pictures {
    /// None.
    #[default]
    None,
    /// The charge density of every excited net, and the GMRES histories.
    All,
    /// The charge density with the named net excited, and the GMRES histories.
    Net(String),
}

impl Pictures {
    /// Refuses a net name the layout does not have (before any work).
    pub fn check(&self, layout: &Layout) -> anyhow::Result<()> {
        if let Pictures::Net(name) = self
            && !layout.nets.iter().any(|n| &n.name == name)
        {
            let names: Vec<&str> = layout.nets.iter().map(|n| n.name.as_str()).collect();
            anyhow::bail!(
                "--picture-net {name}: {} has no net of that name (hint: one of {})",
                layout.file,
                names.join(", ")
            );
        }
        Ok(())
    }
}

/// Everything `capacitance.json` holds.
#[derive(Clone, Debug, Serialize)]
pub struct Extraction {
    /// Layout name.
    pub layout: String,
    /// Layout file.
    pub file: String,
    /// Net names, in matrix order.
    pub nets: Vec<String>,
    /// Maxwell capacitance matrix (F), rows by net.
    pub capacitance: Vec<Vec<f64>>,
    /// SPICE form.
    pub spice: SpiceReport,
    /// `‖C − Cᵀ‖_F/‖C‖_F`.
    pub asymmetry: f64,
    /// Unknowns (cells).
    pub unknowns: usize,
    /// Cells per net.
    pub cells_per_net: Vec<usize>,
    /// Medium (Green's function) used.
    pub medium: String,
    /// `"h-matrix"` or `"dense"`.
    pub method: &'static str,
    /// H-matrix figures (absent on the dense path).
    pub hmatrix: Option<HReport>,
    /// The solution behind the numbers, for pictures (not written to JSON).
    #[serde(skip)]
    pub solution: Solution,
    /// GMRES figures (absent on the dense path).
    pub gmres: Option<GmresSummary>,
    /// Seconds per stage.
    pub timing: Timing,
    /// Peak resident memory of the process (bytes).
    pub peak_memory_bytes: Option<u64>,
}

/// The Green's function of the layout's stack-up: closed-form images for free space and for
/// a ground with air above, the tabulated layered Green's function otherwise — two grounds
/// with one εr included: its tables (images near, modes far) cost far less per entry than the
/// image and modal series of [`rafter_green::TwoGrounds`], to which it is tested equal.
pub fn green_for(layout: &Layout) -> anyhow::Result<Box<dyn StaticGreen>> {
    green_with(layout, None)
}

/// The Green's function of the stack-up with every dielectric replaced by air (`εr = 1`):
/// the medium of `C_air`, from which the inductance of quasi-TEM lines follows.
pub fn green_for_air(layout: &Layout) -> anyhow::Result<Box<dyn StaticGreen>> {
    green_with(layout, Some(1.0))
}

fn green_with(layout: &Layout, eps_override: Option<f64>) -> anyhow::Result<Box<dyn StaticGreen>> {
    let s = &layout.stackup;
    let accuracy = layout.solve.tolerance / 10.0;
    let dielectrics: Vec<(&str, LayerSpec)> = s
        .layers
        .iter()
        .filter_map(|l| match l.kind {
            LayerKind::Dielectric { eps_r, .. } => Some((
                l.name.as_str(),
                LayerSpec { thickness: l.z_top - l.z_bottom, eps_r: eps_override.unwrap_or(eps_r) },
            )),
            LayerKind::Ground => None,
        })
        .collect();
    let uniform = eps_override.or_else(|| s.uniform_eps_r());
    let green: Box<dyn StaticGreen> = match (s.ground_below, s.ground_above, uniform) {
        _ if dielectrics.is_empty() => Box::new(FreeSpace::new(1.0, accuracy)?),
        (Some(z0), None, Some(1.0)) => Box::new(GroundBelow::new(z0, 1.0, accuracy)?),
        (None, None, Some(1.0)) => Box::new(FreeSpace::new(1.0, accuracy)?),
        _ => {
            // Layered: tables for the faces that carry conductors, out to the layout's extent.
            let used: std::collections::BTreeSet<&str> =
                layout.nets.iter().flat_map(|n| n.regions.iter().map(|r| r.face.as_str())).collect();
            let faces: Vec<usize> = dielectrics
                .iter()
                .enumerate()
                .filter(|(_, (name, _))| used.contains(name))
                .map(|(i, _)| i)
                .collect();
            let specs: Vec<LayerSpec> = dielectrics.iter().map(|(_, spec)| *spec).collect();
            let rho_max = 1.01 * extent(layout) + f64::MIN_POSITIVE;
            Box::new(
                LayeredGreen::new(
                    &specs,
                    s.ground_below.is_some(),
                    s.ground_above.is_some(),
                    &faces,
                    rho_max,
                    accuracy,
                )
                .map_err(|e| {
                    let names: Vec<String> =
                        dielectrics.iter().enumerate().map(|(i, (name, _))| format!("{i} = {name}")).collect();
                    anyhow::anyhow!(
                        "{}: stackup.layers: {e}\n  (faces numbered bottom to top: {})\n  hint: the layered \
                         Green's function is tabulated out to the layout's extent to accuracy solve.tolerance/10; \
                         a layer far thinner than the layout is wide, or a very tight tolerance, makes that \
                         too costly — thicken the layer, extract a smaller part of the layout, or loosen \
                         solve.tolerance",
                        layout.file,
                        names.join(", ")
                    )
                })?,
            )
        }
    };
    Ok(green)
}

/// Diagonal (m) of the horizontal bounding box of every conductor.
fn extent(layout: &Layout) -> f64 {
    let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
    let mut add = |p: [f64; 2]| {
        for a in 0..2 {
            lo[a] = lo[a].min(p[a]);
            hi[a] = hi[a].max(p[a]);
        }
    };
    for region in layout.nets.iter().flat_map(|n| &n.regions) {
        for r in &region.rects {
            add([r.x0, r.y0]);
            add([r.x1, r.y1]);
        }
        for p in region.outline.iter().flatten() {
            add(*p);
        }
    }
    ((hi[0] - lo[0]).powi(2) + (hi[1] - lo[1]).powi(2)).sqrt()
}

/// Panels and their nets from a mesh.
pub fn panels(mesh: &Mesh) -> (Vec<Panel>, Vec<usize>) {
    mesh.cells
        .iter()
        .map(|c| {
            let panel = match c.shape {
                CellShape::Rect(r) => Panel::Rect { x0: r.x0, x1: r.x1, y0: r.y0, y1: r.y1, z: c.z },
                CellShape::Triangle(v) => Panel::Triangle { v, z: c.z },
            };
            (panel, c.net)
        })
        .unzip()
}

/// Runs the extraction of `layout` (already parsed in `parse_s` seconds).
pub fn extract(layout: &Layout, parse_s: f64, dense: bool, hooks: Hooks<'_>) -> anyhow::Result<Extraction> {
    let start = Instant::now();
    let green = green_for(layout)?;
    (hooks.stage)("meshing");
    let t = Instant::now();
    let mesh = rafter_layout::mesh(layout)?;
    let mesh_s = t.elapsed().as_secs_f64();
    let (panels, net_of) = panels(&mesh);
    let mut opts = CapacitanceOptions::for_tolerance(layout.solve.tolerance);
    opts.dense = dense;
    (hooks.stage)(if dense { "dense reference" } else { "building H-matrix" });
    let res: CapacitanceResult = capacitance(
        &panels,
        &net_of,
        layout.nets.len(),
        green.as_ref(),
        &opts,
        Some(hooks.build),
        hooks.gmres,
    )
    .with_context(|| format!("extracting {}", layout.file))?;
    let (to_ground, between) = spice_form(&res.maxwell);
    Ok(Extraction {
        layout: layout.name.clone(),
        file: layout.file.clone(),
        nets: layout.nets.iter().map(|n| n.name.clone()).collect(),
        capacitance: res.maxwell,
        spice: SpiceReport { to_ground, between },
        asymmetry: res.asymmetry,
        unknowns: panels.len(),
        cells_per_net: mesh.cells_per_net.clone(),
        medium: green.describe(),
        method: if dense { "dense" } else { "h-matrix" },
        hmatrix: res.hmatrix.as_ref().map(|s| HReport {
            compression: s.compression,
            memory_bytes: s.memory_bytes,
            max_rank: s.max_rank,
            tolerance: s.tolerance,
            blocks: s.blocks,
        }),
        solution: Solution {
            cells: mesh.cells,
            charges: res.charges,
            histories: res.gmres.iter().map(|g| g.history.clone()).collect(),
            unit_m: layout.unit_m,
            unit_name: layout.unit_name.clone(),
        },
        gmres: (!dense).then(|| GmresSummary {
            iterations: res.gmres.iter().map(|g| g.iterations).collect(),
            residual: res.gmres.iter().map(|g| g.residual).collect(),
            tolerance: opts.gmres.tolerance,
        }),
        timing: Timing {
            parse_s,
            mesh_s,
            assemble_s: res.timing.assemble_s,
            preconditioner_s: res.timing.preconditioner_s,
            solve_s: res.timing.solve_s,
            total_s: parse_s + start.elapsed().as_secs_f64(),
        },
        peak_memory_bytes: peak_memory_bytes(),
    })
}

/// SPICE-safe node name: letters, digits and `_` kept, anything else becomes `_`.
fn node(name: &str) -> String {
    let s: String =
        name.chars().map(|c| if c.is_ascii_alphanumeric() || c == '_' { c } else { '_' }).collect();
    if s.starts_with(|c: char| c.is_ascii_alphabetic()) { s } else { format!("n_{s}") }
}

/// The SPICE subcircuit text: one capacitor per net to the `ref` pin and per pair of nets.
pub fn spice_text(x: &Extraction) -> String {
    let name = node(&x.layout);
    let nodes: Vec<String> = x.nets.iter().map(|n| node(n)).collect();
    let mut s = String::new();
    let _ = writeln!(s, "* rafter capacitance extraction of {} ({})", x.layout, x.file);
    let _ = writeln!(
        s,
        "* symmetrised Maxwell matrix in branch form; farads; pin ref is the reference conductor"
    );
    let _ = writeln!(s, "* engineering estimate: validate critical designs by measurement");
    let _ = writeln!(s, ".SUBCKT {name} {} ref", nodes.join(" "));
    for (i, ni) in nodes.iter().enumerate() {
        let _ = writeln!(s, "C_{ni}_ref {ni} ref {:.6e}", x.spice.to_ground[i]);
    }
    for i in 0..nodes.len() {
        for j in i + 1..nodes.len() {
            let _ = writeln!(
                s,
                "C_{}_{} {} {} {:.6e}",
                nodes[i], nodes[j], nodes[i], nodes[j], x.spice.between[i][j]
            );
        }
    }
    let _ = writeln!(s, ".ENDS {name}");
    s
}

/// The Maxwell matrix as CSV (farads), a header row of net names.
pub fn csv_text(x: &Extraction) -> String {
    let quote = |s: &str| format!("\"{}\"", s.replace('"', "\"\""));
    let mut s = format!("net,{}\n", x.nets.iter().map(|n| quote(n)).collect::<Vec<_>>().join(","));
    for (name, row) in x.nets.iter().zip(&x.capacitance) {
        let _ = writeln!(
            s,
            "{},{}",
            quote(name),
            row.iter().map(|c| format!("{c:.9e}")).collect::<Vec<_>>().join(",")
        );
    }
    s
}

/// A terminal table of the Maxwell matrix in pF.
pub fn table_text(x: &Extraction) -> String {
    let w = x.nets.iter().map(|n| n.len()).max().unwrap_or(4).max(10);
    let mut s = format!("Maxwell capacitance matrix (pF), {} unknowns:\n{:>w$}", x.unknowns, "");
    for n in &x.nets {
        let _ = write!(s, " {n:>w$}");
    }
    s.push('\n');
    for (n, row) in x.nets.iter().zip(&x.capacitance) {
        let _ = write!(s, "{n:>w$}");
        for c in row {
            let _ = write!(s, " {:>w$.5}", c * 1e12);
        }
        s.push('\n');
    }
    let _ = writeln!(s, "asymmetry ‖C − Cᵀ‖/‖C‖ = {:.2e}", x.asymmetry);
    s
}

/// Writes `capacitance.json`, `.csv`, `.cir` (and the requested pictures) through the staged
/// output folder `st`, all or nothing.
pub fn write_outputs(mut st: Staging, x: &Extraction, pictures: &Pictures) -> anyhow::Result<()> {
    st.add("capacitance.json", serde_json::to_string_pretty(x)?.as_bytes())?;
    st.add("capacitance.csv", csv_text(x).as_bytes())?;
    st.add("capacitance.cir", spice_text(x).as_bytes())?;
    if *pictures != Pictures::None {
        let s = &x.solution;
        for (j, net) in x.nets.iter().enumerate() {
            if matches!(pictures, Pictures::Net(name) if name != net) {
                continue;
            }
            let density: Vec<f64> = s.charges[j].iter().zip(&s.cells).map(|(q, c)| q / c.area()).collect();
            let title = format!("{}: charge density with {net} at 1 V, others at 0 V", x.layout);
            let pic = crate::pictures::charge_density(&s.cells, &density, s.unit_m, &s.unit_name, &title)?;
            st.add(&format!("charge-{}.svg", node(net)), pic.svg.as_bytes())?;
            st.add(&format!("charge-{}.png", node(net)), &pic.png)?;
        }
        if !s.histories.is_empty() {
            let h: Vec<(String, Vec<f64>)> =
                x.nets.iter().cloned().zip(s.histories.iter().cloned()).collect();
            let tol = x.gmres.as_ref().map_or(0.0, |g| g.tolerance);
            let title = format!("{}: GMRES convergence, one line per excited net", x.layout);
            let pic = crate::pictures::convergence(&h, tol, &title)?;
            st.add("gmres.svg", pic.svg.as_bytes())?;
            st.add("gmres.png", &pic.png)?;
        }
    }
    st.commit()
}
