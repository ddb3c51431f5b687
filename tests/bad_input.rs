//! Bad input gets a clear error, never a panic.

use rafter::hmatrix::{HError, HMatrix, HOptions};
use rafter::pointkernel::{LaplacePlate, Plate};

fn small() -> (LaplacePlate, Plate) {
    let p = Plate::new(100, 1.0).unwrap();
    (LaplacePlate::new(p.clone()), p)
}

#[test]
fn options_out_of_range_are_refused() {
    let (src, p) = small();
    for tol in [0.0, 1.0, -1e-3, f64::NAN, 2.0] {
        let o = HOptions { tolerance: tol, ..HOptions::default() };
        let e = HMatrix::build_square(&src, &p.points, &o, None).err().expect("must fail");
        assert!(matches!(e, HError::BadTolerance(_)), "{e}");
        assert!(e.to_string().contains("(0, 1)"));
    }
    for eta in [0.0, -2.0, f64::INFINITY] {
        let o = HOptions { eta, ..HOptions::default() };
        let e = HMatrix::build_square(&src, &p.points, &o, None).err().expect("must fail");
        assert!(e.to_string().contains("η"), "{e}");
    }
    let o = HOptions { leaf_size: 0, ..HOptions::default() };
    let e = HMatrix::build_square(&src, &p.points, &o, None).err().expect("must fail");
    assert!(e.to_string().contains("leaf size"), "{e}");
}

#[test]
fn geometry_problems_are_refused() {
    let (src, p) = small();
    // Point count does not match the source.
    let e = HMatrix::build_square(&src, &p.points[..50], &HOptions::default(), None).err().unwrap();
    assert!(matches!(e, HError::DimensionMismatch { expected: 100, got: 50, .. }), "{e}");
    // NaN coordinate.
    let mut pts = p.points.clone();
    pts[7][2] = f64::NAN;
    let e = HMatrix::build_square(&src, &pts, &HOptions::default(), None).err().unwrap();
    assert!(e.to_string().contains("point 7"), "{e}");
    // Empty point set.
    assert!(Plate::new(0, 1.0).is_err());
}

#[test]
fn mismatched_vectors_are_refused() {
    let (src, p) = small();
    let h = HMatrix::build_square(&src, &p.points, &HOptions::default(), None).unwrap();
    let x = vec![1.0; 99];
    let mut y = vec![0.0; 100];
    assert!(matches!(h.matvec(&x, &mut y), Err(HError::DimensionMismatch { .. })));
    let x = vec![1.0; 100];
    let mut y = vec![0.0; 3];
    assert!(h.matvec(&x, &mut y).is_err());
    let mut y = vec![0.0; 200];
    assert!(h.matvec_multi(&x, &mut y, 2).is_err());
}
