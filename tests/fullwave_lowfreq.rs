//! Experimental: low-frequency admittance vs capacitance.
use num_complex::Complex64;
use rafter::mom::wave::{WaveOptions, WaveProblem};

const PAIR: &str = r#"
name = "pair-over-ground"
units = "mm"
[stackup]
layers = [
  { name = "gnd", kind = "ground" },
  { name = "air", kind = "dielectric", thickness = 0.5, eps_r = 1.0 },
]
[[net]]
name = "a"
shapes = [ { trace = { on = "air", width = 0.5, path = [[0, 0], [10, 0]] } } ]
[[net]]
name = "b"
shapes = [ { trace = { on = "air", width = 0.5, path = [[0, 1], [10, 1]] } } ]
[[port]]
name = "pa"
net = "a"
at = [-0.25, 0]
to = "gnd"
[[port]]
name = "pb"
net = "b"
at = [-0.25, 1]
to = "gnd"
[mesh]
max_cell = 0.25
[solve]
tolerance = 1e-5
"#;

#[test]
fn low_frequency_admittance_is_capacitance() {
    let layout = rafter::layout::parse_str(PAIR, "pair.toml").unwrap();
    let setup = rafter::sweep::setup(&layout).unwrap();
    let green_s = rafter::extract::green_for(&layout).unwrap();
    let opts = rafter::mom::CapacitanceOptions::for_tolerance(1e-5);
    let cap = rafter::mom::capacitance(&setup.panels, &setup.net_of, 2, green_s.as_ref(), &opts, None, &mut |_, _, _| {})
        .unwrap();
    println!("panels {} functions {} C = {:?}", setup.panels.len(), setup.basis.functions.len(), cap.maxwell);
    let problem = WaveProblem::new(&setup.panels, &setup.basis).unwrap();
    for f in [1e6] {
        let green = setup.green(f, 1e-7).unwrap();
        let r = problem
            .solve(f, green.as_ref(), setup.medium.eta(), None, &WaveOptions::with_tolerance(1e-5), &mut |_| {})
            .unwrap();
        let w = 2.0 * std::f64::consts::PI * f;
        let y = &r.y;
        let c: Vec<Complex64> = (0..4).map(|i| y.get(i % 2, i / 2) / Complex64::new(0.0, w)).collect();
        println!(
            "f {f:e}: its {:?} res {:?} ell {:.3e} t {:?}\n  Y/jw = {:?}",
            r.iterations, r.residuals, r.balance_length, r.seconds, c
        );
    }
}

const STRIP: &str = r#"
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
max_cell = 0.2
[solve]
tolerance = 1e-4
"#;

#[test]
fn stripline_low_frequency() {
    let layout = rafter::layout::parse_str(STRIP, "strip.toml").unwrap();
    let setup = rafter::sweep::setup(&layout).unwrap();
    let green_s = rafter::extract::green_for(&layout).unwrap();
    let opts = rafter::mom::CapacitanceOptions::for_tolerance(1e-5);
    let cap = rafter::mom::capacitance(&setup.panels, &setup.net_of, 2, green_s.as_ref(), &opts, None, &mut |_, _, _| {})
        .unwrap();
    println!("panels {} functions {} C = {:?}", setup.panels.len(), setup.basis.functions.len(), cap.maxwell);
    let problem = WaveProblem::new(&setup.panels, &setup.basis).unwrap();
    for f in [1e6, 1e9, 5e9] {
        let t = std::time::Instant::now();
        let green = setup.green(f, 1e-6).unwrap();
        println!("green {:?}", t.elapsed());
        let r = problem
            .solve(f, green.as_ref(), setup.medium.eta(), None, &WaveOptions::with_tolerance(1e-4), &mut |_| {})
            .unwrap();
        let w = 2.0 * std::f64::consts::PI * f;
        let c: Vec<Complex64> = (0..4).map(|i| r.y.get(i % 2, i / 2) / Complex64::new(0.0, w)).collect();
        println!(
            "f {f:e}: its {:?} res {:?} comp {:.3} t {:?}\n  Y/jw = {:?}",
            r.iterations, r.residuals, r.compression, r.seconds, c
        );
    }
}
