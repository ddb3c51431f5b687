//! Conductor loss: the surface impedance of a thin strip, and the Gram matrix that carries it
//! into the full-wave operator.
//!
//! A strip of conductivity `σ` and thickness `t`, carrying its current symmetrically on both
//! faces, has the internal impedance (Ω per square, the ratio of the tangential field at its
//! faces to the current per unit width)
//!
//! `Z_s = (k_c / 2σ) coth(k_c t / 2)`,  `k_c = (1 + j)/δ`,  `δ = 1/√(π f μ0 σ)`,
//!
//! from the one-dimensional diffusion of the field into a slab excited equally from both
//! faces (e.g. S. Ramo, J. R. Whinnery, T. Van Duzer, *Fields and Waves in Communication
//! Electronics*, 3rd ed., 1994, §5.x on the internal impedance of plane conductors — from
//! memory). It goes smoothly from the DC sheet resistance `1/(σt)` (`t ≪ δ`) to the skin-effect
//! value `(1 + j)/(2σδ)` of two faces in parallel (`t ≫ δ`). For a strip close to a ground
//! plane the current crowds on the face toward the ground, which this symmetric model does
//! not see: it underestimates the loss of microstrip at high frequency (by up to a factor of
//! about two) and is exact for a strip centred in stripline.
//!
//! The loss enters the field equation as `E_tan = Z_s J` on the conductor, i.e. the term
//! `Z_s T_mn`, `T_mn = ∫ f_m·f_n dA`, with `T` sparse (functions sharing a panel).

use crate::current::CurrentBasis;
use num_complex::Complex64;
use rafter_green::Panel;
use rafter_green::quadrature::panel_points;

/// Vacuum permeability μ0 (H/m, CODATA 2022).
pub const MU0: f64 = 1.256_637_061_27e-6;

/// Skin depth `δ = 1/√(π f μ0 σ)` (m) at `f` (Hz) for conductivity `sigma` (S/m).
pub fn skin_depth(f: f64, sigma: f64) -> f64 {
    1.0 / (std::f64::consts::PI * f * MU0 * sigma).sqrt()
}

/// `Z_s` (Ω) of a strip of conductivity `sigma` (S/m) and thickness `t` (m) at `f` (Hz), see
/// the module docs. `f = 0` gives the DC value `1/(σt)`.
pub fn surface_impedance(f: f64, sigma: f64, t: f64) -> Complex64 {
    if f <= 0.0 {
        return Complex64::new(1.0 / (sigma * t), 0.0);
    }
    let kc = Complex64::new(1.0, 1.0) / skin_depth(f, sigma);
    let x = kc * (t / 2.0);
    let coth = if x.norm() < 1e-4 {
        // coth x = 1/x + x/3 − x³/45 …
        1.0 / x + x / 3.0
    } else if x.re > 20.0 {
        Complex64::new(1.0, 0.0)
    } else {
        let e = (-2.0 * x).exp();
        (1.0 + e) / (1.0 - e)
    };
    kc / (2.0 * sigma) * coth
}

/// The Gram matrix `T_mn = Σ_p w_p ∫_p f_m·f_n dA` (m², times the weight) of a basis, with a
/// weight per panel (`weight[p]`, e.g. `Z_s/η` of the panel's net; panels of weight 0 are
/// skipped), as sparse triplets `(m, n, value)` including both orders of every pair.
pub fn gram(basis: &CurrentBasis, panels: &[Panel], weight: &[Complex64]) -> Vec<(usize, usize, Complex64)> {
    // Functions per panel.
    let mut on: Vec<Vec<(usize, usize)>> = vec![Vec::new(); panels.len()];
    for (n, f) in basis.functions.iter().enumerate() {
        for (h, half) in f.halves.iter().enumerate() {
            if let Some(half) = half {
                on[half.panel].push((n, h));
            }
        }
    }
    let mut out = Vec::new();
    let mut pts = Vec::new();
    for (p, funcs) in on.iter().enumerate() {
        let w = weight[p];
        if w == Complex64::new(0.0, 0.0) || funcs.is_empty() {
            continue;
        }
        pts.clear();
        // Degree 2 integrands: 2-point Gauss per side (rectangles), the (3, 2) collapsed rule
        // (triangles) integrate them exactly.
        panel_points(&panels[p], 3, 2, &mut pts);
        for &(m, hm) in funcs {
            let fm = &basis.functions[m];
            let hm = fm.halves[hm].as_ref().expect("listed half");
            for &(n, hn) in funcs {
                let fnn = &basis.functions[n];
                let hn = fnn.halves[hn].as_ref().expect("listed half");
                let v: f64 = pts
                    .iter()
                    .map(|&(r, wt)| {
                        let (a, b) = (fm.value(hm, [r[0], r[1]]), fnn.value(hn, [r[0], r[1]]));
                        wt * (a[0] * b[0] + a[1] * b[1])
                    })
                    .sum();
                out.push((m, n, w * v));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Limits of the slab formula: DC sheet resistance `1/(σt)` for `t ≪ δ`, two faces of
    /// skin-effect impedance in parallel `(1 + j)/(2σδ)` for `t ≫ δ` (Ramo, Whinnery & Van
    /// Duzer — from memory); copper σ = 5.8e7 S/m: δ(1 GHz) = 2.09 µm (a handbook value, e.g.
    /// Pozar, *Microwave Engineering*, Appendix F — from memory).
    #[test]
    fn limits_and_skin_depth() {
        let sigma = 5.8e7;
        assert!((skin_depth(1e9, sigma) - 2.0898e-6).abs() < 1e-9);
        let t = 17e-6;
        let dc = surface_impedance(1.0, sigma, t);
        assert!((dc.re - 1.0 / (sigma * t)).abs() < 1e-6 / (sigma * t), "{dc}");
        assert!(dc.im.abs() < 1e-6 * dc.re);
        let f = 100e9;
        let d = skin_depth(f, sigma);
        let hf = surface_impedance(f, sigma, t);
        let expect = 1.0 / (2.0 * sigma * d);
        assert!((hf.re - expect).abs() < 1e-6 * expect && (hf.im - expect).abs() < 1e-6 * expect, "{hf}");
        // Monotone rise of the resistance between the two.
        let mut last = 0.0;
        for f in [1e6, 1e7, 1e8, 1e9, 1e10] {
            let r = surface_impedance(f, sigma, t).re;
            assert!(r >= last - 1e-12);
            last = r;
        }
    }
}
