//! `rafter sweep` end to end: the files it writes, their agreement with each other, the checks
//! it reports, and refusals.

use std::path::PathBuf;
use std::process::{Command, Output};

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("rafter-sweep-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn sweep(layout: &str, dir: &std::path::Path, extra: &[&str]) -> Output {
    let file = dir.join("layout.toml");
    std::fs::write(&file, layout).unwrap();
    Command::new(env!("CARGO_BIN_EXE_rafter"))
        .arg("--quiet")
        .arg("sweep")
        .arg(&file)
        .arg("-o")
        .arg(dir.join("out"))
        .args(extra)
        .output()
        .unwrap()
}

/// An invented two-port: a short stripline with a bend-free stub, 50 Ω and 40 Ω ports.
const TWO_PORT: &str = r#"
name = "stub"
units = "mm"
[stackup]
layers = [
  { name = "gnd", kind = "ground" },
  { name = "low", kind = "dielectric", thickness = 0.4, eps_r = 3.0, loss_tangent = 0.002 },
  { name = "high", kind = "dielectric", thickness = 0.4, eps_r = 3.0, loss_tangent = 0.002 },
  { name = "gnd2", kind = "ground" },
]
[[net]]
name = "line"
shapes = [
  { rect = { on = "low", min = [0, -0.15], max = [6, 0.15] } },
  { rect = { on = "low", min = [2.85, 0.15], max = [3.15, 2] } },
]
conductivity = 5.8e7
thickness = 0.017
[[port]]
name = "in"
net = "line"
at = [0, 0]
to = "gnd"
[[port]]
name = "out"
net = "line"
at = [6, 0]
to = "gnd"
impedance = 40
[mesh]
max_cell = 0.15
[solve]
tolerance = 1e-4
[sweep]
start = 1e9
stop = 9e9
points = 3
spacing = "linear"
"#;

/// Every documented output exists; the Touchstone file (renormalised to 50 Ω because the port
/// impedances differ) agrees with sweep.json's S renormalised the same way (power waves,
/// K. Kurokawa, IEEE Trans. MTT-13(2), 1965); Z is the inverse of Y; reciprocity and passivity
/// are reported true for this lossy passive structure, with σ_max < 1.
#[test]
fn sweep_writes_consistent_outputs() {
    let dir = scratch("outputs");
    let out = sweep(TWO_PORT, &dir, &["--currents-at", "5e9"]);
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let o = dir.join("out");
    for f in ["stub.s2p", "sweep.json", "sparams.svg", "sparams.png", "current-in.svg", "current-out.png"] {
        assert!(o.join(f).exists(), "{f} missing");
    }
    let j: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(o.join("sweep.json")).unwrap()).unwrap();
    for key in [
        "ports",
        "frequencies_hz",
        "s",
        "z",
        "y",
        "unknowns",
        "iterations",
        "compression",
        "seconds",
        "reciprocity_error",
        "passive",
        "largest_singular_value",
        "deembedded_ports",
    ] {
        assert!(j.get(key).is_some(), "sweep.json lacks {key}");
    }
    assert_eq!(j["ports"], serde_json::json!(["in", "out"]));
    let freqs: Vec<f64> = serde_json::from_value(j["frequencies_hz"].clone()).unwrap();
    assert_eq!(freqs, vec![1e9, 5e9, 9e9]);
    let c =
        |v: &serde_json::Value| num_complex::Complex64::new(v[0].as_f64().unwrap(), v[1].as_f64().unwrap());
    let text = std::fs::read_to_string(o.join("stub.s2p")).unwrap();
    assert!(text.contains("# HZ S RI R 50"));
    assert!(text.contains("renormalised to 50 ohm"));
    let (tf, ts, zref) = rafter::touchstone::parse_touchstone(&text, 2).unwrap();
    assert_eq!(tf, freqs);
    assert_eq!(zref, 50.0);
    for (k, sm) in ts.iter().enumerate() {
        let s = rafter::linalg::DenseMatrix::from_fn(2, 2, |a, b| c(&j["s"][k][a][b]));
        let re = rafter::mom::network::renormalize(&s, &[50.0, 40.0], &[50.0, 50.0]).unwrap();
        for a in 0..2 {
            for b in 0..2 {
                assert!((re.get(a, b) - sm.get(a, b)).norm() < 1e-9, "S{a}{b} at {}", freqs[k]);
            }
        }
        // Z = Y⁻¹.
        let y = rafter::linalg::DenseMatrix::from_fn(2, 2, |a, b| c(&j["y"][k][a][b]));
        let z = rafter::linalg::DenseMatrix::from_fn(2, 2, |a, b| c(&j["z"][k][a][b]));
        let prod = y.matmul(&z).unwrap();
        for a in 0..2 {
            for b in 0..2 {
                let e = if a == b { 1.0 } else { 0.0 };
                assert!((prod.get(a, b) - e).norm() < 1e-8);
            }
        }
        assert_eq!(j["passive"][k], true);
        assert!(j["largest_singular_value"][k].as_f64().unwrap() < 1.0);
        assert!(j["reciprocity_error"][k].as_f64().unwrap() <= 1e-6);
    }
    assert!(j["failed"].is_null());
}

/// A frequency that cannot be solved (the stripline kernel refuses frequencies at and above
/// its first parallel-plate cutoff) stops the sweep there: the error names the frequency, the
/// command fails, and the frequencies solved before it are written.
#[test]
fn a_failing_frequency_keeps_the_solved_ones() {
    let dir = scratch("failure");
    let layout = TWO_PORT.replace("stop = 9e9\npoints = 3", "stop = 1.5e11\npoints = 3");
    let out = sweep(&layout, &dir, &["--raw"]);
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("stopped at 1.500000e11 Hz"), "{err}");
    let j: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("out/sweep.json")).unwrap()).unwrap();
    assert_eq!(j["frequencies_hz"].as_array().unwrap().len(), 2);
    assert_eq!(j["failed"]["frequency_hz"], 1.5e11);
    assert!(dir.join("out/stub.s2p").exists());
}

/// Refusals name the file, the field or option and the value, and leave no output folder.
#[test]
fn bad_requests_are_refused() {
    let cases: Vec<(String, Vec<&str>, &str)> = vec![
        (
            TWO_PORT.replace("[sweep]\nstart = 1e9\nstop = 9e9\npoints = 3\nspacing = \"linear\"\n", ""),
            vec![],
            "[sweep]",
        ),
        (TWO_PORT.replace("stop = 9e9", "stop = 5e8"), vec![], "sweep.stop"),
        (TWO_PORT.replace("points = 3", "points = 0"), vec![], "sweep.points"),
        (TWO_PORT.replace("impedance = 40", "impedance = -40"), vec![], "port[1].impedance"),
        (TWO_PORT.replace("at = [6, 0]", "at = [6.5, 0]"), vec![], "port[1].at"),
        (TWO_PORT.replace("net = \"line\"\nat = [6, 0]", "net = \"nope\"\nat = [6, 0]"), vec![], "nope"),
        (TWO_PORT.replace("name = \"out\"", "name = \"in\""), vec![], "in"),
        (
            TWO_PORT.replace(
                "eps_r = 3.0, loss_tangent = 0.002 },\n  { name = \"gnd2\"",
                "eps_r = 4.0, loss_tangent = 0.002 },\n  { name = \"gnd2\"",
            ),
            vec![],
            "eps_r",
        ),
        (TWO_PORT.to_string(), vec!["--currents-at", "0"], "--currents-at"),
    ];
    for (k, (layout, extra, needle)) in cases.into_iter().enumerate() {
        let dir = scratch(&format!("bad{k}"));
        let out = sweep(&layout, &dir, &extra);
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(!out.status.success(), "case {k} accepted");
        assert!(err.contains(needle), "case {k}: {err}");
        assert!(!dir.join("out").exists(), "case {k} left an output folder");
    }
}
