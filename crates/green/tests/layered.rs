//! The layered Green's function through the public API only.

use rafter_green::{EPS0, GreenError, LayerSpec, LayeredGreen, Panel, StaticGreen};
use std::f64::consts::PI;

/// Microstrip substrate (FR-4, εr = 4.4, h = 1 mm, ground below, air above), charge and
/// observer on the top face: `4π ε0 h φ/q` against the shared references' table (§5; Silvester,
/// Proc. IEE 115(1), 1968; Weeks, IEEE Trans. MTT-18(1), 1970) to its 6 digits, used as a
/// trait object as the matrix assembly does.
#[test]
fn microstrip_substrate_matches_published_table() {
    let h = 1e-3;
    let g: Box<dyn StaticGreen> = Box::new(
        LayeredGreen::new(&[LayerSpec { thickness: h, eps_r: 4.4 }], true, false, &[0], 100.0 * h, 1e-6)
            .unwrap(),
    );
    for (r, want) in [(0.1, 3.46999), (0.5, 0.515059), (1.0, 0.165757), (2.0, 0.0310963), (5.0, 0.00116186)] {
        let got = 4.0 * PI * EPS0 * h * g.potential([r * h, 0.0, h], [0.0, 0.0, h]);
        assert!((got - want).abs() <= 6e-6 * want, "ρ/h = {r}: {got} vs {want}");
    }
    // A panel's potential is finite on the panel and close to the point potential far away.
    let p = Panel::Rect { x0: -0.05e-3, x1: 0.05e-3, y0: -0.05e-3, y1: 0.05e-3, z: h };
    assert!(g.panel_potential([0.0, 0.0, h], &p).is_finite());
    let far = [20.0 * h, 3.0 * h, h];
    let (a, b) = (g.panel_potential(far, &p), g.potential(far, [0.0, 0.0, h]));
    assert!((a - b).abs() < 1e-4 * b, "{a} vs {b}");
    assert!(g.describe().contains("εr = 4.4"));
}

/// A conductor face on the upper ground plane is refused with a message naming the face.
#[test]
fn face_on_ground_is_refused() {
    let layers = [LayerSpec { thickness: 1e-3, eps_r: 4.4 }, LayerSpec { thickness: 1e-3, eps_r: 1.0 }];
    match LayeredGreen::new(&layers, true, true, &[0, 1], 0.1, 1e-6) {
        Err(GreenError::Geometry(msg)) => assert!(msg.contains("face 1"), "{msg}"),
        other => panic!("expected a geometry error, got {other:?}"),
    }
}
