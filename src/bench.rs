//! The engine benchmark behind `rafter bench-engine`: build a point-kernel H-matrix over a square
//! plate, time its build and matvec, and optionally check it against the dense reference and
//! solve a system with GMRES.

use rafter_hmatrix::{HMatrix, HOptions, reference};
use rafter_krylov::{GmresOptions, gmres_monitored};
use rafter_linalg::{CountingSource, DenseLu, EntrySource, Scalar};
use rafter_pointkernel::{HelmholtzPlate, LaplacePlate, Plate};
use serde::Serialize;
use std::time::Instant;

/// Which point kernel to benchmark.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, clap::ValueEnum)]
#[serde(rename_all = "lowercase")]
pub enum Kernel {
    /// `1/(4π r)`, real.
    Laplace,
    /// `exp(−jkr)/(4π r)`, complex.
    Helmholtz,
}

/// Benchmark settings.
#[derive(Clone, Debug, Serialize)]
pub struct BenchSettings {
    /// Kernel.
    pub kernel: Kernel,
    /// Requested points (rounded to the nearest square).
    pub n: usize,
    /// H-matrix tolerance ε.
    pub tolerance: f64,
    /// Admissibility η.
    pub eta: f64,
    /// Leaf size.
    pub leaf: usize,
    /// Plate size in wavelengths (Helmholtz only).
    pub wavelengths: f64,
    /// Compare with the dense reference (and dense LU when solving).
    pub dense_check: bool,
    /// Solve `H x = 1` with block-Jacobi GMRES.
    pub solve: bool,
    /// Timed matvecs to average over.
    pub matvec_repeats: usize,
}

/// Everything `rafter bench-engine` prints (one JSON object).
#[derive(Clone, Debug, Serialize)]
pub struct BenchReport {
    /// Unknowns (points on the plate).
    pub n: usize,
    /// Kernel name.
    pub kernel: Kernel,
    /// Scalar type.
    pub scalar: &'static str,
    /// Tolerance ε.
    pub tolerance: f64,
    /// η.
    pub eta: f64,
    /// Leaf size.
    pub leaf: usize,
    /// Wavelengths across the plate (Helmholtz), else 0.
    pub wavelengths: f64,
    /// Threads used.
    pub threads: usize,
    /// Build wall time, s (trees, block tree, all blocks).
    pub build_s: f64,
    /// Mean wall time of one matvec, s.
    pub matvec_s: f64,
    /// Stored bytes.
    pub memory_bytes: u64,
    /// Dense bytes.
    pub dense_bytes: u64,
    /// `memory_bytes / dense_bytes`.
    pub compression: f64,
    /// Largest rank.
    pub max_rank: usize,
    /// Mean rank of low-rank blocks.
    pub mean_rank: f64,
    /// Leaf blocks.
    pub blocks: usize,
    /// Share of stored bytes in dense blocks.
    pub near_field_share: f64,
    /// Cluster tree shape (leaves, depth, leaf sizes).
    pub cluster_tree: rafter_cluster::ClusterStats,
    /// Entries the build asked of the source.
    pub entries_requested: u64,
    /// `entries_requested / n²`.
    pub entries_share: f64,
    /// Relative Frobenius error against the dense reference (with `--dense-check`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rel_error: Option<f64>,
    /// Largest per-block relative error (with `--dense-check`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub block_max_rel_error: Option<f64>,
    /// Dense fill time, s (with `--dense-check`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dense_fill_s: Option<f64>,
    /// GMRES results (with `--solve`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub solve: Option<SolveReport>,
    /// Peak resident memory of the process, bytes.
    pub peak_memory_bytes: Option<u64>,
}

/// GMRES part of the benchmark.
#[derive(Clone, Debug, Serialize)]
pub struct SolveReport {
    /// GMRES tolerance (10 ε, at least 1e-10).
    pub tolerance: f64,
    /// Iterations.
    pub iterations: usize,
    /// Final relative residual.
    pub residual: f64,
    /// Preconditioner set-up time, s.
    pub preconditioner_s: f64,
    /// GMRES wall time, s.
    pub solve_s: f64,
    /// `‖x − x_dense‖/‖x_dense‖` against dense LU (with `--dense-check`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rel_diff_dense_lu: Option<f64>,
    /// Dense LU time, s (with `--dense-check`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub dense_lu_s: Option<f64>,
}

/// Progress callbacks of [`run`].
pub struct Progress<'a> {
    /// Called with (blocks done, total blocks) during the H-matrix build.
    pub build: &'a (dyn Fn(usize, usize) + Sync),
    /// Called with (iteration, relative residual) during GMRES.
    pub gmres: &'a mut dyn FnMut(usize, f64),
}

/// Runs the benchmark, reporting progress through `progress`.
pub fn run(s: &BenchSettings, progress: Progress<'_>) -> anyhow::Result<BenchReport> {
    let plate = Plate::new(s.n, 1.0)?;
    let opts = HOptions { tolerance: s.tolerance, eta: s.eta, leaf_size: s.leaf };
    opts.validate()?;
    if s.matvec_repeats == 0 {
        anyhow::bail!("--matvec-repeats must be at least 1");
    }
    if s.dense_check {
        reference::check_fits::<f64>(
            "the dense reference matrix",
            reference::dense_bytes::<f64>(plate.len(), plate.len())
                * if s.kernel == Kernel::Helmholtz { 2 } else { 1 },
            "drop --dense-check or lower --n",
        )?;
    }
    match s.kernel {
        Kernel::Laplace => {
            let src = LaplacePlate::new(plate.clone());
            run_with(&src, &plate, s, &opts, progress)
        }
        Kernel::Helmholtz => {
            let src = HelmholtzPlate::with_wavelengths(plate.clone(), s.wavelengths)?;
            run_with(&src, &plate, s, &opts, progress)
        }
    }
}

fn run_with<T: Scalar, S: EntrySource<T>>(
    src: &S,
    plate: &Plate,
    s: &BenchSettings,
    opts: &HOptions,
    progress: Progress<'_>,
) -> anyhow::Result<BenchReport> {
    let n = plate.len();
    let counting = CountingSource::new(src);
    let t = Instant::now();
    let h = HMatrix::build_square(&counting, &plate.points, opts, Some(progress.build))?;
    let build_s = t.elapsed().as_secs_f64();
    let entries_requested = counting.count();

    let x: Vec<T> = (0..n).map(|i| T::from_f64(((i * 7919) % 1000) as f64 / 1000.0 - 0.5)).collect();
    let mut y = vec![T::zero(); n];
    h.matvec(&x, &mut y)?; // warm-up
    let t = Instant::now();
    for _ in 0..s.matvec_repeats {
        h.matvec(&x, &mut y)?;
    }
    let matvec_s = t.elapsed().as_secs_f64() / s.matvec_repeats as f64;
    let summary = h.summary();

    let mut dense = None;
    let (mut rel_error, mut block_max_rel_error, mut dense_fill_s) = (None, None, None);
    if s.dense_check {
        let t = Instant::now();
        let a = reference::assemble_dense(src)?;
        dense_fill_s = Some(t.elapsed().as_secs_f64());
        let rep = reference::compare(&h, &a)?;
        rel_error = Some(rep.rel_error);
        block_max_rel_error = Some(rep.block_max_rel_error);
        dense = Some(a);
    }

    let solve = if s.solve {
        let tol = (10.0 * s.tolerance).max(1e-10);
        let t = Instant::now();
        let pc = h.block_jacobi()?;
        let preconditioner_s = t.elapsed().as_secs_f64();
        let b = vec![T::one(); n];
        let mut xs = vec![T::zero(); n];
        let gopts = GmresOptions { restart: 50, tolerance: tol, max_iterations: 2000 };
        let t = Instant::now();
        let rep = gmres_monitored(&h, &pc, &b, &mut xs, &gopts, progress.gmres)?;
        let solve_s = t.elapsed().as_secs_f64();
        let (mut rel_diff_dense_lu, mut dense_lu_s) = (None, None);
        if let Some(a) = dense.take() {
            let t = Instant::now();
            let lu = DenseLu::factor_in_place(a)?;
            let mut xd = b.clone();
            lu.solve_in_place(&mut xd)?;
            dense_lu_s = Some(t.elapsed().as_secs_f64());
            let diff: f64 = xs.iter().zip(&xd).map(|(p, q)| (*p - *q).abs2()).sum::<f64>().sqrt();
            let norm: f64 = xd.iter().map(|q| q.abs2()).sum::<f64>().sqrt();
            rel_diff_dense_lu = Some(diff / norm);
        }
        Some(SolveReport {
            tolerance: tol,
            iterations: rep.iterations,
            residual: rep.residual,
            preconditioner_s,
            solve_s,
            rel_diff_dense_lu,
            dense_lu_s,
        })
    } else {
        None
    };

    Ok(BenchReport {
        n,
        kernel: s.kernel,
        scalar: T::NAME,
        tolerance: s.tolerance,
        eta: s.eta,
        leaf: s.leaf,
        wavelengths: if s.kernel == Kernel::Helmholtz { s.wavelengths } else { 0.0 },
        threads: rayon::current_num_threads(),
        build_s,
        matvec_s,
        memory_bytes: summary.memory_bytes,
        dense_bytes: summary.dense_bytes,
        compression: summary.compression,
        max_rank: summary.max_rank,
        mean_rank: summary.mean_rank,
        blocks: summary.blocks,
        near_field_share: summary.near_field_share,
        cluster_tree: summary.row_tree.clone(),
        entries_requested,
        entries_share: entries_requested as f64 / (n as f64 * n as f64),
        rel_error,
        block_max_rel_error,
        dense_fill_s,
        solve,
        peak_memory_bytes: reference::peak_memory_bytes(),
    })
}
