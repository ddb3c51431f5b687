//! Non-Manhattan regions meshed into triangles, checked against closed-form areas
//! (elementary geometry: the shoelace formula, rectangle areas, inclusion–exclusion with the
//! overlap found by Sutherland–Hodgman clipping of convex polygons) and the mesh contract.
//! Every reference below is computed here, independently of the crate.

use rafter_layout::{Cell, CellShape, Layout, LayoutError, Mesh, estimate_cells, mesh, parse_str};

const MM: f64 = 1e-3;
const MM2: f64 = 1e-6;

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs())
}

/// A layout in mm on a grounded two-dielectric stack (faces `core` and `pre`) with the nets
/// `(name, shapes)`.
fn layout(nets: &[(&str, &str)], max_cell: f64, edge_refine: bool) -> Result<Layout, Box<LayoutError>> {
    let mut text = String::from(
        "name = \"t\"\nunits = \"mm\"\n[stackup]\nlayers = [{ name = \"gnd\", kind = \"ground\" }, \
         { name = \"core\", kind = \"dielectric\", thickness = 0.2, eps_r = 4.4 }, \
         { name = \"pre\", kind = \"dielectric\", thickness = 0.1, eps_r = 4.4 }]\n",
    );
    for (name, shapes) in nets {
        text += &format!("[[net]]\nname = \"{name}\"\nshapes = [{shapes}]\n");
    }
    text += &format!("[mesh]\nmax_cell = {max_cell}\nedge_refine = {edge_refine}\n");
    parse_str(&text, "t.toml").map_err(Box::new)
}

fn one_net(shapes: &str, max_cell: f64, edge_refine: bool) -> Layout {
    match layout(&[("n", shapes)], max_cell, edge_refine) {
        Ok(l) => l,
        Err(e) => panic!("{e}"),
    }
}

fn triangle(c: &Cell) -> [[f64; 2]; 3] {
    match c.shape {
        CellShape::Triangle(t) => t,
        CellShape::Rect(r) => panic!("expected a triangle, got {r:?}"),
    }
}

/// Shoelace formula (elementary geometry), signed: positive counter-clockwise.
fn shoelace(pts: &[[f64; 2]]) -> f64 {
    let n = pts.len();
    (0..n).map(|i| pts[i][0] * pts[(i + 1) % n][1] - pts[(i + 1) % n][0] * pts[i][1]).sum::<f64>() / 2.0
}

fn len(a: [f64; 2], b: [f64; 2]) -> f64 {
    ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2)).sqrt()
}

fn sides(t: &[[f64; 2]; 3]) -> [f64; 3] {
    [len(t[0], t[1]), len(t[1], t[2]), len(t[2], t[0])]
}

fn longest(t: &[[f64; 2]; 3]) -> f64 {
    sides(t).into_iter().fold(0.0, f64::max)
}

/// Distance from `p` to the segment `a–b` (projection clamped to the segment).
fn to_segment(p: [f64; 2], a: [f64; 2], b: [f64; 2]) -> f64 {
    let d = [b[0] - a[0], b[1] - a[1]];
    let t = (((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1]) / (d[0] * d[0] + d[1] * d[1])).clamp(0.0, 1.0);
    len(p, [a[0] + t * d[0], a[1] + t * d[1]])
}

fn to_boundary(p: [f64; 2], poly: &[[f64; 2]]) -> f64 {
    let n = poly.len();
    (0..n).map(|i| to_segment(p, poly[i], poly[(i + 1) % n])).fold(f64::INFINITY, f64::min)
}

/// Sutherland–Hodgman clipping (Sutherland & Hodgman, "Reentrant polygon clipping", 1974):
/// the intersection of `subject` with the convex counter-clockwise polygon `clip`.
fn clip_convex(subject: &[[f64; 2]], clip: &[[f64; 2]]) -> Vec<[f64; 2]> {
    let mut out = subject.to_vec();
    let m = clip.len();
    for i in 0..m {
        let (a, b) = (clip[i], clip[(i + 1) % m]);
        let side = |p: [f64; 2]| (b[0] - a[0]) * (p[1] - a[1]) - (b[1] - a[1]) * (p[0] - a[0]);
        let input = std::mem::take(&mut out);
        let n = input.len();
        for k in 0..n {
            let (p, q) = (input[k], input[(k + 1) % n]);
            let (sp, sq) = (side(p), side(q));
            if sp >= 0.0 {
                out.push(p);
            }
            if (sp >= 0.0) != (sq >= 0.0) {
                let t = sp / (sp - sq);
                out.push([p[0] + t * (q[0] - p[0]), p[1] + t * (q[1] - p[1])]);
            }
        }
    }
    out
}

/// The rectangle covered by segment `a–b` widened to `w` and extended by `w/2` past both
/// ends, counter-clockwise.
fn widened(a: [f64; 2], b: [f64; 2], w: f64) -> Vec<[f64; 2]> {
    let l = len(a, b);
    let u = [(b[0] - a[0]) / l * w / 2.0, (b[1] - a[1]) / l * w / 2.0];
    let n = [-u[1], u[0]];
    vec![
        [a[0] - u[0] - n[0], a[1] - u[1] - n[1]],
        [b[0] + u[0] - n[0], b[1] + u[1] - n[1]],
        [b[0] + u[0] + n[0], b[1] + u[1] + n[1]],
        [a[0] - u[0] + n[0], a[1] - u[1] + n[1]],
    ]
}

fn points_toml(pts: &[[f64; 2]]) -> String {
    let parts: Vec<String> = pts.iter().map(|p| format!("[{}, {}]", p[0], p[1])).collect();
    format!("[{}]", parts.join(", "))
}

/// The mesh contract for triangle cells: ordered net by net, counter-clockwise with positive
/// area, no edge longer than max_cell. Returns the total area of each net's cells (m²).
fn check_triangles(l: &Layout, m: &Mesh) -> Vec<f64> {
    assert_eq!(m.cells_per_net.iter().sum::<usize>(), m.cells.len());
    let max_cell = l.mesh.max_cell;
    (0..l.nets.len())
        .map(|i| {
            let cells = &m.cells[m.net_range(i)];
            assert!(cells.iter().all(|c| c.net == i));
            for c in cells.iter().filter(|c| matches!(c.shape, CellShape::Triangle(_))) {
                let t = triangle(c);
                // Shoelace on the vertices relative to the first one (avoids cancellation).
                let rel = t.map(|p| [p[0] - t[0][0], p[1] - t[0][1]]);
                assert!(shoelace(&rel) > 0.0, "not counter-clockwise: {t:?}");
                assert!(close(c.area(), shoelace(&rel), 1e-12));
                let [x, y, z] = c.centroid();
                assert!(close(x, (t[0][0] + t[1][0] + t[2][0]) / 3.0, 1e-12) && z == c.z && y.is_finite());
                assert!(longest(&t) <= 1.0001 * max_cell, "edge {} > max_cell {max_cell}", longest(&t));
            }
            cells.iter().map(Cell::area).sum()
        })
        .collect()
}

/// The regular 128-gon of radius 1 (mm), counter-clockwise.
fn disk() -> Vec<[f64; 2]> {
    (0..128).map(|k| (2.0 * std::f64::consts::PI * k as f64 / 128.0).sin_cos()).map(|(s, c)| [c, s]).collect()
}

#[test]
fn disk_triangles_tile_the_polygon_graded_toward_its_edge() {
    let pts = disk();
    let shape = format!("{{ polygon = {{ on = \"core\", points = {} }} }}", points_toml(&pts));
    let expected = shoelace(&pts) * MM2;
    for max_cell in [0.1, 0.05] {
        let l = one_net(&shape, max_cell, true);
        let region = &l.nets[0].regions[0];
        assert!(!region.is_manhattan());
        assert!(close(region.area(), expected, 1e-12));
        let m = mesh(&l).unwrap();
        let area = check_triangles(&l, &m)[0];
        assert!(close(area, expected, 1e-9), "{area} vs {expected}");
        let h = max_cell * MM;
        let mut boundary_cells = 0;
        for c in &m.cells {
            let t = triangle(c);
            let tm = t.map(|p| [p[0] / MM, p[1] / MM]);
            // Inside a convex counter-clockwise polygon: to the left of every edge.
            let [x, y, _] = c.centroid();
            let g = [x / MM, y / MM];
            for i in 0..pts.len() {
                let (a, b) = (pts[i], pts[(i + 1) % pts.len()]);
                assert!(
                    (b[0] - a[0]) * (g[1] - a[1]) - (b[1] - a[1]) * (g[0] - a[0]) > 0.0,
                    "outside: {t:?}"
                );
            }
            // Triangles with an edge on the boundary (two vertices on it) are small.
            let on = tm.iter().filter(|&&p| to_boundary(p, &pts) < 1e-9).count();
            if on >= 2 {
                boundary_cells += 1;
                assert!(longest(&t) <= 0.2 * h, "boundary triangle {} > 0.2 max_cell", longest(&t) / h);
            }
        }
        let estimate = estimate_cells(&l);
        eprintln!(
            "disk, max_cell {max_cell} mm: {} triangles ({boundary_cells} on the boundary), estimate {estimate}",
            m.cells.len()
        );
        assert!(boundary_cells >= (2.0 * std::f64::consts::PI / (0.15 * max_cell)) as usize);
        let ratio = estimate as f64 / m.cells.len() as f64;
        assert!((0.75..1.33).contains(&ratio), "estimate {estimate} vs {}", m.cells.len());
        // Graded: the triangles are much larger inside than at the edge.
        let inner = m.cells.iter().map(triangle).filter(|t| {
            let c = [(t[0][0] + t[1][0] + t[2][0]) / 3.0 / MM, (t[0][1] + t[1][1] + t[2][1]) / 3.0 / MM];
            to_boundary(c, &pts) > 0.5
        });
        assert!(inner.map(|t| longest(&t)).fold(0.0, f64::max) > 0.7 * h);
    }
}

#[test]
fn uniform_triangles_without_edge_refinement() {
    let shape = format!("{{ polygon = {{ on = \"core\", points = {} }} }}", points_toml(&disk()));
    let graded = mesh(&one_net(&shape, 0.1, true)).unwrap();
    let l = one_net(&shape, 0.1, false);
    let m = mesh(&l).unwrap();
    let area = check_triangles(&l, &m)[0];
    assert!(close(area, shoelace(&disk()) * MM2, 1e-9));
    assert!(m.cells.len() * 2 < graded.cells.len(), "{} vs {}", m.cells.len(), graded.cells.len());
    // The smallest triangles are not much smaller than max_cell (Delaunay refinement with a
    // 25° angle bound keeps them within a modest factor).
    let smallest = m.cells.iter().map(|c| longest(&triangle(c))).fold(f64::INFINITY, f64::min);
    assert!(smallest > 0.25 * 0.1 * MM, "{smallest}");
}

#[test]
fn oblique_trace_area() {
    // Elementary geometry: the 3-4-5 segment has length 5; widened to 0.2 and extended by 0.1
    // at both ends it covers (5 + 0.2) · 0.2 = 5 · 0.2 + 0.2 · 0.2.
    let l = one_net("{ trace = { on = \"core\", width = 0.2, path = [[0, 0], [3, 4]] } }", 0.1, true);
    let expected = (5.0 * 0.2 + 0.2 * 0.2) * MM2;
    assert!(close(l.nets[0].area(), expected, 1e-12), "{}", l.nets[0].area());
    let m = mesh(&l).unwrap();
    assert!(close(check_triangles(&l, &m)[0], expected, 1e-9));
    let ratio = estimate_cells(&l) as f64 / m.cells.len() as f64;
    assert!((0.75..1.33).contains(&ratio), "estimate {} vs {}", estimate_cells(&l), m.cells.len());
}

#[test]
fn trace_with_a_45_degree_bend() {
    // Union area by inclusion–exclusion: |A| + |B| − |A ∩ B|, with A and B the widened
    // segments and A ∩ B found by Sutherland–Hodgman clipping (both are convex).
    let (w, p0, p1, p2) = (0.5, [0.0, 0.0], [4.0, 0.0], [7.0, 3.0]);
    let (a, b) = (widened(p0, p1, w), widened(p1, p2, w));
    let overlap = shoelace(&clip_convex(&a, &b));
    assert!(overlap > 0.0 && overlap < w * w, "test bug: overlap {overlap}");
    let expected = (shoelace(&a) + shoelace(&b) - overlap) * MM2;
    // Independent of the clipping: |A| = (4 + w)·w and |B| = (3√2 + w)·w.
    assert!(close(shoelace(&a), (4.0 + w) * w, 1e-12) && close(shoelace(&b), (18f64.sqrt() + w) * w, 1e-12));
    let l = one_net(
        &format!("{{ trace = {{ on = \"core\", width = {w}, path = {} }} }}", points_toml(&[p0, p1, p2])),
        0.1,
        true,
    );
    assert!(close(l.nets[0].area(), expected, 1e-12), "{} vs {expected}", l.nets[0].area());
    let m = mesh(&l).unwrap();
    assert!(close(check_triangles(&l, &m)[0], expected, 1e-9));
}

#[test]
fn rect_and_oblique_trace_of_one_net_form_one_triangle_region() {
    // Square R = [0, 1]², trace T from (1, 0.5) at 45° (width 0.2): its back end pokes into R.
    let (r, t) = (vec![[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]], widened([1.0, 0.5], [3.0, 2.5], 0.2));
    let expected = (1.0 + shoelace(&t) - shoelace(&clip_convex(&t, &r))) * MM2;
    let shapes = "{ rect = { on = \"core\", min = [0, 0], max = [1, 1] } }, \
                  { trace = { on = \"core\", width = 0.2, path = [[1, 0.5], [3, 2.5]] } }";
    let l = one_net(shapes, 0.1, true);
    assert_eq!(l.nets[0].regions.len(), 1);
    let region = &l.nets[0].regions[0];
    assert!(!region.is_manhattan() && region.rects.is_empty());
    assert_eq!(region.outline.len(), 1, "one merged contour");
    assert!(close(region.area(), expected, 1e-12));
    let m = mesh(&l).unwrap();
    assert!(m.cells.iter().all(|c| matches!(c.shape, CellShape::Triangle(_))));
    assert!(close(check_triangles(&l, &m)[0], expected, 1e-9));
}

#[test]
fn manhattan_net_next_to_a_triangle_net() {
    let l = layout(
        &[
            ("sq", "{ rect = { on = \"core\", min = [0, 0], max = [1, 1] } }"),
            ("diag", "{ trace = { on = \"core\", width = 0.2, path = [[1.5, 0], [2.5, 1]] } }"),
            ("sq2", "{ polygon = { on = \"pre\", points = [[0, 0], [1, 0], [1, 1], [0, 1]] } }"),
        ],
        0.1,
        true,
    )
    .unwrap();
    assert!(l.nets[0].regions[0].is_manhattan() && l.nets[2].regions[0].is_manhattan());
    assert!(!l.nets[1].regions[0].is_manhattan());
    let m = mesh(&l).unwrap();
    let areas = check_triangles(&l, &m);
    let kinds = |i: usize| {
        m.cells[m.net_range(i)].iter().map(|c| matches!(c.shape, CellShape::Rect(_))).collect::<Vec<_>>()
    };
    assert!(kinds(0).iter().all(|&r| r) && kinds(2).iter().all(|&r| r));
    assert!(kinds(1).iter().all(|&r| !r));
    assert!(close(areas[0], MM2, 1e-12) && close(areas[2], MM2, 1e-12));
    // Segment length √2, widened to 0.2 and extended by 0.1 at both ends.
    assert!(close(areas[1], (2f64.sqrt() + 0.2) * 0.2 * MM2, 1e-9));
    // The rectangle nets keep their exact rectangle mesh: the same cells as on their own.
    let alone = one_net("{ rect = { on = \"core\", min = [0, 0], max = [1, 1] } }", 0.1, true);
    assert_eq!(mesh(&alone).unwrap().cells.len(), m.cells_per_net[0]);
    assert_eq!(m.cells_per_net[0], m.cells_per_net[2]);
}

#[test]
fn ring_of_oblique_bars_keeps_its_hole_empty() {
    // A diamond ring: four bars along the sides of the square with corners (±2, 0), (0, ±2).
    let shapes =
        "{ trace = { on = \"core\", width = 0.4, path = [[2, 0], [0, 2], [-2, 0], [0, -2], [2, 0]] } }";
    let l = one_net(shapes, 0.2, true);
    let region = &l.nets[0].regions[0];
    assert_eq!(region.outline.len(), 2, "outer boundary and hole");
    // Each bar is the segment of length 2√2 widened to 0.4 (extended by 0.2 past both ends).
    // Inside the ring: the hole is the square |x| + |y| ≤ 2 − 0.2·√2 (offset of the side
    // lines by the half width), area 2·(2 − 0.2√2)².
    let hole = 2.0 * (2.0 - 0.2 * 2f64.sqrt()).powi(2);
    assert!(region.outline.iter().any(|c| close(shoelace(c), -hole * MM2, 1e-9)), "hole missing");
    let m = mesh(&l).unwrap();
    let area = check_triangles(&l, &m)[0];
    assert!(close(area, region.area(), 1e-9), "{area} vs {}", region.area());
    for c in &m.cells {
        let [x, y, _] = c.centroid();
        assert!(
            (x / MM).abs() + (y / MM).abs() > 2.0 - 0.2 * 2f64.sqrt(),
            "triangle in the hole at ({x}, {y})"
        );
    }
}

#[test]
fn crossing_or_touching_oblique_nets_are_refused_on_one_face_only() {
    let a = "{ trace = { on = \"core\", width = 0.2, path = [[0, 0], [2, 2]] } }";
    // a's right edge is the line x − y = 0.1·√2: the points (t + q, t − q), q = 0.1/√2.
    let bar = |gap: f64| {
        let q = 0.1 / 2f64.sqrt() + gap / 2f64.sqrt();
        let (p0, p1) = ([0.5 + q, 0.5 - q], [1.5 + q, 1.5 - q]);
        let pts = [p0, p1, [p1[0] + 0.2, p1[1] - 0.2], [p0[0] + 0.2, p0[1] - 0.2]];
        format!("{{ polygon = {{ on = \"core\", points = {} }} }}", points_toml(&pts))
    };
    let cases = [
        ("crossing", "{ trace = { on = \"core\", width = 0.2, path = [[0, 2], [2, 0]] } }".to_string()),
        ("sharing an edge", bar(0.0)),
        ("inside", "{ polygon = { on = \"core\", points = [[0.9, 1], [1.1, 1], [1, 1.05]] } }".to_string()),
        ("rect overlapping", "{ rect = { on = \"core\", min = [1.5, 1.5], max = [3, 3] } }".to_string()),
        // a's corner (2 + 0.1·√2, 2): the end (2, 2) moved by w/2 = 0.1 along the segment and
        // by 0.1 along the right normal, (0.1/√2)·((1, 1) + (1, −1)).
        (
            "rect touching a corner",
            "{ rect = { on = \"core\", min = [2.1414213562373095, -1], max = [3, 3] } }".to_string(),
        ),
    ];
    for (what, b) in &cases {
        let e = match layout(&[("a", a), ("b", b)], 0.1, true) {
            Ok(_) => panic!("{what}: accepted"),
            Err(e) => e,
        };
        let msg = e.to_string();
        assert_eq!(e.field(), "net[1].shapes[0]", "{what}: {msg}");
        assert!(
            msg.contains("net \"b\"") && msg.contains("net \"a\"") && msg.contains("net[0].shapes[0]"),
            "{msg}"
        );
        assert!(msg.contains("hint"), "{msg}");
        // On another face: fine.
        layout(&[("a", a), ("b", &b.replace("\"core\"", "\"pre\""))], 0.1, true).expect(what);
    }
    // A clear gap: the parallel bar moved away from a's edge by 1e-4 along the normal.
    layout(&[("a", a), ("b", &bar(1e-4))], 0.1, true).expect("a gap of 1e-4");
}

#[test]
fn too_many_triangles_are_refused_before_meshing() {
    let shape = format!("{{ polygon = {{ on = \"core\", points = {} }} }}", points_toml(&disk()));
    let l = one_net(&shape, 0.001, true);
    assert!(estimate_cells(&l) > rafter_layout::MAX_CELLS);
    let e = mesh(&l).expect_err("too many cells");
    assert_eq!(e.field(), "mesh.max_cell");
    let msg = e.to_string();
    assert!(msg.contains("= 0.001:") && msg.contains("2000000") && msg.contains("hint"), "{msg}");
}
