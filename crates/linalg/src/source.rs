//! The entry-source seam: the engine's only view of a matrix.

use crate::Scalar;
use std::sync::atomic::{AtomicU64, Ordering};

/// A matrix the engine may read entry by entry or block by block, but never needs whole.
///
/// Indices are the caller's original indices (`0..nrows`, `0..ncols`). Implementations must be
/// deterministic (the same request returns the same values) and thread-safe: the H-matrix build
/// asks for blocks from many threads at once.
pub trait EntrySource<T: Scalar>: Sync {
    /// Number of rows.
    fn nrows(&self) -> usize;
    /// Number of columns.
    fn ncols(&self) -> usize;
    /// Entry `(i, j)`.
    fn entry(&self, i: usize, j: usize) -> T;
    /// Fills `out` (column-major, `rows.len() × cols.len()`) with `A[rows[a], cols[b]]`.
    ///
    /// The default calls [`EntrySource::entry`] per entry; sources that can vectorise or share
    /// work across a block override it. A single row is `rows = &[i]`, a single column
    /// `cols = &[j]`; both come out contiguous.
    fn fill_block(&self, rows: &[usize], cols: &[usize], out: &mut [T]) {
        debug_assert_eq!(out.len(), rows.len() * cols.len());
        let m = rows.len();
        for (b, &j) in cols.iter().enumerate() {
            for (a, &i) in rows.iter().enumerate() {
                out[a + b * m] = self.entry(i, j);
            }
        }
    }
}

impl<T: Scalar, S: EntrySource<T> + ?Sized> EntrySource<T> for &S {
    fn nrows(&self) -> usize {
        (**self).nrows()
    }
    fn ncols(&self) -> usize {
        (**self).ncols()
    }
    fn entry(&self, i: usize, j: usize) -> T {
        (**self).entry(i, j)
    }
    fn fill_block(&self, rows: &[usize], cols: &[usize], out: &mut [T]) {
        (**self).fill_block(rows, cols, out)
    }
}

/// Wraps a source and counts every entry requested through it (thread-safe).
///
/// Used to prove that an H-matrix build reads only a small share of the `N²` entries.
pub struct CountingSource<S> {
    inner: S,
    count: AtomicU64,
}

impl<S> CountingSource<S> {
    /// Wraps `inner` with a zero count.
    pub fn new(inner: S) -> Self {
        Self { inner, count: AtomicU64::new(0) }
    }
    /// Entries requested so far.
    pub fn count(&self) -> u64 {
        self.count.load(Ordering::Relaxed)
    }
    /// The wrapped source.
    pub fn inner(&self) -> &S {
        &self.inner
    }
}

impl<T: Scalar, S: EntrySource<T>> EntrySource<T> for CountingSource<S> {
    fn nrows(&self) -> usize {
        self.inner.nrows()
    }
    fn ncols(&self) -> usize {
        self.inner.ncols()
    }
    fn entry(&self, i: usize, j: usize) -> T {
        self.count.fetch_add(1, Ordering::Relaxed);
        self.inner.entry(i, j)
    }
    fn fill_block(&self, rows: &[usize], cols: &[usize], out: &mut [T]) {
        self.count.fetch_add((rows.len() * cols.len()) as u64, Ordering::Relaxed);
        self.inner.fill_block(rows, cols, out)
    }
}

/// Clears the upper halves of the vector registers (`vzeroupper`) on a CPU with AVX; a no-op
/// elsewhere.
///
/// faer's wide-vector kernels (GEMM, QR, SVD in the recompression), run by the same threads
/// between entry requests, can leave those registers in use ("dirty"); scalar code that
/// follows — the kernel evaluations of an entry source, libm's exp/sin/cos — then runs with a
/// false dependency on every instruction: measured 2–3× slower on this machine (the penalty of
/// mixing legacy SSE with dirty upper AVX state: Intel 64 and IA-32 Architectures Optimization
/// Reference Manual, "Mixing AVX code with SSE code" — from memory).
#[inline]
pub fn settle_vector_state() {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx") {
        // SAFETY: the CPU has AVX (checked above), so the instruction exists; it only zeroes
        // bits 128 and up of the vector registers, which `clobber_abi("C")` declares clobbered
        // (as for a call: no value lives in them across it).
        unsafe { std::arch::asm!("vzeroupper", clobber_abi("C")) }
    }
}

/// Wraps a source so that every request first calls [`settle_vector_state`]: the engine reads
/// every source through it, so that no source pays for the engine's dense kernels.
pub struct Settled<'a, S: ?Sized>(pub &'a S);

impl<T: Scalar, S: EntrySource<T> + ?Sized> EntrySource<T> for Settled<'_, S> {
    fn nrows(&self) -> usize {
        self.0.nrows()
    }
    fn ncols(&self) -> usize {
        self.0.ncols()
    }
    fn entry(&self, i: usize, j: usize) -> T {
        settle_vector_state();
        self.0.entry(i, j)
    }
    fn fill_block(&self, rows: &[usize], cols: &[usize], out: &mut [T]) {
        settle_vector_state();
        self.0.fill_block(rows, cols, out)
    }
}
