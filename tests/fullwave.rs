//! Full-wave checks of `rafter sweep`'s solver against published results.

use num_complex::Complex64;
use rafter::mom::network;
use rafter::mom::wave::{FrequencyResult, WaveOptions, WaveProblem};
use rafter::sweep::{WaveSetup, setup};

const C0: f64 = 299_792_458.0;

fn solve(s: &WaveSetup, p: &WaveProblem<'_>, f: f64, tol: f64) -> FrequencyResult {
    let green = s.green(f, 0.1 * tol).unwrap();
    let r = p
        .solve(f, green.as_ref(), s.medium.eta(), None, &WaveOptions::with_tolerance(tol), &mut |_| {})
        .unwrap();
    // Reciprocity and passivity hold at every frequency of every structure (the issue's contract).
    let s_mat = network::s_from_y(&r.y, &vec![50.0; r.y.nrows()]).unwrap();
    assert!(network::reciprocity_error(&s_mat) <= 1e-6, "reciprocity {}", network::reciprocity_error(&s_mat));
    assert!(
        network::largest_singular_value(&s_mat) <= 1.0 + 1e-6,
        "passivity {}",
        network::largest_singular_value(&s_mat)
    );
    r
}

/// A centre-fed strip dipole in free space: two arms of width w separated by a gap g = w/4
/// with a differential port across it. Thin-dipole theory by the induced-EMF method with the
/// strip's equivalent radius a = w/4 (C. M. Butler, "The equivalent radius of a narrow
/// conducting strip", IEEE Trans. AP-30(4), 1982 — from memory) gives, for a/λ = 1e-4
/// (w/λ = 4e-4), a first resonance at L/λ = 0.484632 with R = 66.74 Ω (the sinusoidal-current
/// model as tabulated in ../shared/references/published-checks.md §6, after C. A. Balanis,
/// *Antenna Theory*, 3rd ed., 2005, ch. 4 and 8 — that model is itself good to about 1 % in
/// length and a few ohms, better the thinner the dipole). Required: resonant length within
/// 2 %, resistance within 12 %. (Measured: 0.2 % and +8 %. At w/λ = 4e-3 the length agrees to
/// 0.05 % but the resistance is 13 % above the model's 63.98 Ω; the solver's own resistance is
/// consistent with its current, whose effective length is 7 % short of the triangular one
/// for a short dipole — the finite thickness the sinusoidal model leaves out.)
#[test]
fn strip_dipole_resonance_matches_induced_emf_theory() {
    let (l, w) = (150.0, 0.126); // mm: w/λ ≈ 4e-4 at resonance
    let g = w / 4.0;
    let text = format!(
        r#"
name = "dipole"
units = "mm"
[stackup]
layers = [ {{ name = "sheet", kind = "dielectric", thickness = 1.0, eps_r = 1.0 }} ]
[[net]]
name = "left"
shapes = [ {{ rect = {{ on = "sheet", min = [{x0}, {y0}], max = [{gm}, {y1}] }} }} ]
[[net]]
name = "right"
shapes = [ {{ rect = {{ on = "sheet", min = [{gp}, {y0}], max = [{x1}, {y1}] }} }} ]
[[port]]
name = "feed"
net = "right"
at = [{gp}, 0]
to = "left"
[mesh]
max_cell = 2.0
[solve]
tolerance = 1e-5
"#,
        x0 = -l / 2.0,
        x1 = l / 2.0,
        y0 = -w / 2.0,
        y1 = w / 2.0,
        gm = -g / 2.0,
        gp = g / 2.0
    );
    let layout = rafter::layout::parse_str(&text, "dipole.toml").unwrap();
    let s = setup(&layout).unwrap();
    let p = WaveProblem::new(&s.panels, &s.basis).unwrap();
    let zin = |f: f64| 1.0 / solve(&s, &p, f, 1e-5).y.get(0, 0);
    // Bracket the first zero of the reactance, then refine by the secant rule.
    let (mut fa, mut fb) = (0.90e9, 1.02e9);
    let (mut xa, mut xb) = (zin(fa).im, zin(fb).im);
    assert!(xa < 0.0 && xb > 0.0, "no resonance in [0.9, 1.0] GHz: X = {xa}, {xb}");
    for _ in 0..4 {
        let fc = fb - xb * (fb - fa) / (xb - xa);
        let xc = zin(fc).im;
        (fa, xa, fb, xb) = if xc < 0.0 { (fc, xc, fb, xb) } else { (fa, xa, fc, xc) };
    }
    let f0 = fb - xb * (fb - fa) / (xb - xa);
    let z0 = zin(f0);
    let (len_lambda, r) = (l * 1e-3 * f0 / C0, z0.re);
    println!(
        "resonance {f0:.6e} Hz: L/λ = {len_lambda:.5}, Zin = {z0:.3} Ω, w/λ = {:.2e}",
        w * 1e-3 * f0 / C0
    );
    assert!((len_lambda - 0.484632).abs() <= 0.02 * 0.484632, "L/λ = {len_lambda}");
    assert!((r - 66.74).abs() <= 0.12 * 66.74, "R = {r}");
}

/// Two coupled striplines, each fed by one port to ground at one end, the other end open: at
/// 1 MHz the structure is a capacitor, and `Im(Y)/ω` must reproduce the Maxwell capacitance
/// matrix of `rafter extract` (the electrostatic solver, itself checked against Cohn's
/// stripline formula and the shared table of published checks) within 1 % in every entry.
#[test]
fn low_frequency_admittance_is_the_capacitance_matrix() {
    let text = r#"
name = "stripline-pair"
units = "mm"
[stackup]
layers = [
  { name = "gnd", kind = "ground" },
  { name = "lower", kind = "dielectric", thickness = 0.5, eps_r = 4.4 },
  { name = "upper", kind = "dielectric", thickness = 0.5, eps_r = 4.4 },
  { name = "top", kind = "ground" },
]
[[net]]
name = "a"
shapes = [ { trace = { on = "lower", width = 0.4, path = [[0, 0], [10, 0]] } } ]
[[net]]
name = "b"
shapes = [ { trace = { on = "lower", width = 0.4, path = [[0, 0.8], [10, 0.8]] } } ]
[[port]]
name = "pa"
net = "a"
at = [-0.2, 0]
to = "gnd"
[[port]]
name = "pb"
net = "b"
at = [-0.2, 0.8]
to = "gnd"
[mesh]
max_cell = 0.1
[solve]
tolerance = 1e-4
"#;
    let layout = rafter::layout::parse_str(text, "pair.toml").unwrap();
    let s = setup(&layout).unwrap();
    let green = rafter::extract::green_for(&layout).unwrap();
    let cap = rafter::mom::capacitance(
        &s.panels,
        &s.net_of,
        2,
        green.as_ref(),
        &rafter::mom::CapacitanceOptions::for_tolerance(1e-5),
        None,
        &mut |_, _, _| {},
    )
    .unwrap();
    let p = WaveProblem::new(&s.panels, &s.basis).unwrap();
    let f = 1e6;
    let r = solve(&s, &p, f, 1e-4);
    let w = 2.0 * std::f64::consts::PI * f;
    for i in 0..2 {
        for j in 0..2 {
            let c = (r.y.get(i, j) / Complex64::new(0.0, w)).re;
            let e = cap.maxwell[i][j];
            println!("C{i}{j}: full-wave {c:.6e}, extract {e:.6e} ({:+.3} %)", 100.0 * (c - e) / e);
            assert!((c - e).abs() <= 0.01 * e.abs(), "C{i}{j}: {c} vs {e}");
            // A capacitor: the real part of Y (loss, radiation) is negligible at 1 MHz.
            assert!(r.y.get(i, j).re.abs() <= 1e-6 * r.y.get(i, j).im.abs());
        }
    }
}

/// Complete elliptic integral of the first kind `K(k)` of modulus `k`, by the arithmetic-
/// geometric mean: `K = π / (2 AGM(1, √(1 − k²)))` (Abramowitz & Stegun, *Handbook of
/// Mathematical Functions*, 1964, 17.6).
fn ellip_k(k: f64) -> f64 {
    let (mut a, mut b) = (1.0f64, (1.0 - k * k).sqrt());
    for _ in 0..60 {
        let (an, bn) = (0.5 * (a + b), (a * b).sqrt());
        a = an;
        b = bn;
    }
    std::f64::consts::PI / (2.0 * a)
}

/// A uniform stripline (zero-thickness strip centred between grounds spaced b, homogeneous
/// εr) of length L between two ports to ground, de-embedded: its S-parameters must be those of
/// an ideal TEM line with Cohn's characteristic impedance
/// `Z0 = η0/(4√εr) · K(k)/K(k′)`, `k = sech(πw/2b)` (S. B. Cohn, "Characteristic impedance of
/// the shielded-strip transmission line", IRE Trans. MTT-2, 1954 — from memory, as in
/// ../shared/references/published-checks.md §3) and phase velocity c/√εr: the phase of S21
/// within 2 % of the ideal line's and the Z0 extracted from S (W. R. Eisenstadt & Y. Eo,
/// IEEE Trans. CHMT 15(4), 1992: `Z0² = Zr² ((1+S11)² − S21²)/((1−S11)² − S21²)` — from
/// memory) within 2 % of Cohn's, at every frequency of the sweep.
#[test]
fn deembedded_stripline_is_an_ideal_tem_line() {
    let text = r#"
name = "thru"
units = "mm"
[stackup]
layers = [
  { name = "gnd", kind = "ground" },
  { name = "lower", kind = "dielectric", thickness = 0.5, eps_r = 4.4 },
  { name = "upper", kind = "dielectric", thickness = 0.5, eps_r = 4.4 },
  { name = "top", kind = "ground" },
]
[[net]]
name = "a"
shapes = [ { rect = { on = "lower", min = [0, -0.2], max = [10, 0.2] } } ]
[[port]]
name = "p1"
net = "a"
at = [0, 0]
to = "gnd"
[[port]]
name = "p2"
net = "a"
at = [10, 0]
to = "top"
[mesh]
max_cell = 0.2
[solve]
tolerance = 1e-4
[sweep]
start = 1e9
stop = 1e10
points = 4
spacing = "linear"
"#;
    let layout = rafter::layout::parse_str(text, "thru.toml").unwrap();
    let run = rafter::sweep::run(&layout, true, None, &mut |_, _, _| {}).unwrap();
    assert!(run.failure.is_none(), "{:?}", run.failure);
    assert_eq!(run.deembedded, vec![0, 1]);
    let (w, b, er, len) = (0.4e-3, 1e-3, 4.4f64, 10e-3);
    let k = 1.0 / (std::f64::consts::PI * w / (2.0 * b)).cosh();
    let kp = (std::f64::consts::PI * w / (2.0 * b)).tanh();
    let z0 = 376.730313 / (4.0 * er.sqrt()) * ellip_k(k) / ellip_k(kp);
    for p in &run.points {
        assert!(p.warnings.is_empty(), "{:?}", p.warnings);
        assert!(p.reciprocity_error <= 1e-6 && p.largest_singular_value <= 1.0 + 1e-6);
        let (s11, s21) = (p.s.get(0, 0), p.s.get(1, 0));
        let one = Complex64::new(1.0, 0.0);
        let zx = 50.0 * (((one + s11).powi(2) - s21 * s21) / ((one - s11).powi(2) - s21 * s21)).sqrt();
        let theta = 2.0 * std::f64::consts::PI * p.frequency_hz * er.sqrt() / C0 * len;
        let ideal = Complex64::new(2.0 * z0 * 50.0, 0.0)
            / Complex64::new(2.0 * z0 * 50.0 * theta.cos(), (z0 * z0 + 2500.0) * theta.sin());
        // Unwrapped phases: the ideal one is continuous in θ, the computed one within π of it.
        let ideal_phase = -theta + (ideal * Complex64::from_polar(1.0, theta)).arg();
        let dphi = (s21 / ideal).arg();
        println!(
            "{:.3e} Hz: Z0 {:.3} (Cohn {z0:.3}), phase {:.4} vs {:.4} rad",
            p.frequency_hz,
            zx.re,
            ideal_phase + dphi,
            ideal_phase
        );
        assert!((zx.re - z0).abs() <= 0.02 * z0, "Z0 {zx} vs {z0}");
        assert!(dphi.abs() <= 0.02 * ideal_phase.abs(), "phase off by {dphi} of {ideal_phase}");
    }
}

/// The compressed full-wave solve against the dense reference of the same discretisation:
/// `A` and `P` filled entry by entry (`hmatrix::reference::assemble_dense`, the explicit dense
/// path), the unscaled equation `η [jk A − (j/k) D P Dᵀ] I = u` solved by faer's LU, and
/// `Y = uᵀ I`. At a frequency where the unscaled equation is well conditioned the two must
/// agree to a small multiple of the tolerance; the H-matrix builds read only a fraction of
/// the entries (counted). The structure (two bent lines over one ground, in air) radiates a
/// little, so passivity here is a real check: without the ground feeds' vertical currents
/// ([`rafter::mom::feedwall`]) one port's conductance came out negative (σ_max = 1 + 1.4e-4).
#[test]
fn compressed_full_wave_matches_the_dense_reference() {
    use rafter::hmatrix::reference::assemble_dense;
    use rafter::linalg::{CountingSource, DenseLu, DenseMatrix};
    use rafter::mom::mpie::{Interactions, ScalarPotential, VectorPotential};
    let text = r#"
name = "bend"
units = "mm"
[stackup]
layers = [ { name = "gnd", kind = "ground" }, { name = "air", kind = "dielectric", thickness = 0.6, eps_r = 1.0 } ]
[[net]]
name = "a"
shapes = [ { trace = { on = "air", width = 0.5, path = [[0, 0], [8, 0], [8, 6]] } } ]
[[net]]
name = "b"
shapes = [ { trace = { on = "air", width = 0.5, path = [[0, 1.2], [6.8, 1.2], [6.8, 6]] } } ]
[[port]]
name = "a1"
net = "a"
at = [-0.25, 0]
to = "gnd"
[[port]]
name = "a2"
net = "a"
at = [8, 6.25]
to = "gnd"
[[port]]
name = "b1"
net = "b"
at = [-0.25, 1.2]
to = "gnd"
[mesh]
max_cell = 0.25
[solve]
tolerance = 1e-5
"#;
    let layout = rafter::layout::parse_str(text, "bend.toml").unwrap();
    let s = setup(&layout).unwrap();
    let p = WaveProblem::new(&s.panels, &s.basis).unwrap();
    let f = 3e9;
    let tol = 1e-5;
    let r = solve(&s, &p, f, tol);
    // Dense reference.
    let green = s.green(f, 0.1 * tol).unwrap();
    let k = green.k();
    let inter = Interactions::new(&s.panels, green.as_ref(), tol);
    // The layout's ground is at z = 0: the ground feeds carry their vertical currents.
    let walls = rafter::mom::feedwall::FeedWalls::new(&s.basis, 0.0, k);
    let a = CountingSource::new(VectorPotential::with_walls(&inter, &s.basis, Some(&walls)));
    let ps = CountingSource::new(ScalarPotential::new(&inter));
    let (n, np) = (s.basis.functions.len(), s.panels.len());
    let opts = rafter::hmatrix::HOptions { tolerance: tol, ..Default::default() };
    let fpts: Vec<[f64; 3]> = s.basis.functions.iter().map(|f| [f.mid[0], f.mid[1], f.z]).collect();
    let ppts: Vec<[f64; 3]> = s.panels.iter().map(|p| p.center()).collect();
    rafter::hmatrix::HMatrix::build_symmetric(&a, &fpts, &opts, None).unwrap();
    rafter::hmatrix::HMatrix::build_symmetric(&ps, &ppts, &opts, None).unwrap();
    let (ca, cp) = (a.count() as f64 / (n * n) as f64, ps.count() as f64 / (np * np) as f64);
    println!(
        "{n} functions, {np} panels: entries requested {:.1} % (A), {:.1} % (P)",
        100.0 * ca,
        100.0 * cp
    );
    assert!(ca < 0.5 && cp < 0.5, "the builds read {ca} and {cp} of N²");
    let am = assemble_dense(a.inner()).unwrap();
    let pm = assemble_dense(ps.inner()).unwrap();
    let mut dp = vec![Vec::new(); n];
    for (m, fun) in s.basis.functions.iter().enumerate() {
        for h in fun.iter() {
            dp[m].push((h.panel, fun.charge(h)));
        }
    }
    let eta = s.medium.eta();
    let j = Complex64::new(0.0, 1.0);
    let z = DenseMatrix::from_fn(n, n, |i, jj| {
        let mut sp = Complex64::new(0.0, 0.0);
        for &(pi, di) in &dp[i] {
            for &(pj, dj) in &dp[jj] {
                sp += pm.get(pi, pj) * (di * dj);
            }
        }
        eta * (j * k * am.get(i, jj) - j / k * sp)
    });
    let lu = DenseLu::factor(&z).unwrap();
    let u: Vec<Vec<Complex64>> = s
        .basis
        .ports
        .iter()
        .map(|fs| {
            let mut v = vec![Complex64::new(0.0, 0.0); n];
            for &fi in fs {
                v[fi] = Complex64::new(s.basis.functions[fi].length, 0.0);
            }
            v
        })
        .collect();
    let scale = (0..3).map(|i| r.y.get(i, i).norm()).fold(0.0, f64::max);
    for (jj, uj) in u.iter().enumerate() {
        let mut x = uj.clone();
        lu.solve_in_place(&mut x).unwrap();
        for (i, ui) in u.iter().enumerate() {
            let yd: Complex64 = ui.iter().zip(&x).map(|(a, b)| a * b).sum();
            let diff = (r.y.get(i, jj) - yd).norm() / scale;
            println!("Y{i}{jj}: compressed {:.6e}, dense {:.6e}, diff {diff:.2e}", r.y.get(i, jj), yd);
            assert!(diff <= 10.0 * tol, "Y{i}{jj} differs by {diff}");
        }
    }
}

/// Conductor loss at low frequency: a copper strip (σ = 5.8e7 S/m, t = 17 µm, far thinner than
/// the skin depth at 1 kHz) between two ports to ground is a series resistor of Ohm's-law value
/// `R = L/(σ w t)` (the DC limit of the slab surface impedance, `Z_s → 1/(σt)`), plus a small
/// inductive reactance; the current loop closes through the ground — a loop that the
/// low-frequency rescaling must carry. Required: within 0.1 %.
#[test]
fn low_frequency_series_resistance_is_ohms_law() {
    let text = r#"
name = "copper-thru"
units = "mm"
[stackup]
layers = [
  { name = "gnd", kind = "ground" },
  { name = "lower", kind = "dielectric", thickness = 0.5, eps_r = 4.4 },
  { name = "upper", kind = "dielectric", thickness = 0.5, eps_r = 4.4 },
  { name = "top", kind = "ground" },
]
[[net]]
name = "a"
shapes = [ { rect = { on = "lower", min = [0, -0.2], max = [10, 0.2] } } ]
conductivity = 5.8e7
thickness = 0.017
[[port]]
name = "p1"
net = "a"
at = [0, 0]
to = "gnd"
[[port]]
name = "p2"
net = "a"
at = [10, 0]
to = "gnd"
[mesh]
max_cell = 0.2
[sweep]
start = 1e3
stop = 1e3
points = 1
"#;
    let layout = rafter::layout::parse_str(text, "copper.toml").unwrap();
    let run = rafter::sweep::run(&layout, false, None, &mut |_, _, _| {}).unwrap();
    let p = &run.points[0];
    assert!(p.reciprocity_error <= 1e-6 && p.largest_singular_value <= 1.0 + 1e-6);
    let z = -1.0 / p.y.get(1, 0);
    let r_dc = 10e-3 / (5.8e7 * 0.4e-3 * 17e-6);
    println!("series impedance {z:.6e} Ω, Ohm's law {r_dc:.6e} Ω");
    assert!((z.re - r_dc).abs() <= 1e-3 * r_dc, "{} vs {r_dc}", z.re);
    assert!(z.im > 0.0 && z.im < z.re, "inductive and small at 1 kHz: {z}");
}
