//! `rafter sweep`: the full-wave frequency sweep of a layout's ports.
//!
//! The layout is meshed as for the capacitance job; the cells carry the charge unknowns, their
//! shared edges the rooftop/RWG current unknowns ([`rafter_mom::edges`]), and each `[[port]]`
//! adds the feed functions of [`rafter_mom::current`]. The medium must be homogeneous in this
//! version (one εr and loss tangent everywhere the fields are), bounded by none, one or two
//! ground planes; see [`Medium`].

use anyhow::{Context, Result, bail};
use num_complex::Complex64;
use rafter_green::Panel;
use rafter_green::dynamic::{C0, wavenumber};
use rafter_layout::{LayerKind, Layout, PortReference};
use rafter_mom::current::{CurrentBasis, FeedReturn, FeedSpec, current_basis};
use rafter_mom::edges::edge_basis;
use rafter_mom::mpie::{ImageGreen, Planes, PlateGreen, WaveGreen};

use crate::extract::panels;
use crate::output::Staging;
use crate::{sparams_plot, touchstone};
use rafter_linalg::DenseMatrix;
use rafter_mom::deembed::{self, PortDiscontinuity};
use rafter_mom::wave::{FrequencyResult, WaveOptions, WaveProblem};
use rafter_mom::{network, surface};
use std::time::Instant;

/// Vacuum permeability μ0 (H/m, CODATA 2022).
pub const MU0: f64 = 1.256_637_061_27e-6;

/// The homogeneous medium of a full-wave solve.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Medium {
    /// Relative permittivity.
    pub eps_r: f64,
    /// Loss tangent.
    pub loss_tangent: f64,
    /// Ground plane heights (m): below, above.
    pub grounds: (Option<f64>, Option<f64>),
}

impl Medium {
    /// The layout's medium, or an error explaining why it is not homogeneous.
    pub fn of(layout: &Layout) -> Result<Self> {
        let s = &layout.stackup;
        let mut props = s.layers.iter().filter_map(|l| match l.kind {
            LayerKind::Dielectric { eps_r, loss_tangent } => Some((eps_r, loss_tangent)),
            LayerKind::Ground => None,
        });
        let (eps_r, loss_tangent) = props.next().unwrap_or((1.0, 0.0));
        if props.any(|p| p != (eps_r, loss_tangent)) {
            bail!(
                "{}: stackup.layers: the dielectric layers differ in eps_r or loss_tangent\n  hint: `rafter sweep` \
                 solves homogeneous media in this version (one eps_r and loss_tangent); `rafter extract` handles \
                 layered stack-ups",
                layout.file
            );
        }
        let enclosed = s.ground_below.is_some() && s.ground_above.is_some();
        if eps_r != 1.0 && !enclosed {
            bail!(
                "{}: stackup.layers: eps_r = {eps_r} with air beyond the top layer is a layered medium\n  hint: \
                 `rafter sweep` solves homogeneous media in this version: air (eps_r = 1) with or without a ground \
                 below, or one dielectric filling the space between two grounds (stripline)",
                layout.file
            );
        }
        if s.ground_above.is_some() && s.ground_below.is_none() {
            bail!(
                "{}: stackup.layers: a ground above the conductors with none below\n  hint: `rafter sweep` \
                 takes no ground, one ground below, or two grounds; list the layers the other way up",
                layout.file
            );
        }
        Ok(Self { eps_r, loss_tangent, grounds: (s.ground_below, s.ground_above) })
    }

    /// Wavenumber at `f` (1/m).
    pub fn k(&self, f: f64) -> Complex64 {
        wavenumber(f, self.eps_r, self.loss_tangent, 1.0)
    }

    /// Wave impedance `η = √(μ0 / (ε0 εr (1 − j tan δ)))` (Ω).
    pub fn eta(&self) -> Complex64 {
        let eps = Complex64::new(self.eps_r, -self.eps_r * self.loss_tangent) * (1.0 / (MU0 * C0 * C0));
        (Complex64::new(MU0, 0.0) / eps).sqrt()
    }

    /// The Green's function at `f` for conductors at `heights` (m) spread over `extent` (m),
    /// tables (two grounds) to relative accuracy `tol`.
    pub fn green(&self, f: f64, heights: &[f64], extent: f64, tol: f64) -> Result<Box<dyn WaveGreen>> {
        let k = self.k(f);
        Ok(match self.grounds {
            (None, None) => Box::new(ImageGreen { k, planes: Planes::Open }),
            (Some(z), None) => Box::new(ImageGreen { k, planes: Planes::Below(z) }),
            (None, Some(_)) => bail!("a ground above with none below (refused by `Medium::of`)"),
            (Some(z0), Some(z1)) => Box::new(
                PlateGreen::new(k, z0, z1, heights, 1.01 * extent + 1e-9, tol)
                    .with_context(|| format!("the stripline Green's function at {f:.6e} Hz"))?,
            ),
        })
    }
}

/// Mesh, basis and medium of a layout, prepared once for a sweep.
pub struct WaveSetup {
    /// Panels of the mesh.
    pub panels: Vec<Panel>,
    /// Net of each panel.
    pub net_of: Vec<usize>,
    /// Current basis with port feeds.
    pub basis: CurrentBasis,
    /// Medium.
    pub medium: Medium,
    /// Distinct conductor heights (m).
    pub heights: Vec<f64>,
    /// The mesh cells (one per panel, same order), for pictures.
    pub cells: Vec<rafter_layout::Cell>,
    /// Diagonal of the conductors' bounding box (m).
    pub extent: f64,
}

impl WaveSetup {
    /// The Green's function at `f` (tables to `tol`).
    pub fn green(&self, f: f64, tol: f64) -> Result<Box<dyn WaveGreen>> {
        self.medium.green(f, &self.heights, self.extent, tol)
    }
}

/// Meshes `layout` and builds its full-wave basis.
pub fn setup(layout: &Layout) -> Result<WaveSetup> {
    let medium = Medium::of(layout)?;
    if layout.ports.is_empty() {
        bail!(
            "{}: no [[port]]: `rafter sweep` needs at least one port\n  hint: add a [[port]] table",
            layout.file
        );
    }
    let mesh = rafter_layout::mesh(layout)?;
    let (panels, net_of) = panels(&mesh);
    let edges = edge_basis(&panels, &net_of)
        .with_context(|| format!("{}: building the current basis", layout.file))?;
    let tol = rafter_layout::port_edge_tolerance(layout.mesh.max_cell);
    let feeds: Vec<FeedSpec> = layout
        .ports
        .iter()
        .map(|p| FeedSpec {
            name: p.name.clone(),
            net: p.net,
            z: p.z,
            at: p.at,
            to: match p.to {
                PortReference::Ground(_) => FeedReturn::Ground,
                PortReference::Net(n) => FeedReturn::Net(n),
            },
            tolerance: tol,
        })
        .collect();
    let basis =
        current_basis(&panels, &net_of, &edges, &feeds).with_context(|| format!("{}: ports", layout.file))?;
    let mut heights: Vec<f64> = panels.iter().map(Panel::z).collect();
    heights.sort_by(f64::total_cmp);
    heights.dedup();
    let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
    for p in &panels {
        for v in p.vertices() {
            for a in 0..2 {
                lo[a] = lo[a].min(v[a]);
                hi[a] = hi[a].max(v[a]);
            }
        }
    }
    let extent = (hi[0] - lo[0]).hypot(hi[1] - lo[1]);
    Ok(WaveSetup { panels, net_of, basis, medium, heights, extent, cells: mesh.cells })
}

/// Largest relative asymmetry `‖S − Sᵀ‖_F/‖S‖_F` accepted as reciprocal.
pub const RECIPROCITY_LIMIT: f64 = 1e-6;
/// Largest singular value of `S` accepted as passive: `1 + PASSIVITY_MARGIN`.
pub const PASSIVITY_MARGIN: f64 = 1e-6;

/// One solved frequency.
#[derive(Clone, Debug)]
pub struct SweepPoint {
    /// Frequency (Hz).
    pub frequency_hz: f64,
    /// Admittance matrix (S).
    pub y: DenseMatrix<Complex64>,
    /// Impedance matrix (Ω); `None` where `Y` is singular.
    pub z: Option<DenseMatrix<Complex64>>,
    /// Scattering matrix (power waves, each port's own reference impedance).
    pub s: DenseMatrix<Complex64>,
    /// The solve's figures.
    pub solve: FrequencyResult,
    /// `‖S − Sᵀ‖_F / ‖S‖_F`.
    pub reciprocity_error: f64,
    /// Largest singular value of `S`.
    pub largest_singular_value: f64,
    /// Warnings (reciprocity or passivity violated, a port not de-embedded).
    pub warnings: Vec<String>,
    /// Per de-embedded port: `(port, Z0 (Ω), γ (1/m))` of its feed line at this frequency.
    pub feed_lines: Vec<(usize, Complex64, Complex64)>,
}

/// A sweep: the frequencies solved, and the failure that stopped it, if any.
pub struct SweepRun {
    /// Port names, in file order.
    pub ports: Vec<String>,
    /// Reference impedance per port (Ω).
    pub impedances: Vec<f64>,
    /// Solved frequencies, in order.
    pub points: Vec<SweepPoint>,
    /// `(frequency, error)` of the frequency that failed (the sweep stops there).
    pub failure: Option<(f64, String)>,
    /// Unknowns and panels.
    pub unknowns: usize,
    /// Seconds spent on the frequency-independent setup (mesh, basis, projector).
    pub setup_s: f64,
    /// Medium, as a sentence.
    pub medium: String,
    /// Ports whose discontinuity is removed.
    pub deembedded: Vec<usize>,
    /// `(port, l)`: the feed-line standard length (m) per de-embedded port.
    pub standard_lengths: Vec<(usize, f64)>,
    /// Surface-current pictures `(file stem, picture)` at the requested frequency.
    pub pictures: Vec<(String, crate::pictures::Rendered)>,
}

/// One |J| picture per port at the frequency of `p`: the surface current with 1 V across that
/// port and every other port shorted (the excitation of the admittance matrix, before
/// de-embedding).
pub fn current_pictures(
    layout: &Layout,
    setup: &WaveSetup,
    p: &SweepPoint,
) -> Result<Vec<(String, crate::pictures::Rendered)>> {
    let mut out = Vec::new();
    for (port, coeffs) in layout.ports.iter().zip(&p.solve.currents) {
        let j = rafter_mom::current_map::panel_currents(&setup.basis, &setup.panels, coeffs)?;
        let mag: Vec<f64> = j.iter().map(rafter_mom::current_map::magnitude).collect();
        let title = format!(
            "{}: |J| at {:.4} GHz, 1 V at port {} (others shorted)",
            layout.name,
            p.frequency_hz / 1e9,
            port.name
        );
        let pic =
            crate::pictures::current_density(&setup.cells, &mag, layout.unit_m, &layout.unit_name, &title)?;
        out.push((format!("current-{}", port.name), pic));
    }
    Ok(out)
}

/// `Z_s` per panel of a setup at `f` (`None` when every net is a perfect conductor).
fn surface_impedances(layout: &Layout, setup: &WaveSetup, f: f64) -> Option<Vec<Complex64>> {
    layout.nets.iter().any(|n| n.conductor.is_some()).then(|| {
        setup
            .net_of
            .iter()
            .map(|&net| match &layout.nets[net].conductor {
                Some(c) => surface::surface_impedance(f, c.conductivity, c.thickness),
                None => Complex64::new(0.0, 0.0),
            })
            .collect()
    })
}

/// One frequency of one prepared problem.
fn solve_at(
    layout: &Layout,
    setup: &WaveSetup,
    problem: &WaveProblem<'_>,
    f: f64,
    opts: &WaveOptions,
) -> Result<FrequencyResult> {
    let green = setup.green(f, 0.1 * opts.hmatrix.tolerance)?;
    let zs = surface_impedances(layout, setup, f);
    Ok(problem.solve(f, green.as_ref(), setup.medium.eta(), zs.as_deref(), opts, &mut |_| {})?)
}

/// The calibration standards of one kind of ground port (same face, width and metal): its feed
/// line, a straight strip of the port's width, of lengths `l` and `2l` with a port to the same
/// ground at each end (see [`rafter_mom::deembed`]).
pub struct FeedStandard {
    /// Ports (indices into the layout's ports) of this kind.
    pub ports: Vec<usize>,
    /// Strip width (m): the length of the port's conductor side.
    pub width: f64,
    /// Standard length `l` (m).
    pub length: f64,
    layouts: [Layout; 2],
    setups: Vec<WaveSetup>,
}

/// Ground ports grouped by kind, each with its two standards; ports on sides that are not
/// straight strip ends, and differential ports, are left as they are (not de-embedded).
fn feed_standards(layout: &Layout, ws: &WaveSetup, f_max: f64) -> Result<Vec<FeedStandard>> {
    let mut kinds: Vec<FeedStandard> = Vec::new();
    // Longest standard: a quarter wavelength at the top frequency keeps βl < π/2 for `l` and
    // βl < π for `2l` (the calibration is undefined at half a wavelength).
    let lambda_min = C0 / (f_max * ws.medium.eps_r.sqrt());
    let thickness = match ws.medium.grounds {
        (Some(a), Some(b)) => b - a,
        (Some(a), None) => ws.heights.iter().map(|z| z - a).fold(0.0, f64::max),
        _ => 0.0,
    };
    for (i, port) in layout.ports.iter().enumerate() {
        if !matches!(port.to, PortReference::Ground(_)) {
            continue;
        }
        let width: f64 = ws.basis.ports[i].iter().map(|&n| ws.basis.functions[n].length).sum();
        let conductor = layout.nets[port.net].conductor;
        if let Some(k) = kinds.iter_mut().find(|k| {
            let p0 = &layout.ports[k.ports[0]];
            (k.width - width).abs() <= 1e-9 * width
                && p0.z == port.z
                && p0.to == port.to
                && layout.nets[p0.net].conductor == conductor
        }) {
            k.ports.push(i);
            continue;
        }
        // Long enough for the port's fringing field to settle (common practice: a few strip
        // widths and a few substrate thicknesses), short of a quarter wavelength.
        let length = (4.0 * width).max(3.0 * thickness).min(0.25 * lambda_min);
        let make = |len: f64| {
            let mut l = layout.clone();
            l.name = format!("{}-feed-standard", port.name);
            l.nets = vec![rafter_layout::Net {
                name: "feed".into(),
                regions: vec![rafter_layout::Region {
                    face: port.face.clone(),
                    z: port.z,
                    rects: vec![rafter_layout::Rect { x0: 0.0, x1: len, y0: -width / 2.0, y1: width / 2.0 }],
                    outline: Vec::new(),
                }],
                conductor,
            }];
            let end = |name: &str, x: f64| rafter_layout::Port {
                name: name.into(),
                net: 0,
                at: [x, 0.0],
                face: port.face.clone(),
                z: port.z,
                to: port.to.clone(),
                impedance: 50.0,
            };
            l.ports = vec![end("near", 0.0), end("far", len)];
            l.sweep = None;
            l
        };
        let layouts = [make(length), make(2.0 * length)];
        let setups = layouts
            .iter()
            .map(setup)
            .collect::<Result<Vec<_>>>()
            .with_context(|| format!("port '{}': its feed-line standards", port.name))?;
        kinds.push(FeedStandard { ports: vec![i], width, length, layouts, setups });
    }
    Ok(kinds)
}

/// Runs the sweep of `layout` (which must have a `[sweep]`). Errors in the setup are returned;
/// an error at one frequency stops the sweep and is recorded in [`SweepRun::failure`], keeping
/// the frequencies already solved. `progress(done, total, message)` follows the sweep.
///
/// With `deembed`, every port to a ground has its port discontinuity removed at every
/// frequency ([`rafter_mom::deembed`]): its feed line's two standards are solved at the same
/// frequency and tolerance, and the admittances are de-embedded before `S` and `Z` are formed.
///
/// `currents_at` keeps the surface currents of the frequency nearest to it for pictures
/// ([`current_pictures`]); the other frequencies drop theirs.
pub fn run(
    layout: &Layout,
    deembed: bool,
    currents_at: Option<f64>,
    progress: &mut dyn FnMut(usize, usize, &str),
) -> Result<SweepRun> {
    let t0 = Instant::now();
    let Some(sweep) = &layout.sweep else {
        bail!(
            "{}: no [sweep] table\n  hint: add [sweep] with start, stop (Hz), points and spacing = \"linear\" | \"log\"",
            layout.file
        );
    };
    let freqs = sweep.frequencies();
    let keep = currents_at.map(|fc| {
        (0..freqs.len()).min_by(|&a, &b| (freqs[a] - fc).abs().total_cmp(&(freqs[b] - fc).abs())).unwrap_or(0)
    });
    progress(0, freqs.len(), "meshing and preparing the current basis");
    let setup = setup(layout)?;
    let problem = WaveProblem::new(&setup.panels, &setup.basis).with_context(|| layout.file.clone())?;
    let standards = if deembed {
        feed_standards(layout, &setup, freqs.iter().copied().fold(0.0, f64::max))?
    } else {
        Vec::new()
    };
    let std_problems: Vec<Vec<WaveProblem<'_>>> = standards
        .iter()
        .map(|k| {
            k.setups.iter().map(|s| WaveProblem::new(&s.panels, &s.basis)).collect::<Result<Vec<_>, _>>()
        })
        .collect::<Result<_, _>>()?;
    let setup_s = t0.elapsed().as_secs_f64();
    let tol = layout.solve.tolerance;
    let opts = WaveOptions::with_tolerance(tol);
    let impedances: Vec<f64> = layout.ports.iter().map(|p| p.impedance).collect();
    let mut run = SweepRun {
        ports: layout.ports.iter().map(|p| p.name.clone()).collect(),
        impedances: impedances.clone(),
        points: Vec::new(),
        failure: None,
        unknowns: problem.unknowns(),
        setup_s,
        medium: setup.medium.describe(),
        deembedded: standards.iter().flat_map(|k| k.ports.iter().copied()).collect(),
        standard_lengths: standards.iter().flat_map(|k| k.ports.iter().map(|&p| (p, k.length))).collect(),
        pictures: Vec::new(),
    };
    run.deembedded.sort_unstable();
    run.standard_lengths.sort_by_key(|&(p, _)| p);
    let mut gammas: Vec<Option<Complex64>> = vec![None; standards.len()];
    for (i, &f) in freqs.iter().enumerate() {
        progress(i, freqs.len(), &format!("{f:.4e} Hz"));
        let point = (|| -> Result<SweepPoint> {
            let mut solve = solve_at(layout, &setup, &problem, f, &opts)?;
            if keep != Some(i) {
                solve.currents = Vec::new();
            }
            let mut warnings = Vec::new();
            let mut boxes: Vec<Option<PortDiscontinuity>> = vec![None; impedances.len()];
            let mut feeds = Vec::new();
            for (ki, (kind, probs)) in standards.iter().zip(&std_problems).enumerate() {
                let ys = kind
                    .layouts
                    .iter()
                    .zip(&kind.setups)
                    .zip(probs)
                    .map(|((l, s), p)| solve_at(l, s, p, f, &opts).map(|r| r.y))
                    .collect::<Result<Vec<_>>>()?;
                match deembed::calibrate(&ys[0], &ys[1], kind.length, gammas[ki]) {
                    Ok(cal) => {
                        gammas[ki] = Some(cal.gamma);
                        for &p in &kind.ports {
                            boxes[p] = Some(cal.port);
                            feeds.push((p, cal.z0, cal.gamma));
                        }
                    }
                    Err(e) => warnings.push(format!(
                        "ports {:?} not de-embedded at {f:.6e} Hz: {e}",
                        kind.ports.iter().map(|&p| run.ports[p].clone()).collect::<Vec<_>>()
                    )),
                }
            }
            let y = if boxes.iter().any(Option::is_some) {
                deembed::deembed(&solve.y, &boxes)?
            } else {
                solve.y.clone()
            };
            let s = network::s_from_y(&y, &impedances)?;
            let z = network::z_from_y(&y).ok();
            let reciprocity_error = network::reciprocity_error(&s);
            let largest_singular_value = network::largest_singular_value(&s);
            if reciprocity_error > RECIPROCITY_LIMIT {
                warnings.push(format!(
                    "not reciprocal at {f:.6e} Hz: ‖S − Sᵀ‖/‖S‖ = {reciprocity_error:.2e} > {RECIPROCITY_LIMIT:e}"
                ));
            }
            if largest_singular_value > 1.0 + PASSIVITY_MARGIN {
                warnings.push(format!(
                    "not passive at {f:.6e} Hz: largest singular value of S = {largest_singular_value:.9} > 1 + \
                     {PASSIVITY_MARGIN:e}"
                ));
            }
            feeds.sort_by_key(|&(p, _, _)| p);
            Ok(SweepPoint {
                frequency_hz: f,
                y,
                z,
                s,
                solve,
                reciprocity_error,
                largest_singular_value,
                warnings,
                feed_lines: feeds,
            })
        })();
        match point {
            Ok(p) => {
                if keep == Some(i) {
                    run.pictures = current_pictures(layout, &setup, &p)?;
                }
                run.points.push(p)
            }
            Err(e) => {
                run.failure = Some((f, format!("{e:#}")));
                break;
            }
        }
    }
    progress(run.points.len(), freqs.len(), "done");
    Ok(run)
}

impl Medium {
    /// A sentence naming the medium.
    pub fn describe(&self) -> String {
        let grounds = match self.grounds {
            (None, None) => "no ground plane".to_string(),
            (Some(z), None) => format!("a ground plane at z = {z:.6e} m"),
            (Some(a), Some(b)) => format!("ground planes at z = {a:.6e} and {b:.6e} m"),
            (None, Some(b)) => format!("a ground plane above at z = {b:.6e} m"),
        };
        format!("homogeneous, eps_r = {}, loss tangent = {}, {grounds}", self.eps_r, self.loss_tangent)
    }
}

fn pairs(m: &DenseMatrix<Complex64>) -> Vec<Vec<[f64; 2]>> {
    (0..m.nrows()).map(|i| (0..m.ncols()).map(|j| [m.get(i, j).re, m.get(i, j).im]).collect()).collect()
}

/// `sweep.json` of a run.
pub fn json(layout: &Layout, run: &SweepRun) -> serde_json::Value {
    let pts = &run.points;
    serde_json::json!({
        "layout": layout.name,
        "file": layout.file,
        "medium": run.medium,
        "ports": run.ports,
        "impedances_ohm": run.impedances,
        "unknowns_total": run.unknowns,
        "setup_seconds": run.setup_s,
        "frequencies_hz": pts.iter().map(|p| p.frequency_hz).collect::<Vec<_>>(),
        "s": pts.iter().map(|p| pairs(&p.s)).collect::<Vec<_>>(),
        "z": pts.iter().map(|p| p.z.as_ref().map(pairs)).collect::<Vec<_>>(),
        "y": pts.iter().map(|p| pairs(&p.y)).collect::<Vec<_>>(),
        "unknowns": pts.iter().map(|p| p.solve.unknowns).collect::<Vec<_>>(),
        "iterations": pts.iter().map(|p| p.solve.iterations.clone()).collect::<Vec<_>>(),
        "residuals": pts.iter().map(|p| p.solve.residuals.clone()).collect::<Vec<_>>(),
        "compression": pts.iter().map(|p| p.solve.compression).collect::<Vec<_>>(),
        "memory_bytes": pts.iter().map(|p| p.solve.memory_bytes).collect::<Vec<_>>(),
        "seconds": pts.iter().map(|p| p.solve.seconds[2]).collect::<Vec<_>>(),
        "reciprocity_error": pts.iter().map(|p| p.reciprocity_error).collect::<Vec<_>>(),
        "reciprocal": pts.iter().map(|p| p.reciprocity_error <= RECIPROCITY_LIMIT).collect::<Vec<_>>(),
        "largest_singular_value": pts.iter().map(|p| p.largest_singular_value).collect::<Vec<_>>(),
        "passive": pts.iter().map(|p| p.largest_singular_value <= 1.0 + PASSIVITY_MARGIN).collect::<Vec<_>>(),
        "warnings": pts.iter().flat_map(|p| p.warnings.clone()).collect::<Vec<_>>(),
        "deembedded_ports": run.deembedded.iter().map(|&p| run.ports[p].clone()).collect::<Vec<_>>(),
        "feed_standard_length_m": run.standard_lengths.iter().map(|&(_, l)| l).collect::<Vec<_>>(),
        "feed_lines": pts.iter().map(|p| p.feed_lines.iter().map(|(port, z0, g)| serde_json::json!({
            "port": run.ports[*port], "z0_ohm": [z0.re, z0.im], "gamma_per_m": [g.re, g.im]
        })).collect::<Vec<_>>()).collect::<Vec<_>>(),
        "failed": run.failure.as_ref().map(|(f, e)| serde_json::json!({"frequency_hz": f, "error": e})),
    })
}

/// Writes `<name>.sNp` (Touchstone 1.1, RI), `sweep.json` and `sparams.{svg,png}` into the
/// staging folder and commits it. Returns the Touchstone file name.
pub fn write_outputs(mut st: Staging, layout: &Layout, run: &SweepRun) -> Result<String> {
    let n = run.ports.len();
    let name = format!("{}.s{n}p", layout.name);
    st.add("sweep.json", serde_json::to_string_pretty(&json(layout, run))?.as_bytes())?;
    if !run.points.is_empty() {
        let freqs: Vec<f64> = run.points.iter().map(|p| p.frequency_hz).collect();
        let first = run.impedances[0];
        let uniform = run.impedances.iter().all(|&z| z == first);
        let z_ref = if uniform { first } else { 50.0 };
        let s: Vec<DenseMatrix<Complex64>> = run
            .points
            .iter()
            .map(|p| {
                if uniform {
                    Ok(p.s.clone())
                } else {
                    network::renormalize(&p.s, &run.impedances, &vec![50.0; n])
                }
            })
            .collect::<Result<_, _>>()?;
        let mut header = vec![
            format!("{} ({}): S-parameters from rafter sweep", layout.name, layout.file),
            format!("medium: {}", run.medium),
            format!(
                "ports: {}",
                run.ports
                    .iter()
                    .zip(&run.impedances)
                    .map(|(p, z)| format!("{p} ({z} ohm)"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        ];
        if !uniform {
            header.push(
                "the ports' reference impedances differ: this file is renormalised to 50 ohm at every port"
                    .into(),
            );
        }
        header.push("engineering estimate: validate critical designs by measurement".into());
        let text = touchstone::touchstone(&freqs, &s, z_ref, touchstone::NumberFormat::RealImag, &header)?;
        st.add(&name, text.as_bytes())?;
        let pic = sparams_plot::s_parameter_plot(
            &freqs,
            &run.points.iter().map(|p| p.s.clone()).collect::<Vec<_>>(),
            &run.ports,
            &format!("{}: S-parameters", layout.name),
        )?;
        st.add("sparams.svg", pic.svg.as_bytes())?;
        st.add("sparams.png", &pic.png)?;
    }
    for (stem, pic) in &run.pictures {
        st.add(&format!("{stem}.svg"), pic.svg.as_bytes())?;
        st.add(&format!("{stem}.png"), &pic.png)?;
    }
    st.commit()?;
    Ok(name)
}

/// A short text table of a run: per frequency |S_ij| (dB) of the first few entries,
/// iterations, compression, seconds and the checks.
pub fn table_text(run: &SweepRun) -> String {
    use std::fmt::Write;
    let n = run.ports.len();
    let mut t = String::new();
    let _ = writeln!(t, "{} unknowns; medium: {}", run.unknowns, run.medium);
    let entries: Vec<(usize, usize)> = (0..n).flat_map(|j| (j..n).map(move |i| (i, j))).take(4).collect();
    let _ = write!(t, "{:>14}", "f (Hz)");
    for &(i, j) in &entries {
        let _ = write!(t, " {:>10}", format!("|S{}{}| dB", i + 1, j + 1));
    }
    let _ = writeln!(t, " {:>6} {:>8} {:>8} {:>9} {:>8}", "iters", "compr", "seconds", "recip", "max σ");
    for p in &run.points {
        let _ = write!(t, "{:>14.6e}", p.frequency_hz);
        for &(i, j) in &entries {
            let _ = write!(t, " {:>10.3}", 20.0 * p.s.get(i, j).norm().max(1e-10).log10());
        }
        let _ = writeln!(
            t,
            " {:>6} {:>7.2}% {:>8.2} {:>9.1e} {:>8.6}",
            p.solve.iterations.iter().max().unwrap_or(&0),
            100.0 * p.solve.compression,
            p.solve.seconds[2],
            p.reciprocity_error,
            p.largest_singular_value
        );
    }
    t
}
