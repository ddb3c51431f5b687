//! Geometry of parsed layouts and their meshes, checked against closed-form areas
//! (elementary geometry: inclusion–exclusion, the shoelace formula) and the mesh contract.

use rafter_layout::{Cell, CellShape, LayerKind, Layout, Mesh, Rect, estimate_cells, mesh, parse_str};

/// The example of the crate documentation.
const EXAMPLE: &str = r#"
name = "example"
units = "mm"

[stackup]
layers = [
  { name = "gnd",  kind = "ground" },
  { name = "core", kind = "dielectric", thickness = 0.2, eps_r = 4.4, loss_tangent = 0.02 },
  { name = "pre",  kind = "dielectric", thickness = 0.1, eps_r = 3.6 },
]

[[net]]
name = "d0"
shapes = [
  { trace = { on = "core", width = 0.15, path = [[0, 0], [10, 0], [10, 5]] } },
  { rect = { on = "core", min = [0, 0], max = [1, 1] } },
  { polygon = { on = "pre", points = [[0, 0], [2, 0], [2, 1], [0, 1]] } },
]

[mesh]
max_cell = 0.05
edge_refine = true

[solve]
tolerance = 1e-4
"#;

const MM2: f64 = 1e-6;

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs())
}

/// A one-net layout on the `core` face of a grounded 0.2 mm dielectric.
fn one_net(units: &str, shapes: &str, max_cell: f64, edge_refine: bool) -> Layout {
    let text = format!(
        "name = \"t\"\nunits = \"{units}\"\n[stackup]\nlayers = [{{ name = \"gnd\", kind = \"ground\" }}, \
         {{ name = \"core\", kind = \"dielectric\", thickness = 0.2, eps_r = 4.4 }}]\n\
         [[net]]\nname = \"n\"\nshapes = [{shapes}]\n[mesh]\nmax_cell = {max_cell}\nedge_refine = {edge_refine}\n"
    );
    match parse_str(&text, "t.toml") {
        Ok(l) => l,
        Err(e) => panic!("{e}"),
    }
}

/// The rectangle of a cell of a Manhattan region.
fn rect(c: &Cell) -> Rect {
    match c.shape {
        CellShape::Rect(r) => r,
        CellShape::Triangle(t) => panic!("a Manhattan region was meshed into triangles: {t:?}"),
    }
}

/// Checks the mesh contract: cells ordered net by net, inside their regions, non-overlapping,
/// tiling each region exactly, none larger than max_cell; returns the smallest cell side
/// found at the region's outer boundary (leftmost x, bottom y).
fn check_mesh(layout: &Layout, m: &Mesh) -> f64 {
    assert_eq!(m.cells_per_net.len(), layout.nets.len());
    assert_eq!(m.cells_per_net.iter().sum::<usize>(), m.cells.len());
    assert_eq!(estimate_cells(layout), m.cells.len(), "the estimate is exact");
    let max_cell = layout.mesh.max_cell;
    let mut smallest_at_edge = f64::INFINITY;
    for (i, net) in layout.nets.iter().enumerate() {
        let cells: Vec<_> = m.cells[m.net_range(i)].to_vec();
        assert!(cells.iter().all(|c| c.net == i), "cells ordered net by net");
        for region in &net.regions {
            let mine: Vec<Rect> = cells.iter().filter(|c| c.z == region.z).map(rect).collect();
            let area: f64 = mine.iter().map(Rect::area).sum();
            assert!(close(area, region.area(), 1e-12), "tiling: {area} vs {}", region.area());
            let xmin = region.rects.iter().map(|r| r.x0).fold(f64::INFINITY, f64::min);
            let ymin = region.rects.iter().map(|r| r.y0).fold(f64::INFINITY, f64::min);
            for c in &mine {
                assert!(
                    c.width() <= max_cell * (1.0 + 1e-9) && c.height() <= max_cell * (1.0 + 1e-9),
                    "{c:?}"
                );
                assert!(
                    region.rects.iter().any(|r| r.contains(c.center())),
                    "cell outside its region: {c:?}"
                );
                if c.x0 == xmin {
                    smallest_at_edge = smallest_at_edge.min(c.width());
                }
                if c.y0 == ymin {
                    smallest_at_edge = smallest_at_edge.min(c.height());
                }
            }
            // No two cells overlap (interiors disjoint): sweep over x.
            let mut sorted = mine.clone();
            sorted.sort_by(|a, b| a.x0.total_cmp(&b.x0));
            for (k, a) in sorted.iter().enumerate() {
                for b in sorted[k + 1..].iter().take_while(|b| b.x0 < a.x1) {
                    assert!(a.y1 <= b.y0 || b.y1 <= a.y0, "overlap {a:?} {b:?}");
                }
            }
        }
    }
    for (c, p) in m.cells.iter().zip(m.centroids()) {
        let r = rect(c);
        assert_eq!(p, [r.center()[0], r.center()[1], c.z]);
        assert_eq!(c.area(), r.area());
    }
    smallest_at_edge
}

#[test]
fn example_parses_with_the_right_heights_and_areas() {
    let l = parse_str(EXAMPLE, "example.toml").unwrap();
    assert_eq!(l.name, "example");
    assert_eq!(l.unit_m, 1e-3);
    assert_eq!(l.unit_name, "mm");
    let s = &l.stackup;
    // Heights: z = 0 on the ground; core top = 0.2 mm; pre top = 0.2 + 0.1 mm.
    assert_eq!(s.ground_below, Some(0.0));
    assert_eq!(s.ground_above, None);
    assert!(close(s.face_z("core").unwrap(), 0.2e-3, 1e-15));
    assert!(close(s.face_z("pre").unwrap(), 0.3e-3, 1e-15));
    assert_eq!(s.face_z("gnd"), Some(0.0));
    assert_eq!(s.face_z("nope"), None);
    assert_eq!(s.layers[1].kind, LayerKind::Dielectric { eps_r: 4.4, loss_tangent: 0.02 });
    assert_eq!(s.layers[2].kind, LayerKind::Dielectric { eps_r: 3.6, loss_tangent: 0.0 });
    assert_eq!(s.uniform_eps_r(), None);
    assert_eq!(l.mesh.max_cell, 0.05e-3);
    assert!(l.mesh.edge_refine);
    assert_eq!(l.solve.tolerance, 1e-4);

    let net = &l.nets[0];
    assert_eq!(net.regions.len(), 2);
    let (core, pre) = (&net.regions[0], &net.regions[1]);
    assert_eq!((core.face.as_str(), pre.face.as_str()), ("core", "pre"));
    assert_eq!(core.z, s.face_z("core").unwrap());
    // Inclusion–exclusion (elementary geometry) over the two trace segments A, B (each
    // widened to 0.15 and extended by 0.075 past its ends) and the square C:
    // |A| = 10.15·0.15, |B| = 0.15·5.15, |C| = 1, |A∩B| = 0.15², |A∩C| = 1·0.075, B∩C = ∅.
    let expected = 10.15 * 0.15 + 0.15 * 5.15 + 1.0 - 0.15 * 0.15 - 0.075;
    assert!(close(core.area(), expected * MM2, 1e-12), "{} vs {}", core.area(), expected * MM2);
    assert!(close(pre.area(), 2.0 * MM2, 1e-12));
    let m = mesh(&l).unwrap();
    let smallest = check_mesh(&l, &m);
    assert!(smallest <= l.mesh.max_cell / 4.0, "{smallest}");
}

#[test]
fn stripline_and_free_space_stackups() {
    // A cap layer keeps the conductors on "pre" off the top ground (which would short them).
    let strip = EXAMPLE.replace(
        "eps_r = 3.6 },\n]",
        "eps_r = 4.4 },\n  { name = \"cap\", kind = \"dielectric\", thickness = 0.1, eps_r = 4.4 },\n  { name = \"top\", kind = \"ground\" },\n]",
    );
    assert_ne!(strip, EXAMPLE, "test bug");
    let l = parse_str(&strip, "s.toml").unwrap();
    assert!(close(l.stackup.ground_above.unwrap(), 0.4e-3, 1e-15));
    assert_eq!(l.stackup.uniform_eps_r(), Some(4.4));

    let free = r#"
name = "air"
units = "um"
[stackup]
layers = []
[[net]]
name = "a"
shapes = [
  { rect = { z = 0, min = [0, 0], max = [10, 10] } },
  { rect = { z = 5, min = [0, 0], max = [10, 10] } },
]
[[net]]
name = "b"
shapes = [ { rect = { z = -2.5, min = [0, 0], max = [10, 10] } } ]
[mesh]
max_cell = 2
"#;
    let l = parse_str(free, "air.toml").unwrap();
    assert_eq!(l.stackup.uniform_eps_r(), Some(1.0));
    assert_eq!((l.stackup.ground_below, l.stackup.ground_above), (None, None));
    let faces: Vec<(&str, f64)> =
        l.nets.iter().flat_map(|n| &n.regions).map(|r| (r.face.as_str(), r.z)).collect();
    assert_eq!(faces, vec![("z=0", 0.0), ("z=5", 5e-6), ("z=-2.5", -2.5e-6)]);
    let m = mesh(&l).unwrap();
    check_mesh(&l, &m);
    assert_eq!(m.cells[m.net_range(1)].iter().map(|c| c.z).fold(0.0, f64::min), -2.5e-6);
}

#[test]
fn union_of_overlapping_rects_and_its_mesh() {
    let shapes = "{ rect = { on = \"core\", min = [0, 0], max = [3, 2] } }, \
                  { rect = { on = \"core\", min = [2, 1], max = [5, 4] } }, \
                  { rect = { on = \"core\", min = [1, -1], max = [4, 1.5] } }";
    // Inclusion–exclusion (elementary geometry) for R1 = [0,3]×[0,2], R2 = [2,5]×[1,4],
    // R3 = [1,4]×[-1,1.5]: 6 + 9 + 7.5 − |R1∩R2| 1 − |R1∩R3| 3 − |R2∩R3| 1 + |R1∩R2∩R3| 0.5 = 18.
    let expected = 18.0 * MM2;
    for edge_refine in [true, false] {
        let l = one_net("mm", shapes, 0.25, edge_refine);
        let region = &l.nets[0].regions[0];
        assert!(close(region.area(), expected, 1e-12), "{}", region.area());
        for (k, a) in region.rects.iter().enumerate() {
            for b in &region.rects[k + 1..] {
                let overlap =
                    (a.x1.min(b.x1) - a.x0.max(b.x0)).max(0.0) * (a.y1.min(b.y1) - a.y0.max(b.y0)).max(0.0);
                assert_eq!(overlap, 0.0, "union rects overlap: {a:?} {b:?}");
            }
        }
        let m = mesh(&l).unwrap();
        let smallest = check_mesh(&l, &m);
        if edge_refine {
            assert!(smallest <= l.mesh.max_cell / 4.0, "edge cell {smallest}");
        } else {
            // Every breakpoint interval here is a multiple of 0.25 mm: all cells are 0.25 mm squares.
            assert!(
                m.cells
                    .iter()
                    .all(|c| close(rect(c).width(), 0.25e-3, 1e-9) && close(rect(c).height(), 0.25e-3, 1e-9))
            );
            assert_eq!(m.cells.len(), 18 * 16);
        }
    }
}

#[test]
fn uniform_mesh_without_edge_refinement() {
    let l = one_net("mm", "{ rect = { on = \"core\", min = [0, 0], max = [2, 0.7] } }", 0.3, false);
    let m = mesh(&l).unwrap();
    check_mesh(&l, &m);
    // ceil(2 / 0.3) = 7 columns of 2/7, ceil(0.7 / 0.3) = 3 rows of 0.7/3.
    assert_eq!(m.cells.len(), 21);
    for c in &m.cells {
        assert!(close(rect(c).width(), 2e-3 / 7.0, 1e-12) && close(rect(c).height(), 0.7e-3 / 3.0, 1e-12));
    }
    // With refinement, the same rectangle gets smaller cells at its edges.
    let l = one_net("mm", "{ rect = { on = \"core\", min = [0, 0], max = [2, 0.7] } }", 0.3, true);
    let m = mesh(&l).unwrap();
    assert!(check_mesh(&l, &m) <= 0.3e-3 / 4.0);
    assert!(m.cells.len() > 21);
}

#[test]
fn l_shaped_trace_area() {
    // Elementary geometry: a 4 + 0.5 by 0.5 bar and a 0.5 by 3 + 0.5 leg share a 0.5 × 0.5
    // square at the bend: 2.25 + 1.75 − 0.25 = 3.75.
    let l = one_net(
        "mm",
        "{ trace = { on = \"core\", width = 0.5, path = [[0, 0], [4, 0], [4, 3]] } }",
        0.1,
        true,
    );
    let region = &l.nets[0].regions[0];
    assert!(close(region.area(), 3.75 * MM2, 1e-12), "{}", region.area());
    check_mesh(&l, &mesh(&l).unwrap());
}

/// Shoelace formula (elementary geometry), written independently of the crate.
fn shoelace(pts: &[[f64; 2]]) -> f64 {
    let n = pts.len();
    (0..n).map(|i| pts[i][0] * pts[(i + 1) % n][1] - pts[(i + 1) % n][0] * pts[i][1]).sum::<f64>().abs() / 2.0
}

fn points_toml(pts: &[[f64; 2]]) -> String {
    let parts: Vec<String> = pts.iter().map(|p| format!("[{}, {}]", p[0], p[1])).collect();
    format!("[{}]", parts.join(", "))
}

#[test]
fn manhattan_polygons_match_the_shoelace_formula() {
    let mil = 25.4e-6;
    let l_shape = [[0.0, 0.0], [30.0, 0.0], [30.0, 10.0], [10.0, 10.0], [10.0, 25.0], [0.0, 25.0]];
    // A U shape listed clockwise, with a collinear extra vertex on its bottom edge.
    let u_shape = [
        [0.0, 0.0],
        [0.0, 20.0],
        [5.0, 20.0],
        [5.0, 5.0],
        [15.0, 5.0],
        [15.0, 20.0],
        [20.0, 20.0],
        [20.0, 0.0],
        [8.0, 0.0],
    ];
    for pts in [&l_shape[..], &u_shape[..]] {
        let shape = format!("{{ polygon = {{ on = \"core\", points = {} }} }}", points_toml(pts));
        let l = one_net("mil", &shape, 2.0, true);
        let expected = shoelace(pts) * mil * mil;
        let region = &l.nets[0].regions[0];
        assert!(close(region.area(), expected, 1e-12), "{} vs {expected}", region.area());
        check_mesh(&l, &mesh(&l).unwrap());
    }
}

#[test]
fn rounding_twins_are_snapped_not_meshed_as_slivers() {
    // 0.7 + 0.2/2 is 0.7999999999999999 in binary floating point, not 0.8.
    assert_ne!(0.7 + 0.2 / 2.0, 0.8, "test bug: the sum must differ from the literal");
    let shapes = "{ trace = { on = \"core\", width = 0.2, path = [[0, 0], [0.7, 0]] } }, \
                  { rect = { on = \"core\", min = [0.8, -0.1], max = [1.8, 0.1] } }";
    let l = one_net("mm", shapes, 0.05, true);
    let region = &l.nets[0].regions[0];
    assert_eq!(region.rects.len(), 1, "{:?}", region.rects);
    let m = mesh(&l).unwrap();
    check_mesh(&l, &m);
    let thinnest = m.cells.iter().map(|c| rect(c).width()).fold(f64::INFINITY, f64::min);
    assert!(thinnest > 1e-3 * 0.05e-3, "sliver cell of width {thinnest}");
}
