//! Quasi-static Green's functions of planar stack-ups, and potential integrals of panels.
//!
//! A [`StaticGreen`] gives the electric potential (volts) at an observation point due to a unit
//! point charge (1 C), with every boundary of the stack-up (ground planes, dielectric
//! interfaces) accounted for, and the potential of a unit charge spread uniformly over a
//! rectangular panel — the matrix entry of a pulse-basis method of moments. Singular parts are
//! integrated in closed form ([`panel`]); smooth parts by Gauss–Legendre product rules whose
//! order is chosen from the distance so that the quadrature error stays below a requested
//! relative accuracy ([`quadrature`]).
//!
//! Homogeneous media ([`homogeneous`]): free space, one ground plane (image), two ground planes
//! (image series near the source, modal series far from it). Layered media plug in behind the
//! same trait.
//!
//! Full wave ([`dynamic`]): panel integrals of the Helmholtz kernel `e^{−jkR}/R` by polar
//! integration about the projected observer, singular cases included — the building block
//! of the coming mixed-potential solver.
//!
//! This crate knows nothing of the H-matrix engine or of file formats.

#![warn(missing_docs)]

pub mod dynamic;
mod hermite;
pub mod homogeneous;
pub mod layered;
mod modal;
pub mod panel;
pub mod parallel_plate;
pub mod quadrature;

pub use homogeneous::{FreeSpace, GroundBelow, TwoGrounds};
pub use layered::{LayerSpec, LayeredGreen};
pub use panel::Panel;
pub use parallel_plate::{ParallelPlate, ParallelPlateError, PlatePair};

/// Vacuum permittivity ε0 in F/m (CODATA 2022).
pub const EPS0: f64 = 8.854_187_818_8e-12;

/// Errors in the description of a medium.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum GreenError {
    /// Relative permittivity below 1 or not finite.
    #[error("relative permittivity must be finite and ≥ 1 (got {0})")]
    BadPermittivity(f64),
    /// Geometry outside the medium (e.g. a conductor on or outside a ground plane).
    #[error("{0}")]
    Geometry(String),
    /// Requested accuracy not in (0, 1).
    #[error("Green's function accuracy must lie in (0, 1) (got {0})")]
    BadAccuracy(f64),
}

/// Quasi-static Green's function of a stack-up.
///
/// Implementations must be thread-safe and deterministic: the matrix assembly calls them from
/// many threads.
pub trait StaticGreen: Send + Sync {
    /// Potential (V) at `obs` due to a point charge of 1 C at `src` (coordinates in metres).
    fn potential(&self, obs: [f64; 3], src: [f64; 3]) -> f64;

    /// Potential (V) at `obs` due to 1 C spread uniformly over `panel` (so the result is the
    /// panel integral of the Green's function divided by the panel area). Relative accuracy at
    /// least the `accuracy` the function was built with.
    fn panel_potential(&self, obs: [f64; 3], panel: &Panel) -> f64;

    /// A short description for reports, e.g. `"one ground plane below (image), εr = 1"`.
    fn describe(&self) -> String;
}
