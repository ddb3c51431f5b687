//! ACA and recompression against exact solutions.

use rafter_linalg::{DenseMatrix, EntrySource, Scalar};
use rafter_lowrank::{AcaOutcome, Compressed, LowRank, aca, compress, optimal_rank, recompress};

/// A matrix given by a closure, as an entry source.
struct Fn2<F>(usize, usize, F);
impl<F: Fn(usize, usize) -> f64 + Sync> EntrySource<f64> for Fn2<F> {
    fn nrows(&self) -> usize {
        self.0
    }
    fn ncols(&self) -> usize {
        self.1
    }
    fn entry(&self, i: usize, j: usize) -> f64 {
        (self.2)(i, j)
    }
}

fn rel_error<S: EntrySource<f64>>(src: &S, lr: &LowRank<f64>) -> f64 {
    let d = lr.to_dense();
    let (mut e, mut n) = (0.0, 0.0);
    for j in 0..src.ncols() {
        for i in 0..src.nrows() {
            let a = src.entry(i, j);
            e += (a - d.get(i, j)).powi(2);
            n += a * a;
        }
    }
    (e / n).sqrt()
}

fn all(n: usize) -> Vec<usize> {
    (0..n).collect()
}

/// The known failure of plain partially pivoted ACA: a rank-2 block made of two "islands"
/// (`u1 v1ᵀ` on rows/columns of the first half, `u2 v2ᵀ` on the second). After the first cross
/// the next pivot row, taken from the last column, lies in the finished island and has a zero
/// residual, so plain ACA stops with half the block missing (Bebendorf, *Hierarchical
/// Matrices*, Springer 2008, §3.4 discusses this case). The reference-row/column guard must
/// recover the second island: the result is exact to rounding.
#[test]
fn guard_recovers_a_disjoint_second_island() {
    for (m, n, split_r, split_c) in [(60, 50, 30, 25), (60, 50, 5, 45), (64, 64, 60, 3), (40, 70, 20, 69)] {
        let src = Fn2(m, n, move |i: usize, j: usize| {
            if i < split_r && j < split_c {
                (1.0 + i as f64) * (2.0 + (j as f64).sin())
            } else if i >= split_r && j >= split_c {
                1e-3 * (1.0 + (i as f64).cos()) * (1.0 + j as f64)
            } else {
                0.0
            }
        });
        match aca(&src, &all(m), &all(n), 1e-8, 40) {
            AcaOutcome::Converged { block, .. } => {
                let err = rel_error(&src, &block);
                assert!(
                    err < 1e-12,
                    "{m}×{n} split ({split_r},{split_c}): error {err}, rank {}",
                    block.rank()
                );
            }
            AcaOutcome::RankCap { .. } => panic!("rank-2 block hit the rank cap"),
        }
    }
}

/// Rows that are entirely zero (a block with empty rows) must not stop ACA or break it.
#[test]
fn zero_rows_and_zero_block() {
    let src = Fn2(
        30,
        20,
        |i: usize, j: usize| if i.is_multiple_of(3) { 0.0 } else { 1.0 / (1.0 + (i + 2 * j) as f64) },
    );
    let Compressed::LowRank { block, .. } = compress(&src, &all(30), &all(20), 1e-6).unwrap() else {
        panic!("smooth block should compress")
    };
    assert!(rel_error(&src, &block) <= 1e-6);
    let zero = Fn2(10, 12, |_: usize, _: usize| 0.0);
    match aca(&zero, &all(10), &all(12), 1e-4, 5) {
        AcaOutcome::Converged { block, .. } => assert_eq!(block.rank(), 0),
        AcaOutcome::RankCap { .. } => panic!("zero block must converge at rank 0"),
    }
}

/// Recompression against an exact solution: `A = Q1 diag(σ) Q2ᵀ` with orthonormal `Q1`, `Q2`
/// and σ_i = 2^-i has exactly those singular values, so the optimal rank at tolerance ε is known
/// (Eckart–Young), and the truncated error must equal the tail `(Σ_{i≥r} σ_i²)^½ / ‖σ‖`.
#[test]
fn recompression_truncates_to_the_optimal_rank() {
    let (m, n, k) = (40, 35, 12);
    let g1 = DenseMatrix::from_fn(m, k, |i, j| ((i * 7 + j * 13) % 17) as f64 - 8.0 + (i == j) as u8 as f64);
    let g2 =
        DenseMatrix::from_fn(n, k, |i, j| ((i * 5 + j * 11) % 19) as f64 - 9.0 + 0.5 * (i == j) as u8 as f64);
    let (q1, _) = f64::qr_thin(&g1);
    let (q2, _) = f64::qr_thin(&g2);
    let sigma: Vec<f64> = (0..k).map(|i| 0.5f64.powi(i as i32)).collect();
    // Give the factors an arbitrary non-orthogonal mixing so recompression has work to do.
    let u = DenseMatrix::from_fn(m, k, |i, l| q1.get(i, l) * sigma[l] * (1.0 + l as f64));
    let v = DenseMatrix::from_fn(n, k, |j, l| q2.get(j, l) / (1.0 + l as f64));
    let a = LowRank { u, v }.to_dense();
    for eps in [1e-1, 1e-2, 1e-3] {
        let lr = LowRank {
            u: DenseMatrix::from_fn(m, k, |i, l| q1.get(i, l) * sigma[l] * (1.0 + l as f64)),
            v: DenseMatrix::from_fn(n, k, |j, l| q2.get(j, l) / (1.0 + l as f64)),
        };
        let r = recompress(lr, eps).unwrap();
        let expect = optimal_rank(&sigma, eps);
        assert_eq!(r.rank(), expect, "ε = {eps}");
        let tail: f64 = sigma[expect..].iter().map(|s| s * s).sum::<f64>().sqrt();
        let total: f64 = sigma.iter().map(|s| s * s).sum::<f64>().sqrt();
        let d = r.to_dense();
        let err: f64 =
            a.as_slice().iter().zip(d.as_slice()).map(|(x, y)| (x - y).powi(2)).sum::<f64>().sqrt();
        assert!((err - tail).abs() <= 1e-12 * total, "ε = {eps}: error {err}, expected tail {tail}");
        assert!(err <= eps * total);
    }
}

/// Frobenius stopping rule on a smooth kernel: two separated point groups on a line, kernel
/// `1/|x − y|` (asymptotically smooth); the result must meet the requested tolerance.
#[test]
fn aca_meets_tolerance_on_a_smooth_kernel() {
    let src = Fn2(80, 90, |i: usize, j: usize| 1.0 / ((3.0 + j as f64 / 90.0) - i as f64 / 80.0));
    for eps in [1e-3, 1e-6, 1e-9] {
        match aca(&src, &all(80), &all(90), eps, 60) {
            AcaOutcome::Converged { block, .. } => {
                let e = rel_error(&src, &block);
                assert!(e <= eps, "ε = {eps}: error {e}");
            }
            AcaOutcome::RankCap { .. } => panic!("smooth kernel hit the cap"),
        }
    }
}
