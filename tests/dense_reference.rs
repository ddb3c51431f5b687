//! The compressed operator against the explicitly assembled dense matrix (the definition of
//! the operator, entry by entry), and GMRES against faer's dense LU (a general-purpose
//! reference library). Problems: collocation on a 64 × 64 plate (N = 4096) with the Laplace
//! kernel and with the Helmholtz kernel on a plate two wavelengths across.

use rafter::hmatrix::{HMatrix, HOptions, reference};
use rafter::krylov::{GmresOptions, KrylovError, gmres};
use rafter::linalg::{DenseLu, DenseMatrix, EntrySource, Scalar};
use rafter::lowrank::optimal_rank;
use rafter::pointkernel::{HelmholtzPlate, LaplacePlate, Plate};

const TOLERANCES: [f64; 4] = [1e-2, 1e-4, 1e-6, 1e-8];

fn plate() -> Plate {
    Plate::new(4096, 1.0).unwrap()
}

/// Whole-matrix error ≤ 2ε and every block's error ≤ 10ε (the stated contract is ≤ ε per
/// block; the margins are the acceptance bounds).
fn check_accuracy<T: Scalar, S: EntrySource<T>>(src: &S, points: &[[f64; 3]]) {
    let dense = reference::assemble_dense(src).unwrap();
    for eps in TOLERANCES {
        let opts = HOptions { tolerance: eps, ..HOptions::default() };
        let h = HMatrix::build_square(src, points, &opts, None).unwrap();
        let rep = reference::compare(&h, &dense).unwrap();
        eprintln!(
            "{} ε={eps:e}: rel {:.3e}, worst block {:.3e}, compression {:.4}",
            T::NAME,
            rep.rel_error,
            rep.block_max_rel_error,
            h.compression()
        );
        assert!(rep.rel_error <= 2.0 * eps, "ε={eps}: relative error {}", rep.rel_error);
        assert!(
            rep.block_max_rel_error <= 10.0 * eps,
            "ε={eps}: worst block error {}",
            rep.block_max_rel_error
        );
        assert!(h.compression() < 1.0);
    }
}

#[test]
fn laplace_plate_meets_tolerance_everywhere() {
    let p = plate();
    check_accuracy(&LaplacePlate::new(p.clone()), &p.points);
}

#[test]
fn helmholtz_plate_two_wavelengths_meets_tolerance_everywhere() {
    let p = plate();
    check_accuracy(&HelmholtzPlate::with_wavelengths(p.clone(), 2.0).unwrap(), &p.points);
}

/// Recompression is near-optimal: on admissible blocks, the stored rank is at most
/// 1.1 × (optimal rank at the same relative Frobenius tolerance) + 1, the optimum taken from a
/// full SVD of the exact block (Eckart & Young, "The approximation of one matrix by another of
/// lower rank", Psychometrika 1, 1936), computed with faer.
fn check_near_optimal<T: Scalar, S: EntrySource<T>>(src: &S, points: &[[f64; 3]], eps: f64) {
    let h = HMatrix::build_square(src, points, &HOptions { tolerance: eps, ..HOptions::default() }, None)
        .unwrap();
    let (rp, cp) = (h.row_tree().perm(), h.col_tree().perm());
    let mut lowrank: Vec<_> = h.blocks().iter().filter(|b| b.rank().is_some()).collect();
    lowrank.sort_by_key(|b| std::cmp::Reverse(b.rows.len() * b.cols.len()));
    // The 10 largest blocks and 30 spread over the rest.
    let step = (lowrank.len() / 30).max(1);
    let sample: Vec<_> = lowrank.iter().take(10).chain(lowrank.iter().step_by(step)).collect();
    for b in sample {
        let rows: Vec<usize> = rp[b.rows.clone()].to_vec();
        let cols: Vec<usize> = cp[b.cols.clone()].to_vec();
        let mut exact = DenseMatrix::zeros(rows.len(), cols.len());
        src.fill_block(&rows, &cols, exact.as_mut_slice());
        let sigma = T::singular_values(&exact).unwrap();
        let best = optimal_rank(&sigma, eps);
        let got = b.rank().unwrap();
        assert!(
            got as f64 <= 1.1 * best as f64 + 1.0,
            "{} block {}×{}: rank {got}, optimal {best} at ε={eps}",
            T::NAME,
            rows.len(),
            cols.len()
        );
    }
}

#[test]
fn recompression_is_near_optimal() {
    let p = plate();
    for eps in [1e-4, 1e-8] {
        check_near_optimal(&LaplacePlate::new(p.clone()), &p.points, eps);
        check_near_optimal(&HelmholtzPlate::with_wavelengths(p.clone(), 2.0).unwrap(), &p.points, eps);
    }
}

/// GMRES on the compressed Laplace operator (ε = 1e-10, GMRES target 1e-8 ≥ 10 ε) reaches
/// relative residual 1e-8 and agrees with faer's dense LU solution of the dense system to 1e-5.
#[test]
fn gmres_matches_dense_lu() {
    let p = plate();
    let src = LaplacePlate::new(p.clone());
    let opts = HOptions { tolerance: 1e-10, ..HOptions::default() };
    let h = HMatrix::build_square(&src, &p.points, &opts, None).unwrap();
    let n = p.len();
    let b: Vec<f64> = p.points.iter().map(|q| 1.0 + q[0] - 0.5 * q[1]).collect();

    let pc = h.block_jacobi().unwrap();
    let mut x = vec![0.0; n];
    let gopts = GmresOptions { restart: 50, tolerance: 1e-8, max_iterations: 500 };
    let rep = gmres(&h, &pc, &b, &mut x, &gopts).unwrap();
    assert!(rep.residual <= 1e-8);
    eprintln!("GMRES: {} iterations, residual {:.2e}", rep.iterations, rep.residual);

    let dense = reference::assemble_dense(&src).unwrap();
    let mut xd = b.clone();
    DenseLu::factor(&dense).unwrap().solve_in_place(&mut xd).unwrap();
    let diff = x.iter().zip(&xd).map(|(a, b)| (a - b).powi(2)).sum::<f64>().sqrt();
    let norm = xd.iter().map(|a| a * a).sum::<f64>().sqrt();
    assert!(diff <= 1e-5 * norm, "relative difference {}", diff / norm);

    // The same system with an iteration cap too small to converge must fail loudly.
    let capped = GmresOptions { restart: 50, tolerance: 1e-8, max_iterations: 2 };
    let mut x2 = vec![0.0; n];
    match gmres(&h, &rafter::krylov::Identity(n), &b, &mut x2, &capped) {
        Err(KrylovError::NotConverged { iterations: 2, residual, .. }) => assert!(residual > 1e-8),
        other => panic!("expected NotConverged, got {other:?}"),
    }
}

/// The per-block contract itself (‖A_b − H_b‖_F ≤ ε ‖A_b‖_F for every block, no margin) on a
/// layered-media operator: the sensor-bus demo's collocation matrix (13 916 unknowns, two
/// laminate layers over ground, ε = 10⁻⁴, Green's function to 10⁻⁷), every block compared
/// exactly against its entries. With ACA at ε/10 one of its 8 551 blocks ended at 1.005 ε
/// (this test failed); at ε/20 the worst is 0.90 ε.
#[test]
fn every_block_meets_the_tolerance_on_a_layered_operator() {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("data/sensor-bus.toml");
    let layout = rafter::layout::load(&path).unwrap();
    let mesh = rafter::layout::mesh(&layout).unwrap();
    let (p, _) = rafter::extract::panels(&mesh);
    // The Green's function as `rafter verify --tolerances …,1e-6` builds it (accuracy 10⁻⁷):
    // the configuration in which the overshoot was seen.
    let mut fine = layout.clone();
    fine.solve.tolerance = 1e-6;
    let green = rafter::extract::green_for(&fine).unwrap();
    let src = rafter::mom::PanelCollocation::new(&p, green.as_ref());
    let eps = layout.solve.tolerance;
    let h =
        HMatrix::build_square(&src, src.centres(), &HOptions { tolerance: eps, ..HOptions::default() }, None)
            .unwrap();
    let rep = reference::compare_blockwise(&h, &src).unwrap();
    let over = rep.block_rel_errors.iter().filter(|&&e| e > eps).count();
    eprintln!(
        "{} unknowns: worst block {:.4} ε, {over} blocks over ε",
        p.len(),
        rep.block_max_rel_error / eps
    );
    assert_eq!(over, 0, "worst block {:.4} ε", rep.block_max_rel_error / eps);
}
