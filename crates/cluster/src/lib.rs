//! Cluster tree, admissibility and block tree: the geometry half of an H-matrix.
//!
//! Given the centroids of the basis functions (any point set in 3-D), a [`ClusterTree`] groups
//! nearby indices into nested clusters with axis-aligned bounding boxes. A [`BlockTree`] pairs a
//! row tree with a column tree and splits every pair of clusters until it is either
//! *admissible* (far apart compared with its size: its matrix block is numerically low-rank,
//! see [`Admissibility`]) or a pair of leaves (a small dense near-field block).
//!
//! This crate knows nothing about matrices: it works on points and index ranges only.
//!
//! Modules, one concept each: [`bbox`] (axis-aligned boxes), [`tree`] (the cluster tree),
//! [`admissibility`] (the far-field condition), [`blocktree`] (the block partition).

#![warn(missing_docs)]

pub mod admissibility;
pub mod bbox;
pub mod blocktree;
pub mod tree;

pub use admissibility::Admissibility;
pub use bbox::BoundingBox;
pub use blocktree::{Block, BlockKind, BlockTree};
pub use tree::{Cluster, ClusterStats, ClusterTree};

/// Errors in the input of a cluster or block tree.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum ClusterError {
    /// No points were given.
    #[error("cannot build a cluster tree over an empty point set; the problem needs at least one unknown")]
    Empty,
    /// A coordinate is NaN or infinite.
    #[error(
        "point {index} has a non-finite coordinate {axis} = {value}; check the geometry that produced it"
    )]
    NonFinite {
        /// Index of the point in the caller's order.
        index: usize,
        /// Axis name (`x`, `y` or `z`).
        axis: char,
        /// The value found.
        value: f64,
    },
    /// Leaf size zero.
    #[error("leaf size must be at least 1 (got 0); values of 16–64 are typical")]
    LeafSizeZero,
    /// η not positive and finite.
    #[error("admissibility parameter η must be positive and finite (got {0}); 2 is a common choice")]
    BadEta(f64),
}
