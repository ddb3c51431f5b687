//! The H-matrix build must never fill the dense matrix: a counting entry source proves that the
//! build asks for fewer than 10 % of the N² entries at N ≈ 20 000 (Laplace plate, ε = 1e-4).

use rafter::hmatrix::{HMatrix, HOptions};
use rafter::linalg::CountingSource;
use rafter::pointkernel::{LaplacePlate, Plate};

#[test]
fn build_requests_few_entries() {
    let p = Plate::new(20_000, 1.0).unwrap();
    let n = p.len() as f64;
    let src = CountingSource::new(LaplacePlate::new(p.clone()));
    let h = HMatrix::build_square(&src, &p.points, &HOptions::default(), None).unwrap();
    let share = src.count() as f64 / (n * n);
    eprintln!(
        "N = {n}: requested {} entries = {:.3} of N², compression {:.4}",
        src.count(),
        share,
        h.compression()
    );
    assert!(share < 0.10, "the build requested {share:.3} of N²");
    // Every stored entry was requested at least once, so the count cannot be below the storage.
    assert!(src.count() as f64 >= h.memory_bytes() as f64 / 8.0 / 2.0);
}
