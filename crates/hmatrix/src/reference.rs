//! The explicit dense-reference path: memory estimate, parallel dense assembly, exact errors.
//!
//! This is the only place in the engine that forms the full matrix, and only on request, for
//! verification; it checks the available memory first and refuses with advice.

use crate::{HError, HMatrix};
use rafter_linalg::{DenseMatrix, EntrySource, Scalar};
use rayon::prelude::*;
use serde::Serialize;

/// Bytes available for new allocations: `MemAvailable` of `/proc/meminfo` (Linux); `None`
/// where that cannot be read.
pub fn available_memory_bytes() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

/// Peak resident memory of this process so far (`VmHWM` of `/proc/self/status`), in bytes.
pub fn peak_memory_bytes() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = text.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

/// Refuses when `needed` bytes exceed 90 % of the available memory (when that is known).
pub fn check_fits<T: Scalar>(what: &'static str, needed: u64, hint: &'static str) -> Result<(), HError> {
    if let Some(avail) = available_memory_bytes()
        && needed as f64 > 0.9 * avail as f64
    {
        return Err(HError::OutOfMemory { what, needed, available: avail, hint });
    }
    Ok(())
}

/// Bytes of the dense `m × n` matrix of scalar `T`.
pub fn dense_bytes<T: Scalar>(m: usize, n: usize) -> u64 {
    m as u64 * n as u64 * T::BYTES as u64
}

/// Assembles the full dense matrix of `src` (original order), in parallel over column panels.
///
/// Refuses, before allocating, when it would not fit in the available memory.
pub fn assemble_dense<T: Scalar, S: EntrySource<T> + ?Sized>(src: &S) -> Result<DenseMatrix<T>, HError> {
    let (m, n) = (src.nrows(), src.ncols());
    check_fits::<T>(
        "the dense reference matrix",
        dense_bytes::<T>(m, n),
        "verify on a smaller layout or a coarser mesh; the compressed path does not need it",
    )?;
    let src = &rafter_linalg::Settled(src);
    let mut data = vec![T::zero(); m * n];
    let rows: Vec<usize> = (0..m).collect();
    let panel = 16usize;
    if m > 0 {
        data.par_chunks_mut(m * panel).enumerate().for_each(|(p, chunk)| {
            let c0 = p * panel;
            let cols: Vec<usize> = (c0..c0 + chunk.len() / m).collect();
            src.fill_block(&rows, &cols, chunk);
        });
    }
    Ok(DenseMatrix::from_column_major(m, n, data)?)
}

/// Exact errors of an H-matrix against the dense matrix of the same source.
///
/// For a symmetric H-matrix only the stored blocks are compared: a mirror `Bᵀ` at `cols × rows`
/// has exactly the error of its stored block `B`, as the source is symmetric by the
/// precondition of [`HMatrix::build_symmetric`]; the whole-matrix figure counts each stored
/// off-diagonal block twice (its own place and its mirror's), both in the error and in the norm.
#[derive(Clone, Debug, Serialize)]
pub struct ErrorReport {
    /// `‖A − H‖_F / ‖A‖_F` over the whole matrix.
    pub rel_error: f64,
    /// `‖A_b − H_b‖_F / ‖A_b‖_F` for every stored leaf block `b`, in [`HMatrix::blocks`] order
    /// (0 for a zero block stored exactly).
    pub block_rel_errors: Vec<f64>,
    /// Largest entry of `block_rel_errors`.
    pub block_max_rel_error: f64,
}

/// Compares every block of `h` with the corresponding block of `dense` (original order).
pub fn compare<T: Scalar>(h: &HMatrix<T>, dense: &DenseMatrix<T>) -> Result<ErrorReport, HError> {
    if dense.nrows() != h.nrows() || dense.ncols() != h.ncols() {
        return Err(HError::DimensionMismatch {
            what: "dense reference (rows × cols)",
            expected: h.nrows() * h.ncols(),
            got: dense.nrows() * dense.ncols(),
        });
    }
    Ok(block_errors(h, |rows, cols, out| {
        let m = rows.len();
        for (b, &j) in cols.iter().enumerate() {
            for (a, &i) in rows.iter().enumerate() {
                out[a + b * m] = dense.get(i, j);
            }
        }
    }))
}

/// Compares every block of `h` with the exact block recomputed from `src`, one block at a
/// time: the same figures as [`compare`] in `O(max block)` memory instead of `O(N²)` (but
/// still `N²` entry evaluations), for sizes where the dense matrix does not fit.
pub fn compare_blockwise<T: Scalar, S: EntrySource<T> + ?Sized>(
    h: &HMatrix<T>,
    src: &S,
) -> Result<ErrorReport, HError> {
    if src.nrows() != h.nrows() || src.ncols() != h.ncols() {
        return Err(HError::DimensionMismatch {
            what: "entry source (rows × cols)",
            expected: h.nrows() * h.ncols(),
            got: src.nrows() * src.ncols(),
        });
    }
    Ok(block_errors(h, |rows, cols, out| src.fill_block(rows, cols, out)))
}

/// Per-block and global relative Frobenius errors, with `exact(rows, cols, out)` filling the
/// exact block (original indices, column-major).
fn block_errors<T: Scalar>(
    h: &HMatrix<T>,
    exact: impl Fn(&[usize], &[usize], &mut [T]) + Sync,
) -> ErrorReport {
    let (rp, cp) = (h.row_tree().perm(), h.col_tree().perm());
    let per_block: Vec<(f64, f64)> = h
        .blocks()
        .par_iter()
        .map(|b| {
            let approx = b.to_dense();
            let mut a = vec![T::zero(); b.rows.len() * b.cols.len()];
            exact(&rp[b.rows.clone()], &cp[b.cols.clone()], &mut a);
            a.iter()
                .zip(approx.as_slice())
                .fold((0.0, 0.0), |(e, n), (&x, &y)| (e + (x - y).abs2(), n + x.abs2()))
        })
        .collect();
    // A symmetric H-matrix's stored off-diagonal blocks stand for their mirrors too.
    let (err2, norm2) = per_block.iter().zip(h.blocks()).fold((0.0, 0.0), |(e, n), (&(a, b), blk)| {
        let w = if h.is_symmetric() && blk.rows != blk.cols { 2.0 } else { 1.0 };
        (e + w * a, n + w * b)
    });
    let block_rel_errors: Vec<f64> = per_block
        .iter()
        .map(|&(e, n)| {
            if n > 0.0 {
                (e / n).sqrt()
            } else if e > 0.0 {
                f64::INFINITY
            } else {
                0.0
            }
        })
        .collect();
    ErrorReport {
        rel_error: if norm2 > 0.0 { (err2 / norm2).sqrt() } else { 0.0 },
        block_max_rel_error: block_rel_errors.iter().copied().fold(0.0, f64::max),
        block_rel_errors,
    }
}
