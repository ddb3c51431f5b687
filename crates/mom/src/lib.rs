//! Method-of-moments assembly for planar conductors, and terminal results.
//!
//! [`statics`] turns panels (rectangular cells of zero-thickness conductors) and a
//! quasi-static Green's function into an [`EntrySource`](rafter_linalg::EntrySource): unknown
//! `j` is the total charge on panel `j`, spread uniformly (pulse basis), and equation `i`
//! collocates the potential at the centre of panel `i`. [`capacitance`] solves one
//! right-hand side per net with the H-matrix engine and GMRES and returns the Maxwell
//! capacitance matrix and its SPICE (branch) form. [`edges`] enumerates the
//! divergence-conforming current basis (rooftops, RWG) of a panel mesh, the unknowns of the
//! coming full-wave solver.
//!
//! This crate knows nothing of file formats.

#![warn(missing_docs)]

pub mod capacitance;
pub mod current;
pub mod current_map;
pub mod deembed;
pub mod edges;
pub mod feedwall;
pub mod mpie;
pub mod network;
pub mod projector;
pub mod statics;
pub mod surface;
pub mod wave;

pub use capacitance::{
    CapacitanceOptions, CapacitanceResult, StageTimes, capacitance, solve_compressed, solve_dense, spice_form,
};
pub use statics::PanelCollocation;

/// Errors of the MoM layer.
#[derive(Debug, thiserror::Error)]
pub enum MomError {
    /// The H-matrix layer failed.
    #[error(transparent)]
    HMatrix(#[from] rafter_hmatrix::HError),
    /// The Krylov solver failed (for example it did not converge).
    #[error(transparent)]
    Krylov(#[from] rafter_krylov::KrylovError),
    /// A dense kernel failed (dense reference path).
    #[error(transparent)]
    Linalg(#[from] rafter_linalg::LinalgError),
    /// Inconsistent input.
    #[error("{0}")]
    Input(String),
}
