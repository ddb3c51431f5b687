//! The current basis of real layout meshes: conforming (every interior edge shared whole by
//! two cells), so the conductors' boundary edges add up to their perimeters exactly — a
//! T-junction would leave extra "boundary" pieces inside a conductor.

use rafter::extract::panels;
use rafter::mom::edges::edge_basis;
use std::path::Path;

fn basis_of(rel: &str) -> (rafter::mom::edges::EdgeBasis, usize) {
    let layout = rafter::layout::load(&Path::new(env!("CARGO_MANIFEST_DIR")).join(rel)).unwrap();
    let mesh = rafter::layout::mesh(&layout).unwrap();
    let (p, net_of) = panels(&mesh);
    (edge_basis(&p, &net_of).unwrap(), p.len())
}

fn boundary_length(b: &rafter::mom::edges::EdgeBasis) -> f64 {
    b.boundary
        .iter()
        .map(|e| ((e.ends[1][0] - e.ends[0][0]).powi(2) + (e.ends[1][1] - e.ends[0][1]).powi(2)).sqrt())
        .sum()
}

/// Two straight traces of 4 mm drawn length and 0.25 mm width (extended by half a width at
/// each end): perimeters 2 × 2 × (4.25 + 0.25) mm = 18 mm.
#[test]
fn rectangle_meshes_are_conforming() {
    let (b, cells) = basis_of("data/regression/laminate-pair.toml");
    assert!((boundary_length(&b) - 18e-3).abs() < 1e-12, "{}", boundary_length(&b));
    // Each rectangle has 4 edges: 4 · cells = 2 · interior + boundary.
    assert_eq!(4 * cells, 2 * b.functions.len() + b.boundary.len());
}

/// Triangles (an oblique bend) next to rectangles: every edge counted once or twice.
#[test]
fn triangle_meshes_are_conforming() {
    let (b, _) = basis_of("data/regression/bent-pair.toml");
    assert!(!b.functions.is_empty());
    for f in &b.functions {
        assert!(f.length > 0.0 && f.plus.panel != f.minus.panel);
        assert!((f.divergence(true) * f.plus.area - f.length).abs() <= 1e-9 * f.length);
    }
}
