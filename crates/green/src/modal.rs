//! Modal (eigenfunction) series of the potential of a stack-up closed by two ground planes.
//!
//! Between grounds at `z = 0` and `z = H`, with relative permittivity `ε(z)` constant in each
//! layer, separate the potential of a point charge in `z`: the modes solve the Sturm–Liouville
//! problem
//!
//! `−(ε ψ′)′ = κ² ε ψ`,  `ψ(0) = ψ(H) = 0`,  `ψ` and `ε ψ′` continuous at interfaces,
//!
//! with eigenvalues `0 < κ_1 < κ_2 < …` and eigenfunctions orthonormal in `∫ ε ψ_m ψ_n dz = δ_mn`.
//! Expanding `∇·(ε ε0 ∇φ) = −δ(r − r′)` in them gives, for a unit charge at `(0, z′)` and an
//! observer at horizontal distance `ρ` and height `z`,
//!
//! `2π ε0 φ(ρ; z, z′) = Σ_n ψ_n(z) ψ_n(z′) K0(κ_n ρ)`,
//!
//! the standard modal form of a parallel-plate region (for one dielectric it reduces to
//! `(2/(εH)) Σ sin(nπz/H) sin(nπz′/H) K0(nπρ/H)`, e.g. R. E. Collin, *Field Theory of Guided
//! Waves*, 2nd ed., IEEE Press, 1991, ch. 2 — from memory). The series converges like
//! `e^{−(κ_n − κ_1)ρ}`, so a few terms give any relative accuracy once `ρ` is comparable to `H`
//! — exactly where the image form of [`crate::layered`] loses relative accuracy, since the
//! potential there decays like `e^{−κ_1 ρ}` below the size of the extracted images.
//!
//! Inside a layer `ψ` is a sinusoid of wavenumber `κ` (ε cancels), so a shot from the lower
//! ground with `ψ = 0`, `ε ψ′ = 1` is propagated through each layer in closed form; the
//! eigenvalues are the roots of `ψ(H; κ)`, bracketed on a fine scan and bisected to rounding.
//! By Sturm's oscillation theorem the `n`-th eigenfunction has exactly `n − 1` zeros inside
//! `(0, H)`; every mode is checked against that count, so a root missed by the scan is an error,
//! not a silently wrong series.

use crate::GreenError;

/// The first modes of a grounded stack (see the module docs).
#[derive(Clone, Debug)]
pub(crate) struct Modes {
    /// `κ_n` (1/m), increasing.
    pub kappa: Vec<f64>,
    /// `ψ_n` at each node (layer boundary, bottom to top), normalised (`∫ ε ψ² dz = 1`).
    pub psi: Vec<Vec<f64>>,
}

/// `ψ` at every node and `∫ ε ψ² dz` for the shot with `ψ(0) = 0`, `ε ψ′(0) = 1`.
fn shoot(d: &[f64], eps: &[f64], kappa: f64) -> (Vec<f64>, f64) {
    let (mut p, mut q) = (0.0, 1.0);
    let mut nodes = Vec::with_capacity(d.len() + 1);
    nodes.push(p);
    let mut norm = 0.0;
    for (&h, &e) in d.iter().zip(eps) {
        // ψ(s) = a cos κs + b sin κs in the layer, s from its bottom.
        let (a, b) = (p, q / (e * kappa));
        let (sn, cs) = (kappa * h).sin_cos();
        let s2 = (2.0 * kappa * h).sin() / (4.0 * kappa);
        norm += e * (a * a * (0.5 * h + s2) + b * b * (0.5 * h - s2) + a * b * sn * sn / kappa);
        p = a * cs + b * sn;
        q = e * kappa * (b * cs - a * sn);
        nodes.push(p);
    }
    (nodes, norm)
}

/// Sign changes of `ψ` strictly inside `(0, H)` for the shot at `kappa`.
fn interior_zeros(d: &[f64], eps: &[f64], kappa: f64) -> usize {
    let total: f64 = d.iter().sum();
    let samples = ((kappa * total / std::f64::consts::PI).ceil() as usize + 1) * 64;
    let (mut p, mut q) = (0.0, 1.0);
    let mut values = Vec::with_capacity(samples + d.len());
    for (&h, &e) in d.iter().zip(eps) {
        let (a, b) = (p, q / (e * kappa));
        let n = ((samples as f64 * h / total).ceil() as usize).max(4);
        for i in 1..=n {
            let s = h * i as f64 / n as f64;
            values.push(a * (kappa * s).cos() + b * (kappa * s).sin());
        }
        let (sn, cs) = (kappa * h).sin_cos();
        p = a * cs + b * sn;
        q = e * kappa * (b * cs - a * sn);
    }
    // Leave out the last sample (the upper ground, where ψ vanishes).
    values.pop();
    let mut count = 0;
    let mut last = 0.0f64;
    for v in values {
        if v != 0.0 {
            if last != 0.0 && (v > 0.0) != (last > 0.0) {
                count += 1;
            }
            last = v;
        }
    }
    count
}

/// The modes of the stack `d` (thicknesses, m), `eps` (relative permittivities) between two
/// grounds, from the first up to and including the first one with `κ_n − κ_1 ≥ spread` (1/m).
/// Errors when a mode fails the oscillation check (a missed root).
pub(crate) fn modes(d: &[f64], eps: &[f64], spread: f64) -> Result<Modes, GreenError> {
    let total: f64 = d.iter().sum();
    let contrast =
        eps.iter().copied().fold(1.0, f64::max) / eps.iter().copied().fold(f64::INFINITY, f64::min);
    let top = |k: f64| *shoot(d, eps, k).0.last().unwrap_or(&0.0);
    // Roots of ψ(H; κ) are spaced about π/H apart; strong contrast can bring two closer, hence
    // the fine scan (and the oscillation check below).
    let step = std::f64::consts::PI / (64.0 * total * contrast.sqrt());
    let (mut kappa, mut psi) = (Vec::new(), Vec::new());
    let mut lo = 0.5 * step;
    let mut f_lo = top(lo);
    let limit = 1_000_000;
    for _ in 0..limit {
        let hi = lo + step;
        let f_hi = top(hi);
        if f_lo == 0.0 || (f_lo > 0.0) != (f_hi > 0.0) {
            // Bisect to rounding.
            let (mut a, mut b, mut fa) = (lo, hi, f_lo);
            for _ in 0..200 {
                let m = 0.5 * (a + b);
                if m <= a || m >= b {
                    break;
                }
                let fm = top(m);
                if (fm > 0.0) == (fa > 0.0) && fm != 0.0 {
                    a = m;
                    fa = fm;
                } else {
                    b = m;
                }
            }
            let k = 0.5 * (a + b);
            let n = kappa.len() + 1;
            let zeros = interior_zeros(d, eps, k);
            if zeros != n - 1 {
                return Err(GreenError::Geometry(format!(
                    "modal series between the grounds: mode {n} at κ = {k:e} 1/m has {zeros} interior \
                     zeros instead of {} (a root was missed; the layer permittivities differ too much)",
                    n - 1
                )));
            }
            let (nodes, norm) = shoot(d, eps, k);
            let scale = 1.0 / norm.sqrt();
            kappa.push(k);
            psi.push(nodes.iter().map(|v| v * scale).collect());
            if k - kappa[0] >= spread {
                return Ok(Modes { kappa, psi });
            }
        }
        lo = hi;
        f_lo = f_hi;
    }
    Err(GreenError::Geometry(format!(
        "modal series between the grounds: no modes found up to a spread of {spread:e} 1/m"
    )))
}

/// `e^x K0(x)` for `x > 0`: `puruspe` below 25, the asymptotic series above (Abramowitz &
/// Stegun, *Handbook of Mathematical Functions*, 1964, 9.7.2; its terms fall below `10⁻¹⁶`
/// of the first before they start to grow).
pub(crate) fn k0_scaled(x: f64) -> f64 {
    if x < 25.0 { puruspe::bessel::Kn(0, x) * x.exp() } else { asymptotic_k(0.0, x) }
}

/// `e^x K1(x)` for `x > 0` (as [`k0_scaled`]).
pub(crate) fn k1_scaled(x: f64) -> f64 {
    if x < 25.0 { puruspe::bessel::Kn(1, x) * x.exp() } else { asymptotic_k(4.0, x) }
}

/// `√(π/2x) [1 + (μ − 1)/(8x) + (μ − 1)(μ − 9)/(2!(8x)²) + …]`, `μ = 4ν²`.
fn asymptotic_k(mu: f64, x: f64) -> f64 {
    let mut term = 1.0;
    let mut sum = 1.0;
    for k in 1..40 {
        let odd = (2 * k - 1) as f64;
        term *= (mu - odd * odd) / (k as f64 * 8.0 * x);
        sum += term;
        if term.abs() < 1e-17 * sum.abs() {
            break;
        }
    }
    (std::f64::consts::PI / (2.0 * x)).sqrt() * sum
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// One dielectric: `κ_n = nπ/H` and `ψ_n = √(2/(εH)) sin(nπz/H)` (up to sign).
    #[test]
    fn homogeneous_modes_are_sines() {
        let (h, e) = (0.5e-3, 2.2);
        let d = [0.2e-3, 0.3e-3];
        let m = modes(&d, &[e, e], 9.5 * PI / h).unwrap();
        assert_eq!(m.kappa.len(), 11);
        for (n, (&k, psi)) in m.kappa.iter().zip(&m.psi).enumerate() {
            let want = (n + 1) as f64 * PI / h;
            assert!((k - want).abs() <= 1e-12 * want, "κ_{}: {k} vs {want}", n + 1);
            let amp = (2.0 / (e * h)).sqrt() * (want * 0.2e-3).sin();
            assert!((psi[1].abs() - amp.abs()).abs() <= 1e-9 * (2.0 / (e * h)).sqrt(), "ψ_{}", n + 1);
        }
    }

    /// Two dielectrics: the roots satisfy the transverse-resonance condition
    /// `ε1 cot(κ d1) + ε2 cot(κ d2) = 0` (continuity of `ψ` and `εψ′` between
    /// `sin(κz)` below and `A sin(κ(H − z))` above), and the modes are orthonormal.
    #[test]
    fn two_layer_roots_and_orthonormality() {
        let (d1, d2, e1, e2) = (0.2e-3, 0.35e-3, 4.2, 1.0);
        let m = modes(&[d1, d2], &[e1, e2], 30.0 / (d1 + d2)).unwrap();
        assert!(m.kappa.len() >= 6);
        for &k in &m.kappa {
            let f = e1 / (k * d1).tan() + e2 / (k * d2).tan();
            let scale = e1 / (k * d1).sin().powi(2) + e2 / (k * d2).sin().powi(2);
            assert!(f.abs() <= 1e-9 * scale, "κ = {k}: residual {f}");
        }
        // Orthonormality by a fine midpoint rule in each layer.
        let psi_at = |k: f64, z: f64| {
            let (nodes, norm) = shoot(&[d1, d2], &[e1, e2], k);
            let v = if z < d1 {
                (k * z).sin() / (e1 * k)
            } else {
                nodes[1] * (k * (d1 + d2 - z)).sin() / (k * d2).sin()
            };
            v / norm.sqrt()
        };
        let n = 20_000;
        for a in 0..4 {
            for b in 0..4 {
                let mut s = 0.0;
                for (z0, h, e) in [(0.0, d1, e1), (d1, d2, e2)] {
                    for i in 0..n {
                        let z = z0 + (i as f64 + 0.5) * h / n as f64;
                        s += e * psi_at(m.kappa[a], z) * psi_at(m.kappa[b], z) * h / n as f64;
                    }
                }
                let want = if a == b { 1.0 } else { 0.0 };
                assert!((s - want).abs() < 1e-8, "⟨ψ{a}, ψ{b}⟩ = {s}");
            }
        }
    }

    /// Scaled Bessel functions: the asymptotic branch against `puruspe` on both sides of the
    /// switch.
    #[test]
    fn scaled_bessel_functions_are_continuous() {
        for x in [20.0, 24.9, 25.0, 30.0] {
            let (k0, k1) = (puruspe::bessel::Kn(0, x) * x.exp(), puruspe::bessel::Kn(1, x) * x.exp());
            assert!((asymptotic_k(0.0, x) - k0).abs() <= 1e-12 * k0, "K0 at {x}");
            assert!((asymptotic_k(4.0, x) - k1).abs() <= 1e-12 * k1, "K1 at {x}");
        }
        assert!(k0_scaled(800.0).is_finite() && k1_scaled(800.0) > 0.0);
    }
}
