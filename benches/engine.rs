//! Criterion benchmarks of the engine at N = 10 000 (Laplace plate, ε = 1e-4, η = 2):
//! H-matrix build, one matvec, and a block-Jacobi GMRES solve to 1e-3.
//!
//! Run with `cargo bench --bench engine`; speed targets are checked here and with
//! `rafter bench-engine`, never in unit tests.

use criterion::{Criterion, criterion_group, criterion_main};
use rafter::hmatrix::{HMatrix, HOptions};
use rafter::krylov::{GmresOptions, gmres};
use rafter::pointkernel::{LaplacePlate, Plate};
use std::hint::black_box;

fn engine(c: &mut Criterion) {
    let plate = Plate::new(10_000, 1.0).expect("valid plate");
    let src = LaplacePlate::new(plate.clone());
    let opts = HOptions::default();
    let mut g = c.benchmark_group("laplace_plate_10k");
    g.sample_size(10);
    g.bench_function("build", |b| {
        b.iter(|| black_box(HMatrix::build_square(&src, &plate.points, &opts, None).expect("build")))
    });
    let h = HMatrix::build_square(&src, &plate.points, &opts, None).expect("build");
    let x: Vec<f64> = (0..plate.len()).map(|i| (i % 17) as f64 - 8.0).collect();
    let mut y = vec![0.0; plate.len()];
    g.bench_function("matvec", |b| b.iter(|| h.matvec(black_box(&x), &mut y).expect("matvec")));
    let pc = h.block_jacobi().expect("preconditioner");
    let rhs = vec![1.0; plate.len()];
    let gopts = GmresOptions { restart: 50, tolerance: 1e-3, max_iterations: 500 };
    g.bench_function("gmres_block_jacobi", |b| {
        b.iter(|| {
            let mut sol = vec![0.0; plate.len()];
            black_box(gmres(&h, &pc, &rhs, &mut sol, &gopts).expect("converges"))
        })
    });
    g.finish();
}

criterion_group!(benches, engine);
criterion_main!(benches);
