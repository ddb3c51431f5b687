//! The H-matrix type: build from an entry source, storage accounting, matvec.

use crate::schedule::{Item, Schedule, schedule};
use crate::stats::{BlockStats, HSummary};
use crate::{HError, HOptions, reference};
use rafter_cluster::{Admissibility, Block, BlockKind, BlockTree, ClusterTree};
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
///
/// A *symmetric* H-matrix ([`HMatrix::build_symmetric`]) stores only the leaf blocks whose
/// rows start no later than their columns (`rows.start ≤ cols.start`: the diagonal blocks and
/// the upper triangle in tree order). Every stored block `B` with `rows ≠ cols` also stands, as
/// its plain transpose `Bᵀ` (for low-rank `B = U Vᵀ`: `Bᵀ = V Uᵀ`), at the *mirrored* place
/// `cols × rows`; mirrors have no storage of their own. Stored diagonal blocks are exactly
/// symmetric, so the operator `H` satisfies `H = Hᵀ` exactly (its products up to rounding).
pub struct HMatrix<T> {
    options: HOptions,
    row_tree: ClusterTree,
    col_tree: ClusterTree,
    blocks: Vec<HBlock<T>>,
    /// Only the blocks with `rows.start ≤ cols.start` are stored; the others are mirrors.
    symmetric: bool,
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
        Self::assemble(src, row_tree, col_tree, options, progress, false)
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

    /// Builds the *symmetric* H-matrix of a symmetric source (`A = Aᵀ`, plain transpose: real
    /// symmetric or complex symmetric, not Hermitian) whose rows and columns share `points`.
    ///
    /// Rows and columns get one cluster tree and the block tree of
    /// [`HMatrix::build_square`]; only its leaf blocks with `rows.start ≤ cols.start` (tree
    /// order) are computed and stored, about half the entries and storage. The other leaves are
    /// applied as the transposes of their mirror images (see [`HMatrix`]) and are never
    /// requested from `src`. A diagonal block is filled on and above its diagonal only and
    /// completed by symmetry, so the compressed operator is *exactly* symmetric, `H = Hᵀ`; its
    /// accuracy is that of [`HMatrix::build_square`] (every block within the tolerance ε of
    /// [`HOptions::tolerance`]).
    ///
    /// Precondition: `src` is symmetric, `A[i, j] = A[j, i]`. It is not verified (debug builds
    /// spot-check a few pairs of entries); for a non-symmetric source the result approximates
    /// the matrix whose lower triangle (in tree order) is replaced by the transposed upper one.
    ///
    /// Errors: a non-square source or a point count other than its order
    /// ([`HError::DimensionMismatch`]), and the errors of [`HMatrix::build`].
    pub fn build_symmetric<S: EntrySource<T> + ?Sized>(
        src: &S,
        points: &[[f64; 3]],
        options: &HOptions,
        progress: Option<&(dyn Fn(usize, usize) + Sync)>,
    ) -> Result<Self, HError> {
        options.validate()?;
        for (what, expected, got) in [
            ("entry source columns (a symmetric matrix is square)", src.nrows(), src.ncols()),
            ("point set (one point per source row and column)", src.nrows(), points.len()),
        ] {
            if expected != got {
                return Err(HError::DimensionMismatch { what, expected, got });
            }
        }
        #[cfg(debug_assertions)]
        debug_check_symmetric(src);
        let tree = ClusterTree::new(points, options.leaf_size)?;
        Self::assemble(src, tree.clone(), tree, options, progress, true)
    }

    /// The build proper, on validated input: block tree, leaf blocks in parallel (with
    /// `symmetric`, only those with `rows.start ≤ cols.start`), matvec schedule.
    fn assemble<S: EntrySource<T> + ?Sized>(
        src: &S,
        row_tree: ClusterTree,
        col_tree: ClusterTree,
        options: &HOptions,
        progress: Option<&(dyn Fn(usize, usize) + Sync)>,
        symmetric: bool,
    ) -> Result<Self, HError> {
        // Every request settles the vector state the dense kernels leave behind.
        let src = &rafter_linalg::Settled(src);
        let adm = Admissibility::new(options.eta)?;
        let block_tree = BlockTree::new(&row_tree, &col_tree, &adm);
        let stored = |b: &&Block| !symmetric || row_tree.node(b.row).start <= col_tree.node(b.col).start;
        let leaves: Vec<&Block> =
            block_tree.leaves().iter().map(|&l| &block_tree.blocks()[l]).filter(stored).collect();
        #[cfg(debug_assertions)]
        if symmetric {
            debug_check_mirrors(&row_tree, &block_tree, &leaves);
        }
        reference::check_fits::<T>(
            "the H-matrix",
            estimate_bytes::<T>(&row_tree, &col_tree, &leaves, options.tolerance),
            "raise the tolerance, lower η, or use fewer unknowns (for a layout: a larger mesh.max_cell)",
        )?;

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
                } else if symmetric && b.row == b.col {
                    (BlockData::Dense(fill_symmetric(src, rows)), 0)
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
        let schedule = schedule(&row_tree, &blocks, symmetric, 8 * rayon::current_num_threads());
        Ok(Self { options: *options, row_tree, col_tree, blocks, symmetric, schedule })
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
    /// `true` for a symmetric H-matrix ([`HMatrix::build_symmetric`]): only the blocks with
    /// `rows.start ≤ cols.start` are stored, the others are their transposes.
    pub fn is_symmetric(&self) -> bool {
        self.symmetric
    }
    /// The stored leaf blocks, sorted by (first row, first column) in tree order.
    ///
    /// For a non-symmetric H-matrix they tile the matrix. For a symmetric one they are the
    /// blocks with `rows.start ≤ cols.start`; each with `rows ≠ cols` also covers, transposed,
    /// the place `cols × rows` (see [`HMatrix::block_stats`] for the full tiling).
    pub fn blocks(&self) -> &[HBlock<T>] {
        &self.blocks
    }
    /// Bytes of all stored blocks (factors and dense entries; the trees are not counted). A
    /// symmetric H-matrix's mirrored blocks take no storage and are not counted.
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
    /// Per-block statistics of the leaf blocks that tile the matrix, sorted by (first row,
    /// first column) in tree order.
    ///
    /// Non-symmetric: one entry per stored block, in the order of [`HMatrix::blocks`]
    /// (`id` = index). Symmetric: the stored blocks (`row_start ≤ col_start`) and, for each one
    /// with `rows ≠ cols`, its *mirror* at the swapped place (`row_start > col_start`), which
    /// carries the `id` of the stored block it transposes, its kind, rank and `ratio`, but
    /// `bytes = 0` and `aca_steps = 0` (storage and work are counted once, on the stored
    /// block), so the `bytes` sum to [`HMatrix::memory_bytes`].
    pub fn block_stats(&self) -> Vec<BlockStats> {
        let mut stats: Vec<BlockStats> =
            self.blocks.iter().enumerate().map(|(id, b)| BlockStats::of(id, b)).collect();
        if self.symmetric {
            stats.extend(
                self.blocks
                    .iter()
                    .enumerate()
                    .filter(|(_, b)| b.rows != b.cols)
                    .map(|(id, b)| BlockStats::mirror_of(id, b)),
            );
            stats.sort_by_key(|s| (s.row_start, s.col_start));
        }
        stats
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
        // Vᵀ X of the low-rank blocks that span several bands, once each (rank × nrhs); for the
        // mirror `V Uᵀ` of a stored `U Vᵀ` (symmetric H-matrix), Uᵀ X over the stored rows.
        let wide: Vec<Vec<T>> = self
            .schedule
            .wide
            .par_iter()
            .map(|&(id, transposed)| {
                let b = &self.blocks[id];
                let BlockData::LowRank(l) = &b.data else { unreachable!("wide blocks are low-rank") };
                let (right, cols) = if transposed { (&l.u, &b.rows) } else { (&l.v, &b.cols) };
                let (k, nc) = (l.rank(), cols.len());
                let mut t = vec![T::zero(); k * nrhs];
                let xs = &xt[cols.start..cols.start + span(nc, n)];
                T::gemm_add_panels((&mut t, k), (right.as_slice(), nc), true, (xs, n), k, nrhs, nc);
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
                    let (block, transposed, part) = match item {
                        Item::Whole { block, transposed } => (*block, *transposed, None),
                        Item::Part { block, transposed, rows, wide } => {
                            (*block, *transposed, Some((rows.clone(), *wide)))
                        }
                    };
                    let b = &self.blocks[block];
                    // The rows and columns of the block as applied: B, or Bᵀ for a mirror.
                    let (brows, bcols) = if transposed { (&b.cols, &b.rows) } else { (&b.rows, &b.cols) };
                    let rows = part.as_ref().map_or_else(|| brows.clone(), |(r, _)| r.clone());
                    let (m, cols) = (rows.len(), bcols.len());
                    let off = rows.start - band.rows.start;
                    let local = rows.start - brows.start;
                    let ys = &mut acc[off..off + span(m, len)];
                    let xs = &xt[bcols.start..bcols.start + span(cols, n)];
                    match &b.data {
                        BlockData::Dense(d) => {
                            let ld = d.nrows();
                            // Rows `local..` of B start at entry `local`; rows `local..` of Bᵀ
                            // are columns `local..` of B, starting at entry `local · ld`.
                            let (a, start) = if transposed { (true, local * ld) } else { (false, local) };
                            T::gemm_add_panels(
                                (ys, len),
                                (&d.as_slice()[start..], ld),
                                a,
                                (xs, n),
                                m,
                                nrhs,
                                cols,
                            );
                        }
                        BlockData::LowRank(l) => {
                            // B = U Vᵀ: Y += U (Vᵀ X); the mirror Bᵀ = V Uᵀ: Y += V (Uᵀ X).
                            let k = l.rank();
                            let (left, right) = if transposed { (&l.v, &l.u) } else { (&l.u, &l.v) };
                            let t: &[T] = match part {
                                None => {
                                    tmp.clear();
                                    tmp.resize(k * nrhs, T::zero());
                                    T::gemm_add_panels(
                                        (&mut tmp, k),
                                        (right.as_slice(), cols),
                                        true,
                                        (xs, n),
                                        k,
                                        nrhs,
                                        cols,
                                    );
                                    &tmp
                                }
                                Some((_, Some(w))) => &wide[w],
                                Some((_, None)) => unreachable!("low-rank parts are wide"),
                            };
                            let u = &left.as_slice()[local..];
                            T::gemm_add_panels((ys, len), (u, left.nrows()), false, (t, k), m, nrhs, k);
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
    /// (block-Jacobi) preconditioner. (A symmetric H-matrix stores its diagonal blocks, exactly
    /// symmetric.)
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

/// The symmetric block `A[idx, idx]` (column-major): the entries on and above the diagonal
/// are requested from `src`, one column segment at a time (`n (n + 1) / 2` entries), and the
/// lower triangle is their mirror image, so the block is exactly symmetric.
fn fill_symmetric<T: Scalar, S: EntrySource<T> + ?Sized>(src: &S, idx: &[usize]) -> DenseMatrix<T> {
    let n = idx.len();
    let mut d = DenseMatrix::zeros(n, n);
    let a = d.as_mut_slice();
    for j in 0..n {
        src.fill_block(&idx[..=j], &idx[j..=j], &mut a[j * n..j * n + j + 1]);
    }
    for j in 0..n {
        for i in j + 1..n {
            a[i + j * n] = a[j + i * n];
        }
    }
    d
}

/// Debug builds only: spot-checks the precondition of [`HMatrix::build_symmetric`] on a few
/// pairs `A[i, j]`, `A[j, i]` (relative difference ≤ 1e-8, loose enough for sources that are
/// symmetric only up to their quadrature).
#[cfg(debug_assertions)]
fn debug_check_symmetric<T: Scalar, S: EntrySource<T> + ?Sized>(src: &S) {
    let n = src.nrows();
    if n < 2 {
        return;
    }
    for s in 0..8usize {
        let (i, j) = ((s * 7919) % n, (s * 104_729 + n / 2) % n);
        let (a, b) = (src.entry(i, j), src.entry(j, i));
        debug_assert!(
            (a - b).abs() <= 1e-8 * (a.abs() + b.abs()),
            "build_symmetric: the source is not symmetric: A[{i}, {j}] = {a:?} but A[{j}, {i}] = {b:?}"
        );
    }
}

/// Debug builds only: the mirror images of the stored leaves of a symmetric build are exactly
/// the leaves that were skipped, so stored blocks and mirrors tile the matrix once. (This holds
/// because admissibility, the leaf test and the splitting rule treat the two clusters of a pair
/// alike.)
#[cfg(debug_assertions)]
fn debug_check_mirrors(tree: &ClusterTree, bt: &BlockTree, stored: &[&Block]) {
    let place =
        |r: usize, c: usize| (tree.node(r).start, tree.node(r).end, tree.node(c).start, tree.node(c).end);
    let mut skipped: Vec<_> = bt
        .leaves()
        .iter()
        .map(|&l| &bt.blocks()[l])
        .filter(|b| tree.node(b.row).start > tree.node(b.col).start)
        .map(|b| place(b.row, b.col))
        .collect();
    let mut mirrors: Vec<_> = stored.iter().filter(|b| b.row != b.col).map(|b| place(b.col, b.row)).collect();
    skipped.sort_unstable();
    mirrors.sort_unstable();
    debug_assert!(skipped == mirrors, "the block tree of one cluster tree is not symmetric");
}

fn all_finite<T: Scalar>(d: &BlockData<T>) -> bool {
    match d {
        BlockData::Dense(d) => d.as_slice().iter().all(|x| x.is_finite()),
        BlockData::LowRank(l) => {
            l.u.as_slice().iter().all(|x| x.is_finite()) && l.v.as_slice().iter().all(|x| x.is_finite())
        }
    }
}

/// Storage estimate before the build of the leaf blocks `leaves` that will be stored:
/// near-field blocks exactly, admissible blocks at a rank of `2·log10(1/ε) + 2` (about what
/// smooth kernels on planar geometry need), capped at dense.
fn estimate_bytes<T: Scalar>(rows: &ClusterTree, cols: &ClusterTree, leaves: &[&Block], eps: f64) -> u64 {
    let k = (2.0 * (1.0 / eps).log10() + 2.0).ceil() as u64;
    leaves
        .iter()
        .map(|b| {
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
