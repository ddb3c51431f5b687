//! `rafter verify`, `rafter blocks` and `rafter extract --pictures` end to end: outputs, the
//! accuracy contract seen from outside, and refusals that leave nothing behind.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn rafter() -> Command {
    Command::new(env!("CARGO_BIN_EXE_rafter"))
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("rafter-verify-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn data(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)
}

fn run(args: &[&str], layout: &Path, out: Option<&Path>) -> Output {
    let mut c = rafter();
    c.arg("--quiet").args(args).arg(layout);
    if let Some(o) = out {
        c.arg("-o").arg(o);
    }
    c.output().unwrap()
}

fn json(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// The documented keys exist; the per-block contract holds for every block (exact errors
/// against the dense blocks ≤ ε); the operator and the results agree with the dense reference
/// to within the tolerance; the trade-off has one row per tolerance and its result error falls
/// as the tolerance tightens.
#[test]
fn verify_reports_and_meets_the_contract() {
    let dir = scratch("ok");
    let out = dir.join("v");
    let o = run(
        &["verify", "--tolerances", "1e-2,1e-4,1e-6", "--max-error", "1e-3"],
        &data("data/regression/laminate-pair.toml"),
        Some(&out),
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v = json(&out.join("verify.json"));
    for key in ["unknowns", "matvec_rel_error", "block_max_rel_error", "result_max_rel_diff", "tradeoff"] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    let eps = v["tolerance"].as_f64().unwrap();
    assert!(v["block_max_rel_error"].as_f64().unwrap() <= eps);
    assert_eq!(v["blocks_over_tolerance"].as_u64().unwrap(), 0);
    assert!(v["matvec_rel_error"].as_f64().unwrap() <= eps);
    assert!(v["result_max_rel_diff"].as_f64().unwrap() <= 10.0 * eps);
    let rows = v["tradeoff"].as_array().unwrap();
    assert_eq!(rows.len(), 3);
    for key in ["tolerance", "compression", "memory_bytes", "build_s", "solve_s", "result_max_rel_diff"] {
        assert!(rows[0].get(key).is_some(), "tradeoff row misses {key}");
    }
    let err: Vec<f64> = rows.iter().map(|r| r["result_max_rel_diff"].as_f64().unwrap()).collect();
    assert!(err[0] > err[1] && err[1] > err[2], "{err:?}");
    let n = v["unknowns"].as_u64().unwrap() as usize;
    assert_eq!(v["entries"].as_array().unwrap().len(), 4, "two nets, four entries");
    assert!(n > 500);
}

/// `--max-error` below what the compressed solve reaches: non-zero exit, report still written.
#[test]
fn max_error_sets_the_exit_code() {
    let dir = scratch("max");
    let out = dir.join("v");
    let o = run(&["verify", "--max-error", "1e-14"], &data("data/regression/laminate-pair.toml"), Some(&out));
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("more than --max-error"), "{err}");
    assert!(out.join("verify.json").exists());
}

/// Bad requests are refused before any work, with the value and a hint, and leave no output.
#[test]
fn bad_requests_are_refused() {
    let dir = scratch("bad");
    let small = data("data/regression/laminate-pair.toml");
    let out = dir.join("v");
    for (args, needle) in [
        (vec!["verify", "--tolerances", "0,1e-3"], "0 is not a relative tolerance"),
        (vec!["verify", "--tolerances", "1e-3,1.5"], "1.5 is not a relative tolerance"),
        (vec!["verify", "--tolerances", ""], "empty list"),
        (vec!["verify", "--tolerances", "1e-3,abc"], "'abc' is not a number"),
        (vec!["verify", "--max-error", "-1"], "--max-error"),
    ] {
        let o = run(&args, &small, Some(&out));
        assert!(!o.status.success(), "{args:?}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains(needle), "{args:?}: {err}");
        assert!(!out.exists(), "{args:?} left an output folder");
    }
    // Too large for a dense reference (99 200 unknowns: 79 GB): refused with the estimate.
    let o = run(&["verify"], &data("data/crossed-bus.toml"), Some(&out));
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("dense reference matrix") && err.contains("99200 unknowns"), "{err}");
    assert!(!out.exists());
    // An output "folder" that is a file.
    let file = dir.join("plain-file");
    std::fs::write(&file, "x").unwrap();
    let o = run(&["verify"], &small, Some(&file.join("sub")));
    assert!(!o.status.success());
    assert!(String::from_utf8_lossy(&o.stderr).contains("cannot create output folder"));
    let o = run(&["blocks"], &small, Some(&file.join("sub")));
    assert!(!o.status.success());
    // An unknown net for the pictures: refused before the solve, naming the nets.
    let o = run(&["extract", "--picture-net", "nope"], &small, Some(&out));
    assert!(!o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("--picture-net nope") && err.contains("p, n"), "{err}");
    assert!(!out.exists());
}

/// `rafter blocks`: the CSV has one line per block of the JSON, the totals are consistent with
/// the blocks, and both pictures are written (PNG signature, SVG with one shape per block).
#[test]
fn blocks_table_and_pictures() {
    let dir = scratch("blocks");
    let out = dir.join("b");
    let o = run(&["blocks"], &data("data/regression/buried-trio.toml"), Some(&out));
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v = json(&out.join("blocks.json"));
    let blocks = v["blocks"].as_array().unwrap();
    let csv = std::fs::read_to_string(out.join("blocks.csv")).unwrap();
    assert_eq!(csv.lines().count(), blocks.len() + 1);
    let stored: u64 = blocks.iter().map(|b| b["bytes"].as_u64().unwrap()).sum();
    assert_eq!(stored, v["totals"]["memory_bytes"].as_u64().unwrap());
    let hist: u64 =
        v["totals"]["rank_histogram"].as_array().unwrap().iter().map(|c| c["blocks"].as_u64().unwrap()).sum();
    assert_eq!(hist, v["totals"]["low_rank_blocks"].as_u64().unwrap());
    let png = std::fs::read(out.join("blocks.png")).unwrap();
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
    let svg = std::fs::read_to_string(out.join("blocks.svg")).unwrap();
    assert!(svg.matches("<rect").count() >= blocks.len(), "one rectangle per block at least");
}

/// `rafter extract --pictures`: one charge-density picture per net and the GMRES history.
#[test]
fn extract_draws_the_solution() {
    let dir = scratch("pictures");
    let out = dir.join("x");
    let o = run(&["extract", "--pictures"], &data("data/regression/laminate-pair.toml"), Some(&out));
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for f in ["charge-p.svg", "charge-p.png", "charge-n.svg", "charge-n.png", "gmres.svg", "gmres.png"] {
        assert!(out.join(f).exists(), "missing {f}");
    }
    let out1 = dir.join("y");
    let o = run(&["extract", "--picture-net", "n"], &data("data/regression/laminate-pair.toml"), Some(&out1));
    assert!(o.status.success());
    assert!(out1.join("charge-n.png").exists() && !out1.join("charge-p.png").exists());
}
