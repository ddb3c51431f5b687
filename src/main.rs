//! The `rafter` command line.

use clap::{Parser, Subcommand};
use indicatif::{ProgressBar, ProgressStyle};
use rafter::bench::{self, BenchSettings, Kernel};
use std::process::ExitCode;

/// Planar-interconnect field solver: method of moments compressed as an H-matrix.
#[derive(Parser)]
#[command(name = "rafter", version, about)]
struct Cli {
    /// Hide progress bars.
    #[arg(long, global = true)]
    quiet: bool,
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Benchmark the H-matrix engine on a point-kernel plate problem; prints one JSON object.
    BenchEngine {
        /// Point kernel.
        #[arg(long, value_enum, default_value = "laplace")]
        kernel: Kernel,
        /// Number of points (rounded to the nearest square grid).
        #[arg(long, default_value_t = 10_000)]
        n: usize,
        /// Relative per-block Frobenius tolerance ε, in (0, 1).
        #[arg(long, default_value_t = 1e-4)]
        tol: f64,
        /// Admissibility parameter η > 0.
        #[arg(long, default_value_t = 2.0)]
        eta: f64,
        /// Maximum points per leaf cluster.
        #[arg(long, default_value_t = rafter::cluster::tree::DEFAULT_LEAF_SIZE)]
        leaf: usize,
        /// Plate size in wavelengths (Helmholtz kernel).
        #[arg(long, default_value_t = 2.0)]
        wavelengths: f64,
        /// Also assemble the dense matrix and report the exact error (refused if it does not fit).
        #[arg(long)]
        dense_check: bool,
        /// Also solve H x = 1 with block-Jacobi preconditioned GMRES (tolerance 10 ε).
        #[arg(long)]
        solve: bool,
        /// Matvecs to average the matvec time over.
        #[arg(long, default_value_t = 5)]
        matvec_repeats: usize,
    },
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::FAILURE
        }
    }
}

fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::BenchEngine {
            kernel,
            n,
            tol,
            eta,
            leaf,
            wavelengths,
            dense_check,
            solve,
            matvec_repeats,
        } => {
            let settings = BenchSettings {
                kernel,
                n,
                tolerance: tol,
                eta,
                leaf,
                wavelengths,
                dense_check,
                solve,
                matvec_repeats,
            };
            let bar = (!cli.quiet).then(|| {
                let b = ProgressBar::new(0);
                b.set_style(
                    ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} blocks ({elapsed})")
                        .expect("static template")
                        .progress_chars("=> "),
                );
                b.set_message("building H-matrix");
                b
            });
            let build = |done: usize, total: usize| {
                if let Some(b) = &bar
                    && (done == 1 || done.is_multiple_of(256) || done == total)
                {
                    b.set_length(total as u64);
                    b.set_position(done as u64);
                }
            };
            let mut gmres = |it: usize, res: f64| {
                if let Some(b) = &bar {
                    b.set_message(format!("GMRES iteration {it}, relative residual {res:.2e}"));
                    b.tick();
                }
            };
            let report = bench::run(&settings, bench::Progress { build: &build, gmres: &mut gmres });
            if let Some(b) = &bar {
                b.finish_and_clear();
            }
            if !cli.quiet
                && let Ok(Some(s)) = report.as_ref().map(|r| r.solve.as_ref())
            {
                eprintln!("GMRES: {} iterations, relative residual {:.2e}", s.iterations, s.residual);
            }
            println!("{}", serde_json::to_string_pretty(&report?)?);
            Ok(())
        }
    }
}
