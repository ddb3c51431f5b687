//! Ports, the frequency sweep and per-net conductor metal: what parses (and into which values,
//! in metres and hertz) and what is refused, with the field path, the value as written and a
//! hint in every message.

use rafter_layout::{Conductor, LayoutError, PortReference, Spacing, Sweep, parse_str, port_edge_tolerance};

/// A two-port line over ground (net `a`: a 10 mm trace 0.2 mm wide, covering x in
/// [−0.1, 10.1] and y in [−0.1, 0.1]) next to a parallel net `b` (y in [0.9, 1.1]), with a port
/// at each end of `a` and a 5-point sweep. A third layer `pre` sits on `core`.
const BASE: &str = r#"
name = "line"
units = "mm"
[stackup]
layers = [
  { name = "gnd", kind = "ground" },
  { name = "core", kind = "dielectric", thickness = 0.2, eps_r = 4.4 },
  { name = "pre", kind = "dielectric", thickness = 0.1, eps_r = 3.6 },
]
[[net]]
name = "a"
shapes = [ { trace = { on = "core", width = 0.2, path = [[0, 0], [10, 0]] } } ]
[[net]]
name = "b"
shapes = [ { trace = { on = "core", width = 0.2, path = [[0, 1], [10, 1]] } } ]
[mesh]
max_cell = 0.1
[[port]]
name = "p1"
net = "a"
at = [-0.1, 0]
to = "gnd"
[[port]]
name = "p2"
net = "a"
at = [10.1, 0]
to = "gnd"
impedance = 25
[sweep]
start = 1e9
stop = 5e9
points = 5
"#;

const FILE: &str = "data/ports.toml";

/// BASE with the first occurrence of `from` replaced by `to` (which must exist).
fn with(from: &str, to: &str) -> String {
    assert!(BASE.contains(from), "test bug: {from:?} not in BASE");
    BASE.replacen(from, to, 1)
}

/// BASE without its ports and sweep: the layout as the capacitance job knows it.
fn without_ports() -> String {
    BASE[..BASE.find("[[port]]").expect("BASE has ports")].to_string()
}

/// A layout of nets `a` and `b` above, with net `a` made of `shapes` (all on `core`, given as
/// the inside of `shapes = [...]`), max_cell 0.1 mm and one port on `a` at `at` to `gnd`.
fn port_on(shapes: &str, at: &str) -> String {
    let text = without_ports().replacen(
        "{ trace = { on = \"core\", width = 0.2, path = [[0, 0], [10, 0]] } }",
        shapes,
        1,
    ) + &format!("[[port]]\nname = \"p\"\nnet = \"a\"\nat = {at}\nto = \"gnd\"\n");
    // Move net `b` out of the way of whatever `a` became.
    text.replace("[[0, 1], [10, 1]]", "[[0, 20], [10, 20]]")
}

/// Parses `text`, expecting an error on `field` whose message shows `value` and a hint.
fn refuse(text: &str, field: &str, value: &str) -> LayoutError {
    let err = match parse_str(text, FILE) {
        Ok(_) => panic!("accepted a layout that should fail on {field}"),
        Err(e) => e,
    };
    let msg = err.to_string();
    assert_eq!(err.field(), field, "wrong field in: {msg}");
    assert!(msg.starts_with(&format!("{FILE}: {field} = {value}: ")), "field or value not shown in: {msg}");
    assert!(msg.contains("(hint: "), "no hint in: {msg}");
    err
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * b.abs()
}

// ---------------------------------------------------------------------------------------------
// Valid layouts

#[test]
fn two_port_line_over_ground() {
    let l = parse_str(BASE, FILE).expect("BASE parses");
    assert_eq!(l.ports.len(), 2);
    let (p1, p2) = (&l.ports[0], &l.ports[1]);
    assert_eq!((p1.name.as_str(), p1.net, p1.face.as_str()), ("p1", 0, "core"));
    assert_eq!((p2.name.as_str(), p2.net, p2.face.as_str()), ("p2", 0, "core"));
    assert_eq!(p1.to, PortReference::Ground("gnd".to_string()));
    assert_eq!(p2.to, PortReference::Ground("gnd".to_string()));
    assert_eq!(p1.impedance, 50.0, "default reference impedance");
    assert_eq!(p2.impedance, 25.0);
    // Positions in metres; the face is the top of `core`, 0.2 mm up.
    assert!(close(p1.at[0], -0.1e-3) && p1.at[1] == 0.0, "{:?}", p1.at);
    assert!(close(p2.at[0], 10.1e-3) && p2.at[1] == 0.0, "{:?}", p2.at);
    assert_eq!(p1.z, l.stackup.face_z("core").unwrap());
    assert!(close(p1.z, 0.2e-3));
    assert_eq!(l.nets[0].conductor, None, "no conductivity or thickness: perfect conductor");
}

#[test]
fn layouts_without_ports_parse_as_before() {
    let l = parse_str(&without_ports(), FILE).expect("no ports, no sweep");
    assert!(l.ports.is_empty());
    assert_eq!(l.sweep, None);
    assert!(l.nets.iter().all(|n| n.conductor.is_none()));
    // The ports and the sweep change nothing else.
    let with_ports = parse_str(BASE, FILE).unwrap();
    assert_eq!(with_ports.nets, l.nets);
    assert_eq!(with_ports.stackup, l.stackup);
    assert_eq!(with_ports.mesh, l.mesh);
    let (m0, m1) = (rafter_layout::mesh(&l).unwrap(), rafter_layout::mesh(&with_ports).unwrap());
    assert_eq!(m0.cells_per_net, m1.cells_per_net);
    assert_eq!(m0.centroids(), m1.centroids());
}

#[test]
fn differential_port_between_two_nets() {
    // On the top side of `a`, referenced to net `b`.
    let text = with("at = [-0.1, 0]\nto = \"gnd\"", "at = [5, 0.1]\nto = \"b\"");
    let l = parse_str(&text, FILE).expect("differential port");
    assert_eq!(l.ports[0].to, PortReference::Net(1));
    assert!(close(l.ports[0].at[0], 5e-3) && close(l.ports[0].at[1], 0.1e-3));
}

#[test]
fn port_edge_tolerance_rule() {
    // 1e-3 of max_cell, but never below 1 nm.
    assert!(close(port_edge_tolerance(1e-4), 1e-7));
    assert_eq!(port_edge_tolerance(1e-7), 1e-9);
    // max_cell = 0.1 mm: 1e-4 mm of slack.
    parse_str(&with("at = [-0.1, 0]", "at = [-0.10005, 0]"), FILE).expect("5e-5 mm off: on the edge");
    refuse(&with("at = [-0.1, 0]", "at = [-0.1002, 0]"), "port[0].at", "[-0.1002, 0]");
    // max_cell = 1e-4 mm: 1e-3 of it is 0.1 nm, so the 1 nm floor applies.
    let fine = with("max_cell = 0.1", "max_cell = 0.0001");
    parse_str(&fine.replacen("at = [-0.1, 0]", "at = [-0.1000005, 0]", 1), FILE).expect("0.5 nm off");
    refuse(&fine.replacen("at = [-0.1, 0]", "at = [-0.100002, 0]", 1), "port[0].at", "[-0.100002, 0]");
}

#[test]
fn l_shaped_trace_ports_on_the_inner_corner_edges() {
    // The L: bar x in [−0.1, 4.1], y in [−0.1, 0.1], and leg x in [3.9, 4.1], y in [−0.1, 3.1].
    // Its inner corner is (3.9, 0.1); the bar and the leg overlap in x in [3.9, 4.1].
    let l_shape = "{ trace = { on = \"core\", width = 0.2, path = [[0, 0], [4, 0], [4, 3]] } }";
    for at in ["[3.9, 0.1]", "[2, 0.1]", "[3.9, 1.5]", "[4.1, 3.1]", "[4.1, 0]"] {
        let l = parse_str(&port_on(l_shape, at), FILE).unwrap_or_else(|e| panic!("{at}: {e}"));
        assert!(l.nets[0].regions[0].is_manhattan());
        assert_eq!(l.ports[0].face, "core");
    }
    // On the seam between the bar and the leg (y = 0.1, x in [3.9, 4.1]): a rectangle side, but
    // inside the L, 0.1 mm from its edge.
    let e = refuse(&port_on(l_shape, "[4, 0.1]"), "port[0].at", "[4, 0.1]");
    let msg = e.to_string();
    assert!(msg.contains("port \"p\" at (4, 0.1) mm is not on the edge of net \"a\""), "{msg}");
    assert!(msg.contains("inside the conductor") && msg.contains(", 0.1 mm away"), "{msg}");
    // Inside the elbow, and outside beyond the inner corner.
    let e = refuse(&port_on(l_shape, "[4, 0]"), "port[0].at", "[4, 0]");
    assert!(e.to_string().contains("inside"), "{e}");
    let e = refuse(&port_on(l_shape, "[3.5, 0.3]"), "port[0].at", "[3.5, 0.3]");
    let msg = e.to_string();
    assert!(msg.contains("outside the conductor"), "{msg}");
    assert!(msg.contains("nearest edge point is (3.5, 0.1) mm, 0.2 mm away"), "{msg}");
    assert!(msg.contains("e.g. to [3.5, 0.1]"), "hint names the nearest edge point: {msg}");
}

#[test]
fn abutting_rectangles_ports_on_the_outline_only() {
    // Two squares offset by half a side, sharing the segment x = 1, y in [0.5, 1].
    let stair = "{ rect = { on = \"core\", min = [0, 0], max = [1, 1] } }, \
                 { rect = { on = \"core\", min = [1, 0.5], max = [2, 1.5] } }";
    for at in ["[1, 0.25]", "[1, 1.25]", "[1, 0.5]", "[1, 1]", "[2, 1]", "[0.5, 0]"] {
        parse_str(&port_on(stair, at), FILE).unwrap_or_else(|e| panic!("{at}: {e}"));
    }
    let e = refuse(&port_on(stair, "[1, 0.75]"), "port[0].at", "[1, 0.75]");
    assert!(e.to_string().contains("inside") && e.to_string().contains("0.25 mm away"), "{e}");
    // The union is cut into slabs y in [0, 0.5], [0.5, 1], [1, 1.5]; their seams inside the
    // stair (y = 0.5 for x < 1, y = 1 for x > 1) are rectangle sides but not edges.
    for at in ["[0.5, 0.5]", "[1.5, 1]"] {
        let e = refuse(&port_on(stair, at), "port[0].at", at);
        assert!(e.to_string().contains("inside") && e.to_string().contains("0.5 mm away"), "{e}");
    }
    // Two squares side by side, merged into one 2 × 1 rectangle: their common side is inside.
    let pair = "{ rect = { on = \"core\", min = [0, 0], max = [1, 1] } }, \
                { rect = { on = \"core\", min = [1, 0], max = [2, 1] } }";
    parse_str(&port_on(pair, "[1, 1]"), FILE).expect("top edge at the joint");
    refuse(&port_on(pair, "[1, 0.5]"), "port[0].at", "[1, 0.5]");
    // Overlapping shapes: the rect's side inside the trace is not an edge.
    let overlap = "{ rect = { on = \"core\", min = [0, 0], max = [1, 1] } }, \
                   { trace = { on = \"core\", width = 0.2, path = [[0.5, 0.5], [3, 0.5]] } }";
    refuse(&port_on(overlap, "[1, 0.5]"), "port[0].at", "[1, 0.5]");
    parse_str(&port_on(overlap, "[3.1, 0.5]"), FILE).expect("end of the trace");
}

#[test]
fn oblique_trace_port_on_its_end_edge() {
    // Along the 3-4-5 direction u = (0.6, 0.8), width 0.2, extended by 0.1 past (3, 4): the end
    // edge is centred on (3, 4) + 0.1 u = (3.06, 4.08); the side edges lie 0.1 from the axis
    // along n = (−0.8, 0.6), so (1.5, 2) + 0.1 n = (1.42, 2.06) is on one of them.
    let oblique = "{ trace = { on = \"core\", width = 0.2, path = [[0, 0], [3, 4]] } }";
    for at in ["[3.06, 4.08]", "[1.42, 2.06]"] {
        let l = parse_str(&port_on(oblique, at), FILE).unwrap_or_else(|e| panic!("{at}: {e}"));
        assert!(!l.nets[0].regions[0].is_manhattan(), "meshed into triangles");
        assert_eq!(l.ports[0].face, "core");
        assert!(close(l.ports[0].at[0], if at == "[3.06, 4.08]" { 3.06e-3 } else { 1.42e-3 }));
    }
    // The axis is 0.1 mm inside; a point 0.05 past the end edge is outside.
    let e = refuse(&port_on(oblique, "[1.5, 2]"), "port[0].at", "[1.5, 2]");
    assert!(e.to_string().contains("inside") && e.to_string().contains("0.1 mm away"), "{e}");
    let e = refuse(&port_on(oblique, "[3.09, 4.12]"), "port[0].at", "[3.09, 4.12]");
    let msg = e.to_string();
    assert!(msg.contains("outside") && msg.contains("(3.06, 4.08) mm, 0.05 mm away"), "{msg}");
}

#[test]
fn port_face_is_the_one_whose_edge_holds_the_point() {
    // Net `a` also has a pad on `pre` (0.1 mm above `core`) whose left side lies over the
    // trace's end edge and whose right side (x = 1) lies over the trace.
    let text = with(
        "path = [[0, 0], [10, 0]] } } ]",
        "path = [[0, 0], [10, 0]] } }, { rect = { on = \"pre\", min = [-0.1, -0.1], max = [1, 0.1] } } ]",
    );
    let moved = text.replacen("at = [-0.1, 0]", "at = [1, 0]", 1);
    let l = parse_str(&moved, FILE).expect("port on the pad's edge");
    assert_eq!(l.ports[0].face, "pre");
    assert!(close(l.ports[0].z, 0.3e-3));
    assert_eq!(l.ports[1].face, "core");
    let e = refuse(&text, "port[0].at", "[-0.1, 0]");
    let msg = e.to_string();
    assert!(msg.contains("more than one face (\"core\", \"pre\")"), "{msg}");
    assert!(msg.contains("move the point"), "{msg}");
    // Off every edge (inside the trace, beyond the pad): the nearest one is named with its face.
    let e = refuse(&text.replacen("at = [-0.1, 0]", "at = [5, 0.05]", 1), "port[0].at", "[5, 0.05]");
    assert!(
        e.to_string().contains("nearest edge point on face \"core\" is (5, 0.1) mm, 0.05 mm away"),
        "{e}"
    );
}

// ---------------------------------------------------------------------------------------------
// Sweep

#[test]
fn sweep_frequencies() {
    let s = parse_str(BASE, FILE).unwrap().sweep.expect("BASE has a sweep");
    assert_eq!(s, Sweep { start: 1e9, stop: 5e9, points: 5, spacing: Spacing::Linear });
    assert_eq!(s.frequencies(), vec![1e9, 2e9, 3e9, 4e9, 5e9]);

    let text = with("points = 5", "points = 4\nspacing = \"log\"").replacen("start = 1e9", "start = 1e6", 1);
    let text = text.replacen("stop = 5e9", "stop = 1e9", 1);
    let s = parse_str(&text, FILE).unwrap().sweep.unwrap();
    assert_eq!(s.spacing, Spacing::Log);
    let f = s.frequencies();
    assert_eq!((f.len(), f[0], f[3]), (4, 1e6, 1e9), "{f:?}");
    assert!(close(f[1], 1e7) && close(f[2], 1e8), "one point per decade: {f:?}");
    // Octaves: 1, 2, 4, 8, 16 GHz.
    let oct = Sweep { start: 1e9, stop: 16e9, points: 5, spacing: Spacing::Log }.frequencies();
    for (f, want) in oct.iter().zip([1e9, 2e9, 4e9, 8e9, 16e9]) {
        assert!(close(*f, want), "{oct:?}");
    }
    // A single frequency.
    let one = with("points = 5", "points = 1").replacen("stop = 5e9", "stop = 1e9", 1);
    assert_eq!(parse_str(&one, FILE).unwrap().sweep.unwrap().frequencies(), vec![1e9]);
    let lin = Sweep { start: 1e9, stop: 2e9, points: 1, spacing: Spacing::Linear };
    assert_eq!(lin.frequencies(), vec![1e9], "one point is the start");
    assert_eq!(Sweep { points: 3, ..lin }.frequencies(), vec![1e9, 1.5e9, 2e9]);
    // spacing = "linear" spelled out.
    let text = with("points = 5", "points = 5\nspacing = \"linear\"");
    assert_eq!(parse_str(&text, FILE).unwrap().sweep.unwrap().spacing, Spacing::Linear);
}

#[test]
fn sweep_refusals() {
    refuse(&with("stop = 5e9", "stop = 5e8"), "sweep.stop", "500000000");
    let e = refuse(&with("points = 5", "points = 0"), "sweep.points", "0");
    assert!(e.to_string().contains("at least 1"), "{e}");
    refuse(&with("points = 5", "points = -3"), "sweep.points", "-3");
    refuse(&with("points = 5", "points = 1000000000"), "sweep.points", "1000000000");
    refuse(&with("start = 1e9", "start = 0"), "sweep.start", "0");
    refuse(&with("start = 1e9", "start = -1e9"), "sweep.start", "-1000000000");
    refuse(&with("stop = 5e9", "stop = inf"), "sweep.stop", "inf");
    refuse(&with("start = 1e9", "start = nan"), "sweep.start", "NaN");
    refuse(&with("start = 1e9\n", ""), "sweep.start", "(missing)");
    refuse(&with("stop = 5e9\n", ""), "sweep.stop", "(missing)");
    refuse(&with("points = 5", ""), "sweep.points", "(missing)");
    let e = refuse(&with("stop = 5e9", "stop = 1e9"), "sweep.stop", "1000000000");
    assert!(e.to_string().contains("points = 1"), "{e}");
    let e = refuse(&with("points = 5", "points = 5\nspacing = \"octave\""), "sweep.spacing", "\"octave\"");
    assert!(e.to_string().contains("\"log\""), "{e}");
    // A fractional count is a type error located at the field.
    let e = parse_str(&with("points = 5", "points = 2.5"), FILE).expect_err("fractional points");
    assert!(matches!(e, LayoutError::Syntax { .. }) && e.field() == "sweep.points", "{e}");
}

// ---------------------------------------------------------------------------------------------
// Conductor metal

#[test]
fn conductor_fields_in_metres() {
    let text = with("name = \"a\"", "name = \"a\"\nconductivity = 5.8e7\nthickness = 0.035");
    let l = parse_str(&text, FILE).expect("conductor");
    let c = l.nets[0].conductor.expect("net a has metal");
    assert_eq!(c.conductivity, 5.8e7);
    assert!(close(c.thickness, 35e-6), "{c:?}");
    assert_eq!(l.nets[1].conductor, None);
    // The same numbers in mils (25.4 µm each; every length of the layout scales with them).
    let mils = text.replacen("units = \"mm\"", "units = \"mil\"", 1);
    let c: Conductor = parse_str(&mils, FILE).expect("mil").nets[0].conductor.unwrap();
    assert_eq!(c.conductivity, 5.8e7, "conductivity is in S/m whatever the length unit");
    assert!(close(c.thickness, 0.889e-6), "0.035 mil = 0.889 µm: {c:?}");
}

#[test]
fn conductor_refusals() {
    let metal = |s: &str| with("name = \"a\"", &format!("name = \"a\"\n{s}"));
    for v in ["0", "-1", "nan", "inf"] {
        let shown = match v {
            "nan" => "NaN",
            v => v,
        };
        refuse(&metal(&format!("conductivity = {v}\nthickness = 0.035")), "net[0].conductivity", shown);
        refuse(&metal(&format!("conductivity = 5.8e7\nthickness = {v}")), "net[0].thickness", shown);
    }
    let e = refuse(&metal("conductivity = 5.8e7"), "net[0].thickness", "(missing)");
    assert!(e.to_string().contains("both"), "{e}");
    let e = refuse(&metal("thickness = 0.035"), "net[0].conductivity", "(missing)");
    assert!(e.to_string().contains("both") && e.to_string().contains("0.035"), "{e}");
}

// ---------------------------------------------------------------------------------------------
// Port refusals

#[test]
fn port_names() {
    let e = refuse(&with("name = \"p2\"", "name = \"p1\""), "port[1].name", "\"p1\"");
    assert!(e.to_string().contains("port[0]"), "{e}");
    refuse(&with("name = \"p2\"", "name = \" \""), "port[1].name", "\" \"");
    refuse(&with("name = \"p2\"\n", ""), "port[1].name", "(missing)");
}

#[test]
fn port_nets() {
    let e = refuse(&with("net = \"a\"\nat = [10.1", "net = \"c\"\nat = [10.1"), "port[1].net", "\"c\"");
    assert!(e.to_string().contains("use one of the nets: \"a\", \"b\""), "hint lists the nets: {e}");
    let e = refuse(&with("net = \"a\"\nat = [10.1", "at = [10.1"), "port[1].net", "(missing)");
    assert!(e.to_string().contains("\"a\", \"b\""), "{e}");
}

#[test]
fn port_positions() {
    refuse(&with("at = [-0.1, 0]\n", ""), "port[0].at", "(missing)");
    refuse(&with("at = [-0.1, 0]", "at = [-0.1, 0, 0]"), "port[0].at", "[-0.1, 0, 0]");
    refuse(&with("at = [-0.1, 0]", "at = [nan, 0]"), "port[0].at", "[NaN, 0]");
    // Outside, past the end of the line.
    let e = refuse(&with("at = [-0.1, 0]", "at = [-0.3, 0]"), "port[0].at", "[-0.3, 0]");
    let msg = e.to_string();
    assert!(
        msg.contains(
            "port \"p1\" at (-0.3, 0) mm is not on the edge of net \"a\": it lies outside the conductor; \
             the nearest edge point is (-0.1, 0) mm, 0.2 mm away"
        ),
        "{msg}"
    );
    // Strictly inside, in the middle of the line.
    let e = refuse(&with("at = [-0.1, 0]", "at = [5, 0]"), "port[0].at", "[5, 0]");
    assert!(e.to_string().contains("inside the conductor") && e.to_string().contains("0.1 mm away"), "{e}");
    // On the edge of the other net.
    let e = refuse(&with("at = [-0.1, 0]", "at = [-0.1, 1]"), "port[0].at", "[-0.1, 1]");
    assert!(e.to_string().contains("0.9 mm away"), "{e}");
    // Too large to convert to metres (inches to metres multiplies by 25.4).
    let inch = BASE.replacen("units = \"mm\"", "units = \"in\"", 1);
    refuse(&inch.replacen("at = [-0.1, 0]", "at = [1e308, 0]", 1), "port[0].at", &format!("[{}, 0]", 1e308));
}

#[test]
fn port_references() {
    let e = refuse(&with("to = \"gnd\"", "to = \"core\""), "port[0].to", "\"core\"");
    assert!(e.to_string().contains("dielectric"), "{e}");
    let e = refuse(&with("to = \"gnd\"", "to = \"earth\""), "port[0].to", "\"earth\"");
    let msg = e.to_string();
    assert!(msg.contains("a ground layer (\"gnd\")") && msg.contains("another net"), "{msg}");
    assert!(msg.contains("(\"b\")"), "the port's own net is not offered: {msg}");
    let e = refuse(&with("to = \"gnd\"", "to = \"a\""), "port[0].to", "\"a\"");
    assert!(e.to_string().contains("own net"), "{e}");
    refuse(&with("to = \"gnd\"\n", ""), "port[0].to", "(missing)");
    // A net named like the ground layer.
    let e = refuse(&with("name = \"b\"", "name = \"gnd\""), "port[0].to", "\"gnd\"");
    assert!(e.to_string().contains("ambiguous"), "{e}");
    // Free space with one net: nothing to refer to.
    let free = without_ports()
        .replace(
            "layers = [\n  { name = \"gnd\", kind = \"ground\" },\n  \
             { name = \"core\", kind = \"dielectric\", thickness = 0.2, eps_r = 4.4 },\n  \
             { name = \"pre\", kind = \"dielectric\", thickness = 0.1, eps_r = 3.6 },\n]",
            "layers = []",
        )
        .replace("on = \"core\"", "z = 0");
    let free = free[..free.find("[[net]]\nname = \"b\"").unwrap()].to_string()
        + "[mesh]\nmax_cell = 0.1\n[[port]]\nname = \"p\"\nnet = \"a\"\nat = [-0.1, 0]\nto = \"gnd\"\n";
    let e = refuse(&free, "port[0].to", "\"gnd\"");
    assert!(e.to_string().contains("no ground layer and no other net"), "{e}");
}

#[test]
fn port_impedances() {
    for (v, shown) in [("0", "0"), ("-50", "-50"), ("nan", "NaN"), ("inf", "inf"), ("-inf", "-inf")] {
        let e = refuse(&with("impedance = 25", &format!("impedance = {v}")), "port[1].impedance", shown);
        assert!(e.to_string().contains("ohms"), "{e}");
    }
}

#[test]
fn unknown_keys_name_their_path() {
    let cases = [
        (with("impedance = 25", "impedance = 25\ncolour = 1"), "port[1].colour"),
        (with("points = 5", "points = 5\nstep = 1e9"), "sweep.step"),
        (with("name = \"a\"", "name = \"a\"\nsigma = 5.8e7"), "net[0].sigma"),
        (with("to = \"gnd\"", "to = \"gnd\"\nface = \"core\""), "port[0].face"),
    ];
    for (text, field) in cases {
        let e = parse_str(&text, FILE).expect_err(field);
        let LayoutError::Syntax { field: f, message, .. } = &e else { panic!("not a syntax error: {e}") };
        assert_eq!(f, field);
        assert!(message.contains("unknown field"), "{message}");
        assert!(e.to_string().starts_with(FILE), "{e}");
    }
}

/// The example of docs/layout-format.md is a valid layout with a port and a sweep.
#[test]
fn documented_example_parses() {
    let doc = include_str!("../../../docs/layout-format.md");
    let start = doc.find("```toml\n").expect("a toml block") + "```toml\n".len();
    let end = start + doc[start..].find("```").expect("closed block");
    let l = parse_str(&doc[start..end], "layout-format.md").unwrap_or_else(|e| panic!("{e}"));
    assert!(!l.ports.is_empty(), "the example shows a port");
    assert!(l.sweep.is_some_and(|s| s.frequencies().len() == s.points), "the example shows a sweep");
    assert!(l.nets.iter().any(|n| n.conductor.is_some()), "the example shows conductor metal");
}
