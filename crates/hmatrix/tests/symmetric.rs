//! The symmetric H-matrix build ([`HMatrix::build_symmetric`]) against the definition of the
//! operator (the dense matrix assembled entry by entry) and against the ordinary build of the
//! same source.
//!
//! Sources: the Laplace collocation matrix of `rafter_pointkernel` (real symmetric) and, below,
//! a lossy Helmholtz kernel `e^{−jkr}/(4πr)` with complex wave number `k = β − jα` (complex
//! symmetric, not Hermitian). Both depend on `|x_i − x_j|` only, computed from coordinate
//! differences whose squares do not depend on the order of the points, so `A[i, j] = A[j, i]`
//! holds exactly in floating point.
//!
//! Bounds:
//! - accuracy: the per-block contract of [`HOptions::tolerance`], `‖A_b − H_b‖_F ≤ ε ‖A_b‖_F`
//!   for every block, sums to `‖A − H‖_F ≤ ε ‖A‖_F` (Pythagoras over disjoint blocks; the
//!   standard H-matrix error argument, Hackbusch, *Hierarchical Matrices: Algorithms and
//!   Analysis*, Springer 2015, ch. 5 — from memory); the whole-matrix check keeps the margin 2
//!   of the ordinary build's tests.
//! - symmetry: the stored operator is exactly symmetric, so `xᵀ(H y) − yᵀ(H x)` is rounding
//!   only. Rounding errors of sums of `N` terms grow like `√N u` in practice (Higham & Mary, "A
//!   new approach to probabilistic rounding error analysis", SIAM J. Sci. Comput. 41, 2019 —
//!   from memory), about 5e-15 for `N = 1600`; the bound used is `1e-13 ‖x‖ ‖y‖ ‖A‖_F`, 20×
//!   that, and the ordinary build (symmetric only to ε) is checked to exceed it by orders of
//!   magnitude, so the check can fail.

use rafter_hmatrix::{BlockStats, HError, HMatrix, HOptions, reference};
use rafter_krylov::{GmresOptions, gmres};
use rafter_linalg::{Complex64, CountingSource, DenseLu, DenseMatrix, EntrySource, Scalar};
use rafter_pointkernel::{LaplacePlate, Plate, square_self_potential};
use std::f64::consts::PI;

/// Helmholtz collocation on a plate with a complex wave number `k = β − jα` (`e^{jωt}`
/// convention, `α > 0`: a lossy medium): `A_ij = e^{−jk r}/(4π r)` off the diagonal and the
/// static square self term plus `−jk/(4π)` on it (the first term of the expansion of
/// `(e^{−jkr} − 1)/r`, as in `rafter_pointkernel::HelmholtzPlate`).
struct LossyPlate {
    plate: Plate,
    k: Complex64,
    self_term: Complex64,
}

impl LossyPlate {
    fn new(plate: Plate, k: Complex64) -> Self {
        let self_term = Complex64::new(square_self_potential(plate.h), 0.0) - Complex64::i() * k / (4.0 * PI);
        Self { plate, k, self_term }
    }
}

impl EntrySource<Complex64> for LossyPlate {
    fn nrows(&self) -> usize {
        self.plate.len()
    }
    fn ncols(&self) -> usize {
        self.plate.len()
    }
    fn entry(&self, i: usize, j: usize) -> Complex64 {
        if i == j {
            return self.self_term;
        }
        let (a, b) = (self.plate.points[i], self.plate.points[j]);
        let r = ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt();
        (-Complex64::i() * self.k * r).exp() / (4.0 * PI * r)
    }
}

/// A plate two wavelengths across (`β = 4π` on a unit plate) with attenuation `α = 1` Np per
/// unit length.
fn lossy(n: usize) -> (LossyPlate, Plate) {
    let p = Plate::new(n, 1.0).unwrap();
    (LossyPlate::new(p.clone(), Complex64::new(4.0 * PI, -1.0)), p)
}

fn laplace(n: usize) -> (LaplacePlate, Plate) {
    let p = Plate::new(n, 1.0).unwrap();
    (LaplacePlate::new(p.clone()), p)
}

/// Deterministic pseudo-random numbers in [−1, 1) (SplitMix64).
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 52) as f64 - 1.0
    }
}

/// Random test vectors: real for `f64`, with independent real and imaginary parts for
/// `Complex64` (obtained as `a + b·j` through `Scalar` arithmetic on a unit `j` passed in).
fn random<T: Scalar>(n: usize, rng: &mut Rng, j: T) -> Vec<T> {
    (0..n).map(|_| T::from_f64(rng.next()) + j * T::from_f64(rng.next())).collect()
}

fn norm<T: Scalar>(x: &[T]) -> f64 {
    x.iter().map(|v| v.abs2()).sum::<f64>().sqrt()
}

/// `xᵀ y` (plain transpose).
fn bilinear<T: Scalar>(x: &[T], y: &[T]) -> T {
    x.iter().zip(y).map(|(&a, &b)| a * b).sum()
}

fn apply<T: Scalar>(h: &HMatrix<T>, x: &[T]) -> Vec<T> {
    let mut y = vec![T::zero(); x.len()];
    h.matvec(x, &mut y).unwrap();
    y
}

/// `|xᵀ(H y) − yᵀ(H x)| / (‖x‖ ‖y‖ ‖A‖_F)`, the largest over a few random pairs.
fn asymmetry<T: Scalar>(h: &HMatrix<T>, a_norm: f64, j: T) -> f64 {
    let mut rng = Rng(7);
    let n = h.nrows();
    (0..4)
        .map(|_| {
            let (x, y) = (random(n, &mut rng, j), random(n, &mut rng, j));
            let d = bilinear(&x, &apply(h, &y)) - bilinear(&y, &apply(h, &x));
            d.abs() / (norm(&x) * norm(&y) * a_norm)
        })
        .fold(0.0, f64::max)
}

/// The operator `H` as a dense matrix (original order): `H I` by one multi-vector product.
fn materialise<T: Scalar>(h: &HMatrix<T>) -> DenseMatrix<T> {
    let n = h.nrows();
    let mut eye = vec![T::zero(); n * n];
    for i in 0..n {
        eye[i + i * n] = T::one();
    }
    let mut out = vec![T::zero(); n * n];
    h.matvec_multi(&eye, &mut out, n).unwrap();
    DenseMatrix::from_column_major(n, n, out).unwrap()
}

fn check_symmetry<T: Scalar, S: EntrySource<T>>(src: &S, points: &[[f64; 3]], j: T) {
    let a_norm = reference::assemble_dense(src).unwrap().frobenius_norm();
    let opts = HOptions { tolerance: 1e-4, ..HOptions::default() };
    let sym = HMatrix::build_symmetric(src, points, &opts, None).unwrap();
    let plain = HMatrix::build_square(src, points, &opts, None).unwrap();
    assert!(sym.is_symmetric() && !plain.is_symmetric());
    let (s, p) = (asymmetry(&sym, a_norm, j), asymmetry(&plain, a_norm, j));
    eprintln!("{}: asymmetry symmetric build {s:.2e}, ordinary build {p:.2e}", T::NAME);
    assert!(s <= 1e-13, "symmetric build: |xᵀHy − yᵀHx| = {s:.3e} ‖x‖‖y‖‖A‖");
    assert!(p > 100.0 * 1e-13, "the ordinary build should be symmetric only to about ε (got {p:.3e})");
}

#[test]
fn operator_is_symmetric_to_rounding_real() {
    let (src, p) = laplace(1600);
    check_symmetry(&src, &p.points, 0.0);
}

#[test]
fn operator_is_symmetric_to_rounding_complex() {
    let (src, p) = lossy(1600);
    check_symmetry(&src, &p.points, Complex64::i());
}

/// The contract of the ordinary build: whole matrix ≤ 2ε, every block ≤ ε (relative Frobenius),
/// for ε = 1e-4, 1e-6, 1e-8; `compare_blockwise` gives the figures of `compare`. At ε = 1e-6 the
/// operator is also formed column by column (`H I`, mirrors applied by the matvec): its error
/// against `A` must be the error `compare` reports (which counts each mirror as its stored
/// block), and it must be symmetric to rounding.
fn check_accuracy<T: Scalar, S: EntrySource<T>>(src: &S, points: &[[f64; 3]]) {
    let dense = reference::assemble_dense(src).unwrap();
    for eps in [1e-4, 1e-6, 1e-8] {
        let opts = HOptions { tolerance: eps, ..HOptions::default() };
        let h = HMatrix::build_symmetric(src, points, &opts, None).unwrap();
        let rep = reference::compare(&h, &dense).unwrap();
        eprintln!(
            "{} ε={eps:e}: rel {:.3e}, worst block {:.3e}, compression {:.4}",
            T::NAME,
            rep.rel_error,
            rep.block_max_rel_error,
            h.compression()
        );
        assert!(rep.rel_error <= 2.0 * eps, "ε={eps}: relative error {}", rep.rel_error);
        assert!(rep.block_max_rel_error <= eps, "ε={eps}: worst block {}", rep.block_max_rel_error);
        assert!(h.compression() < 1.0);
        let bw = reference::compare_blockwise(&h, src).unwrap();
        assert!((bw.rel_error - rep.rel_error).abs() <= 1e-9 * rep.rel_error);
        assert_eq!(bw.block_rel_errors.len(), h.blocks().len());
        if eps == 1e-6 {
            let hd = materialise(&h);
            let n = h.nrows();
            let (mut err2, mut asym2) = (0.0, 0.0);
            for j in 0..n {
                for i in 0..n {
                    err2 += (hd.get(i, j) - dense.get(i, j)).abs2();
                    asym2 += (hd.get(i, j) - hd.get(j, i)).abs2();
                }
            }
            let (full, asym) = (err2.sqrt() / dense.frobenius_norm(), asym2.sqrt() / dense.frobenius_norm());
            eprintln!(
                "  H I: rel error {full:.4e} (compare: {:.4e}), ‖H − Hᵀ‖_F/‖A‖_F {asym:.2e}",
                rep.rel_error
            );
            assert!((full - rep.rel_error).abs() <= 1e-3 * rep.rel_error, "{full} vs {}", rep.rel_error);
            assert!(asym <= 1e-13, "‖H − Hᵀ‖_F = {asym:.3e} ‖A‖_F");
        }
    }
}

#[test]
fn agrees_with_the_dense_matrix_real() {
    let (src, p) = laplace(1600);
    check_accuracy(&src, &p.points);
}

#[test]
fn agrees_with_the_dense_matrix_complex() {
    let (src, p) = lossy(1600);
    check_accuracy(&src, &p.points);
}

/// Entries requested from the source: the symmetric build computes the diagonal blocks'
/// upper triangles and the upper half of the rest, so it should need little more than half of
/// the ordinary build's entries (≤ 0.55×: the bound set for this feature; half the off-diagonal
/// work plus `(n + 1)/(2n)` of the diagonal blocks'). Storage is counted once per stored block.
#[test]
fn requests_about_half_the_entries() {
    for (name, eps) in [("laplace", 1e-4), ("laplace", 1e-8), ("lossy helmholtz", 1e-6)] {
        let (plain_count, sym_count, plain_mem, sym_mem) = if name == "laplace" {
            let (src, p) = laplace(4096);
            counts(src, &p.points, eps)
        } else {
            let (src, p) = lossy(4096);
            counts(src, &p.points, eps)
        };
        let ratio = sym_count as f64 / plain_count as f64;
        eprintln!(
            "{name} ε={eps:e}: entries {sym_count} vs {plain_count} ({ratio:.3}), memory {:.3} of the ordinary build",
            sym_mem as f64 / plain_mem as f64
        );
        assert!(ratio <= 0.55, "{name}: the symmetric build requested {ratio:.3} of the entries");
    }
}

fn counts<T: Scalar, S: EntrySource<T>>(src: S, points: &[[f64; 3]], eps: f64) -> (u64, u64, u64, u64) {
    let counting = CountingSource::new(src);
    let opts = HOptions { tolerance: eps, ..HOptions::default() };
    let plain = HMatrix::build_square(&counting, points, &opts, None).unwrap();
    let plain_count = counting.count();
    let sym = HMatrix::build_symmetric(&counting, points, &opts, None).unwrap();
    let sym_count = counting.count() - plain_count;
    let stats = sym.block_stats();
    assert_eq!(stats.iter().map(|s| s.bytes as u64).sum::<u64>(), sym.memory_bytes());
    (plain_count, sym_count, plain.memory_bytes(), sym.memory_bytes())
}

/// `matvec_multi` with several right-hand sides equals repeated `matvec` (one GEMM per block
/// for all vectors against one per vector: the same sums up to rounding), on a partition with
/// blocks that span several row bands (η = 8, leaf size 8), mirrored ones included.
#[test]
fn multi_vector_product_equals_repeated_products() {
    let (src, p) = lossy(1600);
    let h = HMatrix::build_symmetric(
        &src,
        &p.points,
        &HOptions { tolerance: 1e-6, eta: 8.0, leaf_size: 8 },
        None,
    )
    .unwrap();
    let n = h.nrows();
    let nrhs = 5;
    let mut rng = Rng(11);
    let x: Vec<Complex64> = random(n * nrhs, &mut rng, Complex64::i());
    let mut multi = vec![Complex64::default(); n * nrhs];
    h.matvec_multi(&x, &mut multi, nrhs).unwrap();
    for r in 0..nrhs {
        let one = apply(&h, &x[r * n..(r + 1) * n]);
        let d = norm(&one.iter().zip(&multi[r * n..(r + 1) * n]).map(|(a, b)| a - b).collect::<Vec<_>>());
        assert!(d <= 1e-13 * norm(&one), "vector {r}: difference {d:.3e} of {:.3e}", norm(&one));
    }
    // Real scalars take the same path.
    let (src, p) = laplace(1600);
    let h = HMatrix::build_symmetric(
        &src,
        &p.points,
        &HOptions { tolerance: 1e-6, eta: 8.0, leaf_size: 8 },
        None,
    )
    .unwrap();
    let x: Vec<f64> = random(n * nrhs, &mut rng, 0.0);
    let mut multi = vec![0.0; n * nrhs];
    h.matvec_multi(&x, &mut multi, nrhs).unwrap();
    for r in 0..nrhs {
        let one = apply(&h, &x[r * n..(r + 1) * n]);
        let d = norm(&one.iter().zip(&multi[r * n..(r + 1) * n]).map(|(a, b)| a - b).collect::<Vec<_>>());
        assert!(d <= 1e-13 * norm(&one), "vector {r}: difference {d:.3e}");
    }
}

/// GMRES with the block-Jacobi preconditioner of a symmetric build reaches the accuracy of the
/// ordinary build: the error against the solution of the dense system by LU (faer, partial
/// pivoting) is within a factor 3 of the ordinary build's, and the iteration counts differ by
/// at most 2. (Both operators are within ε = 1e-8 of `A`; GMRES stops at 1e-7 = 10 ε as the
/// solver's documentation advises.) Right-hand side: unit potential on every cell, the
/// capacitance problem.
fn check_solve<T: Scalar, S: EntrySource<T>>(src: &S, points: &[[f64; 3]]) {
    let dense = reference::assemble_dense(src).unwrap();
    let n = dense.nrows();
    let b = vec![T::one(); n];
    let mut exact = b.clone();
    DenseLu::factor(&dense).unwrap().solve_in_place(&mut exact).unwrap();
    let opts = HOptions { tolerance: 1e-8, ..HOptions::default() };
    let gm = GmresOptions { restart: 50, tolerance: 1e-7, max_iterations: 500 };
    let solve = |h: &HMatrix<T>| {
        let m = h.block_jacobi().unwrap();
        let mut x = vec![T::zero(); n];
        let rep = gmres(h, &m, &b, &mut x, &gm).unwrap();
        let e: Vec<T> = x.iter().zip(&exact).map(|(&a, &c)| a - c).collect();
        (norm(&e) / norm(&exact), rep.iterations)
    };
    let (e_sym, it_sym) = solve(&HMatrix::build_symmetric(src, points, &opts, None).unwrap());
    let (e_plain, it_plain) = solve(&HMatrix::build_square(src, points, &opts, None).unwrap());
    eprintln!(
        "{}: symmetric {e_sym:.3e} in {it_sym} iterations, ordinary {e_plain:.3e} in {it_plain}",
        T::NAME
    );
    assert!(e_sym <= 3.0 * e_plain && e_plain <= 3.0 * e_sym, "errors {e_sym:.3e} vs {e_plain:.3e}");
    assert!(it_sym.abs_diff(it_plain) <= 2, "iterations {it_sym} vs {it_plain}");
}

#[test]
fn block_jacobi_gmres_solves_as_accurately_real() {
    let (src, p) = laplace(2500);
    check_solve(&src, &p.points);
}

#[test]
fn block_jacobi_gmres_solves_as_accurately_complex() {
    let (src, p) = lossy(2500);
    check_solve(&src, &p.points);
}

/// Bookkeeping: the stored blocks are those with `rows.start ≤ cols.start`; `block_stats`
/// (stored blocks plus mirrors) tiles the matrix exactly once; a mirror carries its stored
/// block's id, kind, rank and ratio with the places swapped and no bytes; the summary counts
/// what `block_stats` lists; stored diagonal blocks are exactly symmetric and tile the diagonal.
#[test]
fn stored_blocks_and_mirrors_tile_the_matrix_once() {
    let (src, p) = lossy(1600);
    let h = HMatrix::build_symmetric(&src, &p.points, &HOptions::default(), None).unwrap();
    let n = h.nrows();
    assert!(h.blocks().iter().all(|b| b.rows.start <= b.cols.start));
    let stats = h.block_stats();
    let mut covered = vec![0u8; n * n];
    for s in &stats {
        for j in s.col_start..s.col_end {
            for i in s.row_start..s.row_end {
                covered[i + j * n] += 1;
            }
        }
        let b = &h.blocks()[s.id];
        if s.row_start > s.col_start {
            assert_eq!((s.row_start..s.row_end, s.col_start..s.col_end), (b.cols.clone(), b.rows.clone()));
            assert_eq!(
                (s.bytes, s.aca_steps, s.rank, s.kind),
                (0, 0, b.rank(), BlockStats::of(s.id, b).kind)
            );
            assert_eq!(s.ratio, b.bytes() as f64 / b.dense_bytes() as f64);
        } else {
            assert_eq!((s.row_start..s.row_end, s.col_start..s.col_end), (b.rows.clone(), b.cols.clone()));
            assert_eq!(s.bytes, b.bytes());
        }
    }
    assert!(covered.iter().all(|&c| c == 1), "block_stats does not tile the matrix once");
    let sum = h.summary();
    let mirrors = stats.iter().filter(|s| s.row_start > s.col_start).count();
    assert!(sum.symmetric && mirrors > 0);
    assert_eq!((sum.blocks, sum.mirrored_blocks), (stats.len(), mirrors));
    assert_eq!(sum.blocks, h.blocks().len() + mirrors);
    assert_eq!(sum.low_rank_blocks + sum.dense_blocks, sum.blocks);
    assert_eq!(sum.memory_bytes, stats.iter().map(|s| s.bytes as u64).sum::<u64>());
    let diag = h.diagonal_blocks();
    assert_eq!(diag.iter().map(|(idx, _)| idx.len()).sum::<usize>(), n);
    for (_, d) in &diag {
        assert!(d.as_slice() == d.transpose().as_slice(), "a diagonal block is not exactly symmetric");
    }
    // The ordinary build keeps its listing: one entry per stored block, in `blocks()` order.
    let plain = HMatrix::build_square(&src, &p.points, &HOptions::default(), None).unwrap();
    let ps = plain.block_stats();
    assert!(ps.iter().enumerate().all(|(i, s)| s.id == i && s.bytes == plain.blocks()[i].bytes()));
    let psum = plain.summary();
    assert!(!psum.symmetric && psum.mirrored_blocks == 0 && psum.blocks == plain.blocks().len());
}

/// A source that is not square, for the input checks.
struct Wide;
impl EntrySource<f64> for Wide {
    fn nrows(&self) -> usize {
        4
    }
    fn ncols(&self) -> usize {
        5
    }
    fn entry(&self, i: usize, j: usize) -> f64 {
        (i + j) as f64
    }
}

#[test]
fn refuses_non_square_sources_and_wrong_point_counts() {
    let pts = [[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [2.0, 0.0, 0.0], [3.0, 0.0, 0.0]];
    match HMatrix::build_symmetric(&Wide, &pts, &HOptions::default(), None) {
        Err(e @ HError::DimensionMismatch { expected: 4, got: 5, .. }) => {
            assert!(e.to_string().contains("square"), "{e}")
        }
        Err(e) => panic!("unexpected error {e}"),
        Ok(_) => panic!("a 4 × 5 source must be refused"),
    }
    let (src, p) = laplace(100);
    assert!(matches!(
        HMatrix::build_symmetric(&src, &p.points[..99], &HOptions::default(), None),
        Err(HError::DimensionMismatch { expected: 100, got: 99, .. })
    ));
    assert!(matches!(
        HMatrix::build_symmetric(&src, &p.points, &HOptions { tolerance: 0.0, ..HOptions::default() }, None),
        Err(HError::BadTolerance(_))
    ));
}

/// A square source that is not symmetric, `A[i, j] = i + 2j` (for the debug-build check).
#[cfg(debug_assertions)]
struct Skewed;
#[cfg(debug_assertions)]
impl EntrySource<f64> for Skewed {
    fn nrows(&self) -> usize {
        4
    }
    fn ncols(&self) -> usize {
        4
    }
    fn entry(&self, i: usize, j: usize) -> f64 {
        (i + 2 * j) as f64
    }
}

/// Debug builds spot-check the precondition (release builds trust it: see the docs).
#[cfg(debug_assertions)]
#[test]
#[should_panic(expected = "not symmetric")]
fn debug_builds_catch_a_non_symmetric_source() {
    let pts = [[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [2.0, 0.0, 0.0], [3.0, 0.0, 0.0]];
    let _ = HMatrix::build_symmetric(&Skewed, &pts, &HOptions::default(), None);
}
