//! Full-wave Green's function of a homogeneous medium between two parallel perfectly
//! conducting planes (a stripline stack-up), for the mixed-potential method of moments.
//!
//! # The kernel
//!
//! Planes at `z = 0` and `z = b`, one homogeneous medium of wavenumber `k` between them (time
//! convention `e^{jωt}`; `Re k ≥ 0`, `Im k ≤ 0` for a lossy medium). With `ρ` the horizontal
//! distance between observer and source and `z`, `z′` their heights,
//!
//! `G(ρ, z, z′) = Σ_{n∈ℤ} [g(√(ρ² + (z − z′ − 2nb)²)) − g(√(ρ² + (z + z′ − 2nb)²))]`,
//! `g(R) = e^{−jkR}/(4πR)`  (1/m).
//!
//! In a PEC plane both the image of a horizontal current element and the image of a charge
//! change sign, so this one kernel is both the vector-potential kernel of horizontal currents
//! (`A_x = μ ∫ G J_x`) and the scalar-potential kernel of charges (`φ = (1/ε) ∫ G q_s`) of the
//! mixed-potential integral equation (K. A. Michalski and J. R. Mosig, "Multilayered media
//! Green's functions in integral equation formulations", IEEE Trans. Antennas Propag. 45(3),
//! 1997 — from memory; the image construction is that of any electromagnetics text).
//!
//! The image series converges only conditionally for `k ≠ 0` (pairs of images fall off like
//! `e^{−j2kbn}/n`), so it is not summed as it stands. Two rapidly convergent forms are used.
//!
//! # Modal form (far from the source)
//!
//! Expanding in the eigenfunctions `sin(mπz/b)` of the plate region (the `m = 0` term of the
//! image lattice's Fourier series cancels between the two image families),
//!
//! `G = (1/(πb)) Σ_{m≥1} sin(mπz/b) sin(mπz′/b) K0(κ_m ρ)`,  `κ_m = √((mπ/b)² − k²)`,
//! `Re κ_m > 0`
//!
//! (e.g. R. E. Collin, *Field Theory of Guided Waves*, 2nd ed., IEEE Press, 1991 — from
//! memory; for `k = 0` it is the modal series of [`crate::homogeneous::TwoGrounds`], whose
//! normalisation it shares). Below the first cutoff, `Re(kb) < π`, every `κ_m` has a positive
//! real part and the terms fall off like `e^{−mπρ/b}`: used from `ρ ≥ b/2` on, where 30 or
//! fewer terms reach rounding. The form diverges like a logarithm (`K0`) at `ρ → 0`.
//!
//! # Ewald's method (near the source)
//!
//! With `e^{−jkR}/R = (2/√π) ∫ exp(−R²s² + k²/(4s²)) ds` (path from `0` to `∞`; P. P. Ewald,
//! Ann. Phys. 64, 1921) the integral is split at `s = E`. The part over `s ≥ E` decays like
//! `e^{−R²E²}` and is summed over the images in space,
//!
//! `S(R) = (1/(4π)) (2/√π) ∫_E^∞ exp(−R²s² + k²/(4s²)) ds`;
//!
//! the part over `s ≤ E` is summed over the images by Poisson's formula, which turns the odd
//! `2b`-periodic image lattice into modes whose terms decay like `e^{−(mπ/b)²/(4E²)}`:
//!
//! `(1/(πb)) Σ_{m≥1} sin(mπz/b) sin(mπz′/b) I_m(ρ)`,
//! `I_m(ρ) = ∫_0^E exp(−ρ²s² − κ_m²/(4s²)) ds/s = ½ Σ_{p≥0} ((−ρ²E²)^p/p!) E_{p+1}(κ_m²/(4E²))`
//!
//! (`E_n` the exponential integral; `I_m → K0(κ_m ρ)` as `E → ∞`). This is the Ewald
//! representation of the Green's function of a linear array of point sources (F. Capolino,
//! D. R. Wilton and W. A. Johnson, "Efficient computation of the 3D Green's function for the
//! Helmholtz operator for a linear array of point sources using the Ewald method",
//! J. Comput. Phys. 223, 2007 — from memory), applied to the two image arrays at once. With the
//! classical split `E = √π/(2b)` (square root of π over the period) three modes and the
//! images with `|n| ≤ 6` reach rounding for `ρ ≤ 2b`; the factor `e^{k²/(4s²)} ≤ e^{Re(kb)²/π}`
//! stays below 17 in the accepted range, so the two parts never cancel by more than a digit.
//!
//! `S` is evaluated by Gauss–Laguerre quadrature after `s² = E²(1 + t/(RE)²)`, which turns it
//! into `(E/(4π))(2/√π) e^{−R²E²}/(2R²E²) ∫_0^∞ e^{−t} exp(c/(1 + t/(RE)²)) (1 + t/(RE)²)^{−½} dt`,
//! `c = k²/(4E²)`, smooth for `RE ≥ 2`. Its complement `h = g − S` (the integral over `s ≤ E`)
//! is an entire function of `R²` (the `1/R` singularity and the cone `R` of `e^{−jkR}/R` both
//! cancel): `h = (E/(4π))(2/√π) Σ_p (−R²E²)^p j_p/p!` with
//! `j_p = (e^c + 2c j_{p−1})/(2p + 1)` (integration by parts) and
//! `j_0 = e^c − √π u erfc(u)`, `u = jk/(2E)` (the closed form of the Ewald split with the
//! complementary error function, e.g. Capolino et al., above), used for `RE < 2`.
//!
//! # The smooth part
//!
//! [`ParallelPlate::smooth`] is `G` minus the three terms that are singular on a conductor face
//! for some `z, z′ ∈ [0, b]`: `g(R₀)` (direct, `z − z′`), `−g(R(z + z′))` (image in `z = 0`) and
//! `−g(R(2b − z − z′))` (image in `z = b`). Every remaining image lies at least `b` away, so the
//! remainder is analytic in `ρ²`. Ewald's form gives it directly: replace `S` by `S − g = −h`
//! for exactly those three images (a series in `R²`, finite at `R = 0`). Beyond `ρ = b` it is the
//! modal series minus the three terms (the terms are then below `3/(4πb)`, so the subtraction
//! costs no accuracy relative to `1/(4πb)`).
//!
//! # Accuracy and domain
//!
//! Accepted: `0 < b < ∞`, `Re k ≥ 0`, `Im k ≤ 0`, `Re(kb) < 0.95π` ([`MAX_RE_KB`]; at
//! `Re(kb) = π` the first mode stops being evanescent and the modal form used here no longer
//! applies) and `|Im(kb)| ≤ π` ([`MAX_IM_KB`], a loss far beyond any circuit-board dielectric;
//! beyond it the series in `R²` above loses digits to the growth of `e^{|Im k|R}`). In that
//! range [`ParallelPlate::total`] is accurate to about `10⁻¹¹` relative (measured against the
//! modal series; tested at `10⁻⁹`), also far out where `G ~ e^{−κ₁ρ}` is tiny (the modal terms
//! are formed as `exp(ln(c_m e^{x}K0(x)) − x)`, without underflow until the result itself is
//! below `10⁻³⁰⁰`), and [`ParallelPlate::smooth`] to about `10⁻¹³` of `1/(4πb)`. Near
//! `ρ < b/2` the total is the smooth part plus the three terms (the direct term and the nearer
//! image combined without cancellation). When both heights hug one plane, `G` there is far
//! below `1/(4πb)` and the smooth part's absolute error (about `10⁻¹⁵/(4πb)`) shows: the modal
//! series is then used down to `ρ = b/4`, and below `b/4` the relative error grows to about
//! `10⁻⁹` for heights `10⁻⁴ b` from the plane (`10⁻¹¹` at `10⁻³ b`).
//!
//! # Special functions
//!
//! `K0`, `K1` of complex argument (`Re x > 0`): ascending series for `|x| ≤ 2` (Abramowitz &
//! Stegun, *Handbook of Mathematical Functions*, 1964, 9.6.11, 9.6.13), the trapezoidal rule on
//! `e^x K_ν(x) = ∫_0^∞ e^{−x(cosh t − 1)} cosh(νt) dt` for `2 < |x| < 25` (step `0.06`: the
//! integrand is analytic in a strip of half-width `π/2 − |arg x| ≥ π/4`, where the rule
//! converges geometrically), and the asymptotic series (A&S 9.7.2) beyond. `E_n` (A&S 5.1.11,
//! 5.1.14, 5.1.22) by the series and upward recurrence for `|x| < 1.5`, else by the continued
//! fraction; `erf` by its Maclaurin series (A&S 7.1.5), needed once per [`ParallelPlate`].
//!
//! # Tables
//!
//! [`PlatePair`] tabulates, for one pair of heights, the smooth part as a function of `ρ²` on
//! `[0, (2b)²]` and `F(ρ) = √ρ e^{κ₁ρ − c₀} G(ρ)` on `[b/4, ρ_max]` (`c₀` a constant making
//! `|F(b/4)| = 1`), both with the adaptive cubic Hermite tables of `crate::hermite`, real and
//! imaginary parts apart. `F` is nearly constant far out (`√ρ K0(κ₁ρ) e^{κ₁ρ}` is a series in
//! `1/ρ` and the higher modes die out), so the stretch `σ = (ρ − b/4)/(ρ − b/4 + b)` of the
//! tables fits it, and the factor `e^{c₀ − κ₁ρ}/√ρ` restores `G` with its relative accuracy
//! (with little loss, `Im κ₁ (ρ_max − b/4) ≤ 1`, the table keeps the phase of `e^{κ₁ρ}` and only
//! `e^{c₀ − Re κ₁ ρ}/√ρ` is restored). Below `b/4`, where the far table starts, `R₀ G` is
//! tabulated in `ρ` (`R₀ = √(ρ² + (z − z′)²)`, the distance to the source: `R₀ G` is smooth,
//! `1/(4π)` at the source), so that `G` there costs a lookup and a division.

use crate::hermite::HermiteTable;
use num_complex::Complex64;
use std::f64::consts::PI;
use std::sync::OnceLock;

/// Largest accepted `Re(kb)` (exclusive): 0.95π, below the first cutoff `kb = π` of the
/// parallel-plate modes `sin(mπz/b)`.
pub const MAX_RE_KB: f64 = 0.95 * PI;
/// Largest accepted `|Im(kb)|` (inclusive): π (an attenuation of `e^{−π}` over one spacing).
pub const MAX_IM_KB: f64 = PI;
/// Largest number of nodes of one table before [`PlatePair::new`] gives up.
pub const MAX_TABLE_NODES: usize = 20_000;

/// `ρ/b` up to which [`ParallelPlate::smooth`] uses Ewald's method (the modal series minus the
/// three singular terms beyond).
const EWALD_SMOOTH_TO: f64 = 1.0;
/// `ρ/b` from which [`ParallelPlate::total`] uses the modal series.
const MODAL_FROM: f64 = 0.5;
/// Distance to a plane (over `b`) below which two heights count as hugging it.
const NEAR_PLANE: f64 = 0.05;
/// `ρ/b` where the far (modal) table of a [`PlatePair`] starts (and where [`ParallelPlate::total`]
/// takes the modal series for heights hugging one plane).
const FAR_TABLE_FROM: f64 = 0.25;
/// `ρ/b` where the smooth table of a [`PlatePair`] ends.
const SMOOTH_TABLE_TO: f64 = 2.0;
/// Terms of the power series in `ρ²E²` (spectral part) and in `R²E²` (the function `h`).
const SERIES_TERMS: usize = 64;
/// `(RE)²` below which `h` is summed as a series and `S = g − h`; above, `S` by quadrature.
const SERIES_X2: f64 = 4.0;
/// `(RE)²` beyond which an image's spatial part is negligible (`e^{−49}` times at most 17).
const IMAGE_X2: f64 = 49.0;
/// `Re(κ_m²/(4E²))` beyond which a mode's spectral part is negligible.
const SPECTRAL_CUT: f64 = 46.0;
/// Gauss–Laguerre nodes for `S`.
const LAGUERRE_N: usize = 40;
/// Largest number of modal terms.
const MAX_MODES: usize = 200_000;
/// Euler's constant γ.
const EULER_GAMMA: f64 = 0.577_215_664_901_532_9;

/// Why a [`ParallelPlate`] or [`PlatePair`] could not be built.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum ParallelPlateError {
    /// The plate spacing is not finite and positive.
    #[error("plate spacing b must be finite and > 0 (got {0} m)")]
    BadSpacing(f64),
    /// The wavenumber is not finite, or has `Re k < 0` or `Im k > 0`.
    #[error(
        "wavenumber k = {re} {im:+}j 1/m: both parts must be finite, with Re k ≥ 0 and Im k ≤ 0 \
         (time convention e^{{jωt}}: loss makes Im k negative)"
    )]
    BadWavenumber {
        /// `Re k` (1/m).
        re: f64,
        /// `Im k` (1/m).
        im: f64,
    },
    /// `Re(kb)` at or above [`MAX_RE_KB`].
    #[error(
        "Re(k b) = {re_kb:.6} is at or above 0.95π = {limit:.6}: the parallel-plate Green's \
         function here is built for frequencies below the first cutoff (kb = π, where the first \
         mode sin(πz/b) starts to propagate and its modal term no longer decays); lower the \
         frequency or the plate spacing"
    )]
    AboveCutoff {
        /// `Re(kb)`.
        re_kb: f64,
        /// [`MAX_RE_KB`].
        limit: f64,
    },
    /// `|Im(kb)|` above [`MAX_IM_KB`].
    #[error(
        "|Im(k b)| = {im_kb:.6} exceeds π = {limit:.6}: a loss this high (attenuation beyond e^(−π) \
         per plate spacing) is outside the validated range of the near-field series"
    )]
    TooLossy {
        /// `|Im(kb)|`.
        im_kb: f64,
        /// [`MAX_IM_KB`].
        limit: f64,
    },
    /// A height of a [`PlatePair`] not strictly between the plates.
    #[error("height {name} = {value} m must lie strictly between the plates, in (0, {b}) m")]
    BadHeight {
        /// Which height (`"z"` or `"zp"`).
        name: &'static str,
        /// The height given (m).
        value: f64,
        /// The plate spacing (m).
        b: f64,
    },
    /// `rho_max` negative or not finite.
    #[error("largest horizontal distance rho_max must be finite and ≥ 0 (got {0} m)")]
    BadRange(f64),
    /// Table tolerance outside `[1e-11, 0.1]`.
    #[error(
        "table tolerance must lie in [1e-11, 0.1] (got {0}); the direct evaluations the tables \
         are checked against are good to about 1e-12"
    )]
    BadTolerance(f64),
    /// A table would need more than [`MAX_TABLE_NODES`] nodes.
    #[error(
        "the {what} table of the parallel-plate Green's function needs more than {max} nodes for \
         tolerance {tol:e} (up to ρ = {upto} m); loosen the tolerance or shorten rho_max"
    )]
    TableTooLarge {
        /// `"smooth"` or `"far"`.
        what: &'static str,
        /// [`MAX_TABLE_NODES`].
        max: usize,
        /// The tolerance asked for.
        tol: f64,
        /// End of the table (m).
        upto: f64,
    },
}

/// Gauss–Laguerre rule (weight `e^{−t}` on `[0, ∞)`), `LAGUERRE_N` nodes.
fn laguerre() -> &'static (Vec<f64>, Vec<f64>) {
    static RULE: OnceLock<(Vec<f64>, Vec<f64>)> = OnceLock::new();
    RULE.get_or_init(|| gauss_laguerre(LAGUERRE_N))
}

/// The Green's function between two parallel PEC planes `z = 0` and `z = b` (see the module
/// docs): [`total`](Self::total) is `G` itself, [`smooth`](Self::smooth) is `G` minus the three
/// face-singular terms ([`singular_terms`](Self::singular_terms)). Units: lengths in metres,
/// `k` in 1/m, `G` in 1/m.
#[derive(Clone, Debug)]
pub struct ParallelPlate {
    b: f64,
    k: Complex64,
    /// Ewald's split `E = √π/(2b)` (1/m).
    e: f64,
    /// `c = k²/(4E²)`.
    c: Complex64,
    /// Per spectral mode `m = 1, 2, …`: coefficients of `I_m` as a polynomial in `y = −ρ²E²`,
    /// `E_{p+1}(x_m)/(2 p!)`.
    spec_val: Vec<Vec<Complex64>>,
    /// Per spectral mode: coefficients of `−dI_m/du / E²` in `y`, `E_{p+2}(x_m)/(2 p!)`.
    spec_der: Vec<Vec<Complex64>>,
    /// `h(R) / P = Σ_p hval_p (R²E²)^p` with `P = E/(2π^{3/2})`: `hval_p = (−1)^p j_p/p!`.
    h_val: Vec<Complex64>,
    /// `dh/d(R²) / (P E²) = Σ_p hder_p (R²E²)^p`: `hder_p = (p + 1) hval_{p+1}`.
    h_der: Vec<Complex64>,
}

impl ParallelPlate {
    /// Plates `b` metres apart, medium of wavenumber `k` (1/m; e.g. from
    /// [`crate::dynamic::wavenumber`]). Errors: `b` not finite and positive
    /// ([`ParallelPlateError::BadSpacing`]), `k` not finite or with `Re k < 0` or `Im k > 0`
    /// ([`ParallelPlateError::BadWavenumber`]), `Re(kb) ≥ 0.95π`
    /// ([`ParallelPlateError::AboveCutoff`]), `|Im(kb)| > π` ([`ParallelPlateError::TooLossy`]).
    pub fn new(b: f64, k: Complex64) -> Result<Self, ParallelPlateError> {
        if !(b.is_finite() && b > 0.0) {
            return Err(ParallelPlateError::BadSpacing(b));
        }
        if !(k.re.is_finite() && k.im.is_finite()) || k.re < 0.0 || k.im > 0.0 {
            return Err(ParallelPlateError::BadWavenumber { re: k.re, im: k.im });
        }
        let kb = k * b;
        if kb.re >= MAX_RE_KB {
            return Err(ParallelPlateError::AboveCutoff { re_kb: kb.re, limit: MAX_RE_KB });
        }
        if -kb.im > MAX_IM_KB {
            return Err(ParallelPlateError::TooLossy { im_kb: -kb.im, limit: MAX_IM_KB });
        }
        let e = PI.sqrt() / (2.0 * b);
        let c = k * k / (4.0 * e * e);
        let u = Complex64::new(0.0, 1.0) * k / (2.0 * e);
        // j_p = J_p / E^{2p+1}, J_p = ∫ s^{2p} e^{k²/(4s²)} ds over the part s ≤ E of the path.
        let ec = c.exp();
        let mut j = ec - PI.sqrt() * u * erfc(u);
        let mut fact = 1.0;
        let mut h_val = Vec::with_capacity(SERIES_TERMS + 1);
        for p in 0..=SERIES_TERMS {
            if p > 0 {
                j = (ec + 2.0 * c * j) / (2 * p + 1) as f64;
                fact *= p as f64;
            }
            let sign = if p % 2 == 0 { 1.0 } else { -1.0 };
            h_val.push(j * (sign / fact));
        }
        let h_der = (0..SERIES_TERMS).map(|p| h_val[p + 1] * (p + 1) as f64).collect();
        // Spectral modes until e^{−x_m} is negligible.
        let (mut spec_val, mut spec_der) = (Vec::new(), Vec::new());
        for m in 1.. {
            let x = Complex64::new((m as f64 * PI / b).powi(2) / (4.0 * e * e), 0.0) - c;
            if x.re > SPECTRAL_CUT {
                break;
            }
            let en = expint_all(x, SERIES_TERMS + 2);
            let mut fact = 1.0;
            let mut val = Vec::with_capacity(SERIES_TERMS + 1);
            let mut der = Vec::with_capacity(SERIES_TERMS + 1);
            for p in 0..=SERIES_TERMS {
                if p > 0 {
                    fact *= p as f64;
                }
                val.push(en[p] / (2.0 * fact));
                der.push(en[p + 1] / (2.0 * fact));
            }
            spec_val.push(val);
            spec_der.push(der);
        }
        Ok(Self { b, k, e, c, spec_val, spec_der, h_val, h_der })
    }

    /// Plate spacing `b` (m).
    pub fn spacing(&self) -> f64 {
        self.b
    }

    /// Wavenumber `k` (1/m).
    pub fn wavenumber(&self) -> Complex64 {
        self.k
    }

    /// `κ_m = √((mπ/b)² − k²)` (1/m), the principal root (`Re κ_m > 0`): mode `m` (≥ 1) decays
    /// like `e^{−κ_m ρ}`.
    pub fn mode_wavenumber(&self, m: usize) -> Complex64 {
        (Complex64::new((m as f64 * PI / self.b).powi(2), 0.0) - self.k * self.k).sqrt()
    }

    /// Heights and signs of the three face-singular terms for a source at `zp`: `(z′, +1)`
    /// (direct), `(−z′, −1)` (image in `z = 0`), `(2b − z′, −1)` (image in `z = b`). Each term
    /// is `sign · e^{−jkR}/(4πR)` with `R` the distance from the observer to a point source at
    /// that height, so a panel integral of it is a free-space Helmholtz integral over the panel
    /// moved to that height (e.g. [`crate::dynamic`]).
    pub fn singular_images(&self, zp: f64) -> [(f64, f64); 3] {
        [(zp, 1.0), (-zp, -1.0), (2.0 * self.b - zp, -1.0)]
    }

    /// The three face-singular terms `g(R₀) − g(R(z + z′)) − g(R(2b − z − z′))` (1/m),
    /// `g(R) = e^{−jkR}/(4πR)`, `R(d) = √(ρ² + d²)`, `R₀ = R(z − z′)`: `G` is this plus
    /// [`smooth`](Self::smooth). The direct term and the nearer image are combined without
    /// cancellation. Infinite at `ρ = 0`, `z = z′`.
    pub fn singular_terms(&self, rho: f64, z: f64, zp: f64) -> Complex64 {
        self.near_value(rho * rho, z, zp)
    }

    /// `G(ρ, z, z′)` (1/m) for `ρ ≥ 0` and `z, z′ ∈ [0, b]`, relative accuracy about `10⁻¹¹`
    /// (`10⁻⁹` checked by the tests) wherever `|G| ≥ 10⁻³⁰⁰` (but see the module docs for two
    /// heights within `10⁻³ b` of one plane); zero when either height is on a plane; infinite at
    /// `ρ = 0`, `z = z′`; NaN for heights outside `[0, b]` or a NaN input. Modal series for
    /// `ρ ≥ b/2` (`b/4` for heights hugging one plane), smooth part plus the three singular
    /// terms below (see the module docs).
    pub fn total(&self, rho: f64, z: f64, zp: f64) -> Complex64 {
        self.total_with_slope(rho, z, zp).0
    }

    /// `G − singular_terms` (1/m), analytic in `ρ²` (see the module docs), for `ρ ≥ 0` and
    /// `z, z′ ∈ [0, b]`; absolute accuracy about `10⁻¹³/(4πb)` (`10⁻⁹/(4πb)` checked by the
    /// tests for `ρ ≤ 2b`); NaN for heights outside `[0, b]`. Ewald's method for `ρ ≤ b`,
    /// the modal series minus the three terms beyond.
    pub fn smooth(&self, rho: f64, z: f64, zp: f64) -> Complex64 {
        self.smooth_with_slope(rho, z, zp).0
    }

    fn heights_ok(&self, z: f64, zp: f64) -> bool {
        (0.0..=self.b).contains(&z) && (0.0..=self.b).contains(&zp)
    }

    /// `(G, dG/dρ)`.
    fn total_with_slope(&self, rho: f64, z: f64, zp: f64) -> (Complex64, Complex64) {
        let nan = Complex64::new(f64::NAN, f64::NAN);
        if !self.heights_ok(z, zp) || rho.is_nan() {
            return (nan, nan);
        }
        let zero = Complex64::new(0.0, 0.0);
        if z == 0.0 || zp == 0.0 || z == self.b || zp == self.b {
            return (zero, zero);
        }
        let rho = rho.abs();
        if rho >= self.modal_from(z, zp) {
            self.modal(rho, z, zp, zero)
        } else {
            let u = rho * rho;
            let (s, ds) = self.ewald(u, z, zp);
            let (t, dt) = self.near_terms(u, z, zp);
            (s + t, (ds + dt) * (2.0 * rho))
        }
    }

    /// `(smooth, d smooth/d(ρ²))`.
    fn smooth_with_slope(&self, rho: f64, z: f64, zp: f64) -> (Complex64, Complex64) {
        let nan = Complex64::new(f64::NAN, f64::NAN);
        if !self.heights_ok(z, zp) || rho.is_nan() {
            return (nan, nan);
        }
        let rho = rho.abs();
        let u = rho * rho;
        if rho <= EWALD_SMOOTH_TO * self.b {
            self.ewald(u, z, zp)
        } else {
            let (g, dg) = self.modal(rho, z, zp, Complex64::new(0.0, 0.0));
            let (t, dt) = self.near_terms(u, z, zp);
            (g - t, dg / (2.0 * rho) - dt)
        }
    }

    /// `g(R)` and `dg/d(R²)` from `R²`.
    fn free(&self, r2: f64) -> (Complex64, Complex64) {
        let r = r2.sqrt();
        let jkr = Complex64::new(0.0, 1.0) * self.k * r;
        let ph = (-jkr).exp();
        let g = ph / (4.0 * PI * r);
        (g, -(1.0 + jkr) * ph / (8.0 * PI * r * r2))
    }

    /// `g(R_a) − g(R_b)` for `R_b² = R_a² + diff2`, `diff2 ≥ 0`, without cancellation:
    /// `e^{−jkR_a} d (1 + jkR_a E(jkd)) / (4π R_a R_b)`, `d = R_b − R_a`, `E(x) = (1 − e^{−x})/x`.
    fn free_difference(&self, ra2: f64, diff2: f64) -> Complex64 {
        let (ra, rb) = (ra2.sqrt(), (ra2 + diff2).sqrt());
        let d = diff2 / (ra + rb);
        let jk = Complex64::new(0.0, 1.0) * self.k;
        (-jk * ra).exp() * d * (1.0 + jk * ra * exp_rel(jk * d)) / (4.0 * PI * ra * rb)
    }

    /// The three singular terms and their derivative with respect to `u = ρ²`.
    fn near_terms(&self, u: f64, z: f64, zp: f64) -> (Complex64, Complex64) {
        let b = self.b;
        let (_, dg0) = self.free(u + (z - zp).powi(2));
        let (_, dg1) = self.free(u + (z + zp).powi(2));
        let (_, dg2) = self.free(u + (2.0 * b - z - zp).powi(2));
        (self.near_value(u, z, zp), dg0 - dg1 - dg2)
    }

    /// The three singular terms at `u = ρ²`: the direct term minus the nearer image in the
    /// cancellation-free form, minus the farther image.
    fn near_value(&self, u: f64, z: f64, zp: f64) -> Complex64 {
        let b = self.b;
        let d0 = u + (z - zp).powi(2);
        let value = if z + zp <= b {
            self.free_difference(d0, 4.0 * z * zp) - self.free(u + (2.0 * b - z - zp).powi(2)).0
        } else {
            self.free_difference(d0, 4.0 * (b - z) * (b - zp)) - self.free(u + (z + zp).powi(2)).0
        };
        if value.is_nan() {
            // R₀ = 0: the direct term is infinite.
            self.free(d0).0
        } else {
            value
        }
    }

    /// `ρ` from which [`total`](Self::total) takes the modal series: `b/2`, or `b/4` when both
    /// heights lie within `b/20` of the same plane (there `G` is far below `1/(4πb)` and the
    /// smooth part's absolute error would show).
    fn modal_from(&self, z: f64, zp: f64) -> f64 {
        let b = self.b;
        let hugging = z.max(zp) < NEAR_PLANE * b || z.min(zp) > (1.0 - NEAR_PLANE) * b;
        if hugging { FAR_TABLE_FROM * b } else { MODAL_FROM * b }
    }

    /// `h(R) = g(R) − S(R)` and `dh/d(R²)` (entire in `R²`).
    fn h_fn(&self, r2: f64) -> (Complex64, Complex64) {
        let x2 = r2 * self.e * self.e;
        if x2 < SERIES_X2 {
            self.h_series(x2)
        } else {
            let (g, dg) = self.free(r2);
            let (s, ds) = self.s_quadrature(x2);
            (g - s, dg - ds)
        }
    }

    /// `S(R)` and `dS/d(R²)`.
    fn s_fn(&self, r2: f64) -> (Complex64, Complex64) {
        let x2 = r2 * self.e * self.e;
        if x2 < SERIES_X2 {
            let (g, dg) = self.free(r2);
            let (h, dh) = self.h_series(x2);
            (g - h, dg - dh)
        } else {
            self.s_quadrature(x2)
        }
    }

    /// The series for `h` at `x² = R²E²`.
    fn h_series(&self, x2: f64) -> (Complex64, Complex64) {
        let pre = self.e / (2.0 * PI.powf(1.5));
        (horner(&self.h_val, x2) * pre, horner(&self.h_der, x2) * (pre * self.e * self.e))
    }

    /// `S` and `dS/d(R²)` by Gauss–Laguerre quadrature at `x² = R²E² ≥ 4`.
    fn s_quadrature(&self, x2: f64) -> (Complex64, Complex64) {
        let (t, w) = laguerre();
        let (mut s0, mut s1) = (Complex64::new(0.0, 0.0), Complex64::new(0.0, 0.0));
        for (&ti, &wi) in t.iter().zip(w) {
            let q = 1.0 + ti / x2;
            let f = (self.c / q).exp() * (wi / q.sqrt());
            s0 += f;
            s1 += f * q;
        }
        let pre = self.e / (2.0 * PI.powf(1.5)) * (-x2).exp() / (2.0 * x2);
        (s0 * pre, -s1 * (pre * self.e * self.e))
    }

    /// The smooth part by Ewald's method and its derivative with respect to `u = ρ²`.
    fn ewald(&self, u: f64, z: f64, zp: f64) -> (Complex64, Complex64) {
        let (b, e) = (self.b, self.e);
        let y = -u * e * e;
        let (mut s, mut ds) = (Complex64::new(0.0, 0.0), Complex64::new(0.0, 0.0));
        for (m, (val, der)) in self.spec_val.iter().zip(&self.spec_der).enumerate() {
            let mm = (m + 1) as f64 * PI / b;
            let amp = (mm * z).sin() * (mm * zp).sin() / (PI * b);
            s += horner(val, y) * amp;
            ds -= horner(der, y) * (amp * e * e);
        }
        // Images: +1 at z′ + 2nb, −1 at −z′ + 2nb. The three face-singular ones enter as −h.
        let reach = (IMAGE_X2 / (e * e) - u).max(0.0).sqrt() + b;
        let n_max = (reach / (2.0 * b)).ceil() as i64 + 1;
        for n in -n_max..=n_max {
            let shift = 2.0 * n as f64 * b;
            for (delta, sign, near) in
                [(z - zp - shift, 1.0, n == 0), (z + zp - shift, -1.0, n == 0 || n == 1)]
            {
                let r2 = u + delta * delta;
                if near {
                    let (h, dh) = self.h_fn(r2);
                    s -= h * sign;
                    ds -= dh * sign;
                } else if r2 * e * e < IMAGE_X2 {
                    let (v, dv) = self.s_fn(r2);
                    s += v * sign;
                    ds += dv * sign;
                }
            }
        }
        (s, ds)
    }

    /// The modal series `Σ c_m K0(κ_m ρ) e^{offset}` and its derivative in `ρ` (the offset held
    /// fixed), `c_m = sin(mπz/b) sin(mπz′/b)/(πb)`; terms formed as
    /// `exp(ln(c_m e^{x} K0(x)) − x + offset)`, `x = κ_m ρ`, so nothing underflows early.
    fn modal(&self, rho: f64, z: f64, zp: f64, offset: Complex64) -> (Complex64, Complex64) {
        let b = self.b;
        let (mut s, mut ds) = (Complex64::new(0.0, 0.0), Complex64::new(0.0, 0.0));
        // Bounds on |sin(mπz/b)|: min(1, mπ·distance to the nearer plane / b).
        let (dz, dzp) = (z.min(b - z), zp.min(b - zp));
        for m in 1..=MAX_MODES {
            let mm = m as f64 * PI / b;
            let kappa = self.mode_wavenumber(m);
            let x = kappa * rho;
            // Stop once this term's bound is negligible and the terms decrease geometrically.
            let amp_bound = (mm * dz).min(1.0) * (mm * dzp).min(1.0) / (PI * b);
            let bound = (offset.re - x.re).exp() * 1.3 * (PI / (2.0 * x.norm())).sqrt() * amp_bound;
            if m > 1 && mm * rho > 10.0 && bound <= (1e-18 * s.norm()).max(1e-320) {
                break;
            }
            let amp = (mm * z).sin() * (mm * zp).sin() / (PI * b);
            if amp == 0.0 {
                continue;
            }
            let (k0, k1) = bessel_k01_scaled(x);
            let ph = offset - x;
            let t0 = (k0 * amp).ln() + ph;
            let t1 = (k1 * (amp * kappa)).ln() + ph;
            s += t0.exp();
            ds -= t1.exp();
        }
        (s, ds)
    }
}

/// `Σ_p a_p y^p` by Horner's rule.
#[inline]
fn horner(a: &[Complex64], y: f64) -> Complex64 {
    a.iter().rev().fold(Complex64::new(0.0, 0.0), |acc, &c| acc * y + c)
}

/// `(1 − e^{−x})/x`, accurate for every `x` (series below `|x| = 10⁻³`).
fn exp_rel(x: Complex64) -> Complex64 {
    if x.norm() < 1e-3 { 1.0 - x / 2.0 + x * x / 6.0 - x * x * x / 24.0 } else { (1.0 - (-x).exp()) / x }
}

/// `erf(u)` by its Maclaurin series `(2/√π) Σ (−1)^n u^{2n+1}/(n!(2n + 1))` (A&S 7.1.5);
/// absolute error about `10⁻¹⁶ e^{|u|²}` (`|u| ≤ 2.5` here).
fn erf(u: Complex64) -> Complex64 {
    let u2 = u * u;
    let mut t = u;
    let mut s = u;
    for n in 1..400 {
        t *= -u2 / n as f64;
        let add = t / (2 * n + 1) as f64;
        s += add;
        if n as f64 > u2.norm() && add.norm() <= 1e-18 * s.norm().max(1e-300) {
            break;
        }
    }
    s * (2.0 / PI.sqrt())
}

/// `erfc(u) = 1 − erf(u)`.
fn erfc(u: Complex64) -> Complex64 {
    1.0 - erf(u)
}

/// `E_n(x)` for `n = 1 ..= n_max` (index `n − 1`), `Re x > 0`: for `|x| < 1.5` the series of
/// `E_1` (A&S 5.1.11) and the upward recurrence `E_{n+1} = (e^{−x} − x E_n)/n` (A&S 5.1.14,
/// stable there: errors are multiplied by `|x|/n`); otherwise the continued fraction of each
/// `E_n` (A&S 5.1.22, evaluated by Lentz's method).
fn expint_all(x: Complex64, n_max: usize) -> Vec<Complex64> {
    let emx = (-x).exp();
    let mut out = Vec::with_capacity(n_max);
    if x.norm() < 1.5 {
        let mut e = expint1_series(x);
        out.push(e);
        for n in 1..n_max {
            e = (emx - x * e) / n as f64;
            out.push(e);
        }
    } else {
        for n in 1..=n_max {
            out.push(expint_cf(n, x) * emx);
        }
    }
    out
}

/// `E_1(x) = −γ − ln x − Σ_{k≥1} (−x)^k/(k·k!)`.
fn expint1_series(x: Complex64) -> Complex64 {
    let mut t = Complex64::new(1.0, 0.0);
    let mut s = Complex64::new(0.0, 0.0);
    for k in 1..200 {
        t *= -x / k as f64;
        let add = t / k as f64;
        s += add;
        if add.norm() <= 1e-18 * s.norm().max(1e-300) && k as f64 > x.norm() {
            break;
        }
    }
    -EULER_GAMMA - x.ln() - s
}

/// `e^x E_n(x)` by the continued fraction
/// `1/(x + n − 1·n/(x + n + 2 − 2(n + 1)/(x + n + 4 − …)))`, modified Lentz.
fn expint_cf(n: usize, x: Complex64) -> Complex64 {
    let tiny = 1e-300;
    let nf = n as f64;
    let mut bb = x + nf;
    let mut c = Complex64::new(1.0 / tiny, 0.0);
    let mut d = 1.0 / bb;
    let mut h = d;
    for i in 1..5000 {
        let an = -(i as f64) * (nf - 1.0 + i as f64);
        bb += 2.0;
        d = an * d + bb;
        if d.norm() < tiny {
            d = Complex64::new(tiny, 0.0);
        }
        c = bb + an / c;
        if c.norm() < tiny {
            c = Complex64::new(tiny, 0.0);
        }
        d = 1.0 / d;
        let del = c * d;
        h *= del;
        if (del - 1.0).norm() < 1e-15 {
            break;
        }
    }
    h
}

/// `(e^x K0(x), e^x K1(x))` for `Re x > 0`, `|arg x| ≤ π/4` (see the module docs for the three
/// methods).
pub(crate) fn bessel_k01_scaled(x: Complex64) -> (Complex64, Complex64) {
    let r = x.norm();
    if r <= 2.0 {
        let (k0, k1) = bessel_k01_series(x);
        let ex = x.exp();
        (k0 * ex, k1 * ex)
    } else if r < 25.0 {
        bessel_k01_trapezoid(x)
    } else {
        (bessel_k_asymptotic(0.0, x), bessel_k_asymptotic(4.0, x))
    }
}

/// `(K0(x), K1(x))` by the ascending series (A&S 9.6.13, 9.6.11):
/// `K0 = Σ_k (x²/4)^k/(k!)² (H_k − ℓ)`,
/// `K1 = 1/x + (x/2) Σ_k (x²/4)^k/(k!(k + 1)!) (ℓ − (H_k + H_{k+1})/2)`,
/// `ℓ = ln(x/2) + γ`, `H_k` the harmonic numbers.
fn bessel_k01_series(x: Complex64) -> (Complex64, Complex64) {
    let q = x * x / 4.0;
    let l = (x / 2.0).ln() + EULER_GAMMA;
    let mut t0 = Complex64::new(1.0, 0.0);
    let mut t1 = Complex64::new(1.0, 0.0);
    let mut h = 0.0;
    let mut k0 = -l;
    let mut s1 = l - 0.5;
    for k in 1..200 {
        let kf = k as f64;
        t0 *= q / (kf * kf);
        t1 *= q / (kf * (kf + 1.0));
        h += 1.0 / kf;
        let a0 = t0 * (h - l);
        let a1 = t1 * (l - (h + 0.5 / (kf + 1.0)));
        k0 += a0;
        s1 += a1;
        if kf > q.norm() && t0.norm() <= 1e-18 * k0.norm() && t1.norm() <= 1e-18 * s1.norm() {
            break;
        }
    }
    (k0, 1.0 / x + x / 2.0 * s1)
}

/// `(e^x K0(x), e^x K1(x))` by the trapezoidal rule on `∫_0^∞ e^{−2x sinh²(t/2)} cosh(νt) dt`.
fn bessel_k01_trapezoid(x: Complex64) -> (Complex64, Complex64) {
    let h = 0.06;
    let t_max = (1.0 + 44.0 / x.re).acosh();
    let n = (t_max / h).ceil() as usize;
    let (mut s0, mut s1) = (Complex64::new(0.5, 0.0), Complex64::new(0.5, 0.0));
    for i in 1..=n {
        let t = i as f64 * h;
        let sh = (0.5 * t).sinh();
        let f = (-x * (2.0 * sh * sh)).exp();
        s0 += f;
        s1 += f * t.cosh();
    }
    (s0 * h, s1 * h)
}

/// `e^x K_ν(x) ~ √(π/(2x)) Σ_n a_n` with `a_n = a_{n−1} (μ − (2n − 1)²)/(8nx)`, `μ = 4ν²`
/// (A&S 9.7.2), summed to its smallest term (below `10⁻¹⁹` of the first for `|x| ≥ 25`).
fn bessel_k_asymptotic(mu: f64, x: Complex64) -> Complex64 {
    let mut term = Complex64::new(1.0, 0.0);
    let mut s = term;
    for n in 1..80 {
        let nf = n as f64;
        let next = term * (mu - (2.0 * nf - 1.0).powi(2)) / (8.0 * nf * x);
        if next.norm() >= term.norm() {
            break;
        }
        term = next;
        s += term;
        if term.norm() <= 1e-18 * s.norm() {
            break;
        }
    }
    s * (PI / (2.0 * x)).sqrt()
}

/// Gauss–Laguerre nodes and weights (weight `e^{−t}`): Newton's method on the Laguerre
/// recurrence `j L_j = (2j − 1 − t) L_{j−1} − (j − 1) L_{j−2}` from the usual asymptotic
/// starting guesses; weights `w_i = −1/(n L_n′(t_i) L_{n−1}(t_i))` (A&S 25.4.45).
fn gauss_laguerre(n: usize) -> (Vec<f64>, Vec<f64>) {
    let nf = n as f64;
    let mut t = vec![0.0; n];
    let mut w = vec![0.0; n];
    let mut z = 0.0f64;
    for i in 0..n {
        z = match i {
            0 => 3.0 / (1.0 + 2.4 * nf),
            1 => z + 15.0 / (1.0 + 2.5 * nf),
            _ => {
                let ai = (i - 1) as f64;
                z + (1.0 + 2.55 * ai) / (1.9 * ai) * (z - t[i - 2])
            }
        };
        let (mut pp, mut p2) = (0.0, 0.0);
        for _ in 0..100 {
            let (mut p1, mut q2) = (1.0, 0.0);
            for j in 1..=n {
                let jf = j as f64;
                let p3 = q2;
                q2 = p1;
                p1 = ((2.0 * jf - 1.0 - z) * q2 - (jf - 1.0) * p3) / jf;
            }
            p2 = q2;
            pp = (nf * p1 - nf * p2) / z;
            let z1 = z;
            z = z1 - p1 / pp;
            if (z - z1).abs() <= 1e-15 * z.abs() {
                break;
            }
        }
        t[i] = z;
        w[i] = -1.0 / (pp * nf * p2);
    }
    (t, w)
}

/// Two real Hermite tables (real and imaginary part) of a complex function.
#[derive(Clone, Debug)]
struct ComplexTable {
    re: HermiteTable,
    im: HermiteTable,
}

impl ComplexTable {
    /// Tabulate `f` (value and derivative in the table variable) on `[origin, end]`, stretch
    /// `len` (see `crate::hermite`), each part to `tol(var)` (absolute).
    fn build(
        origin: f64,
        len: f64,
        end: f64,
        f: &(impl Fn(f64) -> (Complex64, Complex64) + Sync),
        tol: &impl Fn(f64) -> f64,
    ) -> Option<Self> {
        let re = HermiteTable::build(
            origin,
            len,
            end,
            &|v| {
                let (a, b) = f(v);
                (a.re, b.re)
            },
            |v, _| tol(v),
            MAX_TABLE_NODES,
        )
        .ok()?;
        let im = HermiteTable::build(
            origin,
            len,
            end,
            &|v| {
                let (a, b) = f(v);
                (a.im, b.im)
            },
            |v, _| tol(v),
            MAX_TABLE_NODES,
        )
        .ok()?;
        Some(Self { re, im })
    }

    #[inline]
    fn eval(&self, v: f64) -> Complex64 {
        Complex64::new(self.re.eval(v), self.im.eval(v))
    }

    fn nodes(&self) -> usize {
        self.re.nodes() + self.im.nodes()
    }
}

/// The far table: `F(ρ) = √ρ e^{κ₁ρ − c₀} G(ρ)` on `[b/4, ρ_max]`, or with the phase of
/// `e^{κ₁ρ}` left in the table, `F̃(ρ) = √ρ e^{Re κ₁ ρ − c₀} G(ρ)`, when it turns by less than
/// [`FOLDED_PHASE`] over the range (low loss; `Im κ₁ = 0` without loss).
#[derive(Clone, Debug)]
struct FarTable {
    f: ComplexTable,
    kappa1: Complex64,
    c0: f64,
    /// `F̃` is tabulated (no phase factor at lookup).
    folded: bool,
}

/// Largest turn `|Im κ₁| (ρ_max − b/4)` (rad) of the phase of `e^{κ₁ρ}` over the far table for
/// which the phase is left in the table.
const FOLDED_PHASE: f64 = 1.0;

/// Tabulated `G` and smooth part for one pair of heights `(z, z′)` (see the module docs):
/// lookups in tens of nanoseconds, within the tolerance of the direct evaluations of
/// [`ParallelPlate`].
#[derive(Clone, Debug)]
pub struct PlatePair {
    plate: ParallelPlate,
    z: f64,
    zp: f64,
    /// Smooth part as a function of `ρ²` on `[0, smooth_to²]`.
    smooth: ComplexTable,
    smooth_to: f64,
    /// `R₀ G` on `[0, b/4]`, `R₀ = √(ρ² + (z − z′)²)` (see [`PlatePair::total`]).
    near: ComplexTable,
    far: Option<FarTable>,
    far_from: f64,
    rho_max: f64,
}

impl PlatePair {
    /// Tables for observer height `z` and source height `zp` (m, strictly between the plates):
    ///
    /// - the smooth part ([`PlatePair::smooth`]) on `0 ≤ ρ ≤ ρ_s = 2b`, each lookup within
    ///   `tol · max(|smooth|, 1/(4πb))` of [`ParallelPlate::smooth`];
    /// - `G` ([`PlatePair::total`]) on `b/4 ≤ ρ ≤ rho_max`, within `tol · |G|` of
    ///   [`ParallelPlate::total`] (relative, however small `G` is);
    /// - `R₀ G` on `0 ≤ ρ < b/4`, `R₀ = √(ρ² + (z − z′)²)` the distance to the source (smooth,
    ///   `1/(4π)` at `ρ = 0` when `z = z′`), so that [`PlatePair::total`] is within `tol · |G|`
    ///   there too.
    ///
    /// (The tables are checked at every interval midpoint, where the cubic Hermite error peaks,
    /// at a quarter of the tolerance per part.) Errors: heights not in `(0, b)`, `rho_max`
    /// negative or not finite, `tol ∉ [1e-11, 0.1]`, or a table needing more than
    /// [`MAX_TABLE_NODES`] nodes.
    pub fn new(
        plate: &ParallelPlate,
        z: f64,
        zp: f64,
        rho_max: f64,
        tol: f64,
    ) -> Result<Self, ParallelPlateError> {
        let b = plate.b;
        for (name, value) in [("z", z), ("zp", zp)] {
            if !(value > 0.0 && value < b) {
                return Err(ParallelPlateError::BadHeight { name, value, b });
            }
        }
        if !(rho_max.is_finite() && rho_max >= 0.0) {
            return Err(ParallelPlateError::BadRange(rho_max));
        }
        if !(1e-11..=0.1).contains(&tol) {
            return Err(ParallelPlateError::BadTolerance(tol));
        }
        let part = 0.25 * tol;
        let smooth_to = SMOOTH_TABLE_TO * b;
        let floor = 1.0 / (4.0 * PI * b);
        let f_smooth = |u: f64| plate.smooth_with_slope(u.max(0.0).sqrt(), z, zp);
        let smooth = ComplexTable::build(0.0, b * b, smooth_to * smooth_to, &f_smooth, &|u| {
            part * f_smooth(u).0.norm().max(floor)
        })
        .ok_or(ParallelPlateError::TableTooLarge {
            what: "smooth",
            max: MAX_TABLE_NODES,
            tol,
            upto: smooth_to,
        })?;
        let far_from = FAR_TABLE_FROM * b;
        let dz = z - zp;
        let f_near = |rho: f64| {
            let r0 = (rho * rho + dz * dz).sqrt();
            if r0 > 0.0 {
                let (g, dg) = plate.total_with_slope(rho, z, zp);
                (g * r0, g * (rho / r0) + dg * r0)
            } else {
                // ρ = 0, z = z′: R₀ G → e^{−jkR₀}/(4π) + R₀ (smooth − g(R₁) − g(R₂)), whose slope
                // is −jk/(4π) plus the bracket.
                let jk = Complex64::new(0.0, 1.0) * plate.k;
                let rest = plate.smooth_with_slope(0.0, z, zp).0
                    - plate.free((z + zp).powi(2)).0
                    - plate.free((2.0 * b - z - zp).powi(2)).0;
                (Complex64::new(1.0 / (4.0 * PI), 0.0), rest - jk / (4.0 * PI))
            }
        };
        let near =
            ComplexTable::build(0.0, far_from, far_from, &f_near, &|rho| part * f_near(rho).0.norm()).ok_or(
                ParallelPlateError::TableTooLarge { what: "near", max: MAX_TABLE_NODES, tol, upto: far_from },
            )?;
        let far = if rho_max > far_from {
            let kappa1 = plate.mode_wavenumber(1);
            let g0 = plate.total(far_from, z, zp);
            let c0 = (far_from.sqrt() * (kappa1.re * far_from).exp() * g0.norm()).ln();
            let folded = kappa1.im.abs() * (rho_max - far_from) <= FOLDED_PHASE;
            // The exponent taken out of the table: κ₁ρ, or Re κ₁ ρ with the phase left in.
            let rate = if folded { Complex64::new(kappa1.re, 0.0) } else { kappa1 };
            let f_far = |rho: f64| {
                let offset = rate * rho - c0;
                let sq = rho.sqrt();
                let (m, dm) = if rho >= plate.modal_from(z, zp) {
                    plate.modal(rho, z, zp, offset)
                } else {
                    let (g, dg) = plate.total_with_slope(rho, z, zp);
                    let ex = offset.exp();
                    (g * ex, dg * ex)
                };
                (m * sq, (dm + rate * m) * sq + m / (2.0 * sq))
            };
            let f = ComplexTable::build(far_from, b, rho_max, &f_far, &|rho| part * f_far(rho).0.norm())
                .ok_or(ParallelPlateError::TableTooLarge {
                    what: "far",
                    max: MAX_TABLE_NODES,
                    tol,
                    upto: rho_max,
                })?;
            Some(FarTable { f, kappa1, c0, folded })
        } else {
            None
        };
        Ok(Self { plate: plate.clone(), z, zp, smooth, smooth_to, near, far, far_from, rho_max })
    }

    /// Observer and source heights `(z, z′)` (m).
    pub fn heights(&self) -> (f64, f64) {
        (self.z, self.zp)
    }

    /// `ρ_s = 2b` (m): the smooth part is tabulated for `ρ ≤ ρ_s`.
    pub fn smooth_range(&self) -> f64 {
        self.smooth_to
    }

    /// `(b/4, rho_max)` (m): `G` is tabulated there (empty when `rho_max ≤ b/4`); below `b/4`
    /// as `R₀ G`.
    pub fn total_range(&self) -> (f64, f64) {
        (self.far_from, self.rho_max)
    }

    /// Nodes of the smooth, the near (`R₀ G` below `b/4`) and the far table (real and imaginary
    /// parts together).
    pub fn table_nodes(&self) -> (usize, usize, usize) {
        (self.smooth.nodes(), self.near.nodes(), self.far.as_ref().map_or(0, |f| f.f.nodes()))
    }

    /// The smooth part `G − singular terms` (1/m) at horizontal distance `rho` (m): tabulated
    /// for `ρ ≤ ρ_s` (see [`PlatePair::new`] for the tolerance), [`ParallelPlate::smooth`]
    /// (slow, microseconds) beyond.
    #[inline]
    pub fn smooth(&self, rho: f64) -> Complex64 {
        let rho = rho.abs();
        if rho <= self.smooth_to {
            self.smooth.eval(rho * rho)
        } else {
            self.plate.smooth(rho, self.z, self.zp)
        }
    }

    /// `G` (1/m) at horizontal distance `rho` (m): from the far table on `[b/4, rho_max]`, as the
    /// tabulated `R₀ G` over `R₀ = √(ρ² + (z − z′)²)` below `b/4` (both within `tol · |G|`;
    /// infinite at `ρ = 0` when `z = z′`), and by [`ParallelPlate::total`] (slow) beyond
    /// `rho_max`.
    #[inline]
    pub fn total(&self, rho: f64) -> Complex64 {
        let rho = rho.abs();
        if rho < self.far_from {
            let r0 = (rho * rho + (self.z - self.zp).powi(2)).sqrt();
            return self.near.eval(rho) / r0;
        }
        match &self.far {
            Some(far) if rho <= self.rho_max => {
                let f = far.f.eval(rho);
                let mag = (far.c0 - far.kappa1.re * rho).exp() / rho.sqrt();
                if far.folded {
                    f * mag
                } else {
                    let (s, c) = (-far.kappa1.im * rho).sin_cos();
                    f * Complex64::new(mag * c, mag * s)
                }
            }
            _ => self.plate.total(rho, self.z, self.zp),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::homogeneous::TwoGrounds;
    use crate::{EPS0, StaticGreen};

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    /// Relative difference with a floor on the denominator.
    fn rel(a: Complex64, b: Complex64, floor: f64) -> f64 {
        (a - b).norm() / b.norm().max(floor)
    }

    /// A small deterministic generator for the random checks (xorshift64*).
    struct Rng(u64);
    impl Rng {
        fn next(&mut self) -> f64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            (self.0.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    /// `K0`, `K1` of real argument against Abramowitz & Stegun, *Handbook of Mathematical
    /// Functions*, 1964, Table 9.8 (values from memory, 10 digits) and against `puruspe`
    /// (an independent implementation) on a sweep across all three methods.
    #[test]
    fn bessel_k_real_values_match_tables() {
        let k0 = |x: f64| bessel_k01_scaled(c(x, 0.0)).0 * (-x).exp();
        let k1 = |x: f64| bessel_k01_scaled(c(x, 0.0)).1 * (-x).exp();
        for (x, want) in
            [(0.1, 2.427_069_024_7), (0.5, 0.924_419_071_2), (1.0, 0.421_024_438_2), (2.0, 0.113_893_872_7)]
        {
            assert!((k0(x) - want).norm() <= 0.51e-10, "K0({x}) = {}", k0(x));
        }
        for (x, want) in [(1.0, 0.601_907_230_2), (2.0, 0.139_865_881_8)] {
            assert!((k1(x) - want).norm() <= 0.51e-10, "K1({x}) = {}", k1(x));
        }
        for (x, want) in [(5.0, 0.547_807_564_3), (10.0, 0.391_631_934_4)] {
            let got = bessel_k01_scaled(c(x, 0.0)).0;
            assert!((got - want).norm() <= 0.51e-10, "e^x K0({x}) = {got}");
        }
        for i in 0..300 {
            let x = 0.02 * 1.03f64.powi(i);
            let (s0, s1) = bessel_k01_scaled(c(x, 0.0));
            let (p0, p1) = (puruspe::bessel::Kn(0, x) * x.exp(), puruspe::bessel::Kn(1, x) * x.exp());
            assert!((s0.re - p0).abs() <= 1e-12 * p0 && s0.im == 0.0, "K0({x}): {s0} vs {p0}");
            assert!((s1.re - p1).abs() <= 1e-12 * p1, "K1({x}): {s1} vs {p1}");
        }
    }

    /// Complex arguments (`|arg x| ≤ 40°`, beyond the 36° the modes reach): the Wronskian
    /// `I0(x) K1(x) + I1(x) K0(x) = 1/x` (A&S 9.6.15) with `I0`, `I1` from their own series
    /// (A&S 9.6.10), and agreement of the methods where their ranges meet.
    #[test]
    fn bessel_k_complex_wronskian_and_methods_agree() {
        let i01 = |x: Complex64| {
            let q = x * x / 4.0;
            let (mut t0, mut t1) = (c(1.0, 0.0), c(1.0, 0.0));
            let (mut s0, mut s1) = (t0, t1);
            for k in 1..400 {
                let kf = k as f64;
                t0 *= q / (kf * kf);
                t1 *= q / (kf * (kf + 1.0));
                s0 += t0;
                s1 += t1;
            }
            (s0, s1 * x / 2.0)
        };
        for r in [0.05, 0.3, 1.0, 1.9, 2.1, 4.0, 9.0, 17.0, 24.0, 26.0, 30.0] {
            for deg in [-40.0f64, -20.0, 0.0, 15.0, 40.0] {
                let x = Complex64::from_polar(r, deg.to_radians());
                let (k0s, k1s) = bessel_k01_scaled(x);
                let (i0, i1) = i01(x);
                // Scale I by e^{−x} to pair with the scaled K.
                let ex = (-x).exp();
                let w = (i0 * ex) * k1s + (i1 * ex) * k0s;
                let size = (i0 * ex).norm() * k1s.norm() + (i1 * ex).norm() * k0s.norm();
                assert!(
                    (w - 1.0 / x).norm() <= 1e-13 * size.max((1.0 / x).norm()),
                    "x = {x}: {w} vs {}",
                    1.0 / x
                );
            }
        }
        // Where the methods meet.
        for deg in [-40.0f64, 0.0, 30.0] {
            for r in [1.5, 2.0, 3.0] {
                let x = Complex64::from_polar(r, deg.to_radians());
                let (a0, a1) = bessel_k01_series(x);
                let ex = x.exp();
                let (b0, b1) = bessel_k01_trapezoid(x);
                assert!(rel(a0 * ex, b0, 0.0) < 1e-13 && rel(a1 * ex, b1, 0.0) < 1e-13, "x = {x}");
            }
            for r in [20.0, 25.0, 30.0] {
                let x = Complex64::from_polar(r, deg.to_radians());
                let (b0, b1) = bessel_k01_trapezoid(x);
                let (a0, a1) = (bessel_k_asymptotic(0.0, x), bessel_k_asymptotic(4.0, x));
                assert!(rel(a0, b0, 0.0) < 1e-13 && rel(a1, b1, 0.0) < 1e-13, "x = {x}");
            }
        }
    }

    /// `E_n` against A&S Table 5.1 (from memory: E1(0.5), E1(1), E1(2), E1(5), E2(1)) and
    /// `E1(jx) = −Ci(x) + j(Si(x) − π/2)` (A&S 5.2.23) with Ci, Si from the same table; the
    /// series and the continued fraction agree at complex points where both apply.
    #[test]
    fn exponential_integral_matches_tables() {
        // (x, n, E_n(x), half a unit of the last tabulated digit)
        for (x, n, want, half) in [
            (0.5, 1, 0.559_773_594_8, 0.5e-10),
            (1.0, 1, 0.219_383_934_4, 0.5e-10),
            (2.0, 1, 0.048_900_510_71, 0.5e-11),
            (5.0, 1, 0.001_148_295_591, 0.5e-12),
            (1.0, 2, 0.148_495_506_8, 0.5e-10),
        ] {
            let got = expint_all(c(x, 0.0), 3)[n - 1];
            assert!((got - want).norm() <= 1.02 * half, "E{n}({x}) = {got}");
        }
        for (x, ci, si) in [(1.0, 0.337_403_922_9, 0.946_083_070_4), (2.0, 0.422_980_828_8, 1.605_412_976_8)]
        {
            let got = expint_all(c(0.0, x), 1)[0];
            let want = c(-ci, si - PI / 2.0);
            assert!((got - want).norm() <= 1.5e-10, "E1({x}j) = {got} vs {want}");
        }
        for deg in [-70.0f64, -30.0, 0.0, 45.0, 70.0] {
            for r in [1.2, 1.6, 2.5] {
                let x = Complex64::from_polar(r, deg.to_radians());
                let emx = (-x).exp();
                let mut e = expint1_series(x);
                for n in 1..12 {
                    let cf = expint_cf(n, x) * emx;
                    assert!(rel(cf, e, 0.0) < 1e-13, "E{n}({x}): {cf} vs {e}");
                    e = (emx - x * e) / n as f64;
                }
            }
        }
    }

    /// `erf` against A&S Table 7.1 (erf 0.5, erf 1; erfc 2 = 0.004677734981) and, for
    /// imaginary arguments, `erf(jy) = (2j/√π) ∫_0^y e^{t²} dt` by Gauss–Legendre quadrature.
    #[test]
    fn error_function_matches_tables_and_quadrature() {
        for (x, want) in [(0.5, 0.520_499_877_8), (1.0, 0.842_700_792_9)] {
            assert!((erf(c(x, 0.0)) - want).norm() <= 0.51e-10, "erf({x})");
        }
        assert!((erfc(c(2.0, 0.0)) - 0.004_677_734_981).norm() <= 0.51e-12);
        let (gx, gw) = crate::quadrature::gauss_legendre(40);
        for y in [0.3, 1.0, 1.7, 2.4] {
            let integral: f64 = gx
                .iter()
                .zip(&gw)
                .map(|(t, w)| 0.5 * y * w * (0.25 * y * y * (t + 1.0) * (t + 1.0)).exp())
                .sum();
            let want = c(0.0, 2.0 / PI.sqrt() * integral);
            assert!((erf(c(0.0, y)) - want).norm() < 1e-13 * want.norm(), "erf({y}j)");
        }
    }

    /// The Gauss–Laguerre rule integrates `t^j e^{−t}` exactly (`j!`) for `j ≤ 2n − 1`
    /// (A&S 25.4.45); checked for `j ≤ 30`.
    #[test]
    fn gauss_laguerre_moments() {
        let (t, w) = laguerre();
        let mut fact = 1.0;
        for j in 0..=30 {
            if j > 0 {
                fact *= j as f64;
            }
            let m: f64 = t.iter().zip(w).map(|(t, w)| w * t.powi(j)).sum();
            assert!((m - fact).abs() <= 1e-12 * fact, "moment {j}: {m} vs {fact}");
        }
    }

    /// The two representations of the Ewald split meet: `h` by its series in `R²` (closed form
    /// with erfc, Capolino, Wilton & Johnson 2007) against `g − S` with `S` by quadrature, for
    /// lossless and lossy `k`, around the switch `RE = 2` between them (this also fixes the
    /// sign of the outgoing branch `e^{−jkR}`: the two differ by `sin(kR)/R` otherwise).
    #[test]
    fn ewald_split_series_and_quadrature_agree() {
        let b = 1e-3;
        for kb in [c(1e-9, 0.0), c(1.0, 0.0), c(2.9, 0.0), c(2.0, -0.3), c(2.9, -3.1), c(0.5, -3.0)] {
            let p = ParallelPlate::new(b, kb / b).unwrap();
            for x in [1.8, 2.0, 2.2] {
                let r2 = (x / p.e).powi(2);
                let (h, dh) = p.h_series(x * x);
                let (g, dg) = p.free(r2);
                let (s, ds) = p.s_quadrature(x * x);
                let unit = 1.0 / (4.0 * PI * b);
                assert!((h - (g - s)).norm() < 1e-12 * unit, "kb = {kb}, x = {x}: {h} vs {}", g - s);
                assert!((dh - (dg - ds)).norm() < 1e-11 * unit / (b * b), "kb = {kb}, x = {x}: slope");
            }
        }
    }

    /// `k → 0` (`k = 10⁻⁹/b`): `4πb G` against the table of the shared references (§5, "Between
    /// two grounds", to the digits given there) and against [`TwoGrounds`] (`4π ε0 b φ`).
    #[test]
    fn static_limit_matches_published_table_and_two_grounds() {
        let b = 2e-3;
        let p = ParallelPlate::new(b, c(1e-9 / b, 0.0)).unwrap();
        let tg = TwoGrounds::new(0.0, b, 1.0, 1e-10).unwrap();
        for (r, z, zp, want, digits) in [
            (0.1, 0.5, 0.5, 8.62265, 5e-6),
            (0.5, 0.5, 0.5, 0.801475, 5e-7),
            (1.0, 0.5, 0.5, 0.118165, 5e-7),
            (0.5, 0.3, 0.6, 0.528913, 5e-7),
            (2.0, 0.25, 0.25, 0.00183806, 5e-9),
        ] {
            let got = 4.0 * PI * b * p.total(r * b, z * b, zp * b);
            assert!((got.re - want).abs() <= 1.01 * digits && got.im.abs() < 1e-12, "({r},{z},{zp}): {got}");
            let two = 4.0 * PI * EPS0 * b * tg.potential([r * b, 0.0, z * b], [0.0, 0.0, zp * b]);
            assert!((got.re - two).abs() < 1e-8 * two, "({r},{z},{zp}): {got} vs TwoGrounds {two}");
        }
    }

    /// `G(ρ, z, z′)` by the image series itself, with `|n| ≤ n_max`; `skip_near` leaves out
    /// the three face-singular terms.
    fn image_partial_sum(
        k: Complex64,
        b: f64,
        rho: f64,
        z: f64,
        zp: f64,
        n_max: i64,
        skip_near: bool,
    ) -> Complex64 {
        let g = |d: f64| {
            let r = (rho * rho + d * d).sqrt();
            (-Complex64::new(0.0, 1.0) * k * r).exp() / (4.0 * PI * r)
        };
        let mut s = c(0.0, 0.0);
        for n in -n_max..=n_max {
            let shift = 2.0 * n as f64 * b;
            if !(skip_near && n == 0) {
                s += g(z - zp - shift);
            }
            if !(skip_near && (n == 0 || n == 1)) {
                s -= g(z + zp - shift);
            }
        }
        s
    }

    /// Image series against the Ewald/modal evaluations.
    ///
    /// Lossy `k` (`Im kb = −0.4`): the pairs fall off like `e^{−0.8|n|}/|n|`, so the plain sum
    /// converges absolutely (`|n| ≤ 120` leaves `e^{−96}`). Lossless `kb = 1.5`: the partial
    /// sums `P_N` (`|n| ≤ N`) oscillate about the limit with an error `≈ A e^{−j2kbN}/N`; each
    /// averaging of neighbouring partial sums multiplies it by `(1 + e^{−j2kb})/2`, of modulus
    /// `|cos kb| = 0.07`, so 14 repeated averagings from `N = 400` leave far below `10⁻¹²`
    /// (checked by repeating from `N = 600`). Static `k → 0`: pairs fall off like `1/n²`;
    /// the tail `|n| > N` is replaced by its Euler–Maclaurin estimate (midpoint rule:
    /// `Σ_{n>N} f(n) ≈ ∫_{N+½}^∞ f + f′(N + ½)/24`, A&S 23.1.30), in closed form for `1/R`.
    #[test]
    fn image_series_agrees_with_ewald_and_modes() {
        let b = 1e-3;
        let unit = 1.0 / (4.0 * PI * b);
        let points = [
            (0.0, 0.5, 0.5),
            (0.0, 0.2, 0.9),
            (0.3, 0.1, 0.15),
            (0.7, 0.5, 0.3),
            (1.5, 0.8, 0.95),
            (2.0, 0.4, 0.6),
        ];
        // Lossy: absolutely convergent.
        let p = ParallelPlate::new(b, c(2.0, -0.4) / b).unwrap();
        for &(r, z, zp) in &points {
            let (rho, z, zp) = (r * b, z * b, zp * b);
            let sm = image_partial_sum(p.k, b, rho, z, zp, 120, true);
            assert!((p.smooth(rho, z, zp) - sm).norm() < 1e-10 * unit, "lossy smooth ({r})");
            if r > 0.0 {
                let tot = image_partial_sum(p.k, b, rho, z, zp, 120, false);
                assert!(rel(p.total(rho, z, zp), tot, 0.0) < 1e-9, "lossy total ({r})");
            }
        }
        // Lossless: repeated averaging of partial sums.
        let p = ParallelPlate::new(b, c(1.5, 0.0) / b).unwrap();
        let averaged = |rho: f64, z: f64, zp: f64, n0: i64, skip: bool| {
            let levels = 14;
            let mut v: Vec<Complex64> =
                (0..=levels).map(|i| image_partial_sum(p.k, b, rho, z, zp, n0 + i, skip)).collect();
            for _ in 0..levels {
                v = v.windows(2).map(|w| 0.5 * (w[0] + w[1])).collect();
            }
            v[0]
        };
        for &(r, z, zp) in &points {
            let (rho, z, zp) = (r * b, z * b, zp * b);
            let (a1, a2) = (averaged(rho, z, zp, 400, true), averaged(rho, z, zp, 600, true));
            assert!((a1 - a2).norm() < 1e-12 * unit, "averaging not converged");
            assert!(
                (p.smooth(rho, z, zp) - a2).norm() < 1e-10 * unit,
                "lossless smooth ({r}): {}",
                p.smooth(rho, z, zp)
            );
            if r > 0.0 {
                let t = averaged(rho, z, zp, 600, false);
                assert!(rel(p.total(rho, z, zp), t, 0.0) < 1e-9, "lossless total ({r})");
            }
        }
        // Static: Euler–Maclaurin tail.
        let p = ParallelPlate::new(b, c(1e-9, 0.0) / b).unwrap();
        let n_max = 200;
        for &(r, z, zp) in &points {
            let (rho, z, zp) = (r * b, z * b, zp * b);
            let mut s = image_partial_sum(c(0.0, 0.0), b, rho, z, zp, n_max, true).re;
            let t = n_max as f64 + 0.5;
            for (d1, d2) in [(z - zp, z + zp), (-(z - zp), -(z + zp))] {
                // Σ_{n>N} [1/R(2nb − d1) − 1/R(2nb − d2)] / (4π).
                let (p1, p2) = (2.0 * t * b - d1, 2.0 * t * b - d2);
                let ln = |q: f64| (q + (q * q + rho * rho).sqrt()).ln();
                let integral = (ln(p2) - ln(p1)) / (2.0 * b);
                let slope = |q: f64| -2.0 * b * q / (rho * rho + q * q).powf(1.5);
                s += (integral + (slope(p1) - slope(p2)) / 24.0) / (4.0 * PI);
            }
            assert!(
                (p.smooth(rho, z, zp).re - s).abs() < 1e-10 * unit,
                "static smooth ({r}): {} vs {s}",
                p.smooth(rho, z, zp)
            );
        }
    }

    /// The two forms of `G` where both converge (`b/4 ≤ ρ ≤ 2b`): the modal series (Collin)
    /// against Ewald's smooth part plus the three singular terms, for lossless, near-cutoff and
    /// lossy wavenumbers — to `10⁻¹¹/(4πb)` everywhere (the smooth part's contract), and to
    /// `10⁻⁹ |G|` up to `ρ = b/2`, where `total` takes the Ewald form; and the public `total`
    /// against `smooth + singular_terms` where they use different methods (`b/2 ≤ ρ ≤ b`).
    #[test]
    fn modal_and_ewald_forms_agree() {
        let b = 0.8e-3;
        let unit = 1.0 / (4.0 * PI * b);
        for kb in [c(1e-9, 0.0), c(1.0, 0.0), c(2.98, 0.0), c(2.98, -1.2), c(0.3, -0.999 * PI)] {
            let p = ParallelPlate::new(b, kb / b).unwrap();
            for (z, zp) in [(0.5, 0.5), (0.1, 0.9), (0.05, 0.07), (0.93, 0.6), (0.3, 0.3)] {
                let (z, zp) = (z * b, zp * b);
                for i in 0..=35 {
                    let rho = (0.25 + 0.05 * i as f64) * b;
                    let (m, dm) = p.modal(rho, z, zp, c(0.0, 0.0));
                    let (s, ds) = p.ewald(rho * rho, z, zp);
                    let (t, dt) = p.near_terms(rho * rho, z, zp);
                    if rho <= 0.5 * b {
                        assert!(rel(s + t, m, 0.0) < 1e-9, "kb = {kb}, ρ/b = {}: {} vs {m}", rho / b, s + t);
                    }
                    assert!((s + t - m).norm() < 1e-11 * unit, "kb = {kb}, ρ/b = {}", rho / b);
                    let slope = (ds + dt) * (2.0 * rho);
                    assert!(
                        (slope - dm).norm() < 1e-10 * unit / b,
                        "kb = {kb}, ρ/b = {}: slope {slope} vs {dm}",
                        rho / b
                    );
                    if (0.5 * b..=b).contains(&rho) {
                        let sum = p.smooth(rho, z, zp) + p.singular_terms(rho, z, zp);
                        assert!(rel(p.total(rho, z, zp), sum, 0.0) < 1e-9, "total vs smooth + terms");
                    }
                }
            }
        }
    }

    /// Reciprocity `G(ρ, z, z′) = G(ρ, z′, z)` and the mirror symmetry of the plate region
    /// `z → b − z`, `z′ → b − z′` (both exact properties of the image series), for `total` and
    /// `smooth` (the mirror swaps the two image terms).
    #[test]
    fn reciprocity_and_mirror_symmetry() {
        let b = 1e-3;
        let p = ParallelPlate::new(b, c(2.2, -0.05) / b).unwrap();
        let unit = 1.0 / (4.0 * PI * b);
        let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
        for _ in 0..200 {
            let (z, zp) = ((0.02 + 0.96 * rng.next()) * b, (0.02 + 0.96 * rng.next()) * b);
            let rho = 3.0 * b * rng.next() + 1e-3 * b;
            let g = p.total(rho, z, zp);
            assert!(rel(p.total(rho, zp, z), g, 0.0) < 1e-12, "reciprocity");
            assert!(rel(p.total(rho, b - z, b - zp), g, 0.0) < 1e-10, "mirror: {g}");
            let s = p.smooth(rho, z, zp);
            assert!((p.smooth(rho, zp, z) - s).norm() < 1e-12 * unit, "smooth reciprocity");
            assert!((p.smooth(rho, b - z, b - zp) - s).norm() < 1e-11 * unit, "smooth mirror");
        }
    }

    /// Loss makes `G` decay faster: at large `ρ` the lossy `|G|` falls below the lossless one
    /// and ever more so, with the logarithmic decay rate `Re κ₁ = Re √((π/b)² − k²)` of the
    /// first mode (modal theory, e.g. Collin 1991).
    #[test]
    fn loss_speeds_up_decay() {
        let b = 1e-3;
        let lossless = ParallelPlate::new(b, c(2.0, 0.0) / b).unwrap();
        let lossy = ParallelPlate::new(b, c(2.0, -0.3) / b).unwrap();
        let (z, zp) = (0.4 * b, 0.55 * b);
        let mut last = f64::INFINITY;
        for i in 1..=12 {
            let rho = 5.0 * i as f64 * b;
            let ratio = lossy.total(rho, z, zp).norm() / lossless.total(rho, z, zp).norm();
            assert!(ratio < 1.0 && ratio < last, "ρ/b = {}: ratio {ratio}", rho / b);
            last = ratio;
        }
        for p in [&lossless, &lossy] {
            let (r1, r2) = (40.0 * b, 41.0 * b);
            let rate = (p.total(r1, z, zp).norm() / p.total(r2, z, zp).norm()).ln() / (r2 - r1);
            let want = p.mode_wavenumber(1).re;
            // K0's algebraic factor adds about 1/(2ρ) to the rate.
            assert!((rate - want - 1.0 / (2.0 * r1)).abs() < 1e-3 * want, "rate {rate} vs {want}");
        }
        // Relative accuracy far out, where G ~ 1e-280: consecutive values follow the mode.
        let (r1, r2) = (200.0 * b, 200.5 * b);
        let (g1, g2) = (lossy.total(r1, z, zp), lossy.total(r2, z, zp));
        assert!(g1.norm() > 1e-300 && g1.norm() < 1e-200, "|G| = {}", g1.norm());
        // (Scaled before dividing: num-complex's division squares the denominator.)
        let (g1, g2) = (g1 * 1e200, g2 * 1e200);
        let kappa = lossy.mode_wavenumber(1);
        let want = (-kappa * (r2 - r1)).exp() * (r1 / r2).sqrt();
        assert!(rel(g2 / g1, want, 0.0) < 3e-6, "{} vs {want}", g2 / g1);
    }

    /// Refusals with typed errors.
    #[test]
    fn refuses_out_of_range_inputs() {
        let b = 1e-3;
        assert!(matches!(ParallelPlate::new(0.0, c(1.0, 0.0)), Err(ParallelPlateError::BadSpacing(_))));
        assert!(matches!(ParallelPlate::new(b, c(-1.0, 0.0)), Err(ParallelPlateError::BadWavenumber { .. })));
        assert!(matches!(ParallelPlate::new(b, c(1.0, 0.1)), Err(ParallelPlateError::BadWavenumber { .. })));
        assert!(matches!(
            ParallelPlate::new(b, c(f64::NAN, 0.0)),
            Err(ParallelPlateError::BadWavenumber { .. })
        ));
        let e = ParallelPlate::new(b, c(0.95 * PI / b, 0.0)).unwrap_err();
        assert!(matches!(e, ParallelPlateError::AboveCutoff { .. }), "{e}");
        assert!(e.to_string().contains("cutoff"));
        assert!(ParallelPlate::new(b, c(0.9499 * PI / b, 0.0)).is_ok());
        assert!(matches!(
            ParallelPlate::new(b, c(1.0 / b, -3.2 / b)),
            Err(ParallelPlateError::TooLossy { .. })
        ));
        let p = ParallelPlate::new(b, c(1.0 / b, 0.0)).unwrap();
        assert!(matches!(
            PlatePair::new(&p, 0.0, 0.5 * b, b, 1e-8),
            Err(ParallelPlateError::BadHeight { .. })
        ));
        assert!(matches!(
            PlatePair::new(&p, 0.5 * b, 1.2 * b, b, 1e-8),
            Err(ParallelPlateError::BadHeight { .. })
        ));
        assert!(matches!(
            PlatePair::new(&p, 0.5 * b, 0.5 * b, f64::NAN, 1e-8),
            Err(ParallelPlateError::BadRange(_))
        ));
        assert!(matches!(
            PlatePair::new(&p, 0.5 * b, 0.5 * b, b, 1e-14),
            Err(ParallelPlateError::BadTolerance(_))
        ));
        assert!(p.total(b, 1.5 * b, 0.5 * b).is_nan());
        assert_eq!(p.total(b, 0.0, 0.5 * b), c(0.0, 0.0));
    }

    /// Tables against direct evaluation at random distances, to the stated tolerance
    /// (`tol · |G|` for the total, below and beyond `b/4`, `tol · max(|smooth|, 1/(4πb))` for the
    /// smooth part), for several heights and wavenumbers (with and without the phase left in the
    /// far table). Prints table sizes and lookup times (run with `--nocapture`).
    #[test]
    fn tables_match_direct_evaluation() {
        let b = 1e-3;
        let tol = 1e-8;
        let floor = 1.0 / (4.0 * PI * b);
        let mut rng = Rng(0x1234_5678_9abc_def1);
        for (kb, z, zp, rho_max) in [
            (c(1.5, 0.0), 0.5, 0.5, 60.0),
            (c(2.98, -0.02), 0.1, 0.85, 200.0),
            (c(0.4, -1.0), 0.03, 0.04, 20.0),
            (c(1.5, -0.01), 0.3, 0.3, 40.0),
        ] {
            let p = ParallelPlate::new(b, kb / b).unwrap();
            let (z, zp, rho_max) = (z * b, zp * b, rho_max * b);
            let start = std::time::Instant::now();
            let t = PlatePair::new(&p, z, zp, rho_max, tol).unwrap();
            let built = start.elapsed();
            let (mut worst_s, mut worst_t) = (0.0f64, 0.0f64);
            for i in 0..3000 {
                let rho = if i % 2 == 0 { 2.0 * b * rng.next() } else { rho_max * rng.next().powi(2) };
                if rho <= 2.0 * b {
                    let d = p.smooth(rho, z, zp);
                    worst_s = worst_s.max((t.smooth(rho) - d).norm() / d.norm().max(floor));
                }
                if rho > 0.0 {
                    let d = p.total(rho, z, zp);
                    worst_t = worst_t.max(rel(t.total(rho), d, 0.0));
                }
            }
            assert!(worst_s <= tol, "kb = {kb}: smooth table error {worst_s:e}");
            assert!(worst_t <= tol, "kb = {kb}: total table error {worst_t:e}");
            // Timing (not a test).
            let n = 1_000_000;
            let rhos: Vec<f64> = (0..1024).map(|_| 0.25 * b + (rho_max - 0.25 * b) * rng.next()).collect();
            let small: Vec<f64> = (0..1024).map(|_| 2.0 * b * rng.next()).collect();
            let clock = std::time::Instant::now();
            let mut acc = c(0.0, 0.0);
            for i in 0..n {
                acc += t.total(rhos[i & 1023]);
            }
            let per_total = clock.elapsed().as_nanos() as f64 / n as f64;
            let clock = std::time::Instant::now();
            for i in 0..n {
                acc += t.smooth(small[i & 1023]);
            }
            let per_smooth = clock.elapsed().as_nanos() as f64 / n as f64;
            let clock = std::time::Instant::now();
            for i in 0..2000 {
                acc += p.total(rhos[i & 1023], z, zp) + p.smooth(small[i & 1023], z, zp);
            }
            let per_direct = clock.elapsed().as_nanos() as f64 / 2000.0;
            println!(
                "kb = {kb}: nodes (smooth, near, far) = {:?}, built in {built:?}; worst errors smooth {worst_s:.2e}, \
                 total {worst_t:.2e}; lookups: total {per_total:.1} ns, smooth {per_smooth:.1} ns; \
                 direct total + smooth {per_direct:.0} ns ({})",
                t.table_nodes(),
                acc.norm() > 0.0
            );
        }
    }
}
