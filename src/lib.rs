//! rafter: planar-interconnect field problems by the method of moments, compressed as an
//! H-matrix (ACA + recompression) and solved by restarted GMRES.
//!
//! This facade re-exports the engine crates; the `rafter` binary is a thin command line on top.
//! - [`linalg`]: scalars, dense kernels, the entry-source seam;
//! - [`cluster`]: cluster tree, admissibility, block tree;
//! - [`lowrank`]: ACA and recompression;
//! - [`hmatrix`]: the H-matrix, its matvec, statistics and dense reference;
//! - [`krylov`]: GMRES and preconditioners;
//! - [`pointkernel`]: point-kernel test problems;
//! - [`layout`]: layout files, stack-ups and meshes;
//! - [`green`]: quasi-static Green's functions and panel integrals;
//! - [`mom`]: collocation operator and capacitance;
//! - [`bench`](mod@bench): the engine benchmark behind `rafter bench-engine`; [`compare`]: `rafter bench-extract`;
//! - [`extract`]: the capacitance job behind `rafter extract`; [`lines`]: `rafter lines`; [`output`]: all-or-nothing files;
//! - [`pictures`]: figures (block partition, charge density, GMRES convergence) as SVG and PNG;
//! - [`verify`]: `rafter verify` (dense-reference verification); [`blocks`]: `rafter blocks` (per-block report).

#![warn(missing_docs)]

pub mod bench;
pub mod blocks;
pub mod compare;
pub mod extract;
pub mod lines;
pub mod output;
pub mod pictures;
pub mod sparams_plot;
pub mod sweep;
pub mod touchstone;
pub mod verify;

pub use rafter_cluster as cluster;
pub use rafter_green as green;
pub use rafter_hmatrix as hmatrix;
pub use rafter_krylov as krylov;
pub use rafter_layout as layout;
pub use rafter_linalg as linalg;
pub use rafter_lowrank as lowrank;
pub use rafter_mom as mom;
pub use rafter_pointkernel as pointkernel;
