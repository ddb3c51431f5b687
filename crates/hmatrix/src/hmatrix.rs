//! The H-matrix type: build from an entry source, storage accounting, matvec.

use crate::schedule::{Item, Schedule, schedule};
use crate::stats::{BlockStats, HSummary};
use crate::{HError, HOptions, reference};
use rafter_cluster::{Admissibility, BlockKind, BlockTree, ClusterTree};
use rafter_linalg::{DenseMatrix, EntrySource, Scalar};
use rafter_lowrank::{Compressed, LowRank, compress};
use rayon::prelude::*;
use std::ops::Range;

/// Storage of one leaf block.
#[derive(Clone, Debug)]
pub enum BlockData<T> {
    /// All `m × n` entries, column-major.
    Dense(DenseMatrix<T>),
    /// Factors `U Vᵀ`.
    LowRank(LowRank<T>),
}

/// One leaf block: its place in the matrix (tree order) and its storage.
#[derive(Clone, Debug)]
pub struct HBlock<T> {
    /// Rows `rows.start..rows.end` in tree order.
    pub rows: Range<usize>,
    /// Columns in tree order.
    pub cols: Range<usize>,
    /// The stored block.
    pub data: BlockData<T>,
    /// `true` when the pair was admissible (a low-rank candidate), even if stored dense.
    pub admissible: bool,
    /// ACA steps spent on the block (0 for near-field blocks).
    pub aca_steps: usize,
    /// Diameter of the row cluster's box.
    pub row_diameter: f64,
    /// Diameter of the column cluster's box.
    pub col_diameter: f64,
    /// Distance between the two boxes.
    pub distance: f64,
}

impl<T: Scalar> HBlock<T> {
    /// Bytes of the stored data.
    pub fn bytes(&self) -> usize {
        match &self.data {
            BlockData::Dense(d) => d.as_slice().len() * T::BYTES,
            BlockData::LowRank(l) => l.bytes(),
        }
    }
    /// Bytes the block would take dense.
    pub fn dense_bytes(&self) -> usize {
        self.rows.len() * self.cols.len() * T::BYTES
    }
    /// Rank of a low-rank block; `None` for a dense one.
    pub fn rank(&self) -> Option<usize> {
        match &self.data {
            BlockData::Dense(_) => None,
            BlockData::LowRank(l) => Some(l.rank()),
        }
    }
    /// The block as a dense matrix (for checks).
    pub fn to_dense(&self) -> DenseMatrix<T> {
        match &self.data {
            BlockData::Dense(d) => d.clone(),
            BlockData::LowRank(l) => l.to_dense(),
        }
    }
}

/// A hierarchical matrix: the leaf blocks of a block tree, each dense or low-rank.
///
/// Rows and columns are stored in *tree order* (see [`ClusterTree::perm`]); the public
/// products take and return vectors in the caller's original order.
pub struct HMatrix<T> {
    options: HOptions,
    row_tree: ClusterTree,
    col_tree: ClusterTree,
    blocks: Vec<HBlock<T>>,
    /// Row bands and their work: the parallel matvec schedule.
    pub(crate) schedule: Schedule,
}

impl<T: Scalar> HMatrix<T> {
    /// Builds the H-matrix of `src` whose row `i` belongs to point `row_points[i]` and column
    /// `j` to `col_points[j]`.
    ///
    /// Every leaf block is computed in parallel; `progress`, when given, is called once per
    /// finished block with the number of blocks finished so far and the total. Refuses
    /// (before allocating) when the estimated storage exceeds the available memory.
    pub fn build<S: EntrySource<T> + ?Sized>(
        src: &S,
        row_points: &[[f64; 3]],
        col_points: &[[f64; 3]],
        options: &HOptions,
        progress: Option<&(dyn Fn(usize, usize) + Sync)>,
    ) -> Result<Self, HError> {
        options.validate()?;
        for (what, expected, got) in [
            ("row point set (one point per source row)", src.nrows(), row_points.len()),
            ("column point set (one point per source column)", src.ncols(), col_points.len()),
        ] {
            if expected != got {
                return Err(HError::DimensionMismatch { what, expected, got });
            }
        }
        let row_tree = ClusterTree::new(row_points, options.leaf_size)?;
        let col_tree = ClusterTree::new(col_points, options.leaf_size)?;
        let adm = Admissibility::new(options.eta)?;
        let block_tree = BlockTree::new(&row_tree, &col_tree, &adm);
        reference::check_fits::<T>(
            "the H-matrix",
            estimate_bytes::<T>(&row_tree, &col_tree, &block_tree, options.tolerance),
            "raise the tolerance, lower η, or use fewer unknowns (for a layout: a larger mesh.max_cell)",
        )?;

        let leaves: Vec<_> = block_tree.leaves().iter().map(|&l| &block_tree.blocks()[l]).collect();
        let total = leaves.len();
        let done = std::sync::atomic::AtomicUsize::new(0);
        let (rperm, cperm) = (row_tree.perm(), col_tree.perm());
        let mut blocks = leaves
            .par_iter()
            .map(|b| {
                let (rc, cc) = (row_tree.node(b.row), col_tree.node(b.col));
                let rows = &rperm[rc.start..rc.end];
                let cols = &cperm[cc.start..cc.end];
                let admissible = b.kind == BlockKind::Far;
                let (data, aca_steps) = if admissible {
                    match compress(src, rows, cols, options.tolerance)? {
                        Compressed::LowRank { block, steps } => (BlockData::LowRank(block), steps),
                        Compressed::NotWorthIt { steps } => (BlockData::Dense(fill(src, rows, cols)), steps),
                    }
                } else {
                    (BlockData::Dense(fill(src, rows, cols)), 0)
                };
                let block = HBlock {
                    rows: rc.start..rc.end,
                    cols: cc.start..cc.end,
                    data,
                    admissible,
                    aca_steps,
                    row_diameter: b.row_diameter,
                    col_diameter: b.col_diameter,
                    distance: b.distance,
                };
                if !all_finite(&block.data) {
                    return Err(HError::NonFiniteEntry {
                        row_start: rc.start,
                        row_end: rc.end,
                        col_start: cc.start,
                        col_end: cc.end,
                    });
                }
                if let Some(p) = progress {
                    p(done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1, total);
                }
                Ok(block)
            })
            .collect::<Result<Vec<_>, HError>>()?;
        blocks.sort_by_key(|b| (b.rows.start, b.cols.start));
        let schedule = schedule(&row_tree, &blocks, 8 * rayon::current_num_threads());
        Ok(Self { options: *options, row_tree, col_tree, blocks, schedule })
    }

    /// Builds a square H-matrix whose rows and columns share the points `points`.
    pub fn build_square<S: EntrySource<T> + ?Sized>(
        src: &S,
        points: &[[f64; 3]],
        options: &HOptions,
        progress: Option<&(dyn Fn(usize, usize) + Sync)>,
    ) -> Result<Self, HError> {
        Self::build(src, points, points, options, progress)
    }

    /// Rows.
    pub fn nrows(&self) -> usize {
        self.row_tree.len()
    }
    /// Columns.
    pub fn ncols(&self) -> usize {
        self.col_tree.len()
    }
    /// The options it was built with.
    pub fn options(&self) -> &HOptions {
        &self.options
    }
    /// The row cluster tree.
    pub fn row_tree(&self) -> &ClusterTree {
        &self.row_tree
    }
    /// The column cluster tree.
    pub fn col_tree(&self) -> &ClusterTree {
        &self.col_tree
    }
    /// The leaf blocks, sorted by (first row, first column) in tree order.
    pub fn blocks(&self) -> &[HBlock<T>] {
        &self.blocks
    }
    /// Bytes of all stored blocks (factors and dense entries; the trees are not counted).
    pub fn memory_bytes(&self) -> u64 {
        self.blocks.iter().map(|b| b.bytes() as u64).sum()
    }
    /// Bytes the dense matrix would take, `m · n · size_of::<T>()`.
    pub fn dense_bytes(&self) -> u64 {
        (self.nrows() as u64) * (self.ncols() as u64) * T::BYTES as u64
    }
    /// Compression: `memory_bytes / dense_bytes` (smaller is better).
    pub fn compression(&self) -> f64 {
        self.memory_bytes() as f64 / self.dense_bytes() as f64
    }
    /// Largest rank of a low-rank block (0 when there is none).
    pub fn max_rank(&self) -> usize {
        self.blocks.iter().filter_map(|b| b.rank()).max().unwrap_or(0)
    }
    /// Per-block statistics, in the order of [`HMatrix::blocks`].
    pub fn block_stats(&self) -> Vec<BlockStats> {
        self.blocks.iter().enumerate().map(|(id, b)| BlockStats::of(id, b)).collect()
    }
    /// Totals over all blocks.
    pub fn summary(&self) -> HSummary {
        HSummary::of(self)
    }

    /// `y = H x`; `x` has `ncols` entries and `y` `nrows`, both in original order.
    pub fn matvec(&self, x: &[T], y: &mut [T]) -> Result<(), HError> {
        self.matvec_multi(x, y, 1)
    }

    /// `Y = H X` for `nrhs` vectors at once: `X` is `ncols × nrhs` and `Y` is `nrows × nrhs`,
    /// both column-major, original order. The blocks are streamed from memory once for all
    /// vectors; row bands run in parallel, each owning its rows of `Y`.
    pub fn matvec_multi(&self, x: &[T], y: &mut [T], nrhs: usize) -> Result<(), HError> {
        let (m, n) = (self.nrows(), self.ncols());
        check_len("input vectors X (ncols × nrhs)", n * nrhs, x.len())?;
        check_len("output vectors Y (nrows × nrhs)", m * nrhs, y.len())?;
        // Gather X into tree order.
        let cperm = self.col_tree.perm();
        let mut xt = vec![T::zero(); n * nrhs];
        for r in 0..nrhs {
            let (xs, xd) = (&x[r * n..(r + 1) * n], &mut xt[r * n..(r + 1) * n]);
            for (d, &p) in xd.iter_mut().zip(cperm) {
                *d = xs[p];
            }
        }
        // Every block product below is one GEMM over all nrhs vectors (faer), on panels of the
        // tree-ordered X (column stride n) and of the band's accumulator (column stride len):
        // `span(rows, stride)` is the slice length a panel of `rows` rows and nrhs columns needs.
        let span = |rows: usize, stride: usize| (nrhs - 1) * stride + rows;
        // Vᵀ X of the low-rank blocks that span several bands, once each (rank × nrhs).
        let wide: Vec<Vec<T>> = self
            .schedule
            .wide
            .par_iter()
            .map(|&id| {
                let b = &self.blocks[id];
                let BlockData::LowRank(l) = &b.data else { unreachable!("wide blocks are low-rank") };
                let (k, cols) = (l.rank(), b.cols.len());
                let mut t = vec![T::zero(); k * nrhs];
                let xs = &xt[b.cols.start..b.cols.start + span(cols, n)];
                T::gemm_add_panels((&mut t, k), (l.v.as_slice(), cols), true, (xs, n), k, nrhs, cols);
                t
            })
            .collect();
        // Each band computes its rows of Y (band-local, nrhs columns) in parallel.
        let bands: Vec<Vec<T>> = self
            .schedule
            .bands
            .par_iter()
            .map(|band| {
                let len = band.rows.len();
                let mut acc = vec![T::zero(); len * nrhs];
                let mut tmp = Vec::new();
                for item in &band.items {
                    let (block, rows) = match item {
                        Item::Whole(id) => (*id, self.blocks[*id].rows.clone()),
                        Item::Part { block, rows, .. } => (*block, rows.clone()),
                    };
                    let b = &self.blocks[block];
                    let (m, cols) = (rows.len(), b.cols.len());
                    let off = rows.start - band.rows.start;
                    let local = rows.start - b.rows.start;
                    let ys = &mut acc[off..off + span(m, len)];
                    let xs = &xt[b.cols.start..b.cols.start + span(cols, n)];
                    match (&b.data, item) {
                        (BlockData::Dense(d), _) => {
                            let a = &d.as_slice()[local..];
                            T::gemm_add_panels((ys, len), (a, d.nrows()), false, (xs, n), m, nrhs, cols);
                        }
                        (BlockData::LowRank(l), Item::Whole(_)) => {
                            let k = l.rank();
                            tmp.clear();
                            tmp.resize(k * nrhs, T::zero());
                            T::gemm_add_panels(
                                (&mut tmp, k),
                                (l.v.as_slice(), cols),
                                true,
                                (xs, n),
                                k,
                                nrhs,
                                cols,
                            );
                            T::gemm_add_panels((ys, len), (l.u.as_slice(), m), false, (&tmp, k), m, nrhs, k);
                        }
                        (BlockData::LowRank(l), Item::Part { wide: Some(w), .. }) => {
                            let k = l.rank();
                            let u = &l.u.as_slice()[local..];
                            T::gemm_add_panels(
                                (ys, len),
                                (u, l.u.nrows()),
                                false,
                                (&wide[*w], k),
                                m,
                                nrhs,
                                k,
                            );
                        }
                        (BlockData::LowRank(_), Item::Part { wide: None, .. }) => {
                            unreachable!("low-rank parts are wide")
                        }
                    }
                }
                acc
            })
            .collect();
        // Scatter back to the caller's order.
        let rperm = self.row_tree.perm();
        for (band, acc) in self.schedule.bands.iter().zip(&bands) {
            let len = band.rows.len();
            for r in 0..nrhs {
                let yd = &mut y[r * m..(r + 1) * m];
                for (&v, &p) in acc[r * len..(r + 1) * len].iter().zip(&rperm[band.rows.clone()]) {
                    yd[p] = v;
                }
            }
        }
        Ok(())
    }

    /// The dense diagonal leaf blocks `(indices in original order, block)`, which tile the
    /// diagonal of a square H-matrix built with one point set: the input of a block-diagonal
    /// (block-Jacobi) preconditioner.
    pub fn diagonal_blocks(&self) -> Vec<(Vec<usize>, DenseMatrix<T>)> {
        let perm = self.row_tree.perm();
        self.blocks
            .iter()
            .filter(|b| b.rows == b.cols)
            .filter_map(|b| match &b.data {
                BlockData::Dense(d) => Some((perm[b.rows.clone()].to_vec(), d.clone())),
                BlockData::LowRank(_) => None,
            })
            .collect()
    }
}

fn check_len(what: &'static str, expected: usize, got: usize) -> Result<(), HError> {
    if expected == got { Ok(()) } else { Err(HError::DimensionMismatch { what, expected, got }) }
}

fn fill<T: Scalar, S: EntrySource<T> + ?Sized>(src: &S, rows: &[usize], cols: &[usize]) -> DenseMatrix<T> {
    let mut d = DenseMatrix::zeros(rows.len(), cols.len());
    src.fill_block(rows, cols, d.as_mut_slice());
    d
}

fn all_finite<T: Scalar>(d: &BlockData<T>) -> bool {
    match d {
        BlockData::Dense(d) => d.as_slice().iter().all(|x| x.is_finite()),
        BlockData::LowRank(l) => {
            l.u.as_slice().iter().all(|x| x.is_finite()) && l.v.as_slice().iter().all(|x| x.is_finite())
        }
    }
}

/// Storage estimate before the build: near-field blocks exactly, admissible blocks at a rank of
/// `2·log10(1/ε) + 2` (about what smooth kernels on planar geometry need), capped at dense.
fn estimate_bytes<T: Scalar>(rows: &ClusterTree, cols: &ClusterTree, bt: &BlockTree, eps: f64) -> u64 {
    let k = (2.0 * (1.0 / eps).log10() + 2.0).ceil() as u64;
    bt.leaves()
        .iter()
        .map(|&l| {
            let b = &bt.blocks()[l];
            let (m, n) = (rows.node(b.row).len() as u64, cols.node(b.col).len() as u64);
            let entries = if b.kind == BlockKind::Far { (k * (m + n)).min(m * n) } else { m * n };
            entries * T::BYTES as u64
        })
        .sum()
}

/// A square H-matrix is a Krylov operator (`y = H x`, original order).
impl<T: Scalar> rafter_krylov::LinearOperator<T> for HMatrix<T> {
    fn dim(&self) -> usize {
        self.nrows()
    }
    fn apply(&self, x: &[T], y: &mut [T]) {
        // The solver checks lengths against `dim()` before it applies the operator.
        self.matvec(x, y).expect("vector lengths checked by the solver");
    }
    fn apply_multi(&self, x: &[T], y: &mut [T], nrhs: usize) {
        self.matvec_multi(x, y, nrhs).expect("vector lengths checked by the solver");
    }
}

impl<T: Scalar> HMatrix<T> {
    /// Block-Jacobi preconditioner from LU factorisations of the dense diagonal leaf blocks
    /// (see [`HMatrix::diagonal_blocks`]).
    pub fn block_jacobi(&self) -> Result<rafter_krylov::BlockDiagonal<T>, rafter_krylov::KrylovError> {
        rafter_krylov::BlockDiagonal::new(self.nrows(), self.diagonal_blocks())
    }
}
