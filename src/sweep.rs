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
            (None, Some(_)) => bail!("a ground above with none below is not supported; flip the stack-up"),
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
        bail!("{}: no [[port]]: `rafter sweep` needs at least one port\n  hint: add a [[port]] table", layout.file);
    }
    let mesh = rafter_layout::mesh(layout)?;
    let (panels, net_of) = panels(&mesh);
    let edges = edge_basis(&panels, &net_of).with_context(|| format!("{}: building the current basis", layout.file))?;
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
    let basis = current_basis(&panels, &net_of, &edges, &feeds).with_context(|| format!("{}: ports", layout.file))?;
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
    Ok(WaveSetup { panels, net_of, basis, medium, heights, extent })
}
