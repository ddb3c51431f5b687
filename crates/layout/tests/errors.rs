//! Bad input: every case returns an error (never a panic) whose message names the file, the
//! field path and the offending value.

use rafter_layout::{LayoutError, load, parse_str};

/// A valid layout that the cases below break one edit at a time.
const BASE: &str = r#"
name = "t"
units = "mm"
[stackup]
layers = [
  { name = "gnd", kind = "ground" },
  { name = "core", kind = "dielectric", thickness = 0.2, eps_r = 4.4 },
]
[[net]]
name = "a"
shapes = [ { rect = { on = "core", min = [0, 0], max = [1, 1] } } ]
[[net]]
name = "b"
shapes = [ { trace = { on = "core", width = 0.1, path = [[2, 0], [3, 0]] } } ]
[mesh]
max_cell = 0.1
"#;

const FILE: &str = "data/bad.toml";

/// BASE with the first occurrence of `from` replaced by `to` (which must exist).
fn with(from: &str, to: &str) -> String {
    assert!(BASE.contains(from), "test bug: {from:?} not in BASE");
    BASE.replacen(from, to, 1)
}

/// Parses `text`, expecting an error on `field` whose message shows `value`.
fn refuse(text: &str, field: &str, value: &str) -> LayoutError {
    let err = match parse_str(text, FILE) {
        Ok(_) => panic!("accepted a layout that should fail on {field}"),
        Err(e) => e,
    };
    let msg = err.to_string();
    assert_eq!(err.field(), field, "wrong field in: {msg}");
    assert!(msg.starts_with(FILE), "file not named in: {msg}");
    assert!(msg.contains(field), "field not named in: {msg}");
    assert!(msg.contains(value), "value {value:?} not shown in: {msg}");
    assert!(msg.contains("hint"), "no hint in: {msg}");
    err
}

fn is_unsupported(e: &LayoutError) -> bool {
    matches!(e, LayoutError::Unsupported { .. }) && e.to_string().contains("not supported yet")
}

#[test]
fn base_is_valid() {
    let layout = parse_str(BASE, FILE).expect("the base layout must parse");
    assert_eq!(layout.nets.len(), 2);
}

#[test]
fn message_format_matches_the_contract() {
    let e = refuse(&with("width = 0.1", "width = -0.1"), "net[1].shapes[0].trace.width", "-0.1");
    assert!(
        e.to_string()
            .starts_with("data/bad.toml: net[1].shapes[0].trace.width = -0.1: must be positive (hint: "),
        "{e}"
    );
    refuse(&with("width = 0.1", "width = 0"), "net[1].shapes[0].trace.width", "0");
    refuse(&with("width = 0.1, ", ""), "net[1].shapes[0].trace.width", "(missing)");
}

#[test]
fn layout_name_and_units() {
    refuse(&with("name = \"t\"", "name = \"\""), "name", "\"\"");
    refuse(&with("name = \"t\"", ""), "name", "(missing)");
    let e = refuse(&with("units = \"mm\"", "units = \"cm\""), "units", "\"cm\"");
    assert!(e.to_string().contains("mil"), "hint lists the units: {e}");
    refuse(&with("units = \"mm\"", ""), "units", "(missing)");
}

#[test]
fn unknown_keys_are_refused_with_their_path() {
    let cases = [
        (with("name = \"t\"", "name = \"t\"\ncolour = 3"), "colour"),
        (with("width = 0.1", "width = 0.1, colour = 1"), "net[1].shapes[0].trace.colour"),
        (with("max_cell = 0.1", "max_cell = 0.1\nmax_cel = 2"), "mesh.max_cel"),
        (with("name = \"b\"", "name = \"b\"\nshape = 1"), "net[1].shape"),
        (with("kind = \"dielectric\"", "kind = \"dielectric\", epsr = 2"), "stackup.layers[1].epsr"),
        (with("[mesh]", "[solve]\ntol = 1\n[mesh]"), "solve.tol"),
    ];
    for (text, field) in cases {
        let e = parse_str(&text, FILE).expect_err(field);
        let LayoutError::Syntax { field: f, message, .. } = &e else { panic!("not a syntax error: {e}") };
        assert_eq!(f, field);
        assert!(message.contains("unknown field"), "{message}");
        assert!(message.contains("line"), "line/column kept: {message}");
        assert!(e.to_string().starts_with(FILE), "{e}");
    }
    let e = parse_str(&with("rect = {", "circle = {"), FILE).expect_err("circle");
    assert_eq!(e.field(), "net[0].shapes[0].circle");
    assert!(e.to_string().contains("unknown variant `circle`"), "{e}");
}

#[test]
fn toml_syntax_and_type_errors_keep_line_and_column() {
    let e = parse_str(&with("max_cell = 0.1", "max_cell = = 0.1"), FILE).expect_err("syntax");
    let msg = e.to_string();
    assert!(matches!(e, LayoutError::Syntax { .. }), "{msg}");
    assert!(msg.contains("line 16"), "{msg}");
    let e = parse_str(&with("width = 0.1", "width = \"wide\""), FILE).expect_err("type");
    assert_eq!(e.field(), "net[1].shapes[0].trace.width");
    assert!(e.to_string().contains("\"wide\""), "{e}");
}

#[test]
fn stackup_layers() {
    let e = refuse(
        &with("kind = \"ground\" }", "kind = \"ground\", thickness = 0.1 }"),
        "stackup.layers[0].thickness",
        "0.1",
    );
    assert!(e.to_string().contains("dielectric"), "hint suggests a dielectric: {e}");
    refuse(&with("kind = \"ground\" }", "kind = \"ground\", eps_r = 2 }"), "stackup.layers[0].eps_r", "2");
    let middle = with(
        "{ name = \"core\"",
        "{ name = \"c0\", kind = \"dielectric\", thickness = 0.1, eps_r = 2 },\n  \
         { name = \"mid\", kind = \"ground\" },\n  { name = \"core\"",
    );
    let e = refuse(&middle, "stackup.layers[2].kind", "\"ground\"");
    assert!(is_unsupported(&e), "{e}");
    refuse(&with("thickness = 0.2", "thickness = 0"), "stackup.layers[1].thickness", "0");
    refuse(&with("thickness = 0.2", "thickness = -0.2"), "stackup.layers[1].thickness", "-0.2");
    refuse(&with("thickness = 0.2", "thickness = inf"), "stackup.layers[1].thickness", "inf");
    refuse(&with("thickness = 0.2, ", ""), "stackup.layers[1].thickness", "(missing)");
    refuse(&with("eps_r = 4.4", "eps_r = 0.5"), "stackup.layers[1].eps_r", "0.5");
    refuse(&with("eps_r = 4.4", "eps_r = nan"), "stackup.layers[1].eps_r", "NaN");
    refuse(
        &with("eps_r = 4.4", "eps_r = 4.4, loss_tangent = -0.01"),
        "stackup.layers[1].loss_tangent",
        "-0.01",
    );
    refuse(&with("kind = \"dielectric\"", "kind = \"metal\""), "stackup.layers[1].kind", "\"metal\"");
    refuse(&with("name = \"core\"", "name = \"gnd\""), "stackup.layers[1].name", "\"gnd\"");
    refuse(&with("name = \"core\"", "name = \"\""), "stackup.layers[1].name", "\"\"");
    let grounds_only = with(
        "{ name = \"core\", kind = \"dielectric\", thickness = 0.2, eps_r = 4.4 }",
        "{ name = \"top\", kind = \"ground\" }",
    );
    refuse(&grounds_only, "stackup.layers[1].kind", "\"ground\"");
}

#[test]
fn faces_on_and_z() {
    refuse(&with("on = \"core\", min", "on = \"pre\", min"), "net[0].shapes[0].rect.on", "\"pre\"");
    let e = refuse(&with("on = \"core\", min", "on = \"gnd\", min"), "net[0].shapes[0].rect.on", "\"gnd\"");
    assert!(e.to_string().contains("ground"), "{e}");
    refuse(&with("on = \"core\", min", "min"), "net[0].shapes[0].rect.on", "(missing)");
    refuse(&with("on = \"core\", min", "on = \"core\", z = 0, min"), "net[0].shapes[0].rect.z", "0");
    // Free space: `on` is refused, `z` is required.
    let free = BASE.replace(
        "layers = [\n  { name = \"gnd\", kind = \"ground\" },\n  \
         { name = \"core\", kind = \"dielectric\", thickness = 0.2, eps_r = 4.4 },\n]",
        "layers = []",
    );
    assert_ne!(free, BASE, "test bug: stack-up not replaced");
    refuse(&free, "net[0].shapes[0].rect.on", "\"core\"");
    let free_z = free.replace("on = \"core\"", "z = 0");
    parse_str(&free_z, FILE).expect("free space with z parses");
    refuse(&free_z.replacen("z = 0, ", "", 1), "net[0].shapes[0].rect.z", "(missing)");
    refuse(&free_z.replacen("z = 0", "z = inf", 1), "net[0].shapes[0].rect.z", "inf");
}

#[test]
fn rects() {
    let e = refuse(&with("max = [1, 1]", "max = [0, 1]"), "net[0].shapes[0].rect.max", "[0, 1]");
    assert!(e.to_string().contains("max x"), "{e}");
    let e = refuse(&with("max = [1, 1]", "max = [1, -1]"), "net[0].shapes[0].rect.max", "[1, -1]");
    assert!(e.to_string().contains("max y"), "{e}");
    refuse(&with("min = [0, 0]", "min = [0, 0, 1]"), "net[0].shapes[0].rect.min", "[0, 0, 1]");
    refuse(&with("min = [0, 0]", "min = [nan, 0]"), "net[0].shapes[0].rect.min", "[NaN, 0]");
    refuse(&with("min = [0, 0], ", ""), "net[0].shapes[0].rect.min", "(missing)");
}

#[test]
fn traces() {
    let at = "net[1].shapes[0].trace.path";
    refuse(&with("[[2, 0], [3, 0]]", "[[2, 0]]"), at, "[[2, 0]]");
    refuse(&with("[[2, 0], [3, 0]]", "[[2, 0], [2, 0], [3, 0]]"), &format!("{at}[1]"), "[2, 0]");
    refuse(&with("[[2, 0], [3, 0]]", "[[2, 0], [inf, 0]]"), &format!("{at}[1]"), "[inf, 0]");
    // An oblique segment is accepted (the region is meshed into triangles).
    let l = parse_str(&with("[[2, 0], [3, 0]]", "[[2, 0], [3, 0], [4, 1]]"), FILE).expect("oblique trace");
    assert!(!l.nets[1].regions[0].is_manhattan());
    // Coordinates so large that the segment's length, hence its widened outline, overflows.
    refuse(&with("[[2, 0], [3, 0]]", "[[-1e308, 0], [1e308, 1]]"), "net[1].shapes[0].trace", "NaN");
}

/// BASE with net `a` made of the polygon `points`.
fn with_polygon(points: &str) -> String {
    with(
        "rect = { on = \"core\", min = [0, 0], max = [1, 1] }",
        &format!("polygon = {{ on = \"core\", points = {points} }}"),
    )
}

#[test]
fn polygons() {
    let at = "net[0].shapes[0].polygon.points";
    parse_str(&with_polygon("[[0, 0], [1, 0], [1, 1], [0, 1]]"), FILE).expect("a square parses");
    parse_str(&with_polygon("[[0, 0], [1, 0], [1, 1], [0, 1], [0, 0]]"), FILE)
        .expect("explicit closing point");
    refuse(&with_polygon("[[0, 0], [1, 0]]"), at, "[[0, 0], [1, 0]]");
    let e = refuse(&with_polygon("[[0, 0], [1, 0], [2, 0], [1, 0]]"), at, "[[0, 0], [1, 0], [2, 0], [1, 0]]");
    assert!(e.to_string().contains("zero area"), "{e}");
    refuse(&with_polygon("[[0, 0], [1, 0], [1, 0], [0, 1]]"), &format!("{at}[2]"), "[1, 0]");
    // Self-intersecting and Manhattan: the edge x = 1 from y = 2 down to y = -1 crosses the
    // first edge (y = 0, x from 0 to 2).
    let e = refuse(&with_polygon("[[0, 0], [2, 0], [2, 2], [1, 2], [1, -1], [0, -1]]"), at, "[1, -1]");
    assert!(e.to_string().contains("intersects itself"), "{e}");
    // A symmetric bow tie: its two halves cancel in the signed area (shoelace formula).
    let e = refuse(&with_polygon("[[0, 0], [1, 1], [1, 0], [0, 1]]"), at, "[[0, 0], [1, 1], [1, 0], [0, 1]]");
    assert!(e.to_string().contains("crosses itself"), "{e}");
    // An asymmetric bow tie has a non-zero signed area and is refused as self-intersecting
    // (before its oblique edges are looked at).
    let e = refuse(&with_polygon("[[0, 0], [2, 2], [2, 0], [0, 1]]"), at, "[[0, 0], [2, 2], [2, 0], [0, 1]]");
    assert!(e.to_string().contains("intersects itself"), "{e}");
    // A simple triangle is valid non-Manhattan geometry.
    let l = parse_str(&with_polygon("[[0, 0], [1, 0], [0, 1]]"), FILE).expect("a triangle parses");
    assert!(!l.nets[0].regions[0].is_manhattan());
    assert!((l.nets[0].area() - 0.5e-6).abs() < 1e-18);
}

#[test]
fn nets() {
    refuse(&with("name = \"b\"", "name = \"a\""), "net[1].name", "\"a\"");
    refuse(&with("name = \"b\"", "name = \"\""), "net[1].name", "\"\"");
    refuse(&with("name = \"b\"\n", ""), "net[1].name", "(missing)");
    refuse(
        &with(
            "shapes = [ { trace = { on = \"core\", width = 0.1, path = [[2, 0], [3, 0]] } } ]",
            "shapes = []",
        ),
        "net[1].shapes",
        "[]",
    );
    let none = BASE[..BASE.find("[[net]]").unwrap()].to_string() + "[mesh]\nmax_cell = 0.1\n";
    refuse(&none, "net", "(none)");
}

#[test]
fn touching_and_overlapping_nets() {
    // Net b's trace spans x in [1.95, 3.05], y in [-0.05, 0.05]; net a's rect is [0, 1]².
    let cases = [
        ("max = [1.95, 1]", "shares an edge"),
        ("max = [1.95, -0.05]", "corner"),
        ("max = [2.5, 1]", "overlaps"),
    ];
    for (max, what) in cases {
        let text = with("max = [1, 1]", max).replace("min = [0, 0]", "min = [0, -1]");
        let e = refuse(&text, "net[1].shapes[0]", "net \"b\" on face \"core\"");
        let msg = e.to_string();
        assert!(msg.contains("net[0].shapes[0]") && msg.contains("net \"a\""), "{what}: {msg}");
    }
    // A gap, however small, is fine.
    parse_str(&with("max = [1, 1]", "max = [1.949, 1]"), FILE).expect("separate nets");
}

#[test]
fn mesh_and_solve_options() {
    refuse(&with("max_cell = 0.1", "max_cell = 0"), "mesh.max_cell", "0");
    refuse(&with("max_cell = 0.1", "max_cell = -1"), "mesh.max_cell", "-1");
    refuse(&with("max_cell = 0.1", "max_cell = nan"), "mesh.max_cell", "NaN");
    refuse(&with("max_cell = 0.1", ""), "mesh.max_cell", "(missing)");
    for t in ["0", "1", "1.5", "-0.5", "nan"] {
        let text = with("[mesh]", &format!("[solve]\ntolerance = {t}\n[mesh]"));
        refuse(&text, "solve.tolerance", if t == "nan" { "NaN" } else { t });
    }
    let ok = with("[mesh]", "[solve]\ntolerance = 1e-6\n[mesh]");
    assert_eq!(parse_str(&ok, FILE).unwrap().solve.tolerance, 1e-6);
    assert_eq!(parse_str(BASE, FILE).unwrap().solve.tolerance, 1e-4, "default tolerance");
}

#[test]
fn mesh_refuses_too_many_cells() {
    let layout = parse_str(&with("max_cell = 0.1", "max_cell = 1e-4"), FILE).unwrap();
    // The 1 mm square alone: at least (1 / 1e-4)^2 = 1e8 cells.
    assert!(rafter_layout::estimate_cells(&layout) >= 100_000_000);
    let e = rafter_layout::mesh(&layout).expect_err("too many cells");
    assert_eq!(e.field(), "mesh.max_cell");
    let msg = e.to_string();
    assert!(msg.starts_with(FILE) && msg.contains("= 0.0001:") && msg.contains("2000000"), "{msg}");
}

#[test]
fn unreadable_file_is_named() {
    let path = std::path::Path::new("no/such/dir/layout.toml");
    let e = load(path).expect_err("missing file");
    assert!(matches!(e, LayoutError::Read { .. }));
    assert!(e.to_string().starts_with("no/such/dir/layout.toml: cannot read"), "{e}");
}

/// A conductor on the top face of the last dielectric under a top ground would touch that
/// ground: refused, naming the field and the layer.
#[test]
fn conductor_on_the_top_ground_face_is_refused() {
    let text = r#"
name = "strip"
units = "mm"
[stackup]
layers = [
  { name = "g0", kind = "ground" },
  { name = "lo", kind = "dielectric", thickness = 1.0, eps_r = 2.2 },
  { name = "hi", kind = "dielectric", thickness = 1.0, eps_r = 2.2 },
  { name = "g1", kind = "ground" },
]
[[net]]
name = "s"
shapes = [ { rect = { on = "hi", min = [0, 0], max = [1, 1] } } ]
[mesh]
max_cell = 0.1
"#;
    let err = rafter_layout::parse_str(text, "strip.toml").unwrap_err().to_string();
    assert!(
        err.contains("strip.toml") && err.contains("net[0].shapes[0].rect.on") && err.contains("\"hi\""),
        "{err}"
    );
    assert!(err.contains("top ground"), "{err}");
}
