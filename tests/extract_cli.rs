//! The `rafter extract` command end to end: outputs, and refusals that leave nothing behind.

use std::path::PathBuf;
use std::process::Command;

fn rafter() -> Command {
    Command::new(env!("CARGO_BIN_EXE_rafter"))
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("rafter-cli-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

const PAIR: &str = r#"
name = "pair"
units = "mm"
[stackup]
layers = [ { name = "gnd", kind = "ground" }, { name = "air", kind = "dielectric", thickness = 0.5, eps_r = 1.0 } ]
[[net]]
name = "a"
shapes = [ { trace = { on = "air", width = 0.2, path = [[0, 0], [3, 0]] } } ]
[[net]]
name = "b"
shapes = [ { trace = { on = "air", width = 0.2, path = [[0, 0.5], [3, 0.5]] } } ]
[mesh]
max_cell = 0.1
"#;

/// Outputs exist and carry the documented keys; the Maxwell matrix of two identical coupled
/// lines is symmetric in structure (equal diagonals, negative coupling), as physics requires.
#[test]
fn writes_all_outputs() {
    let dir = scratch("ok");
    std::fs::write(dir.join("pair.toml"), PAIR).unwrap();
    let out = dir.join("out");
    let st = rafter()
        .args(["--quiet", "extract"])
        .arg(dir.join("pair.toml"))
        .arg("-o")
        .arg(&out)
        .status()
        .unwrap();
    assert!(st.success());
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("capacitance.json")).unwrap()).unwrap();
    for key in ["nets", "capacitance", "unknowns", "hmatrix", "gmres", "timing", "peak_memory_bytes", "spice"]
    {
        assert!(json.get(key).is_some(), "missing {key}");
    }
    let c = &json["capacitance"];
    let (c00, c11, c01) = (c[0][0].as_f64().unwrap(), c[1][1].as_f64().unwrap(), c[0][1].as_f64().unwrap());
    assert!((c00 - c11).abs() < 1e-3 * c00 && c01 < 0.0 && c01.abs() < c00);
    assert!(json["gmres"]["iterations"].as_array().unwrap().len() == 2);
    let cir = std::fs::read_to_string(out.join("capacitance.cir")).unwrap();
    assert!(cir.contains(".SUBCKT pair a b ref") && cir.contains(".ENDS pair"));
    let csv = std::fs::read_to_string(out.join("capacitance.csv")).unwrap();
    assert_eq!(csv.lines().count(), 3);
    assert!(
        std::fs::read_dir(&out).unwrap().all(|e| !e.unwrap().file_name().to_string_lossy().starts_with('.'))
    );
}

/// An output path that cannot be a folder: a clear error, exit code non-zero, nothing written.
#[test]
fn unwritable_output_is_refused_cleanly() {
    let dir = scratch("unwritable");
    std::fs::write(dir.join("pair.toml"), PAIR).unwrap();
    std::fs::write(dir.join("blocker"), "a file, not a folder").unwrap();
    let out = rafter()
        .args(["--quiet", "extract"])
        .arg(dir.join("pair.toml"))
        .arg("-o")
        .arg(dir.join("blocker").join("out"))
        .output()
        .unwrap();
    assert!(!out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("cannot create output folder"), "{err}");
    assert_eq!(std::fs::read_dir(&dir).unwrap().count(), 2);
}

/// Bad layouts are refused before any output folder exists, with the file, field and value in
/// the message.
#[test]
fn unsupported_or_bad_layouts_are_refused() {
    let dir = scratch("bad");
    let thin = PAIR.replace("thickness = 0.5, eps_r = 1.0", "thickness = 0.0, eps_r = 1.0");
    let negative = PAIR.replace("width = 0.2, path = [[0, 0]", "width = -0.2, path = [[0, 0]");
    // A 1 µm film under a 200 mm layout: the layered Green's function's table would need
    // millions of spectral samples; the refusal names the face pair and why.
    let film = PAIR
        .replace(
            "{ name = \"air\", kind = \"dielectric\", thickness = 0.5, eps_r = 1.0 }",
            "{ name = \"film\", kind = \"dielectric\", thickness = 0.001, eps_r = 4.4 }, \
             { name = \"air\", kind = \"dielectric\", thickness = 0.5, eps_r = 3.0 }",
        )
        .replace("on = \"air\"", "on = \"film\"")
        .replace("[3, 0]]", "[200, 0]]")
        .replace("[3, 0.5]]", "[200, 0.5]]")
        .replace("max_cell = 0.1", "max_cell = 5");
    for (name, text, needle) in [
        ("thin.toml", thin.as_str(), "thickness"),
        ("negative.toml", negative.as_str(), "net[0].shapes[0].trace.width = -0.2"),
        ("film.toml", film.as_str(), "faces 0 and 0: the spectral integral would need"),
        ("film.toml", film.as_str(), "0 = film"),
    ] {
        std::fs::write(dir.join(name), text).unwrap();
        let out = rafter()
            .args(["--quiet", "extract"])
            .arg(dir.join(name))
            .arg("-o")
            .arg(dir.join("out"))
            .output()
            .unwrap();
        assert!(!out.status.success());
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains(name) && err.contains(needle), "{err}");
        assert!(!dir.join("out").exists(), "no output folder may be left behind");
    }
}
