//! Capacitance extraction against published results (sources named at each check).

use rafter::extract::{green_for, panels};
use rafter::layout::{Layout, parse_str};
use rafter::mom::{CapacitanceOptions, capacitance};

/// Vacuum permittivity (CODATA 2022) and the speed of light.
const EPS0: f64 = 8.854_187_818_8e-12;
const C0: f64 = 299_792_458.0;

fn solve(layout: &Layout, dense: bool) -> Vec<Vec<f64>> {
    let green = green_for(layout).unwrap();
    let mesh = rafter::layout::mesh(layout).unwrap();
    let (p, net_of) = panels(&mesh);
    let mut opts = CapacitanceOptions::for_tolerance(layout.solve.tolerance);
    opts.dense = dense;
    capacitance(&p, &net_of, layout.nets.len(), green.as_ref(), &opts, None, &mut |_, _, _| {})
        .unwrap()
        .maxwell
}

/// One straight strip of width `w` and length `len` (mm) on face `on`.
fn strip_layout(stack: &str, on: &str, w: f64, len: f64, max_cell: f64) -> Layout {
    let text = format!(
        r#"
name = "strip"
units = "mm"
[stackup]
layers = [{stack}]
[[net]]
name = "s"
shapes = [ {{ rect = {{ on = "{on}", min = [0, {y0}], max = [{len}, {y1}] }} }} ]
[mesh]
max_cell = {max_cell}
[solve]
tolerance = 1e-5
"#,
        y0 = -w / 2.0,
        y1 = w / 2.0,
    );
    parse_str(&text, "test.toml").unwrap()
}

/// Per-unit-length capacitance (F/m) from two lengths, so that the end effects cancel:
/// `C′ = (C(L2) − C(L1)) / (L2 − L1)`.
fn per_length(stack: &str, on: &str, w: f64, max_cell: f64) -> f64 {
    let (l1, l2) = (8.0, 16.0);
    let c1 = solve(&strip_layout(stack, on, w, l1, max_cell), false)[0][0];
    let c2 = solve(&strip_layout(stack, on, w, l2, max_cell), false)[0][0];
    (c2 - c1) / ((l2 - l1) * 1e-3)
}

const MICROSTRIP_AIR: &str = r#"{ name = "gnd", kind = "ground" }, { name = "sub", kind = "dielectric", thickness = 1.0, eps_r = 1.0 }"#;

/// Microstrip in air over a ground plane (h = 1 mm): per-length capacitance within 1 % of the
/// exact 2-D values C_air/ε0 = 2.25993, 2.97990, 4.23156 for w/h = 0.5, 1, 2 (table in the
/// project's shared references, §2, consistent with Hammerstad & Jensen, "Accurate models for
/// microstrip computer-aided design", IEEE MTT-S Digest, 1980, to 0.01 %).
#[test]
fn microstrip_in_air_matches_exact_values() {
    for (w, exact) in [(0.5, 2.25993), (1.0, 2.97990), (2.0, 4.23156)] {
        let c = per_length(MICROSTRIP_AIR, "sub", w, w / 6.0) / EPS0;
        eprintln!("w/h = {w}: C/ε0 = {c:.5} (exact {exact})");
        assert!((c - exact).abs() <= 0.01 * exact, "w/h = {w}: {c} vs {exact}");
    }
}

/// Mesh convergence: the microstrip (w/h = 1) error against the exact value falls as cells
/// shrink.
#[test]
fn microstrip_error_falls_with_refinement() {
    let exact = 2.97990;
    let errs: Vec<f64> = [0.5, 0.25, 0.125]
        .iter()
        .map(|&m| (per_length(MICROSTRIP_AIR, "sub", 1.0, m) / EPS0 - exact).abs() / exact)
        .collect();
    eprintln!("relative errors at max_cell = 0.5, 0.25, 0.125 mm: {errs:?}");
    assert!(errs[2] < errs[0], "{errs:?}");
    assert!(errs[1] < errs[0], "{errs:?}");
}

/// Stripline, zero-thickness strip centred between grounds b = 2 mm apart, εr = 2.2 and 4.4:
/// Z0 = √εr / (c C′) within 1 % of Cohn's exact result, "Characteristic impedance of the
/// shielded-strip transmission line", IRE Trans. MTT-2, 1954 (air values 139.917 Ω at
/// w/b = 0.25 and 65.3536 Ω at w/b = 1 from the shared references' table, divided by √εr).
#[test]
fn stripline_matches_cohn() {
    for er in [2.2f64, 4.4] {
        let stack = format!(
            r#"{{ name = "g0", kind = "ground" }},
            {{ name = "lo", kind = "dielectric", thickness = 1.0, eps_r = {er} }},
            {{ name = "hi", kind = "dielectric", thickness = 1.0, eps_r = {er} }},
            {{ name = "g1", kind = "ground" }}"#
        );
        for (wb, z_air) in [(0.25, 139.917), (1.0, 65.3536)] {
            let w = wb * 2.0;
            let c = per_length(&stack, "lo", w, w / 6.0);
            let z0 = er.sqrt() / (C0 * c);
            let want = z_air / er.sqrt();
            eprintln!("εr = {er}, w/b = {wb}: Z0 = {z0:.4} Ω (Cohn {want:.4})");
            assert!((z0 - want).abs() <= 0.01 * want, "εr = {er}, w/b = {wb}: {z0} vs {want}");
        }
    }
}

/// The compressed solve agrees with the dense reference solve (dense fill + faer LU) of the
/// same discretisation: on a four-line bus of about 4000 cells, every entry of C within
/// 10 × tolerance of the largest entry, and every entry — the weak coupling between the outer
/// lines too — within 10⁻³ of itself (the adjoint-corrected functional of `capacitance`).
#[test]
fn compressed_matches_dense_on_a_bus() {
    let mut nets = String::new();
    for k in 0..4 {
        let y = k as f64 * 0.5;
        nets += &format!(
            "[[net]]\nname = \"b{k}\"\nshapes = [ {{ rect = {{ on = \"sub\", min = [0, {y}], max = [6, {}] }} }} ]\n",
            y + 0.25
        );
    }
    let text = format!(
        "name = \"bus\"\nunits = \"mm\"\n[stackup]\nlayers = [{MICROSTRIP_AIR}]\n{nets}[mesh]\nmax_cell = 0.06\n[solve]\ntolerance = 1e-4\n"
    );
    let layout = parse_str(&text, "bus.toml").unwrap();
    let cells = rafter::layout::mesh(&layout).unwrap().cells.len();
    assert!((3000..6000).contains(&cells), "{cells} cells");
    let ch = solve(&layout, false);
    let cd = solve(&layout, true);
    let largest = cd.iter().flatten().fold(0.0f64, |m, c| m.max(c.abs()));
    let worst = ch.iter().flatten().zip(cd.iter().flatten()).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max);
    let worst_rel = ch
        .iter()
        .flatten()
        .zip(cd.iter().flatten())
        .map(|(a, b)| (a - b).abs() / b.abs())
        .fold(0.0, f64::max);
    let weakest = cd.iter().flatten().fold(f64::INFINITY, |m, c| m.min(c.abs())) / largest;
    eprintln!(
        "{cells} cells: worst entry difference {:.2e} of the largest, {worst_rel:.2e} of itself (weakest entry {weakest:.1e} of the largest)",
        worst / largest
    );
    assert!(worst <= 10.0 * layout.solve.tolerance * largest);
    assert!(worst_rel <= 1e-3);
}

/// A regular 128-gon of circumradius `a` (mm) in free space, as a layout.
fn disk_layout(a: f64, max_cell: f64) -> Layout {
    let pts: Vec<String> = (0..128)
        .map(|k| {
            let t = 2.0 * std::f64::consts::PI * k as f64 / 128.0;
            format!("[{:.12}, {:.12}]", a * t.cos(), a * t.sin())
        })
        .collect();
    let text = format!(
        "name = \"disk\"\nunits = \"mm\"\n[[net]]\nname = \"d\"\nshapes = [ {{ polygon = {{ z = 0.0, points = [{}] }} }} ]\n[mesh]\nmax_cell = {max_cell}\n[solve]\ntolerance = 1e-5\n",
        pts.join(", ")
    );
    parse_str(&text, "disk.toml").unwrap()
}

/// Isolated thin circular disk of radius a: C = 8 ε0 a, exact (classical electrostatics; e.g.
/// Jackson, *Classical Electrodynamics*, ch. 3, from memory). Within 1 %, and the error falls
/// as the triangles shrink. The 128-gon's area is 0.04 % below the circle's, far inside the
/// margin.
#[test]
fn disk_capacitance_is_8_eps0_a() {
    let a = 1.0;
    let exact = 8.0 * EPS0 * a * 1e-3;
    let errs: Vec<f64> = [0.25, 0.1]
        .iter()
        .map(|&m| {
            let c = solve(&disk_layout(a, m), false)[0][0];
            eprintln!("max_cell {m} mm: C = {c:.6e} F (exact {exact:.6e})");
            (c - exact).abs() / exact
        })
        .collect();
    assert!(errs[1] <= 0.01, "{errs:?}");
    assert!(errs[1] < errs[0], "{errs:?}");
}

/// An embedded microstrip on a two-dielectric stack (0.2 mm εr 4.4 under the strip, 0.1 mm
/// εr 3.0 over it, air above): the compressed solve agrees with the dense reference solve of
/// the same discretisation to 10 × tolerance, and the capacitance lies strictly between the
/// values with every dielectric at the lower and at the higher permittivity (monotonicity of
/// capacitance in the permittivity: a physical bound, e.g. from Thomson's energy principle).
#[test]
fn embedded_microstrip_is_bounded_and_matches_dense() {
    let stack = |lo: f64, hi: f64| {
        format!(
            r#"{{ name = "gnd", kind = "ground" }}, {{ name = "core", kind = "dielectric", thickness = 0.2, eps_r = {lo} }}, {{ name = "cover", kind = "dielectric", thickness = 0.1, eps_r = {hi} }}"#
        )
    };
    let c_of = |lo: f64, hi: f64, dense: bool| {
        solve(&strip_layout(&stack(lo, hi), "core", 0.3, 3.0, 0.05), dense)[0][0]
    };
    let c = c_of(4.4, 3.0, false);
    let cd = c_of(4.4, 3.0, true);
    let (low, high) = (c_of(3.0, 3.0, false), c_of(4.4, 4.4, false));
    eprintln!("C = {c:.5e} F (dense {cd:.5e}); bounds {low:.5e} … {high:.5e}");
    assert!((c - cd).abs() <= 10.0 * 1e-5 * cd);
    assert!(low < c && c < high, "{low} < {c} < {high}");
}
