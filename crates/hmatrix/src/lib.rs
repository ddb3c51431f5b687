//! The hierarchical matrix: build, storage, matvec, statistics and the dense reference.
//!
//! [`HMatrix::build`] takes an [`EntrySource`](rafter_linalg::EntrySource) and the points (basis
//! function centroids) that index its rows and columns, builds the cluster trees and the block
//! tree, and fills every leaf block in parallel (rayon): near-field blocks dense, admissible
//! blocks by ACA + recompression ([`rafter_lowrank::compress`]), falling back to dense when the
//! low-rank form would not be smaller. The dense `N × N` matrix is never formed; only
//! [`reference`] (the explicit, memory-checked dense path) does that, for verification.
//!
//! [`HMatrix::build_symmetric`] does the same for a symmetric source (`A = Aᵀ`, real or complex
//! symmetric) on one point set, computing and storing only the blocks on and above the block
//! diagonal and applying the others as their transposes: about half the entries and storage,
//! and an operator that is exactly symmetric.
//!
//! Modules, one concept each: [`options`] (tolerance, η, leaf size), [`hmatrix`] (the type, its
//! build and its matvecs), [`stats`] (per-block statistics and totals), [`reference`] (dense
//! assembly, memory estimates, exact error of every block).

#![warn(missing_docs)]

pub mod hmatrix;
pub mod options;
pub mod reference;
mod schedule;
pub mod stats;

pub use hmatrix::{BlockData, HBlock, HMatrix};
pub use options::HOptions;
pub use stats::{BlockStats, HSummary};

use rafter_cluster::ClusterError;
use rafter_linalg::LinalgError;

/// Errors of the H-matrix layer.
#[derive(Debug, thiserror::Error)]
pub enum HError {
    /// Bad geometry or tree parameters.
    #[error(transparent)]
    Cluster(#[from] ClusterError),
    /// A dense kernel failed.
    #[error(transparent)]
    Linalg(#[from] LinalgError),
    /// The tolerance is not in (0, 1).
    #[error("tolerance ε must lie in (0, 1) (got {0}); 1e-4 is a good default for engineering accuracy")]
    BadTolerance(f64),
    /// Sizes disagree.
    #[error("size mismatch: {what} has {got} entries, expected {expected}")]
    DimensionMismatch {
        /// What was checked.
        what: &'static str,
        /// Expected length.
        expected: usize,
        /// Length received.
        got: usize,
    },
    /// The entry source returned NaN or infinity.
    #[error(
        "the entry source returned a non-finite value in the block at rows {row_start}..{row_end}, \
         columns {col_start}..{col_end} (tree order); check the kernel for coincident points"
    )]
    NonFiniteEntry {
        /// First row (tree order).
        row_start: usize,
        /// End row (tree order, exclusive).
        row_end: usize,
        /// First column (tree order).
        col_start: usize,
        /// End column (tree order, exclusive).
        col_end: usize,
    },
    /// An allocation would not fit in memory.
    #[error(
        "{what} needs about {needed} of memory but only {available} is available; {hint}",
        needed = human_bytes(*needed),
        available = human_bytes(*available)
    )]
    OutOfMemory {
        /// What was to be allocated.
        what: &'static str,
        /// Estimated bytes.
        needed: u64,
        /// Bytes available.
        available: u64,
        /// Advice.
        hint: &'static str,
    },
}

/// `1.23 GB`-style rendering of a byte count (decimal units).
pub fn human_bytes(b: u64) -> String {
    let units = ["B", "kB", "MB", "GB", "TB"];
    let mut v = b as f64;
    let mut u = 0;
    while v >= 1000.0 && u + 1 < units.len() {
        v /= 1000.0;
        u += 1;
    }
    if u == 0 { format!("{b} B") } else { format!("{v:.2} {}", units[u]) }
}
