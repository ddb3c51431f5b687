//! Galerkin entries of the mixed-potential integral equation (MPIE) on rooftop/RWG currents.
//!
//! With `G(r, r′)` the scalar Green's function of the medium (`e^{−jkR}/(4πR)` plus the
//! images of its ground planes, the same kernel for horizontal currents and for charges when the
//! planes are perfect conductors), the electric-field equation `E_tan = −E_inc,tan` tested with
//! `f_m` reads
//!
//! `η [ jk Σ_n A_mn I_n − (j/k) Σ_pq D_mp P_pq D_nq I_n ] = ∫ f_m·E_inc`
//!
//! with two frequency-dependent but separate operators, compressed separately:
//!
//! - vector potential (m³): `A_mn = ∫∫ f_m(r)·f_n(r′) G(r, r′) dA dA′` over the functions;
//! - scalar potential (1/m): `P_pq = (1/(A_p A_q)) ∫∫_{p×q} G dA dA′` over the panels — the
//!   average potential on panel `p` (times ε) of a unit charge spread on panel `q`;
//!
//! and the divergence matrix `D_mp = ∫_p ∇·f_m = ±l_m` (see [`crate::current`]). Keeping `A`
//! and `P` apart is what lets the solver stay accurate at low frequency (the scalar part grows
//! like `1/k²` against the vector part; summed into one matrix, the vector part would drown in
//! the compression error of the other).
//!
//! # Integration
//! Every entry is a sum over pairs of panels of the nine moments
//! `∫∫ {1, (r − c_p), (r′ − c_q), (r − c_p)(r′ − c_q)ᵀ} G` about the panel centroids, which
//! every linear function pair combines exactly (a panel pair is shared by up to 16 function
//! pairs; a block computes each pair once).
//!
//! - **Far pairs** (a Gauss rule of order ≤ 6 per side meets the accuracy at that distance,
//!   [`rafter_green::quadrature::order_for`]): Gauss product rules on both panels.
//! - **Near pairs**: a Gauss rule on the observation panel; on the source panel the singular
//!   part `1/(4πR)` of each image copy integrated in closed form (`∫∫ 1/R` and
//!   `∫∫ (ρ′ − ρ)/R`, Wilton, Rao, Glisson et al., IEEE Trans. AP-32(3), 1984) and the bounded
//!   remainder `(e^{−jkR} − 1)/(4πR)` (limit `−jk/4π`) by a Gauss rule — singularity extraction
//!   as in R. D. Graglia, "On the numerical integration of the linear shape functions times the
//!   3-D Green's function or its gradient on a plane triangle", IEEE Trans. AP-41(10), 1993.

use crate::current::CurrentBasis;
use num_complex::Complex64;
use rafter_green::Panel;
use rafter_green::panel::{inverse_distance_exact, inverse_distance_moment};
use rafter_green::quadrature::{order_for, panel_points};
use rafter_linalg::EntrySource;
use std::collections::HashMap;
use std::f64::consts::PI;

type C = Complex64;

/// The full-wave Green's function of a stack-up as the MPIE assembly sees it: the same kernel
/// `G` for horizontal currents and charges (true for a homogeneous medium with perfectly
/// conducting planes parallel to the conductors). Layered media plug in here.
pub trait WaveGreen: Sync {
    /// Wavenumber of the medium (1/m, `Im k ≤ 0`).
    fn k(&self) -> C;
    /// The copies of a source point at height `z_src` whose `1/R` singularity can reach an
    /// observer at `z_obs` (the direct term and the nearest images), as `(sign, height)`;
    /// `count` of the returned array are used.
    fn copies(&self, z_obs: f64, z_src: f64) -> ([(f64, f64); 3], usize);
    /// `G` minus the copies' `sign·e^{−jkR}/(4πR)` at horizontal distance `rho` (smooth);
    /// `None` when the copies are the whole kernel.
    fn smooth(&self, rho: f64, z_obs: f64, z_src: f64) -> Option<C>;
    /// `G(r, r′)` (1/m).
    fn total(&self, r: [f64; 3], rs: [f64; 3]) -> C;
    /// Height of the single ground plane whose port feeds carry their vertical current
    /// ([`crate::feedwall`]); `None` when feeds carry none (no ground, or two grounds).
    fn feed_ground(&self) -> Option<f64> {
        None
    }
}

/// Perfectly conducting planes bounding a homogeneous medium.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Planes {
    /// None: unbounded medium.
    Open,
    /// One ground plane at height `z` below the conductors.
    Below(f64),
}

/// `G = e^{−jkR}/(4πR)` in an unbounded homogeneous medium, or with one ground plane below
/// (one image of opposite sign at `2 z_g − z′`).
#[derive(Clone, Copy, Debug)]
pub struct ImageGreen {
    /// Wavenumber (1/m).
    pub k: C,
    /// Bounding planes.
    pub planes: Planes,
}

#[inline]
fn helmholtz(k: C, r: f64) -> C {
    (C::new(0.0, -1.0) * k * r).exp() / (4.0 * PI * r)
}

impl WaveGreen for ImageGreen {
    fn k(&self) -> C {
        self.k
    }
    fn copies(&self, _z_obs: f64, z_src: f64) -> ([(f64, f64); 3], usize) {
        match self.planes {
            Planes::Open => ([(1.0, z_src), (0.0, 0.0), (0.0, 0.0)], 1),
            Planes::Below(zg) => ([(1.0, z_src), (-1.0, 2.0 * zg - z_src), (0.0, 0.0)], 2),
        }
    }
    fn feed_ground(&self) -> Option<f64> {
        match self.planes {
            Planes::Below(z) => Some(z),
            Planes::Open => None,
        }
    }
    fn smooth(&self, _rho: f64, _z_obs: f64, _z_src: f64) -> Option<C> {
        None
    }
    fn total(&self, r: [f64; 3], rs: [f64; 3]) -> C {
        let (dx, dy) = (r[0] - rs[0], r[1] - rs[1]);
        let d = (dx * dx + dy * dy + (r[2] - rs[2]).powi(2)).sqrt();
        let mut g = helmholtz(self.k, d);
        if let Planes::Below(zg) = self.planes {
            let zi = 2.0 * zg - rs[2];
            g -= helmholtz(self.k, (dx * dx + dy * dy + (r[2] - zi).powi(2)).sqrt());
        }
        g
    }
}

/// `G` between two perfectly conducting planes `z0 < z1` filled with one medium (stripline):
/// the kernel of [`rafter_green::parallel_plate`], tabulated per pair of conductor heights.
/// The three copies whose `1/R` reaches a conductor face are the direct term and the nearest
/// image in each plane; the rest is smooth.
pub struct PlateGreen {
    k: C,
    z0: f64,
    z1: f64,
    plate: rafter_green::ParallelPlate,
    /// `(z, z′)` in the plates' frame and their tables.
    pairs: Vec<((f64, f64), rafter_green::PlatePair)>,
}

impl PlateGreen {
    /// Tables for every pair of `heights` (absolute, m) out to `rho_max` (m) at relative
    /// accuracy `tol`.
    pub fn new(
        k: C,
        z0: f64,
        z1: f64,
        heights: &[f64],
        rho_max: f64,
        tol: f64,
    ) -> Result<Self, rafter_green::ParallelPlateError> {
        let plate = rafter_green::ParallelPlate::new(z1 - z0, k)?;
        let mut pairs = Vec::new();
        for &a in heights {
            for &b in heights {
                let key = (a - z0, b - z0);
                if !pairs.iter().any(|(k, _)| *k == key) {
                    pairs.push((key, rafter_green::PlatePair::new(&plate, key.0, key.1, rho_max, tol)?));
                }
            }
        }
        Ok(Self { k, z0, z1, plate, pairs })
    }

    fn pair(&self, z: f64, zp: f64) -> Option<&rafter_green::PlatePair> {
        let key = (z - self.z0, zp - self.z0);
        self.pairs.iter().find(|(k, _)| *k == key).map(|(_, t)| t)
    }
}

impl WaveGreen for PlateGreen {
    fn k(&self) -> C {
        self.k
    }
    fn copies(&self, _z_obs: f64, z_src: f64) -> ([(f64, f64); 3], usize) {
        ([(1.0, z_src), (-1.0, 2.0 * self.z0 - z_src), (-1.0, 2.0 * self.z1 - z_src)], 3)
    }
    fn smooth(&self, rho: f64, z_obs: f64, z_src: f64) -> Option<C> {
        Some(match self.pair(z_obs, z_src) {
            Some(t) if rho <= t.smooth_range() => t.smooth(rho),
            _ => self.plate.smooth(rho, z_obs - self.z0, z_src - self.z0),
        })
    }
    fn total(&self, r: [f64; 3], rs: [f64; 3]) -> C {
        let rho = (r[0] - rs[0]).hypot(r[1] - rs[1]);
        match self.pair(r[2], rs[2]) {
            Some(t) if rho >= t.total_range().0 && rho <= t.total_range().1 => t.total(rho),
            Some(t) if rho < t.total_range().0 => {
                t.smooth(rho) + self.plate.singular_terms(rho, r[2] - self.z0, rs[2] - self.z0)
            }
            _ => self.plate.total(rho, r[2] - self.z0, rs[2] - self.z0),
        }
    }
}

/// The nine moments of one panel pair `(p, q)`: `∫_p ∫_q w(r, r′) G dA′ dA` for
/// `w = 1` (`k00`), `(r − c_p)` (`k10`), `(r′ − c_q)` (`k01`), `(r − c_p)(r′ − c_q)ᵀ` (`k11`,
/// row `a` = component of `r − c_p`).
#[derive(Clone, Copy, Debug, Default)]
pub struct PairMoments {
    /// `∫∫ G` (m³).
    pub k00: C,
    /// `∫∫ (r − c_p) G`.
    pub k10: [C; 2],
    /// `∫∫ (r′ − c_q) G`.
    pub k01: [C; 2],
    /// `∫∫ (r − c_p)(r′ − c_q)ᵀ G`.
    pub k11: [[C; 2]; 2],
}

/// Panel-pair integration of a [`WaveGreen`] on a mesh (see the module docs).
pub struct Interactions<'a> {
    panels: &'a [Panel],
    centres: Vec<[f64; 3]>,
    radius: Vec<f64>,
    green: &'a dyn WaveGreen,
    accuracy: f64,
}

/// Outer rule order on the observation panel of a near pair.
const NEAR_OUTER: usize = 4;
/// Rule order for the bounded remainder on the source panel of a near pair.
const NEAR_INNER: usize = 3;
/// Highest order per side of the product rule for a far copy (`n⁴` kernel evaluations); closer
/// copies take the near route, whose cost does not grow with the accuracy.
pub const MAX_FAR_ORDER: usize = 3;

impl<'a> Interactions<'a> {
    /// Integration of `green` over `panels`, far pairs to relative `accuracy` (use about a
    /// tenth of the compression tolerance, so that switching rules does not spoil low rank).
    pub fn new(panels: &'a [Panel], green: &'a dyn WaveGreen, accuracy: f64) -> Self {
        let centres: Vec<[f64; 3]> = panels.iter().map(Panel::center).collect();
        let radius = panels
            .iter()
            .zip(&centres)
            .map(|(p, c)| p.vertices().iter().map(|v| (v[0] - c[0]).hypot(v[1] - c[1])).fold(0.0, f64::max))
            .collect();
        Self { panels, centres, radius, green, accuracy }
    }

    /// The panels.
    pub fn panels(&self) -> &[Panel] {
        self.panels
    }

    /// Moments of the pair `(p, q)`; `first_order` = false computes `k00` only.
    ///
    /// Each copy of the source (direct term, images) is integrated on its own: by Gauss product
    /// rules on both panels when one of order ≤ [`MAX_FAR_ORDER`] per side meets the accuracy
    /// at its distance, by the near route (closed-form static part) otherwise. When every copy
    /// is far, the whole kernel ([`WaveGreen::total`]) is integrated by the product rule.
    pub fn moments(&self, p: usize, q: usize, first_order: bool) -> PairMoments {
        let (pp, pq) = (&self.panels[p], &self.panels[q]);
        let (cp, cq) = (self.centres[p], self.centres[q]);
        let (copies, ncopies) = self.green.copies(cp[2], cq[2]);
        let side = pp.max_side().max(pq.max_side());
        let order = |z: f64| {
            let d = ((cp[0] - cq[0]).powi(2) + (cp[1] - cq[1]).powi(2) + (cp[2] - z).powi(2)).sqrt();
            let gap = (d - self.radius[p] - self.radius[q]).max(0.0);
            (order_for(side, gap, self.accuracy).filter(|&n| n <= MAX_FAR_ORDER), gap)
        };
        let orders: Vec<(Option<usize>, f64)> = copies[..ncopies].iter().map(|&(_, z)| order(z)).collect();
        let mut m = PairMoments::default();
        let mut outer = Vec::with_capacity(36);
        let mut inner = Vec::with_capacity(36);
        if orders.iter().all(|(n, _)| n.is_some()) {
            let n = orders.iter().filter_map(|(n, _)| *n).max().unwrap_or(1);
            panel_points(pp, n, n, &mut outer);
            panel_points(pq, n, n, &mut inner);
            for &(r, w) in &outer {
                let a = [r[0] - cp[0], r[1] - cp[1]];
                for &(rs, ws) in &inner {
                    let g = self.green.total(r, rs) * (w * ws);
                    accumulate(&mut m, g, a, [rs[0] - cq[0], rs[1] - cq[1]], first_order);
                }
            }
            return m;
        }
        let k = self.green.k();
        let jk = C::new(0.0, 1.0) * k;
        // Far copies by product rules of their own order.
        for (&(sign, z), &(n, _)) in copies[..ncopies].iter().zip(&orders) {
            let Some(n) = n else { continue };
            outer.clear();
            inner.clear();
            panel_points(pp, n, n, &mut outer);
            panel_points(pq, n, n, &mut inner);
            for &(r, w) in &outer {
                let a = [r[0] - cp[0], r[1] - cp[1]];
                for &(rs, ws) in &inner {
                    let d = ((r[0] - rs[0]).powi(2) + (r[1] - rs[1]).powi(2) + (r[2] - z).powi(2)).sqrt();
                    let g = helmholtz(k, d) * (sign * w * ws);
                    accumulate(&mut m, g, a, [rs[0] - cq[0], rs[1] - cq[1]], first_order);
                }
            }
        }
        // Near copies: closed-form static part + Gauss rule for the bounded remainder; the
        // kernel's smooth part (if any) on the same points.
        let gap = orders.iter().filter(|(n, _)| n.is_none()).map(|&(_, g)| g).fold(f64::INFINITY, f64::min);
        let n_out = if gap <= 0.0 { NEAR_OUTER } else { NEAR_OUTER - 1 };
        outer.clear();
        inner.clear();
        panel_points(pp, n_out, n_out, &mut outer);
        panel_points(pq, NEAR_INNER, NEAR_INNER, &mut inner);
        for &(r, w) in &outer {
            let a = [r[0] - cp[0], r[1] - cp[1]];
            // S0 = ∫_q G, S1 = ∫_q (r′ − c_q) G at r.
            let mut s0 = C::new(0.0, 0.0);
            let mut s1 = [C::new(0.0, 0.0); 2];
            for (&(sign, z), &(n, _)) in copies[..ncopies].iter().zip(&orders) {
                if n.is_some() {
                    continue;
                }
                let img = pq.at(z);
                let st0 = inverse_distance_exact(r, &img) / (4.0 * PI);
                s0 += sign * st0;
                if first_order {
                    // ∫ (r′ − ρ)/R + (ρ − c_q) ∫ 1/R.
                    let st1 = inverse_distance_moment(r, &img);
                    for c in 0..2 {
                        s1[c] += sign * (st1[c] / (4.0 * PI) + (r[c] - cq[c]) * st0);
                    }
                }
                for &(rs, ws) in &inner {
                    let d = ((r[0] - rs[0]).powi(2) + (r[1] - rs[1]).powi(2) + (r[2] - z).powi(2)).sqrt();
                    let rem = if d * k.norm() < 1e-6 {
                        -jk / (4.0 * PI)
                    } else {
                        ((-jk * d).exp() - 1.0) / (4.0 * PI * d)
                    } * (sign * ws);
                    s0 += rem;
                    if first_order {
                        s1[0] += rem * (rs[0] - cq[0]);
                        s1[1] += rem * (rs[1] - cq[1]);
                    }
                }
            }
            for &(rs, ws) in &inner {
                let rho = (r[0] - rs[0]).hypot(r[1] - rs[1]);
                if let Some(sm) = self.green.smooth(rho, r[2], rs[2]) {
                    let g = sm * ws;
                    s0 += g;
                    if first_order {
                        s1[0] += g * (rs[0] - cq[0]);
                        s1[1] += g * (rs[1] - cq[1]);
                    }
                }
            }
            m.k00 += s0 * w;
            if first_order {
                for c in 0..2 {
                    m.k10[c] += s0 * (w * a[c]);
                    m.k01[c] += s1[c] * w;
                    for (k11, s1e) in m.k11[c].iter_mut().zip(&s1) {
                        *k11 += s1e * (w * a[c]);
                    }
                }
            }
        }
        m
    }
}

#[inline]
fn accumulate(m: &mut PairMoments, g: C, a: [f64; 2], b: [f64; 2], first_order: bool) {
    m.k00 += g;
    if first_order {
        for c in 0..2 {
            m.k10[c] += g * a[c];
            m.k01[c] += g * b[c];
            for (k11, be) in m.k11[c].iter_mut().zip(&b) {
                *k11 += g * (a[c] * be);
            }
        }
    }
}

/// `∫∫ f_m·f_n G` of two linear halves from their pair's moments: with `f = M (r − o)`,
/// `∫∫ (r − o_m)ᵀ M_mᵀ M_n (r′ − o_n) G`, expanded about the centroids.
#[inline]
fn combine(
    mm: &([f64; 4], [f64; 2]),
    cp: [f64; 3],
    mn: &([f64; 4], [f64; 2]),
    cq: [f64; 3],
    k: &PairMoments,
) -> C {
    let (a, oa) = mm;
    let (b, ob) = mn;
    // T = Aᵀ B (2×2, row-major).
    let t = [
        a[0] * b[0] + a[2] * b[2],
        a[0] * b[1] + a[2] * b[3],
        a[1] * b[0] + a[3] * b[2],
        a[1] * b[1] + a[3] * b[3],
    ];
    let u = [cp[0] - oa[0], cp[1] - oa[1]];
    let v = [cq[0] - ob[0], cq[1] - ob[1]];
    let mut s = C::new(0.0, 0.0);
    for i in 0..2 {
        for j in 0..2 {
            let tij = t[2 * i + j];
            if tij != 0.0 {
                s += (k.k11[i][j] + k.k01[j] * u[i] + k.k10[i] * v[j] + k.k00 * (u[i] * v[j])) * tij;
            }
        }
    }
    s
}

/// The vector-potential matrix `A_mn = ∫∫ f_m·f_n G` (m³) over the functions of a
/// [`CurrentBasis`], as an entry source (complex symmetric).
pub struct VectorPotential<'a> {
    inter: &'a Interactions<'a>,
    basis: &'a CurrentBasis,
    walls: Option<&'a crate::feedwall::FeedWalls>,
}

impl<'a> VectorPotential<'a> {
    /// Over `basis` with the panel integration `inter`.
    pub fn new(inter: &'a Interactions<'a>, basis: &'a CurrentBasis) -> Self {
        Self { inter, basis, walls: None }
    }

    /// As [`VectorPotential::new`], plus the vertical currents of the ground feeds.
    pub fn with_walls(
        inter: &'a Interactions<'a>,
        basis: &'a CurrentBasis,
        walls: Option<&'a crate::feedwall::FeedWalls>,
    ) -> Self {
        Self { inter, basis, walls }
    }

    fn entry_with(&self, m: usize, n: usize, pair: &mut impl FnMut(usize, usize) -> PairMoments) -> C {
        let (fm, fn_) = (&self.basis.functions[m], &self.basis.functions[n]);
        let mut s = C::new(0.0, 0.0);
        for hm in fm.iter() {
            let lm = fm.linear(hm);
            for hn in fn_.iter() {
                let k = pair(hm.panel, hn.panel);
                s += combine(
                    &lm,
                    self.inter.centres[hm.panel],
                    &fn_.linear(hn),
                    self.inter.centres[hn.panel],
                    &k,
                );
            }
        }
        if let Some(w) = self.walls {
            s += w.interaction(m, n);
        }
        s
    }
}

impl EntrySource<C> for VectorPotential<'_> {
    fn nrows(&self) -> usize {
        self.basis.functions.len()
    }
    fn ncols(&self) -> usize {
        self.basis.functions.len()
    }
    fn entry(&self, i: usize, j: usize) -> C {
        self.entry_with(i, j, &mut |p, q| self.inter.moments(p, q, true))
    }
    fn fill_block(&self, rows: &[usize], cols: &[usize], out: &mut [C]) {
        let mut cache: HashMap<(usize, usize), PairMoments> = HashMap::new();
        let m = rows.len();
        for (b, &j) in cols.iter().enumerate() {
            for (a, &i) in rows.iter().enumerate() {
                out[a + b * m] = self.entry_with(i, j, &mut |p, q| {
                    *cache.entry((p, q)).or_insert_with(|| self.inter.moments(p, q, true))
                });
            }
        }
    }
}

/// The scalar-potential matrix `P_pq = (1/(A_p A_q)) ∫∫ G` (1/m) over the panels, as an entry
/// source (complex symmetric).
pub struct ScalarPotential<'a> {
    inter: &'a Interactions<'a>,
    area: Vec<f64>,
}

impl<'a> ScalarPotential<'a> {
    /// Over the panels of `inter`.
    pub fn new(inter: &'a Interactions<'a>) -> Self {
        Self { inter, area: inter.panels.iter().map(Panel::area).collect() }
    }
}

impl EntrySource<C> for ScalarPotential<'_> {
    fn nrows(&self) -> usize {
        self.area.len()
    }
    fn ncols(&self) -> usize {
        self.area.len()
    }
    fn entry(&self, p: usize, q: usize) -> C {
        self.inter.moments(p, q, false).k00 / (self.area[p] * self.area[q])
    }
}
