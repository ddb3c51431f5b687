//! Quasi-static Green's function of a planar stack-up of dielectric layers.
//!
//! # Problem
//!
//! Layers `i = 0 … n−1`, bottom to top, of thickness `d_i` (m) and relative permittivity
//! `ε_i`, between an optional perfectly conducting plane under layer 0 and an optional one on
//! top of layer `n−1`; where there is no plane the stack is bounded by air (`εr = 1`) extending
//! to infinity. Heights `z` are measured from the bottom of layer 0. The stack has `n + 1`
//! *nodes* (horizontal faces): node `j` at `z_j = Σ_{i<j} d_i`; the public *face index* `i`
//! names the top face of layer `i`, i.e. node `i + 1`.
//!
//! A point charge `q` on node `s` and an observer on node `t` at horizontal distance `ρ`:
//!
//! `φ(ρ) = (q / (2π ε0)) ∫₀^∞ f(k; t, s) J0(kρ) dk`
//!
//! with the dimensionless spectral kernel `f = k g`, where `g(k)` solves the 1-D problem
//! `d/dz(ε dg/dz) − k² ε g = −δ(z − z_s)` (relative ε; potential continuous, `ε ∂g/∂z` jumping
//! by the unit charge, `g = 0` on grounds, `g → 0` at `±∞`). (Written with the transverse
//! transform `(1/2π)∫ G̃(k) J0(kρ) k dk`: the factor `k` of the area element is absorbed in
//! `f`. Free space: `f = ½ e^{−k|z−z′|}`, and `∫₀^∞ e^{−ka} J0(kρ) dk = 1/√(ρ² + a²)` gives
//! `1/(4π ε0 R)`.)
//!
//! # Spectral kernel: a tridiagonal "capacitor chain"
//!
//! Inside layer `i` the potential is `A e^{kz} + B e^{−kz}`; eliminating `A, B` in favour of the
//! node potentials `V_j` gives, per unit `k`, a symmetric tridiagonal system `C(k) V = e_s` (so
//! `f(k; t, s) = [C⁻¹]_{ts}`): layer `i` adds `ε_i coth(k d_i)` to the diagonal at both of its
//! nodes and `−ε_i csch(k d_i)` off the diagonal, an open air half space adds `1` to its end
//! node, and a ground removes its node (`V = 0`). This is the same physics as the
//! equivalent-transmission-line recursion of the spectral-domain method (input admittance
//! `Y_in = ε (Y_L + ε tanh kd)/(ε + Y_L tanh kd)`; e.g. the spectral-domain chapter of T. Itoh
//! (ed.), *Numerical Techniques for Microwave and Millimeter-Wave Passive Structures*, Wiley,
//! 1989 — from memory), solved here as one linear system so that
//! every source/observer pair is handled alike. `coth` and `csch` are evaluated in the
//! `e^{−kd}` form (`coth x = (1 + e^{−2x})/(1 − e^{−2x})`, `csch x = 2e^{−x}/(1 − e^{−2x})`),
//! so nothing overflows for large `kd`; the matrix is diagonally dominant and the Thomas
//! algorithm without pivoting is stable. The test module checks it against an independent
//! implementation of the admittance recursion.
//!
//! # Singular-term extraction (quasi-static image)
//!
//! For `k → ∞` every layer decouples and the kernel tends to
//! `f_∞(k) = A e^{−k|z_t − z_s|}` with
//!
//! `A = Π_{layers crossed} 2ε_i / Π_{nodes j from s to t} (ε_j⁻ + ε_j⁺)`
//!
//! (`ε_j⁻`, `ε_j⁺` the permittivities just below and above node `j`): `1/(ε⁻ + ε⁺)` for a
//! charge and observer on one interface, times the large-`k` voltage transfer `2ε_i/(ε_i +
//! ε_{i+1})` of each layer crossed. Its Hankel transform is closed form,
//! `φ_∞ = A q / (2π ε0 √(ρ² + (z − z′)²))` — for one slab `εr` on a ground this is
//! `q / (2π ε0 (1 + εr) ρ)`, the leading term of the classical image series (Silvester, Proc.
//! IEE 115(1), 1968; Weeks, IEEE Trans. MTT-18(1), 1970).
//!
//! A second, fictitious image makes the remainder vanish at `k = 0` as well: with
//! `f(0⁺) = ½` when both sides are open (all nodes at one potential, two air half spaces) and
//! `0` with any ground, the extracted kernel is
//!
//! `f_x(k) = A e^{−k|Δz|} + c e^{−kD}`,  `c = f(0⁺) − A`,  `D = |Δz| + 2 d_near`
//!
//! (`d_near` the thinnest layer touching either face or lying between them), in space `A/√(ρ² + Δz²) + c/√(ρ² + D²)`. The remainder
//! `f − f_x` then decays like `e^{−k(|Δz| + 2 d_near)}` (the next true image is at least two
//! such layer thicknesses further), is analytic on the real axis (quasi-static: no surface-wave
//! poles), and is `O(k)` at `k = 0`, so its transform falls off like `ρ⁻³` — no `1/ρ` tails
//! that cancel against the closed-form term far from the source (where a grounded stack's
//! potential is a dipole field `∝ ρ⁻³`).
//!
//! # Remainder: real-axis integration, then a table
//!
//! `r(ρ) = ∫₀^{k_max} (f − f_x) J0(kρ) dk` by a composite 16-point Gauss–Legendre rule on
//! panels of width `min(2π/ρ_max, 1/(ε_max H), 1/(2(|Δz| + 2d_near)))` (`H` the stack height)
//! up to `k_max = 40/(|Δz| + 2 d_near)` (the remainder is then `≲ e^{−40}` of its size). The
//! rule is verified at construction against one with half the panel width and 1.25 × the
//! range at `ρ = 0, 0.3 ρ_max, ρ_max`, and refined until they agree well inside the accuracy.
//! `J0`, `J1` from `puruspe` (checked to rounding against Bessel's integral in the tests).
//!
//! For each pair of requested faces, `r` is tabulated once on `ρ ∈ [0, ρ_max]` in the
//! stretched variable `σ = ρ / (ρ + L)` ∈ `[0, 1)`, `L = |Δz| + 2 d_near`, with piecewise cubic
//! Hermite interpolation (values and exact derivatives `r′(ρ) = −∫ (f − f_x) k J1(kρ) dk`).
//! The stretch costs one division per lookup, and it suits both ends: near `ρ = 0` the
//! remainder is an even analytic function of `ρ ≈ Lσ`, and far away it is a series in odd
//! powers of `1/ρ` (multipole-like terms of the images it stands for), i.e. analytic in
//! `1 − σ = L/(ρ + L)` at `σ = 1`. Starting from 16 equal intervals, intervals are bisected
//! until the interpolant at every
//! interval midpoint (where the Hermite error `∝ t²(1 − t)²` peaks) agrees with the direct
//! integral to `accuracy/4` of the potential there. Where the potential is far smaller than the
//! closed-form terms — between two grounds it decays like `e^{−πρ/b}` — the tolerance is
//! floored at `accuracy/4 · 10⁻³` of the closed-form terms plus the rounding level of the
//! transform (`32 ε_mach Σ|w_j r(k_j)|`); there the result is accurate in absolute, not
//! relative, terms (a modal/residue series would be needed for relative accuracy at
//! `ρ ≫ b`). A table that would exceed [`MAX_TABLE_NODES`] nodes is refused with an error naming
//! the face pair. Beyond `ρ_max`, and for heights that are not requested faces, the remainder
//! is integrated directly (slow: a fresh quadrature of ≳ 10⁴ nodes per call). Heights between
//! nodes, or outside an open side, are handled by cutting a layer in two (or adding an air
//! layer) so that they become nodes; points on or beyond a ground see zero potential.
//!
//! # Between two grounds: the modal series far out
//!
//! Closed by two grounds, the potential decays like `e^{−κ_1 ρ}` (`κ_1 ≈ π/H`, `H` the stack
//! height) and soon lies far below the extracted images it is the small difference of; the
//! remainder table, accurate to a fraction of those images, then no longer carries any relative
//! accuracy (and far H-matrix blocks would be noise that no low rank represents). From
//! `ρ = H` on the potential is therefore taken from the modal series
//! `2π ε0 G = Σ_n ψ_n(z) ψ_n(z′) K0(κ_n ρ)` (module `modal`, private), with enough modes for the
//! accuracy at `ρ = H` and tabulated per pair of faces (nearly linear in `ρ`, so the Hermite
//! error of the exponential decay is relative everywhere). The remainder table then only spans
//! `[0, H]`. The two forms agree to the accuracy at the switch (tested against the closed-form
//! series of one dielectric and against direct integration of a two-layer stack).
//!
//! # Panel integrals
//!
//! Far from the panel (where a Gauss rule of order ≤ 6 meets the accuracy for `1/R`,
//! [`rule_for`]) the extracted terms are integrated by that rule and the remainder by the rule
//! its own smoothness length allows (below). Near it the extracted terms
//! are integrated in closed form ([`inverse_distance`]: the true distance from the observer to
//! a point of the panel is exactly `√(ρ² + (z − z′)²)`, and the second term is the same panel
//! moved to `D` below the observer) and the smooth remainder by Gauss rules
//! chosen as for `1/R` at the distance `√(ρ_⊥² + L²)` (`ρ_⊥` the horizontal distance to the
//! panel, `L = |Δz| + 2 d_near` the distance of the nearest image), the panel being split into
//! four until such a rule exists.

use crate::hermite::HermiteTable;
use crate::modal::{Modes, k0_scaled, k1_scaled};
use crate::panel::inverse_distance;
use crate::quadrature::{gauss_legendre, panel_rule, rule_for};
use crate::{EPS0, GreenError, Panel, StaticGreen};
use std::f64::consts::PI;

/// Largest number of nodes of one remainder table before [`LayeredGreen::new`] gives up.
pub const MAX_TABLE_NODES: usize = 20_000;

/// Gauss–Legendre points per panel of the Hankel-transform rule.
const K_ORDER: usize = 16;
/// `k_max (|Δz| + 2 d_near)`: the remainder is below `e^{−40}` of its size there.
const K_RANGE: f64 = 40.0;
/// The table's tolerance floor, relative to the extracted term (see the module docs).
const FLOOR: f64 = 1e-3;
/// Largest number of Gauss panels of one Hankel rule (16 nodes each).
const MAX_K_PANELS: usize = 250_000;
/// Rounding noise of a transform, in units of `ε_mach Σ|w_j r(k_j)|`: a floor under the
/// table's tolerance.
const NOISE: f64 = 32.0;
/// `ρ / H` (`H` the stack height) from which the modal series replaces images and remainder
/// between two grounds (the first left-out mode is then below `e^{−π}` per mode).
const MODAL_FROM: f64 = 1.0;
/// Largest number of panel quarterings for the remainder's quadrature.
const MAX_SPLIT_DEPTH: usize = 10;

/// One dielectric layer of a stack-up.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LayerSpec {
    /// Thickness in metres (finite, `> 0`).
    pub thickness: f64,
    /// Relative permittivity (finite, `≥ 1`).
    pub eps_r: f64,
}

/// The stack-up as the spectral kernel sees it.
#[derive(Clone, Debug)]
struct Stack {
    /// Thickness of each layer (m).
    d: Vec<f64>,
    /// Relative permittivity of each layer.
    eps: Vec<f64>,
    ground_below: bool,
    ground_above: bool,
}

impl Stack {
    fn n_nodes(&self) -> usize {
        self.d.len() + 1
    }

    /// Heights of the nodes (m).
    fn heights(&self) -> Vec<f64> {
        let mut z = vec![0.0; self.n_nodes()];
        for i in 0..self.d.len() {
            z[i + 1] = z[i] + self.d[i];
        }
        z
    }

    /// Permittivity just below (`ε⁻`) and above (`ε⁺`) node `j` (air outside the stack).
    fn eps_around(&self, j: usize) -> (f64, f64) {
        let below = if j == 0 { 1.0 } else { self.eps[j - 1] };
        let above = if j == self.d.len() { 1.0 } else { self.eps[j] };
        (below, above)
    }

    /// Whether node `j` lies on a ground plane.
    fn on_ground(&self, j: usize) -> bool {
        (j == 0 && self.ground_below) || (j == self.d.len() && self.ground_above)
    }

    /// The large-`k` coefficient `A` of `f_∞ = A e^{−k|Δz|}` between nodes `s` and `t`.
    fn asymptotic_coefficient(&self, s: usize, t: usize) -> f64 {
        let (lo, hi) = (s.min(t), s.max(t));
        let mut a = 1.0;
        for j in lo..=hi {
            let (e0, e1) = self.eps_around(j);
            a /= e0 + e1;
        }
        for i in lo..hi {
            a *= 2.0 * self.eps[i];
        }
        a
    }

    /// `f(0⁺)`: `½` with air on both sides (the chain's nodes all at one potential, two
    /// air half spaces of admittance 1), `0` with a ground.
    fn static_limit(&self) -> f64 {
        if self.ground_below || self.ground_above { 0.0 } else { 0.5 }
    }

    /// The terms extracted in closed form between nodes `s` and `t` (see [`Extraction`]).
    fn extraction(&self, s: usize, t: usize) -> Extraction {
        let z = self.heights();
        let dz = (z[t] - z[s]).abs();
        let a = self.asymptotic_coefficient(s, t);
        Extraction { a, dz, c: self.static_limit() - a, d_img: dz + 2.0 * self.d_near(s, t) }
    }

    /// `f(k; t, s) = [C(k)⁻¹]_{ts}` (see the module docs), for `k > 0`. Nodes on grounds give 0.
    fn kernel(&self, k: f64, t: usize, s: usize) -> f64 {
        if self.on_ground(s) || self.on_ground(t) {
            return 0.0;
        }
        let n = self.d.len();
        let lo = usize::from(self.ground_below);
        let hi = if self.ground_above { n - 1 } else { n };
        let m = hi - lo + 1;
        // diag[j], off[j] couples local j and j+1.
        let mut diag = vec![0.0; m];
        let mut off = vec![0.0; m.saturating_sub(1)];
        for i in 0..n {
            let x = k * self.d[i];
            let e = (-x).exp();
            let den = -(-2.0 * x).exp_m1();
            let coth = self.eps[i] * (1.0 + e * e) / den;
            let csch = self.eps[i] * 2.0 * e / den;
            // Layer i joins nodes i and i+1.
            if i >= lo && i <= hi {
                diag[i - lo] += coth;
            }
            if i + 1 >= lo && i < hi {
                diag[i + 1 - lo] += coth;
            }
            if i >= lo && i < hi {
                off[i - lo] = -csch;
            }
        }
        if !self.ground_below {
            diag[0] += 1.0;
        }
        if !self.ground_above {
            diag[m - 1] += 1.0;
        }
        // Thomas algorithm for C V = e_s.
        let mut c = vec![0.0; m];
        let mut rhs = vec![0.0; m];
        rhs[s - lo] = 1.0;
        let mut b = diag[0];
        c[0] = if m > 1 { off[0] / b } else { 0.0 };
        rhs[0] /= b;
        for j in 1..m {
            b = diag[j] - off[j - 1] * c[j - 1];
            if j + 1 < m {
                c[j] = off[j] / b;
            }
            rhs[j] = (rhs[j] - off[j - 1] * rhs[j - 1]) / b;
        }
        for j in (0..m - 1).rev() {
            rhs[j] -= c[j] * rhs[j + 1];
        }
        rhs[t - lo]
    }

    /// Smallest layer thickness (m).
    #[cfg(test)]
    fn d_min(&self) -> f64 {
        self.d.iter().copied().fold(f64::INFINITY, f64::min)
    }

    /// Thinnest layer touching nodes `s`, `t` or lying between them (m): the remainder's
    /// decay `e^{−k(|Δz| + 2 d_near)}` is set by the nearest reflecting face, so thinner
    /// layers further away do not matter.
    fn d_near(&self, s: usize, t: usize) -> f64 {
        let (lo, hi) = (s.min(t), s.max(t));
        let first = lo.saturating_sub(1);
        let last = hi.min(self.d.len() - 1);
        self.d[first..=last].iter().copied().fold(f64::INFINITY, f64::min)
    }

    /// Stack height (m) times the largest permittivity: the length on which `f` varies at
    /// small `k`.
    fn slow_length(&self) -> f64 {
        let h: f64 = self.d.iter().sum();
        h * self.eps.iter().copied().fold(1.0, f64::max)
    }
}

/// The part of the kernel handled in closed form between two nodes:
/// `f_x(k) = A e^{−k|Δz|} + c e^{−kD}` ↔ `A/√(ρ² + Δz²) + c/√(ρ² + D²)`, with `A` the large-`k`
/// coefficient, `D = |Δz| + 2 d_near` and `c = f(0⁺) − A`, so that the remainder `f − f_x` both
/// decays like `e^{−k(|Δz| + 2 d_near)}` and vanishes at `k = 0` (its transform then decays
/// like `ρ⁻³`: no large `1/ρ` tails cancelling in the table).
#[derive(Clone, Copy, Debug)]
struct Extraction {
    a: f64,
    dz: f64,
    c: f64,
    d_img: f64,
}

impl Extraction {
    fn spectral(&self, k: f64) -> f64 {
        self.a * (-k * self.dz).exp() + self.c * (-k * self.d_img).exp()
    }
    fn spatial(&self, rho: f64) -> f64 {
        self.a / (rho * rho + self.dz * self.dz).sqrt()
            + self.c / (rho * rho + self.d_img * self.d_img).sqrt()
    }
}

/// Samples of the remainder `f − f_∞` times the weights of a composite Gauss–Legendre rule on
/// `[0, k_max]`: `r(ρ) ≈ Σ_j w_j J0(k_j ρ)`.
#[derive(Clone, Debug)]
struct HankelRule {
    k: Vec<f64>,
    w: Vec<f64>,
    /// Rounding level of a transform, `NOISE ε_mach Σ_j |w_j|`.
    noise: f64,
}

impl HankelRule {
    fn new(stack: &Stack, t: usize, s: usize, x: &Extraction, width: f64, k_max: f64) -> Self {
        let (gx, gw) = gauss_legendre(K_ORDER);
        let panels = ((k_max / width).ceil() as usize).clamp(1, MAX_K_PANELS);
        let h = k_max / panels as f64;
        let mut k = Vec::with_capacity(panels * K_ORDER);
        let mut w = Vec::with_capacity(panels * K_ORDER);
        for p in 0..panels {
            let c = (p as f64 + 0.5) * h;
            for (xi, wi) in gx.iter().zip(&gw) {
                let kk = c + 0.5 * h * xi;
                let r = stack.kernel(kk, t, s) - x.spectral(kk);
                k.push(kk);
                w.push(0.5 * h * wi * r);
            }
        }
        let noise = NOISE * f64::EPSILON * w.iter().map(|w| w.abs()).sum::<f64>();
        Self { k, w, noise }
    }

    /// `r(ρ)`.
    fn value(&self, rho: f64) -> f64 {
        self.k.iter().zip(&self.w).map(|(k, w)| w * puruspe::bessel::Jn(0, k * rho)).sum()
    }

    /// `(r(ρ), r′(ρ))`.
    fn value_and_slope(&self, rho: f64) -> (f64, f64) {
        let mut v = 0.0;
        let mut dv = 0.0;
        for (k, w) in self.k.iter().zip(&self.w) {
            v += w * puruspe::bessel::Jn(0, k * rho);
            dv -= w * k * puruspe::bessel::Jn(1, k * rho);
        }
        (v, dv)
    }
}

/// One (unordered) pair of nodes: the closed-form terms, the remainder table, and, between two
/// grounds, the modal table used from `ρ_modal` on.
#[derive(Clone, Debug)]
struct PairTable {
    /// The two nodes, `lo ≤ hi`.
    lo: usize,
    hi: usize,
    /// The closed-form part.
    x: Extraction,
    /// Stretching length `L = |Δz| + 2 d_near` (m): the remainder is smooth on this scale.
    len: f64,
    /// The remainder `r(ρ)` on `[0, rem.end()]`.
    rem: HermiteTable,
    /// The Hankel rule behind the table.
    rule: HankelRule,
    /// Between two grounds: the modal form beyond `ρ_modal`.
    modal: Option<ModalTable>,
}

/// `2π ε0 G = M(ρ) = Σ_n c_n K0(κ_n ρ)` for `ρ ≥ ρ_modal`, tabulated (see [`crate::modal`]).
#[derive(Clone, Debug)]
struct ModalTable {
    /// `κ_1` (1/m): `M` varies no faster than `e^{−κ_1 ρ}`.
    kappa1: f64,
    from: f64,
    m: HermiteTable,
}

impl PairTable {
    /// The remainder `2π ε0 G − (closed-form terms)` at `ρ`.
    fn remainder(&self, stack: &Stack, rho: f64) -> f64 {
        if rho <= self.rem.end() {
            return self.rem.eval(rho);
        }
        match &self.modal {
            Some(md) if rho >= md.from => md.value(rho) - self.x.spatial(rho),
            _ => direct_remainder(stack, self.lo, self.hi, rho, self.rule.k.len()),
        }
    }

    /// `2π ε0 G` at `ρ`.
    #[inline]
    fn total(&self, stack: &Stack, rho: f64) -> f64 {
        match &self.modal {
            Some(md) if rho >= md.from => md.value(rho),
            _ if rho <= self.rem.end() => self.x.spatial(rho) + self.rem.eval(rho),
            _ => self.x.spatial(rho) + direct_remainder(stack, self.lo, self.hi, rho, self.rule.k.len()),
        }
    }
}

impl ModalTable {
    #[inline]
    fn value(&self, rho: f64) -> f64 {
        self.m.eval(rho)
    }
}

/// Quasi-static Green's function of a planar stack-up (see the module docs for the method):
/// `G = (1/(2π ε0)) ∫₀^∞ f(k; z, z′) J0(kρ) dk` (V per C), evaluated as the extracted image
/// terms `(1/(2π ε0)) [A/√(ρ² + (z − z′)²) + c/√(ρ² + D²)]` plus a tabulated smooth
/// remainder.
#[derive(Clone, Debug)]
pub struct LayeredGreen {
    stack: Stack,
    heights: Vec<f64>,
    /// Tolerance for matching a height to a node (m).
    z_tol: f64,
    /// Node of each requested face (sorted, unique).
    nodes: Vec<usize>,
    /// Table of every unordered pair of requested nodes.
    tables: Vec<PairTable>,
    rho_max: f64,
    accuracy: f64,
    /// Between two grounds: the modes, used from `ρ ≥ MODAL_FROM · H` on.
    modes: Option<Modes>,
}

/// Width of the Hankel rule's panels and its range for a pair with extraction `x`, good up
/// to `rho_max`.
fn base_rule_params(stack: &Stack, x: &Extraction, rho_max: f64) -> (f64, f64) {
    let len = x.d_img;
    let mut width = (1.0 / stack.slow_length()).min(0.5 / len);
    if rho_max > 0.0 {
        width = width.min(2.0 * PI / rho_max);
    }
    (width, K_RANGE / len)
}

impl LayeredGreen {
    /// Stack-up of `layers` (bottom to top) with optional perfectly conducting planes under
    /// layer 0 (`ground_below`) and on top of the last layer (`ground_above`); air (`εr = 1`)
    /// beyond an open side. Conductors may sit on the faces `faces` (face `i` = top face of
    /// layer `i`, at height `Σ_{l≤i} d_l` above the bottom of layer 0, which is `z = 0`).
    /// Remainder tables are built for every pair of these faces for horizontal distances
    /// `ρ ≤ rho_max` (m; e.g. the layout's diameter); `accuracy` is the relative accuracy of
    /// point and panel potentials.
    ///
    /// Errors: a layer with non-finite or non-positive thickness ([`GreenError::Geometry`]) or
    /// permittivity below 1 ([`GreenError::BadPermittivity`]), no layers, a face index out of
    /// range or on a ground plane, `rho_max` negative or not finite, `accuracy ∉ (0, 1)`
    /// ([`GreenError::BadAccuracy`]), and a remainder table that cannot reach the accuracy
    /// within [`MAX_TABLE_NODES`] nodes (naming the face pair).
    pub fn new(
        layers: &[LayerSpec],
        ground_below: bool,
        ground_above: bool,
        faces: &[usize],
        rho_max: f64,
        accuracy: f64,
    ) -> Result<Self, GreenError> {
        if layers.is_empty() {
            return Err(GreenError::Geometry("a layered stack-up needs at least one layer".into()));
        }
        for (i, l) in layers.iter().enumerate() {
            if !(l.thickness.is_finite() && l.thickness > 0.0) {
                return Err(GreenError::Geometry(format!(
                    "layer {i}: thickness must be finite and > 0 (got {} m)",
                    l.thickness
                )));
            }
            if !(l.eps_r.is_finite() && l.eps_r >= 1.0) {
                return Err(GreenError::BadPermittivity(l.eps_r));
            }
        }
        if !(accuracy > 0.0 && accuracy < 1.0) {
            return Err(GreenError::BadAccuracy(accuracy));
        }
        if !(rho_max.is_finite() && rho_max >= 0.0) {
            return Err(GreenError::Geometry(format!(
                "largest horizontal distance rho_max must be finite and ≥ 0 (got {rho_max} m)"
            )));
        }
        let n = layers.len();
        let stack = Stack {
            d: layers.iter().map(|l| l.thickness).collect(),
            eps: layers.iter().map(|l| l.eps_r).collect(),
            ground_below,
            ground_above,
        };
        let mut nodes = Vec::with_capacity(faces.len());
        for &f in faces {
            if f >= n {
                return Err(GreenError::Geometry(format!(
                    "face {f} does not exist: the stack-up has {n} layers (faces 0..={})",
                    n - 1
                )));
            }
            if stack.on_ground(f + 1) {
                return Err(GreenError::Geometry(format!(
                    "face {f} (top of the last layer) lies on the upper ground plane"
                )));
            }
            nodes.push(f + 1);
        }
        nodes.sort_unstable();
        nodes.dedup();
        let heights = stack.heights();
        let z_tol = 1e-12 * heights[n];
        let modal_from = MODAL_FROM * heights[n];
        let modes = if ground_below && ground_above && rho_max > modal_from {
            // Enough modes that the first one left out is below accuracy/100 of the first at
            // ρ_modal, with e⁸ to spare for the amplitudes ψ_n(z)ψ_n(z′).
            let spread = ((100.0 / accuracy).ln() + 8.0) / modal_from;
            Some(crate::modal::modes(&stack.d, &stack.eps, spread)?)
        } else {
            None
        };
        let mut g = Self { stack, heights, z_tol, nodes, tables: Vec::new(), rho_max, accuracy, modes };
        for (a, &lo) in g.nodes.iter().enumerate() {
            for &hi in &g.nodes[a..] {
                let table = g.build_table(lo, hi)?;
                g.tables.push(table);
            }
        }
        Ok(g)
    }

    /// Number of nodes of each remainder table, as `(lower face, upper face, nodes)` (face
    /// indices as in [`LayeredGreen::new`]).
    pub fn table_sizes(&self) -> Vec<(usize, usize, usize)> {
        self.tables.iter().map(|t| (t.lo - 1, t.hi - 1, t.rem.nodes())).collect()
    }

    /// Spectral-unit tolerance for the remainder at `ρ` (see the module docs), given the
    /// remainder there.
    fn tolerance(&self, x: &Extraction, rule: &HankelRule, rho: f64, r: f64) -> f64 {
        let lead = x.spatial(rho);
        0.25 * self.accuracy * (lead + r).abs().max(FLOOR * lead.abs()) + rule.noise
    }

    /// Largest `ρ` of the remainder tables (m): `ρ_max`, or `ρ_modal` when the modal form takes
    /// over beyond it.
    fn remainder_range(&self) -> f64 {
        if self.modes.is_some() {
            self.rho_max.min(MODAL_FROM * self.heights[self.heights.len() - 1])
        } else {
            self.rho_max
        }
    }

    /// Build the Hankel rule for a pair (verified by refinement), its table, and the modal table
    /// between two grounds.
    fn build_table(&self, lo: usize, hi: usize) -> Result<PairTable, GreenError> {
        let st = &self.stack;
        let x = st.extraction(lo, hi);
        let len = x.d_img;
        let pair_name = || format!("faces {} and {}", lo - 1, hi - 1);
        let rho_end = self.remainder_range();
        let (mut width, mut k_max) = base_rule_params(st, &x, rho_end);
        let panels = k_max / width;
        if panels.is_nan() || panels > (MAX_K_PANELS / 8) as f64 {
            return Err(GreenError::Geometry(format!(
                "layered Green's function, {}: the spectral integral would need more than {} \
                 Gauss panels (ρ_max = {} m is too large for the thinnest layer {} m, or the \
                 permittivities too high)",
                pair_name(),
                MAX_K_PANELS / 8,
                rho_end,
                st.d_near(lo, hi)
            )));
        }
        // Verify the Hankel rule against a finer, longer one at a few distances.
        let probes = [0.0, 0.3 * rho_end, rho_end];
        let mut rule = HankelRule::new(st, hi, lo, &x, width, k_max);
        let mut verified = false;
        for _ in 0..5 {
            let finer = HankelRule::new(st, hi, lo, &x, 0.5 * width, 1.25 * k_max);
            let ok = probes.iter().all(|&rho| {
                let (r0, r1) = (rule.value(rho), finer.value(rho));
                (r0 - r1).abs() <= 0.05 * self.tolerance(&x, &rule, rho.max(1e-3 * len), r1)
            });
            if ok {
                verified = true;
                break;
            }
            width *= 0.5;
            k_max *= 1.25;
            rule = finer;
        }
        if !verified {
            return Err(GreenError::Geometry(format!(
                "layered Green's function, {}: the spectral integral did not converge to accuracy {:e}",
                pair_name(),
                self.accuracy
            )));
        }
        let too_many = |what: &str, upto: f64| {
            GreenError::Geometry(format!(
                "layered Green's function, {}: the {what} table needs more than {} nodes for accuracy \
                 {:e} up to ρ = {} m",
                pair_name(),
                MAX_TABLE_NODES,
                self.accuracy,
                upto
            ))
        };
        let rem = HermiteTable::build(
            0.0,
            len,
            rho_end,
            &|rho| rule.value_and_slope(rho),
            |rho, v| self.tolerance(&x, &rule, rho, v),
            MAX_TABLE_NODES,
        )
        .map_err(|_| too_many("remainder", rho_end))?;
        let modal = match &self.modes {
            Some(md) if self.rho_max > rho_end => {
                let c: Vec<f64> = md.psi.iter().map(|p| p[lo] * p[hi]).collect();
                // M(ρ) = Σ c_n K0(κ_n ρ), M′ = −Σ c_n κ_n K1(κ_n ρ), from the scaled functions
                // (no overflow of the parts, underflow of the product to 0 far out).
                let m = |rho: f64| {
                    let (mut v, mut dv) = (0.0, 0.0);
                    for (&k, &cn) in md.kappa.iter().zip(&c) {
                        let decay = (-k * rho).exp();
                        v += cn * decay * k0_scaled(k * rho);
                        dv -= cn * decay * k * k1_scaled(k * rho);
                    }
                    (v, dv)
                };
                // Nearly linear in ρ (stretch length far beyond the range): the relative
                // Hermite error of an exponential is the same at every ρ for a fixed step.
                let table = HermiteTable::build(
                    rho_end,
                    100.0 * self.rho_max,
                    self.rho_max,
                    &m,
                    |_, v| (0.25 * self.accuracy * v.abs()).max(1e-280),
                    MAX_TABLE_NODES,
                )
                .map_err(|_| too_many("modal", self.rho_max))?;
                Some(ModalTable { kappa1: md.kappa[0], from: rho_end, m: table })
            }
            _ => None,
        };
        Ok(PairTable { lo, hi, x, len, rem, rule, modal })
    }

    /// Node at height `z`, if any.
    fn node_at(&self, z: f64) -> Option<usize> {
        self.heights.iter().position(|&h| (h - z).abs() <= self.z_tol)
    }

    fn table(&self, s: usize, t: usize) -> Option<&PairTable> {
        let (lo, hi) = (s.min(t), s.max(t));
        self.tables.iter().find(|p| p.lo == lo && p.hi == hi)
    }

    /// `2π ε0 G` at horizontal distance `rho` between heights `z` and `zs`.
    fn scaled(&self, rho: f64, z: f64, zs: f64) -> f64 {
        match (self.node_at(z), self.node_at(zs)) {
            (Some(t), Some(s)) => {
                if self.stack.on_ground(t) || self.stack.on_ground(s) {
                    return 0.0;
                }
                match self.table(s, t) {
                    Some(p) => p.total(&self.stack, rho),
                    None => self.direct(rho, t, s),
                }
            }
            _ => self.off_node(rho, z, zs),
        }
    }

    /// The smooth remainder `2π ε0 G − (extracted terms of x)` at `ρ`, without forming the
    /// (possibly infinite, at `ρ = 0` on one face) extracted terms when a table holds it.
    fn remainder(&self, rho: f64, z: f64, zs: f64, x: &Extraction) -> f64 {
        if let (Some(t), Some(s)) = (self.node_at(z), self.node_at(zs))
            && let Some(p) = self.table(s, t)
        {
            return p.remainder(&self.stack, rho);
        }
        // No table (off the faces): difference of the full kernel and the extracted terms, at a
        // distance kept off the singular point (the remainder is smooth there).
        let rho = rho.max(1e-9 * x.d_img);
        self.scaled(rho, z, zs) - x.spatial(rho)
    }

    /// `2π ε0 G` between nodes by direct integration (no table).
    fn direct(&self, rho: f64, t: usize, s: usize) -> f64 {
        self.stack.extraction(s, t).spatial(rho) + direct_remainder(&self.stack, s, t, rho, 0)
    }

    /// `2π ε0 G` for heights that are not nodes, integrated directly on the stack of
    /// [`LayeredGreen::split_stack`]. Points inside a ground plane or beyond it see zero
    /// potential.
    fn off_node(&self, rho: f64, z: f64, zs: f64) -> f64 {
        match self.split_stack(z, zs) {
            Some((st, t, s)) => st.extraction(s, t).spatial(rho) + direct_remainder(&st, s, t, rho, 0),
            None => 0.0,
        }
    }

    /// A stack with nodes at the heights `z`, `zs` (a layer cut in two, or an air layer added
    /// outside an open side) and those nodes; `None` when a height lies on or beyond a ground.
    fn split_stack(&self, z: f64, zs: f64) -> Option<(Stack, usize, usize)> {
        let top0 = self.heights[self.heights.len() - 1];
        for h in [z, zs] {
            if (h < self.z_tol && self.stack.ground_below)
                || (h > top0 - self.z_tol && self.stack.ground_above)
            {
                return None;
            }
        }
        let mut st = self.stack.clone();
        // Work in heights measured from the new bottom (an air layer added below if needed).
        let shift = z.min(zs).min(0.0);
        if shift < -self.z_tol {
            st.d.insert(0, -shift);
            st.eps.insert(0, 1.0);
        }
        let (z1, zs1) = (z - shift, zs - shift);
        for h in [z1, zs1] {
            let hz = st.heights();
            let top = hz[hz.len() - 1];
            if hz.iter().any(|&x| (x - h).abs() <= self.z_tol) {
                continue;
            }
            if h > top {
                st.d.push(h - top);
                st.eps.push(1.0);
            } else {
                let i = (0..st.d.len()).find(|&i| hz[i + 1] > h).unwrap_or(st.d.len() - 1);
                st.d.insert(i + 1, hz[i + 1] - h);
                st.eps.insert(i + 1, st.eps[i]);
                st.d[i] = h - hz[i];
            }
        }
        let hz = st.heights();
        let find = |h: f64| {
            hz.iter()
                .enumerate()
                .min_by(|a, b| (a.1 - h).abs().total_cmp(&(b.1 - h).abs()))
                .map_or(0, |(i, _)| i)
        };
        let (t, s) = (find(z1), find(zs1));
        (!st.on_ground(t) && !st.on_ground(s)).then_some((st, t, s))
    }

    /// Relative accuracy the function was built with.
    pub fn accuracy(&self) -> f64 {
        self.accuracy
    }
}

/// `∫₀^∞ (f − f_∞) J0(kρ) dk` by a fresh composite Gauss rule fine enough for `ρ` (at least
/// `min_nodes` nodes, so that it is never coarser than a table's rule).
fn direct_remainder(stack: &Stack, s: usize, t: usize, rho: f64, min_nodes: usize) -> f64 {
    let x = stack.extraction(s, t);
    let (mut width, k_max) = base_rule_params(stack, &x, rho);
    let min_panels = min_nodes.div_ceil(K_ORDER);
    if min_panels > 0 {
        width = width.min(k_max / min_panels as f64);
    }
    HankelRule::new(stack, t, s, &x, 0.5 * width, 1.25 * k_max).value(rho)
}

impl StaticGreen for LayeredGreen {
    /// `G = (1/(2π ε0)) [A/√(ρ² + (z − z′)²) + c/√(ρ² + D²) + r(ρ; z, z′)]` (V per C).
    fn potential(&self, obs: [f64; 3], src: [f64; 3]) -> f64 {
        let rho = rho_xy(obs, src);
        self.scaled(rho, obs[2], src[2]) / (2.0 * PI * EPS0)
    }

    fn panel_potential(&self, obs: [f64; 3], panel: &Panel) -> f64 {
        let zs = panel.z();
        let dist = panel.distance(obs);
        // Far: the closed-form terms by the Gauss rule that `1/R` needs at this distance, the
        // smooth remainder by the (often lower-order) rule its own smoothness length allows.
        if let Some((nx, ny)) = rule_for(panel, dist, self.accuracy) {
            let pair = match (self.node_at(obs[2]), self.node_at(zs)) {
                (Some(t), Some(s)) if !self.stack.on_ground(t) && !self.stack.on_ground(s) => {
                    self.table(s, t)
                }
                _ => None,
            };
            let integral = match pair {
                Some(p) => {
                    let flat = panel.distance([obs[0], obs[1], zs]);
                    match &p.modal {
                        // Near or beyond the switch to the modal form: the whole kernel by one
                        // rule, fine enough for `e^{−κ_1 ρ}` as well as for `1/R`. (An n-point
                        // Gauss rule integrates `e^{−κx}` over a side `s` to the accuracy it
                        // reaches for `1/R` at a distance of about 2.6/κ for n = 2 and 3.2/κ for
                        // n = 3, from the rule's error term (Abramowitz & Stegun 25.4.30); 2/κ_1
                        // keeps a margin for the higher modes near the switch.)
                        Some(md) if flat + 2.0 * panel.max_side() >= md.from => smooth_integral(
                            panel,
                            obs,
                            (obs[2] - zs).abs(),
                            2.0 / md.kappa1,
                            self.accuracy,
                            0,
                            &|q| p.total(&self.stack, rho_xy(obs, q)),
                        ),
                        _ => {
                            let smooth = smooth_rule(panel, obs, p.len, self.accuracy).unwrap_or((nx, ny));
                            let rem = |rho: f64| p.remainder(&self.stack, rho);
                            if smooth == (nx, ny) {
                                panel_rule(panel, nx, ny, |q| {
                                    let rho = rho_xy(obs, q);
                                    p.x.spatial(rho) + rem(rho)
                                })
                            } else {
                                panel_rule(panel, nx, ny, |q| p.x.spatial(rho_xy(obs, q)))
                                    + panel_rule(panel, smooth.0, smooth.1, |q| rem(rho_xy(obs, q)))
                            }
                        }
                    }
                }
                None => panel_rule(panel, nx, ny, |q| self.scaled(rho_xy(obs, q), obs[2], zs)),
            };
            return integral / (2.0 * PI * EPS0 * panel.area());
        }
        let x = match (self.node_at(obs[2]), self.node_at(zs)) {
            (Some(t), Some(s)) if !self.stack.on_ground(t) && !self.stack.on_ground(s) => {
                self.stack.extraction(s, t)
            }
            (Some(_), Some(_)) => return 0.0,
            _ => match self.split_stack(obs[2], zs) {
                Some((st, t, s)) => st.extraction(s, t),
                None => return 0.0,
            },
        };
        let singular = x.a * inverse_distance(obs, panel, self.accuracy)
            + x.c * inverse_distance(obs, &panel.at(obs[2] - x.d_img), self.accuracy);
        let len = x.d_img;
        let remainder = smooth_integral(panel, obs, len, f64::INFINITY, self.accuracy, 0, &|q| {
            self.remainder(rho_xy(obs, q), obs[2], zs, &x)
        });
        (singular + remainder) / (2.0 * PI * EPS0 * panel.area())
    }

    fn describe(&self) -> String {
        let layers: Vec<String> =
            self.stack.d.iter().zip(&self.stack.eps).map(|(d, e)| format!("{d} m εr = {e}")).collect();
        format!(
            "layered stack-up [{}] bottom to top, {} below, {} above (images + tabulated Sommerfeld remainder)",
            layers.join(", "),
            if self.stack.ground_below { "ground" } else { "air" },
            if self.stack.ground_above { "ground" } else { "air" }
        )
    }
}

/// Horizontal distance `ρ` (m) between two points.
#[inline]
fn rho_xy(a: [f64; 3], b: [f64; 3]) -> f64 {
    let (dx, dy) = (a[0] - b[0], a[1] - b[1]);
    (dx * dx + dy * dy).sqrt()
}

/// The Gauss rule for a function smooth on the length `len` over `panel` as seen from `obs`:
/// the rule [`rule_for`] gives `1/R` at the distance `√(ρ_⊥² + len²)` (`ρ_⊥` the horizontal
/// distance from `obs` to the panel), `None` when no rule of order ≤ 6 suffices.
fn smooth_rule(panel: &Panel, obs: [f64; 3], len: f64, accuracy: f64) -> Option<(usize, usize)> {
    let flat = panel.distance([obs[0], obs[1], panel.z()]);
    rule_for(panel, (flat * flat + len * len).sqrt(), accuracy)
}

/// `∫∫_panel f dA` for `f` smooth on the length `min(√(ρ_⊥² + len²), cap)` (its nearest
/// singularity lies at vertical distance `≥ len` from the panel's plane, and it varies no
/// faster than `e^{−ρ/cap}`): the rule of [`smooth_rule`] at that length, the panel quartered
/// until such a rule exists.
fn smooth_integral(
    panel: &Panel,
    obs: [f64; 3],
    len: f64,
    cap: f64,
    accuracy: f64,
    depth: usize,
    f: &dyn Fn([f64; 3]) -> f64,
) -> f64 {
    let flat = panel.distance([obs[0], obs[1], panel.z()]);
    match rule_for(panel, (flat * flat + len * len).sqrt().min(cap), accuracy) {
        Some((nx, ny)) => panel_rule(panel, nx, ny, f),
        None if depth >= MAX_SPLIT_DEPTH => {
            panel_rule(panel, crate::quadrature::MAX_ORDER, crate::quadrature::MAX_ORDER, f)
        }
        None => {
            quarter(panel).iter().map(|p| smooth_integral(p, obs, len, cap, accuracy, depth + 1, f)).sum()
        }
    }
}

/// A panel cut into four: a rectangle into four equal rectangles, a triangle into its four
/// midpoint triangles (all counter-clockwise).
fn quarter(panel: &Panel) -> [Panel; 4] {
    match *panel {
        Panel::Rect { x0, x1, y0, y1, z } => {
            let (xm, ym) = (0.5 * (x0 + x1), 0.5 * (y0 + y1));
            [
                Panel::Rect { x0, x1: xm, y0, y1: ym, z },
                Panel::Rect { x0: xm, x1, y0, y1: ym, z },
                Panel::Rect { x0, x1: xm, y0: ym, y1, z },
                Panel::Rect { x0: xm, x1, y0: ym, y1, z },
            ]
        }
        Panel::Triangle { v: [a, b, c], z } => {
            let mid = |p: [f64; 2], q: [f64; 2]| [0.5 * (p[0] + q[0]), 0.5 * (p[1] + q[1])];
            let (ab, bc, ca) = (mid(a, b), mid(b, c), mid(c, a));
            [
                Panel::Triangle { v: [a, ab, ca], z },
                Panel::Triangle { v: [ab, b, bc], z },
                Panel::Triangle { v: [ca, bc, c], z },
                Panel::Triangle { v: [ab, bc, ca], z },
            ]
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{FreeSpace, GroundBelow, TwoGrounds};
    use std::time::Instant;

    fn layer(thickness: f64, eps_r: f64) -> LayerSpec {
        LayerSpec { thickness, eps_r }
    }

    /// `puruspe`'s J0 and J1 against Bessel's integral `Jn(x) = (1/π)∫₀^π cos(nθ − x sin θ) dθ`
    /// (Abramowitz & Stegun 9.1.21), by the trapezoid rule, which converges geometrically for
    /// this periodic integrand (4096 points: exact to rounding for `x ≤ 2000`).
    #[test]
    fn bessel_functions_are_accurate() {
        let m = 4096;
        for x in [0.3, 2.0, 7.9, 8.1, 30.0, 123.4, 800.0, 2000.0] {
            for n in [0u32, 1] {
                let mut s = 0.0;
                for i in 0..m {
                    let th = PI * (i as f64 + 0.5) / m as f64;
                    s += (n as f64 * th - x * th.sin()).cos();
                }
                let want = s / m as f64;
                let got = puruspe::bessel::Jn(n, x);
                // Argument rounding: |Jn′| x ε ≈ x ε √(2/(πx)).
                assert!(
                    (got - want).abs() < 2e-15 + 4.0 * f64::EPSILON * x.sqrt(),
                    "J{n}({x}): {got} vs {want}"
                );
            }
        }
    }

    /// The tridiagonal kernel against an independent transmission-line computation: input
    /// admittances looking up / down from each node by
    /// `Y_in = ε (Y_L + ε tanh kd)/(ε + Y_L tanh kd)` (air: `Y = 1`; ground: `ε coth kd`),
    /// `f = 1/(Y_up + Y_down)` on the source node, and the potential carried from node to node by
    /// the voltage transfer `1/(cosh kd + (Y_L/ε) sinh kd)` of each layer.
    #[test]
    fn kernel_matches_admittance_recursion() {
        let stacks = [
            Stack {
                d: vec![0.2, 0.1, 0.35],
                eps: vec![4.4, 3.6, 1.0],
                ground_below: true,
                ground_above: false,
            },
            Stack {
                d: vec![0.2, 0.1, 0.35],
                eps: vec![4.4, 3.6, 2.2],
                ground_below: false,
                ground_above: false,
            },
            Stack {
                d: vec![0.3, 0.1, 0.2, 0.4],
                eps: vec![2.0, 9.8, 1.0, 3.0],
                ground_below: true,
                ground_above: true,
            },
            Stack { d: vec![0.3, 0.5], eps: vec![6.0, 1.5], ground_below: false, ground_above: true },
        ];
        for st in &stacks {
            let n = st.d.len();
            for k in [0.01, 0.3, 1.0, 4.0, 20.0] {
                // Admittance looking up from node j (the region above it), and down.
                let mut up = vec![0.0; n + 1];
                up[n] = if st.ground_above { f64::INFINITY } else { 1.0 };
                for i in (0..n).rev() {
                    let (e, th) = (st.eps[i], (k * st.d[i]).tanh());
                    up[i] = if up[i + 1].is_infinite() {
                        e / th
                    } else {
                        e * (up[i + 1] + e * th) / (e + up[i + 1] * th)
                    };
                }
                let mut down = vec![0.0; n + 1];
                down[0] = if st.ground_below { f64::INFINITY } else { 1.0 };
                for i in 0..n {
                    let (e, th) = (st.eps[i], (k * st.d[i]).tanh());
                    down[i + 1] = if down[i].is_infinite() {
                        e / th
                    } else {
                        e * (down[i] + e * th) / (e + down[i] * th)
                    };
                }
                for s in 0..=n {
                    if st.on_ground(s) {
                        continue;
                    }
                    let mut v = 1.0 / (up[s] + down[s]);
                    for t in s..=n {
                        if st.on_ground(t) {
                            continue;
                        }
                        let got = st.kernel(k, t, s);
                        // Small k: the chain's entries grow like 1/(k d) and cancel.
                        let tol = 1e-13 * (1.0 + 1.0 / (k * st.d_min()));
                        assert!(
                            (got - v).abs() < tol * v.abs().max(1e-300),
                            "k {k} s {s} t {t}: {got} vs {v}"
                        );
                        let rec = st.kernel(k, s, t);
                        assert!((got - rec).abs() < 1e-13 * got.abs(), "reciprocity k {k} s {s} t {t}");
                        if t < n {
                            let x = k * st.d[t];
                            v /= x.cosh() + up[t + 1] / st.eps[t] * x.sinh();
                        }
                    }
                }
                // The remainder vanishes at large k.
                for s in 1..n {
                    for t in s..n {
                        let big = 60.0 / st.d_near(s, t);
                        let dz = st.heights()[t] - st.heights()[s];
                        let a = st.asymptotic_coefficient(s, t);
                        let f = st.kernel(big, t, s);
                        let fa = a * (-big * dz).exp();
                        // ... and the static limit is f(0⁺).
                        let f0 = st.kernel(1e-9 / st.d_min(), t, s);
                        assert!((f0 - st.static_limit()).abs() < 1e-6, "s {s} t {t}: f(0⁺) = {f0}");
                        assert!((f - fa).abs() <= 1e-12 * fa, "s {s} t {t}: {f} vs {fa}");
                    }
                }
            }
        }
    }

    /// Image series for a slab `εr`, thickness `h`, on a ground, charge and observer on top:
    /// `4π ε0 h φ/q = (2h/(1+εr)) [1/ρ − (1−K) Σ_{n≥1} K^{n−1}/√(ρ² + (2nh)²)]`,
    /// `K = (1−εr)/(1+εr)` (Silvester 1968; Weeks 1970).
    fn slab_images(eps_r: f64, h: f64, rho: f64) -> f64 {
        let k = (1.0 - eps_r) / (1.0 + eps_r);
        let mut s = 0.0;
        let mut kn = 1.0;
        for n in 1..=4000 {
            s += kn / (rho * rho + (2.0 * n as f64 * h).powi(2)).sqrt();
            kn *= k;
            if kn.abs() < 1e-18 {
                break;
            }
        }
        2.0 * h / (1.0 + eps_r) * (1.0 / rho - (1.0 - k) * s)
    }

    /// The slab on a ground against the shared references' table (§5, Silvester 1968 / Weeks
    /// 1970: `4π ε0 h φ/q` at ρ/h = 0.1, 0.5, 1, 2, 5 for εr = 1, 4.4, 9.8) to its 6 digits, and
    /// against the image series at 1e-9 (built with accuracy 1e-9, ρ_max = 100 h), at more
    /// distances including beyond ρ_max.
    #[test]
    fn slab_on_ground_matches_table_and_images() {
        let h = 1e-3;
        let table = [
            (1.0, [9.50062, 1.51493, 0.552786, 0.146447, 0.0143047]),
            (4.4, [3.46999, 0.515059, 0.165757, 0.0310963, 0.00116186]),
            (9.8, [1.72913, 0.252047, 0.0783533, 0.0130999, 0.000284646]),
        ];
        for (eps_r, row) in table {
            let t0 = Instant::now();
            let g = LayeredGreen::new(&[layer(h, eps_r)], true, false, &[0], 100.0 * h, 1e-9).unwrap();
            eprintln!(
                "slab εr = {eps_r}, accuracy 1e-9: {:?} nodes, {:.3} s",
                g.table_sizes(),
                t0.elapsed().as_secs_f64()
            );
            let norm = |r: f64| 4.0 * PI * EPS0 * h * g.potential([r * h, 0.0, h], [0.0, 0.0, h]);
            for (r, want) in [0.1, 0.5, 1.0, 2.0, 5.0].into_iter().zip(row) {
                let got = norm(r);
                assert!((got - want).abs() <= 6e-6 * want, "εr {eps_r} ρ/h {r}: {got} vs {want}");
            }
            let mut worst: f64 = 0.0;
            for r in [1e-4, 0.01, 0.1, 0.37, 1.0, 2.5, 7.0, 13.0, 31.0, 64.0, 99.0, 100.0, 150.0] {
                let got = norm(r);
                let want = slab_images(eps_r, h, r * h);
                let rel = (got - want).abs() / want.abs();
                worst = worst.max(rel);
                assert!(rel <= 1e-9, "εr {eps_r} ρ/h {r}: {got} vs {want} (rel {rel:e})");
            }
            eprintln!("  worst relative error vs images: {worst:e}");
        }
    }

    /// Construction time and table size for the slab at accuracy 1e-6, ρ_max = 100 h (for the
    /// report; not an assertion on speed).
    #[test]
    fn slab_table_size_at_1e_6() {
        let h = 1e-3;
        for eps_r in [1.0, 4.4, 9.8] {
            let t0 = Instant::now();
            let g = LayeredGreen::new(&[layer(h, eps_r)], true, false, &[0], 100.0 * h, 1e-6).unwrap();
            let el = t0.elapsed().as_secs_f64();
            let mut worst: f64 = 0.0;
            for i in 0..400 {
                let r = 100.0 * (i as f64 + 0.5) / 400.0 * (i as f64 + 0.5) / 400.0 + 1e-3;
                let got = 4.0 * PI * EPS0 * h * g.potential([r * h, 0.0, h], [0.0, 0.0, h]);
                let want = slab_images(eps_r, h, r * h);
                worst = worst.max((got - want).abs() / want.abs());
            }
            eprintln!(
                "slab εr = {eps_r}, accuracy 1e-6, ρ_max = 100 h: {:?} nodes, {} k-nodes, {el:.3} s, worst rel {worst:e}",
                g.table_sizes(),
                g.tables[0].rule.k.len()
            );
            assert!(worst <= 1e-6);
        }
    }

    /// All layers εr = 1 over a ground: the image formula ([`GroundBelow`]) to 1e-9, every pair
    /// of three faces.
    #[test]
    fn air_over_ground_equals_image() {
        let layers = [layer(0.2e-3, 1.0), layer(0.1e-3, 1.0), layer(0.5e-3, 1.0)];
        let g = LayeredGreen::new(&layers, true, false, &[0, 1, 2], 20e-3, 1e-9).unwrap();
        let reference = GroundBelow::new(0.0, 1.0, 1e-9).unwrap();
        let zs = [0.2e-3, 0.3e-3, 0.8e-3];
        for &z in &zs {
            for &zp in &zs {
                for r in [0.0, 1e-6, 0.05e-3, 0.3e-3, 1e-3, 4e-3, 19e-3, 30e-3] {
                    if r == 0.0 && z == zp {
                        continue;
                    }
                    let got = g.potential([r, 0.0, z], [0.0, 0.0, zp]);
                    let want = reference.potential([r, 0.0, z], [0.0, 0.0, zp]);
                    assert!((got - want).abs() <= 1e-9 * want, "z {z} z' {zp} ρ {r}: {got} vs {want}");
                }
            }
        }
    }

    /// One dielectric between two grounds, split into two layers: [`TwoGrounds`] (image and
    /// modal series) to 1e-7.
    #[test]
    fn stripline_equals_two_grounds() {
        let b = 1e-3;
        let layers = [layer(0.4 * b, 4.4), layer(0.6 * b, 4.4)];
        let g = LayeredGreen::new(&layers, true, true, &[0], 3.0 * b, 1e-8).unwrap();
        let reference = TwoGrounds::new(0.0, b, 4.4, 1e-8).unwrap();
        for r in [0.01, 0.1, 0.3, 0.5, 1.0, 2.0, 2.9] {
            let (o, s) = ([r * b, 0.0, 0.4 * b], [0.0, 0.0, 0.4 * b]);
            let (got, want) = (g.potential(o, s), reference.potential(o, s));
            assert!((got - want).abs() <= 1e-7 * want, "ρ/b {r}: {got} vs {want}");
        }
        // Off the tabulated faces (direct integration on a stack cut at z).
        for (r, z) in [(0.3, 0.25), (0.7, 0.8)] {
            let (o, s) = ([r * b, 0.0, z * b], [0.0, 0.0, 0.4 * b]);
            let (got, want) = (g.potential(o, s), reference.potential(o, s));
            assert!((got - want).abs() <= 1e-7 * want, "ρ/b {r} z/b {z}: {got} vs {want}");
        }
    }

    /// Far between two grounds the potential falls like `e^{−πρ/b}`, far below the extracted
    /// images: the modal form keeps it accurate in relative terms (against the closed-form
    /// modal series of [`TwoGrounds`]), down to 10⁻⁶⁰ of the near field, on and across faces.
    #[test]
    fn two_grounds_far_field_is_relative() {
        let b = 1e-3;
        let layers = [layer(0.4 * b, 4.4), layer(0.6 * b, 4.4)];
        let g = LayeredGreen::new(&layers, true, true, &[0], 50.0 * b, 1e-8).unwrap();
        let reference = TwoGrounds::new(0.0, b, 4.4, 1e-8).unwrap();
        for r in [0.9, 1.0, 1.1, 3.0, 10.0, 25.0, 49.0] {
            let (o, s) = ([r * b, 0.0, 0.4 * b], [0.0, 0.0, 0.4 * b]);
            let (got, want) = (g.potential(o, s), reference.potential(o, s));
            assert!((got - want).abs() <= 1e-7 * want, "ρ/b {r}: {got} vs {want}");
        }
        // Panel potentials beyond and across the switch.
        let c = 1e-9 * b;
        for (x0, side) in [(0.8, 0.05), (1.0, 0.05), (5.0, 0.05), (30.0, 0.05), (2.0, 0.3), (7.0, 0.4)] {
            let panel =
                Panel::Rect { x0: x0 * b, x1: (x0 + side) * b, y0: 0.0, y1: 0.4 * side * b, z: 0.4 * b };
            let obs = [c, c, 0.4 * b];
            let got = g.panel_potential(obs, &panel);
            let fine =
                crate::quadrature::panel_rule_subdivided(&panel, 8, 6, |q| reference.potential(obs, q))
                    / panel.area();
            assert!((got - fine).abs() <= 1e-7 * fine, "panel at {x0} b: {got} vs {fine}");
        }
    }

    /// No grounds, εr = 1 everywhere: free space `1/(4π ε0 R)`.
    #[test]
    fn air_stack_is_free_space() {
        let layers = [layer(0.3e-3, 1.0), layer(0.2e-3, 1.0)];
        let g = LayeredGreen::new(&layers, false, false, &[0, 1], 10e-3, 1e-9).unwrap();
        let fs = FreeSpace::new(1.0, 1e-9).unwrap();
        for (z, zp) in
            [(0.3e-3, 0.3e-3), (0.3e-3, 0.5e-3), (0.5e-3, 0.3e-3), (0.0, 0.5e-3), (1.0e-3, -0.4e-3)]
        {
            for r in [1e-6, 0.1e-3, 1e-3, 9e-3, 15e-3] {
                let (o, s) = ([r, 0.0, z], [0.0, 0.0, zp]);
                let (got, want) = (g.potential(o, s), fs.potential(o, s));
                assert!((got - want).abs() <= 1e-9 * want, "z {z} z' {zp} ρ {r}: {got} vs {want}");
            }
        }
    }

    /// Two layers (0.2 mm εr 4.4 under 0.1 mm εr 3.6) on a ground, air above — and the same
    /// with air below, and with a 0.3 mm air layer and a second ground above — charge and
    /// observer on different faces: Green's reciprocity `G(z, z′) = G(z′, z)` (through the
    /// direct, untabulated path, which solves a different linear system for each order) to
    /// 1e-10, the table against the direct path to 1e-9, and both against a brute-force Hankel
    /// integral of the unextracted kernel (`f ~ e^{−k|Δz|}` decays by itself) to 1e-9.
    #[test]
    fn two_layers_reciprocity_and_brute_force() {
        let base = [layer(0.2e-3, 4.4), layer(0.1e-3, 3.6)];
        let boxed = [layer(0.2e-3, 4.4), layer(0.1e-3, 3.6), layer(0.3e-3, 1.0)];
        for (layers, below, above) in
            [(&base[..], true, false), (&base[..], false, false), (&boxed[..], true, true)]
        {
            let g = LayeredGreen::new(layers, below, above, &[0, 1], 10e-3, 1e-9).unwrap();
            let (z0, z1) = (0.2e-3, 0.3e-3);
            // Between two grounds the potential decays like e^{−πρ/b}: at 8 mm it is ~1e-25 of
            // the near field, below the rounding of any real-axis transform (see module docs).
            let far = if above { 1.5e-3 } else { 8e-3 };
            for r in [0.0, 0.02e-3, 0.1e-3, 0.5e-3, far] {
                let case = format!("below {below} above {above} ρ {r}");
                let tab_up = g.potential([r, 0.0, z1], [0.0, 0.0, z0]);
                let tab_down = g.potential([r, 0.0, z0], [0.0, 0.0, z1]);
                assert_eq!(tab_up, tab_down);
                let (up, down) = (g.direct(r, 2, 1), g.direct(r, 1, 2));
                assert!((up - down).abs() <= 1e-10 * up, "{case}: {up} vs {down}");
                let direct = up / (2.0 * PI * EPS0);
                assert!(
                    (tab_up - direct).abs() <= 1e-9 * direct,
                    "{case}: table {tab_up} vs direct {direct}"
                );
                let dz = z1 - z0;
                let width = if r > 0.0 { (0.02 / dz).min(PI / r) } else { 0.02 / dz };
                let none = Extraction { a: 0.0, dz: 0.0, c: 0.0, d_img: 0.0 };
                let brute =
                    HankelRule::new(&g.stack, 2, 1, &none, width, 45.0 / dz).value(r) / (2.0 * PI * EPS0);
                assert!((tab_up - brute).abs() <= 1e-9 * brute, "{case}: {tab_up} vs brute {brute}");
            }
        }
    }

    /// Panel potentials from a point between the faces (the untabulated split-stack path)
    /// against a subdivided quadrature of the point potential.
    #[test]
    fn panel_potential_off_the_faces() {
        let layers = [layer(0.2e-3, 4.4), layer(0.1e-3, 3.6)];
        let g = LayeredGreen::new(&layers, true, false, &[1], 5e-3, 1e-7).unwrap();
        let rect = Panel::Rect { x0: 0.0, x1: 0.2e-3, y0: 0.0, y1: 0.1e-3, z: 0.3e-3 };
        for obs in [[0.1e-3, 0.05e-3, 0.25e-3], [0.5e-3, 0.0, 0.1e-3], [0.3e-3, 0.1e-3, 0.45e-3]] {
            let got = g.panel_potential(obs, &rect);
            let fine =
                crate::quadrature::panel_rule_subdivided(&rect, 6, 6, |q| g.potential(obs, q)) / rect.area();
            assert!((got - fine).abs() < 1e-6 * fine, "{obs:?}: {got} vs {fine}");
        }
    }

    /// Panel potentials against a fine subdivided quadrature of the point potential, near and
    /// far, same face and across faces, rectangles and triangles.
    #[test]
    fn panel_potentials_match_fine_quadrature() {
        let layers = [layer(0.2e-3, 4.4), layer(0.1e-3, 3.6)];
        let acc = 1e-7;
        let g = LayeredGreen::new(&layers, true, false, &[0, 1], 5e-3, acc).unwrap();
        let rect = Panel::Rect { x0: 0.0, x1: 0.4e-3, y0: 0.0, y1: 0.1e-3, z: 0.3e-3 };
        let tri = Panel::Triangle { v: [[0.0, 0.0], [0.4e-3, 0.05e-3], [0.1e-3, 0.3e-3]], z: 0.2e-3 };
        for panel in [rect, tri] {
            for obs in [
                [0.6e-3, 0.02e-3, 0.3e-3],
                [3e-3, 1e-3, 0.3e-3],
                [0.15e-3, 0.05e-3, 0.2e-3],
                [0.25e-3, 0.2e-3, 0.3e-3],
                [1.2e-3, 0.4e-3, 0.2e-3],
            ] {
                if panel.distance(obs) == 0.0 {
                    continue;
                }
                let got = g.panel_potential(obs, &panel);
                let fine = crate::quadrature::panel_rule_subdivided(&panel, 48, 6, |q| g.potential(obs, q))
                    / panel.area();
                assert!((got - fine).abs() < 1e-6 * fine.abs(), "{panel:?} {obs:?}: {got} vs {fine}");
            }
        }
        // On the panel itself: extracted term exact + remainder, against the split reference.
        let obs = [0.1e-3, 0.04e-3, 0.3e-3];
        let got = g.panel_potential(obs, &rect);
        let x = g.stack.extraction(2, 2);
        let singular = x.a * crate::panel::inverse_distance_exact(obs, &rect)
            + x.c * crate::panel::inverse_distance_exact(obs, &rect.at(obs[2] - x.d_img));
        let rem = crate::quadrature::panel_rule_subdivided(&rect, 48, 6, |q| {
            let rho = (obs[0] - q[0]).hypot(obs[1] - q[1]);
            g.scaled(rho, obs[2], obs[2]) - x.spatial(rho)
        });
        let want = (singular + rem) / (2.0 * PI * EPS0 * rect.area());
        assert!((got - want).abs() < 1e-6 * want, "self term: {got} vs {want}");
    }

    /// Bad input is refused with the right error.
    #[test]
    fn bad_input_is_refused() {
        let ok = [layer(1e-3, 4.4)];
        assert!(matches!(LayeredGreen::new(&[], true, false, &[], 1.0, 1e-6), Err(GreenError::Geometry(_))));
        assert!(matches!(
            LayeredGreen::new(&[layer(0.0, 4.4)], true, false, &[0], 1.0, 1e-6),
            Err(GreenError::Geometry(_))
        ));
        assert!(matches!(
            LayeredGreen::new(&[layer(1e-3, 0.5)], true, false, &[0], 1.0, 1e-6),
            Err(GreenError::BadPermittivity(_))
        ));
        assert!(matches!(
            LayeredGreen::new(&[layer(1e-3, f64::NAN)], true, false, &[0], 1.0, 1e-6),
            Err(GreenError::BadPermittivity(_))
        ));
        assert!(matches!(LayeredGreen::new(&ok, true, false, &[1], 1.0, 1e-6), Err(GreenError::Geometry(_))));
        assert!(matches!(LayeredGreen::new(&ok, true, true, &[0], 1.0, 1e-6), Err(GreenError::Geometry(_))));
        assert!(matches!(
            LayeredGreen::new(&ok, true, false, &[0], -1.0, 1e-6),
            Err(GreenError::Geometry(_))
        ));
        assert!(matches!(
            LayeredGreen::new(&ok, true, false, &[0], 1.0, 0.0),
            Err(GreenError::BadAccuracy(_))
        ));
    }

    /// The observer at the centre of its own panel, where a Gauss node of the remainder rule
    /// can coincide with the observer: the value stays finite and matches the singular terms in
    /// closed form plus a fine quadrature of the remainder (regression: the extracted terms were
    /// once subtracted at ρ = 0).
    #[test]
    fn self_panel_with_a_node_at_the_observer() {
        let g = LayeredGreen::new(&[layer(1e-3, 4.4)], true, false, &[0], 20e-3, 1e-6).unwrap();
        for side in [0.23e-3, 0.6e-3, 1.7e-3] {
            let p = Panel::Rect { x0: 0.0, x1: side, y0: 0.0, y1: side, z: 1e-3 };
            let c = p.center();
            let got = g.panel_potential(c, &p);
            let x = g.stack.extraction(1, 1);
            let singular = x.a * crate::panel::inverse_distance_exact(c, &p)
                + x.c * crate::panel::inverse_distance_exact(c, &p.at(c[2] - x.d_img));
            let rem = crate::quadrature::panel_rule_subdivided(&p, 8, 4, |q| {
                g.remainder((c[0] - q[0]).hypot(c[1] - q[1]), c[2], 1e-3, &x)
            });
            let want = (singular + rem) / (2.0 * PI * EPS0 * p.area());
            assert!(got.is_finite() && (got - want).abs() < 1e-6 * want, "side {side}: {got} vs {want}");
        }
    }
}
