//! Property tests of the H-matrix product: linearity, agreement with the dense product, and
//! multi-vector consistency. The reference is the dense matrix assembled entry by entry.

use proptest::prelude::*;
use rafter_hmatrix::{HMatrix, HOptions, reference};
use rafter_linalg::{Complex64, DenseMatrix};
use rafter_pointkernel::{HelmholtzPlate, LaplacePlate, Plate};

fn dense_times(a: &DenseMatrix<f64>, x: &[f64]) -> Vec<f64> {
    let mut y = vec![0.0; a.nrows()];
    a.gemv_add(x, &mut y);
    y
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    /// `H x` agrees with `A x` within the operator's tolerance:
    /// `‖H x − A x‖ ≤ ‖H − A‖_F ‖x‖ ≤ ε ‖A‖_F ‖x‖` (margin 2).
    #[test]
    fn matvec_matches_dense(
        side in 12usize..30,
        leaf in 4usize..40,
        eta in 0.5f64..3.0,
        seed in prop::collection::vec(-1.0f64..1.0, 900),
    ) {
        let p = Plate::new(side * side, 1.0).unwrap();
        let src = LaplacePlate::new(p.clone());
        let eps = 1e-6;
        let h = HMatrix::build_square(&src, &p.points, &HOptions { tolerance: eps, eta, leaf_size: leaf }, None).unwrap();
        let a = reference::assemble_dense(&src).unwrap();
        let x: Vec<f64> = seed[..p.len()].to_vec();
        let mut y = vec![0.0; p.len()];
        h.matvec(&x, &mut y).unwrap();
        let yd = dense_times(&a, &x);
        let err = y.iter().zip(&yd).map(|(u, v)| (u - v).powi(2)).sum::<f64>().sqrt();
        let xn = x.iter().map(|v| v * v).sum::<f64>().sqrt();
        prop_assert!(err <= 2.0 * eps * a.frobenius_norm() * xn, "err {}", err);
    }

    /// Linearity: `H(αx + βy) = αHx + βHy` up to rounding; and the multi-vector product equals
    /// column-by-column products.
    #[test]
    fn matvec_is_linear(
        alpha in -3.0f64..3.0,
        beta in -3.0f64..3.0,
        xs in prop::collection::vec(-1.0f64..1.0, 400),
        ys in prop::collection::vec(-1.0f64..1.0, 400),
    ) {
        let p = Plate::new(400, 1.0).unwrap();
        let src = HelmholtzPlate::with_wavelengths(p.clone(), 1.5).unwrap();
        let h = HMatrix::build_square(&src, &p.points, &HOptions { tolerance: 1e-4, eta: 2.0, leaf_size: 16 }, None).unwrap();
        let x: Vec<Complex64> = xs.iter().zip(&ys).map(|(&a, &b)| Complex64::new(a, b)).collect();
        let y: Vec<Complex64> = ys.iter().map(|&b| Complex64::new(b, -0.5 * b)).collect();
        let comb: Vec<Complex64> = x.iter().zip(&y).map(|(a, b)| a * alpha + b * beta).collect();
        let mut hx = vec![Complex64::default(); 400];
        let mut hy = hx.clone();
        let mut hc = hx.clone();
        h.matvec(&x, &mut hx).unwrap();
        h.matvec(&y, &mut hy).unwrap();
        h.matvec(&comb, &mut hc).unwrap();
        let scale: f64 = hc.iter().map(|v| v.norm_sqr()).sum::<f64>().sqrt() + 1.0;
        let err: f64 = hc.iter().zip(hx.iter().zip(&hy)).map(|(c, (a, b))| (c - (a * alpha + b * beta)).norm_sqr()).sum::<f64>().sqrt();
        prop_assert!(err <= 1e-12 * scale * (1.0 + alpha.abs() + beta.abs()));
        let both: Vec<Complex64> = x.iter().chain(&y).copied().collect();
        let mut out = vec![Complex64::default(); 800];
        h.matvec_multi(&both, &mut out, 2).unwrap();
        let d: f64 = out[..400].iter().zip(&hx).chain(out[400..].iter().zip(&hy)).map(|(a, b)| (a - b).norm()).fold(0.0, f64::max);
        prop_assert!(d <= 1e-12 * scale);
    }
}
