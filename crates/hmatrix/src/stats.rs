//! Per-block statistics and totals, serialisable for reports.

use crate::{BlockData, HBlock, HMatrix};
use rafter_cluster::ClusterStats;
use rafter_linalg::Scalar;
use serde::Serialize;

/// Statistics of one leaf block.
///
/// In a symmetric H-matrix ([`HMatrix::is_symmetric`]) an entry with `row_start > col_start`
/// is a *mirror*: the place covered by the transpose of the stored block `id` (see
/// [`HMatrix::block_stats`]).
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct BlockStats {
    /// Index in [`HMatrix::blocks`] (for a mirror, of the stored block it transposes).
    pub id: usize,
    /// First row (tree order).
    pub row_start: usize,
    /// End row (tree order, exclusive).
    pub row_end: usize,
    /// First column (tree order).
    pub col_start: usize,
    /// End column (tree order, exclusive).
    pub col_end: usize,
    /// Rows `m`.
    pub rows: usize,
    /// Columns `n`.
    pub cols: usize,
    /// `"low-rank"` or `"dense"`.
    pub kind: &'static str,
    /// Rank of a low-rank block; `null` for a dense one.
    pub rank: Option<usize>,
    /// Bytes stored (0 for a mirror, whose data is the stored block's).
    pub bytes: usize,
    /// Bytes the block would take dense (`m n` entries).
    pub dense_bytes: usize,
    /// `bytes / dense_bytes`; for a mirror, that of the stored block it transposes (the
    /// compression of the data that represents it).
    pub ratio: f64,
    /// ACA steps (rows examined); 0 for near-field blocks and for mirrors.
    pub aca_steps: usize,
    /// `true` when the pair met the admissibility condition.
    pub admissible: bool,
    /// Diameter of the row cluster's box.
    pub row_diameter: f64,
    /// Diameter of the column cluster's box.
    pub col_diameter: f64,
    /// Distance between the boxes.
    pub distance: f64,
}

impl BlockStats {
    /// Statistics of `block`, numbered `id`.
    pub fn of<T: Scalar>(id: usize, b: &HBlock<T>) -> Self {
        let (bytes, dense_bytes) = (b.bytes(), b.dense_bytes());
        Self {
            id,
            row_start: b.rows.start,
            row_end: b.rows.end,
            col_start: b.cols.start,
            col_end: b.cols.end,
            rows: b.rows.len(),
            cols: b.cols.len(),
            kind: match b.data {
                BlockData::Dense(_) => "dense",
                BlockData::LowRank(_) => "low-rank",
            },
            rank: b.rank(),
            bytes,
            dense_bytes,
            ratio: bytes as f64 / dense_bytes.max(1) as f64,
            aca_steps: b.aca_steps,
            admissible: b.admissible,
            row_diameter: b.row_diameter,
            col_diameter: b.col_diameter,
            distance: b.distance,
        }
    }

    /// Statistics of the mirror of the stored block `b` (number `id`) of a symmetric
    /// H-matrix: the place `b.cols × b.rows`, no bytes and no ACA steps of its own.
    pub(crate) fn mirror_of<T: Scalar>(id: usize, b: &HBlock<T>) -> Self {
        let s = Self::of(id, b);
        Self {
            row_start: s.col_start,
            row_end: s.col_end,
            col_start: s.row_start,
            col_end: s.row_end,
            rows: s.cols,
            cols: s.rows,
            bytes: 0,
            aca_steps: 0,
            row_diameter: s.col_diameter,
            col_diameter: s.row_diameter,
            ..s
        }
    }
}

/// Totals of an H-matrix.
#[derive(Clone, Debug, Serialize, PartialEq)]
pub struct HSummary {
    /// Rows.
    pub rows: usize,
    /// Columns.
    pub cols: usize,
    /// Scalar type (`f64` or `complex64`).
    pub scalar: &'static str,
    /// Relative per-block Frobenius tolerance ε.
    pub tolerance: f64,
    /// Admissibility parameter η.
    pub eta: f64,
    /// Leaf size.
    pub leaf_size: usize,
    /// Leaf blocks tiling the matrix (for a symmetric H-matrix, mirrors included: the entries
    /// of [`HMatrix::block_stats`]).
    pub blocks: usize,
    /// Blocks stored low-rank (mirrors of low-rank blocks included).
    pub low_rank_blocks: usize,
    /// Blocks stored dense (near field, plus admissible blocks not worth compressing; mirrors
    /// of dense blocks included).
    pub dense_blocks: usize,
    /// Admissible blocks stored dense because the factors would not be smaller (mirrors
    /// included).
    pub admissible_stored_dense: usize,
    /// Bytes stored.
    pub memory_bytes: u64,
    /// Bytes of the dense matrix.
    pub dense_bytes: u64,
    /// `memory_bytes / dense_bytes`.
    pub compression: f64,
    /// Share of `memory_bytes` in dense blocks.
    pub near_field_share: f64,
    /// Largest rank.
    pub max_rank: usize,
    /// Mean rank of the low-rank blocks.
    pub mean_rank: f64,
    /// Sum of ACA steps (over the stored blocks: the work done).
    pub aca_steps: usize,
    /// Row cluster tree statistics.
    pub row_tree: ClusterStats,
    /// `true` for a symmetric H-matrix ([`HMatrix::build_symmetric`]); left out of the
    /// serialised form when `false`.
    #[serde(skip_serializing_if = "std::ops::Not::not")]
    pub symmetric: bool,
    /// Mirrored blocks of a symmetric H-matrix (counted in `blocks`, without storage of their
    /// own); left out of the serialised form when 0.
    #[serde(skip_serializing_if = "is_zero")]
    pub mirrored_blocks: usize,
}

fn is_zero(n: &usize) -> bool {
    *n == 0
}

impl HSummary {
    /// Totals of `h`.
    pub fn of<T: Scalar>(h: &HMatrix<T>) -> Self {
        let blocks = h.blocks();
        // Places each stored block covers: 2 for a symmetric H-matrix's off-diagonal blocks.
        let places = |b: &HBlock<T>| if h.is_symmetric() && b.rows != b.cols { 2 } else { 1 };
        let ranks: Vec<(usize, usize)> = blocks.iter().filter_map(|b| Some((b.rank()?, places(b)))).collect();
        let low_rank_blocks: usize = ranks.iter().map(|&(_, w)| w).sum();
        let dense: Vec<&HBlock<T>> = blocks.iter().filter(|b| b.rank().is_none()).collect();
        let memory = h.memory_bytes();
        let near: u64 = dense.iter().map(|b| b.bytes() as u64).sum();
        let all: usize = blocks.iter().map(places).sum();
        Self {
            rows: h.nrows(),
            cols: h.ncols(),
            scalar: T::NAME,
            tolerance: h.options().tolerance,
            eta: h.options().eta,
            leaf_size: h.options().leaf_size,
            blocks: all,
            low_rank_blocks,
            dense_blocks: dense.iter().map(|b| places(b)).sum(),
            admissible_stored_dense: dense.iter().filter(|b| b.admissible).map(|b| places(b)).sum(),
            memory_bytes: memory,
            dense_bytes: h.dense_bytes(),
            compression: h.compression(),
            near_field_share: near as f64 / memory.max(1) as f64,
            max_rank: h.max_rank(),
            mean_rank: ranks.iter().map(|&(k, w)| k * w).sum::<usize>() as f64
                / low_rank_blocks.max(1) as f64,
            aca_steps: blocks.iter().map(|b| b.aca_steps).sum(),
            row_tree: h.row_tree().stats(),
            symmetric: h.is_symmetric(),
            mirrored_blocks: all - blocks.len(),
        }
    }
}
