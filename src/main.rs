//! The `rafter` command line.

use clap::{Parser, Subcommand};
use indicatif::{ProgressBar, ProgressStyle};
use rafter::bench::{self, BenchSettings, Kernel};
use std::path::PathBuf;
use std::process::ExitCode;
use std::time::Instant;

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
    /// Benchmark: compressed extraction against dense fill + LU on the same mesh, at chosen
    /// sizes (the mesh is rescaled to each); prints one JSON object.
    BenchExtract {
        /// The layout file.
        layout: PathBuf,
        /// Target numbers of unknowns, comma-separated.
        #[arg(long, value_delimiter = ',', default_values_t = [10_000usize, 20_000])]
        unknowns: Vec<usize>,
    },
    /// Per-unit-length parameters (C′, L′, Z0, εeff, even/odd modes) of the uniform parallel
    /// lines of a layout; writes lines.json.
    Lines {
        /// The layout file: each net one straight line, all over the same stretch.
        layout: PathBuf,
        /// Output folder (created if missing; written all or nothing).
        #[arg(short, long)]
        out: PathBuf,
    },
    /// Full-wave frequency sweep of the layout's ports ([[port]], [sweep]): writes
    /// NAME.sNp (Touchstone 1.1), sweep.json and sparams.svg/.png.
    Sweep {
        /// The layout file.
        layout: PathBuf,
        /// Output folder (created if missing; written all or nothing).
        #[arg(short, long)]
        out: PathBuf,
        /// Keep the port discontinuities: skip de-embedding the ports to ground.
        #[arg(long)]
        raw: bool,
        /// Also draw the surface current |J| per port (current-PORT.svg/.png) at the sweep
        /// frequency nearest to this one (Hz).
        #[arg(long, value_name = "HZ")]
        currents_at: Option<f64>,
    },
    /// Extract the capacitance matrix of a layout (TOML); writes capacitance.json, .csv and .cir.
    Extract {
        /// The layout file.
        layout: PathBuf,
        /// Output folder (created if missing; written all or nothing).
        #[arg(short, long)]
        out: PathBuf,
        /// Solve densely (fill + LU) instead of by H-matrix: a reference for small layouts.
        #[arg(long)]
        dense: bool,
        /// Also draw the charge density of every excited net (charge-NET.svg/.png) and the
        /// GMRES convergence (gmres.svg/.png).
        #[arg(long)]
        pictures: bool,
        /// Draw the charge density for this net only (implies --pictures).
        #[arg(long, value_name = "NET")]
        picture_net: Option<String>,
    },
    /// Verify the compressed solve of a layout against the dense reference (same mesh): matvec
    /// and per-block errors, GMRES, every capacitance entry; optional tolerance trade-off.
    Verify {
        /// The layout file.
        layout: PathBuf,
        /// Output folder for verify.json (created if missing; written all or nothing).
        #[arg(short, long)]
        out: Option<PathBuf>,
        /// Extra H-matrix tolerances for the trade-off table, comma-separated, each in (0, 1).
        #[arg(long)]
        tolerances: Option<String>,
        /// Exit with an error when any capacitance entry differs from the dense reference by
        /// more than this (relative, see `result_max_rel_diff`).
        #[arg(long, allow_negative_numbers = true)]
        max_error: Option<f64>,
        /// Random vectors for the matvec error.
        #[arg(long, default_value_t = 4)]
        vectors: usize,
    },
    /// Per-block rank and compression of a layout's H-matrix: blocks.csv, blocks.json and a
    /// picture of the partition (blocks.svg, blocks.png).
    Blocks {
        /// The layout file.
        layout: PathBuf,
        /// Output folder (created if missing; written all or nothing).
        #[arg(short, long)]
        out: PathBuf,
    },
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
        Command::Extract { layout, out, dense, pictures, picture_net } => {
            let pictures = match (pictures, picture_net) {
                (_, Some(net)) => rafter::extract::Pictures::Net(net),
                (true, None) => rafter::extract::Pictures::All,
                (false, None) => rafter::extract::Pictures::None,
            };
            run_extract(&layout, &out, dense, &pictures, cli.quiet)
        }
        Command::Sweep { layout, out, raw, currents_at } => {
            run_sweep(&layout, &out, !raw, currents_at, cli.quiet)
        }
        Command::Verify { layout, out, tolerances, max_error, vectors } => {
            run_verify(&layout, out.as_deref(), tolerances.as_deref(), max_error, vectors, cli.quiet)
        }
        Command::Blocks { layout, out } => {
            let layout = rafter::layout::load(&layout)?;
            let st = rafter::output::Staging::new(&out)?;
            let spin = spinner(cli.quiet, "building the H-matrix");
            let report = rafter::blocks::blocks(&layout);
            if let Some(s) = spin {
                s.finish_and_clear();
            }
            let report = report?;
            rafter::blocks::write(st, &report)?;
            if !cli.quiet {
                eprint!("{}", rafter::blocks::summary_text(&report));
                eprintln!("wrote {}/blocks.{{csv,json,svg,png}}", out.display());
            }
            Ok(())
        }
        Command::BenchExtract { layout, unknowns } => {
            let layout = rafter::layout::load(&layout)?;
            if !cli.quiet {
                eprintln!("comparing compressed and dense extraction at {unknowns:?} unknowns …");
            }
            let sizes = rafter::compare::compare(&layout, &unknowns)?;
            let json = serde_json::json!({
                "layout": layout.name,
                "tolerance": layout.solve.tolerance,
                "threads": rayon::current_num_threads(),
                "sizes": sizes,
                "peak_memory_bytes": rafter::output::peak_memory_bytes(),
            });
            println!("{}", serde_json::to_string_pretty(&json)?);
            Ok(())
        }
        Command::Lines { layout, out } => {
            let layout = rafter::layout::load(&layout)?;
            if !cli.quiet {
                eprintln!(
                    "extracting {} lines at two lengths, with dielectrics and in air …",
                    layout.nets.len()
                );
            }
            let p = rafter::lines::line_parameters(&layout)?;
            let mut st = rafter::output::Staging::new(&out)?;
            st.add("lines.json", serde_json::to_string_pretty(&p)?.as_bytes())?;
            st.commit()?;
            if !cli.quiet {
                eprint!("{}", rafter::lines::table_text(&p));
                eprintln!("wrote {}/lines.json", out.display());
            }
            Ok(())
        }
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

/// A spinner with a message, unless quiet.
fn spinner(quiet: bool, msg: &str) -> Option<ProgressBar> {
    (!quiet).then(|| {
        let b = ProgressBar::new_spinner();
        b.set_style(ProgressStyle::with_template("{spinner} {msg} ({elapsed})").expect("static template"));
        b.set_message(msg.to_string());
        b.enable_steady_tick(std::time::Duration::from_millis(200));
        b
    })
}

/// Parses `--tolerances a,b,c` with errors that name the value.
fn parse_tolerances(text: &str) -> anyhow::Result<Vec<f64>> {
    let items: Vec<&str> = text.split(',').map(str::trim).filter(|s| !s.is_empty()).collect();
    if items.is_empty() {
        anyhow::bail!(
            "--tolerances: empty list (hint: give one or more values in (0, 1), e.g. --tolerances 1e-2,1e-3,1e-4)"
        );
    }
    let values = items
        .iter()
        .map(|s| {
            s.parse::<f64>().map_err(|_| {
                anyhow::anyhow!(
                    "--tolerances: '{s}' is not a number (hint: e.g. --tolerances 1e-2,1e-3,1e-4)"
                )
            })
        })
        .collect::<anyhow::Result<Vec<f64>>>()?;
    rafter::verify::check_tolerances(&values)?;
    Ok(values)
}

fn run_verify(
    path: &std::path::Path,
    out: Option<&std::path::Path>,
    tolerances: Option<&str>,
    max_error: Option<f64>,
    vectors: usize,
    quiet: bool,
) -> anyhow::Result<()> {
    // Every argument is checked before any work, and the output folder prepared first, so a
    // bad request never costs a dense fill.
    let tolerances = tolerances.map(parse_tolerances).transpose()?.unwrap_or_default();
    if let Some(x) = max_error
        && !(x.is_finite() && x > 0.0)
    {
        anyhow::bail!("--max-error: {x} must be a positive number (hint: e.g. --max-error 1e-3)");
    }
    let layout = rafter::layout::load(path)?;
    let staging = out.map(rafter::output::Staging::new).transpose()?;
    let spin = spinner(quiet, "verifying");
    let progress = |s: &str| {
        if let Some(b) = &spin {
            b.set_message(s.to_string());
        }
    };
    let opts = rafter::verify::VerifyOptions { tolerances, vectors };
    let report = rafter::verify::verify(&layout, &opts, &progress);
    if let Some(s) = &spin {
        s.finish_and_clear();
    }
    let report = report?;
    if let (Some(mut st), Some(dir)) = (staging, out) {
        st.add("verify.json", serde_json::to_string_pretty(&report)?.as_bytes())?;
        st.commit()?;
        if !quiet {
            eprintln!("wrote {}/verify.json", dir.display());
        }
    }
    if !quiet {
        eprint!("{}", rafter::verify::table(&report));
    }
    if let Some(x) = max_error
        && report.result_max_rel_diff > x
    {
        anyhow::bail!(
            "capacitance differs from the dense reference by {:.3e} (relative), more than --max-error {x:e}",
            report.result_max_rel_diff
        );
    }
    Ok(())
}

fn run_extract(
    path: &std::path::Path,
    out: &std::path::Path,
    dense: bool,
    pictures: &rafter::extract::Pictures,
    quiet: bool,
) -> anyhow::Result<()> {
    let t = Instant::now();
    let layout = rafter::layout::load(path)?;
    pictures.check(&layout)?;
    // The output folder is prepared before any work, so an unwritable one costs no solve.
    let staging = rafter::output::Staging::new(out)?;
    let parse_s = t.elapsed().as_secs_f64();
    let bar = (!quiet).then(|| {
        let b = ProgressBar::new(0);
        b.set_style(
            ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} ({elapsed})")
                .expect("static template")
                .progress_chars("=> "),
        );
        b
    });
    let nets: Vec<String> = layout.nets.iter().map(|n| n.name.clone()).collect();
    let mut stage = |s: &str| {
        if let Some(b) = &bar {
            b.set_message(s.to_string());
            b.set_length(0);
            b.set_position(0);
        }
    };
    let build = |done: usize, total: usize| {
        if let Some(b) = &bar
            && (done == 1 || done.is_multiple_of(256) || done == total)
        {
            b.set_length(total as u64);
            b.set_position(done as u64);
        }
    };
    let mut gmres = |net: usize, it: usize, res: f64| {
        if let Some(b) = &bar {
            b.set_length(nets.len() as u64);
            b.set_position(net as u64);
            b.set_message(format!("solving net {} (GMRES iteration {it}, residual {res:.1e})", nets[net]));
        }
    };
    let hooks = rafter::extract::Hooks { stage: &mut stage, build: &build, gmres: &mut gmres };
    let result = rafter::extract::extract(&layout, parse_s, dense, hooks);
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let x = result?;
    rafter::extract::write_outputs(staging, &x, pictures)?;
    if !quiet {
        eprint!("{}", rafter::extract::table_text(&x));
        if let Some(g) = &x.gmres {
            eprintln!("GMRES iterations per net: {:?} (target residual {:.1e})", g.iterations, g.tolerance);
        }
        if let Some(h) = &x.hmatrix {
            eprintln!(
                "H-matrix: {:.2} % of dense, {} MB, max rank {}",
                100.0 * h.compression,
                h.memory_bytes / 1_000_000,
                h.max_rank
            );
        }
        eprintln!("wrote {}/capacitance.{{json,csv,cir}} in {:.2} s", out.display(), x.timing.total_s);
    }
    Ok(())
}

fn run_sweep(
    path: &std::path::Path,
    out: &std::path::Path,
    deembed: bool,
    currents_at: Option<f64>,
    quiet: bool,
) -> anyhow::Result<()> {
    if let Some(f) = currents_at
        && !(f.is_finite() && f > 0.0)
    {
        anyhow::bail!("--currents-at: {f} must be a positive frequency in Hz (hint: e.g. --currents-at 5e9)");
    }
    let t = Instant::now();
    let layout = rafter::layout::load(path)?;
    if layout.sweep.is_none() || layout.ports.is_empty() {
        anyhow::bail!(
            "{}: `rafter sweep` needs at least one [[port]] and a [sweep] table\n  hint: see docs/layout-format.md",
            layout.file
        );
    }
    let staging = rafter::output::Staging::new(out)?;
    let bar = (!quiet).then(|| {
        let b = ProgressBar::new(0);
        b.set_style(
            ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} frequencies ({elapsed}, eta {eta})")
                .expect("static template")
                .progress_chars("=> "),
        );
        b
    });
    let mut progress = |done: usize, total: usize, msg: &str| {
        if let Some(b) = &bar {
            b.set_length(total as u64);
            b.set_position(done as u64);
            b.set_message(msg.to_string());
        }
    };
    let run = rafter::sweep::run(&layout, deembed, currents_at, &mut progress);
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    let run = run?;
    let file = rafter::sweep::write_outputs(staging, &layout, &run)?;
    if !quiet {
        eprint!("{}", rafter::sweep::table_text(&run));
        eprintln!(
            "wrote {dir}/{file}, {dir}/sweep.json and {dir}/sparams.{{svg,png}} in {:.2} s",
            t.elapsed().as_secs_f64(),
            dir = out.display()
        );
    }
    for p in &run.points {
        for w in &p.warnings {
            eprintln!("warning: {w}");
        }
    }
    if let Some((f, e)) = &run.failure {
        anyhow::bail!(
            "the sweep stopped at {f:.6e} Hz: {e}\n  ({} frequencies before it are in {})",
            run.points.len(),
            out.display()
        );
    }
    Ok(())
}
