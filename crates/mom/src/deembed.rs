//! Port de-embedding: removal of the port discontinuity (the delta-gap feed at a conductor edge,
//! its end fringing capacitance and feed inductance) from computed admittance matrices, so
//! that a uniform line shows the line itself.
//!
//! # Model
//!
//! Two-ports are written in chain (ABCD) form, `[V₁; I₁] = [[A, B], [C, D]] [V₂; I₂]`, with
//! `I₁` flowing into port 1 and `I₂` flowing out of port 2 (into the next section), so a
//! cascade is a matrix product ([`Abcd::then`]). A uniform line of characteristic impedance
//! `Z₀` (ohms, complex), propagation constant `γ = α + jβ` (per unit of length) and length
//! `x` is `L(x) = [[cosh γx, Z₀ sinh γx], [sinh γx / Z₀, cosh γx]]` (D. M. Pozar, *Microwave
//! Engineering*, 4th ed., 2012, ch. 4 — from memory).
//!
//! Each port carries a *port discontinuity* `P` between the external port (where the solver
//! applies its source) and the internal reference plane (where the uniform feed line begins).
//! `P` is assumed **reciprocal** (`AD − BC = 1`) and **symmetric** (`A = D`): the class of
//! electrically small lumped T and π sections (series inductance, shunt capacitance). This
//! assumption is what makes the calibration unique: two line standards alone determine `P`
//! only up to an ideal transformer (one free complex parameter); `A = D` fixes it. A
//! reciprocal discontinuity with `A ≠ D` factors as `P = P_s N`, `P_s` symmetric and `N` an
//! ideal transformer of ratio `n`; since `N L(x; Z₀) Ñ = L(x; n² Z₀)`, the calibration then
//! returns `P_s` and the impedance level `n² Z₀`: the transformer is absorbed into the line.
//!
//! # Calibration ([`calibrate`])
//!
//! The caller solves two *standards* per port: the port's feed line of length `l` and of
//! length `2l`, with the same port at both ends, giving symmetric reciprocal 2-ports
//! `T₁ = P L(l) P` and `T₂ = P L(2l) P` (for `A = D` the port seen from the far side is `P`
//! itself). The solution is closed-form; it follows the eigenvalue idea of the line standard
//! in G. F. Engen & C. A. Hoer, "Thru-Reflect-Line: an improved technique for calibrating the
//! dual six-port automatic network analyzer", IEEE Trans. MTT-27(12), 1979, the line-pair
//! extraction of γ and `Z₀` of W. R. Eisenstadt & Y. Eo, "S-parameter-based IC interconnect
//! transmission line characterization", IEEE Trans. CHMT-15(4), 1992 (from memory), and the
//! lumped symmetric port model of the short-open calibration of L. Zhu & K. Wu, "Unified
//! equivalent-circuit model of planar discontinuities suitable for field theory-based CAD and
//! optimization of M(H)MIC's", IEEE Trans. MTT-47, 1999 (from memory). With `c = cosh γl`, `s = sinh γl`:
//!
//! 1. `T₂ T₁⁻¹ = P L(l) P⁻¹`, whose eigenvalues are `e^{±γl}`, so `c = ½ tr(T₂ T₁⁻¹)`.
//! 2. `Q = 2c T₁ − T₂ = P (2c L(l) − L(2l)) P = P²` (because `2c L(l) − L(2l) = I`), and a
//!    2 × 2 matrix of determinant 1 has the square root `P = (Q + I) / √(tr Q + 2)`:
//!    `A = √((Q₁₁ + 1)/2)`, `B = Q₁₂ / (2A)`, `C = Q₂₁ / (2A)`. The sign of `P` is immaterial
//!    (`P` and `−P` give the same standards and the same de-embedded network); `Re A > 0` is
//!    taken, as for a small discontinuity (`A ≈ 1`).
//! 3. `R = (c T₂ − cosh(2γl) T₁) / s = P J P` with `J = [[0, Z₀], [1/Z₀, 0]]`, so
//!    `J = P⁻¹ R P⁻¹` and `Z₀ = √(J₁₂ / J₂₁)`.
//!
//! `P` needs no branch choice at all. The line is determined up to the exchange
//! `(γ, Z₀) → (−γ, −Z₀)`, which leaves `L(x)` unchanged; the sign is taken with `Re Z₀ > 0`,
//! which for a passive line (series impedance and shunt admittance per length in the closed
//! right half-plane) also gives `Re γ ≥ 0`, and which, unlike the sign of `Re γ`, stays well
//! determined for a lossless line. Then `e^{−γl}` is unique and `γ l` is a logarithm of it,
//! known modulo `2πj`:
//! - without `previous_gamma`, the principal value `−π < Im(γ l) ≤ π` is returned, which is
//!   right while `βl < π`, i.e. while `l` is shorter than half a guided wavelength; a line
//!   longer than that comes out with a negative `β` (the same `e^{−γl}`);
//! - with `previous_gamma` (the value at the preceding frequency of an ordered sweep), the
//!   value of `γ l + 2πjn` nearest to `previous_gamma · l` in imaginary part is returned, so
//!   the phase of `e^{−γl}` continues across `βl = π, 3π, …` provided `βl` changes by less
//!   than `π` between calls.
//!
//! Near `βl = kπ` (`sinh γl → 0`) the two standards differ by a multiple of half a
//! wavelength and `Z₀`, `γ` become indeterminate (`P` does not): the relative error of `Z₀`
//! and `γ` grows roughly like `ε / |sinh γl|²` (ε the relative error of the data), and [`calibrate`] refuses `|sinh γl| <`
//! [`MIN_SINH_GAMMA_L`]. Common practice (for line standards in TRL-type calibrations) is to
//! choose `l` so that `βl` stays between about 20° and 160° over the band.
//!
//! # De-embedding ([`deembed`], [`embed`])
//!
//! With the diagonal matrices `A, B, C, D` over ports (the identity 2-port at a port without
//! discontinuity) the external and internal port quantities are related by
//! `V = A V′ + B I′`, `I = C V′ + D I′`; hence `Y = (C + D Y′)(A + B Y′)⁻¹` ([`embed`]) and
//! `Y′ = (D − Y B)⁻¹ (Y A − C)` ([`deembed`]). Both keep reciprocity: for an exactly symmetric
//! input the result is replaced by `½ (M + Mᵀ)` (a change of the order of the rounding error
//! plus the tolerated departure of `AD − BC` from 1), so it is exactly symmetric.

use crate::network::{self, NetMatrix, NetworkError, exactly_symmetric, symmetrize};
use rafter_linalg::{Complex64, DenseMatrix, LinalgError, Scalar};
use std::f64::consts::PI;

/// Below this `|sinh γl|` (dimensionless; `|sin βl|` for a lossless line) the standards of
/// lengths `l` and `2l` differ by (nearly) a multiple of half a wavelength and [`calibrate`]
/// refuses to determine `Z₀` and `γ` ([`DeembedError::Degenerate`]).
pub const MIN_SINH_GAMMA_L: f64 = 1e-6;

/// Below this `|A|` (dimensionless) the port discontinuity is no small lumped section (it
/// behaves as an impedance inverter, `P² ≈ −I`) and `P` is not determined by two line
/// standards; [`calibrate`] returns [`DeembedError::NoPhysicalSolution`].
pub const MIN_PORT_A: f64 = 1e-6;

/// Accepted departure of a port discontinuity from reciprocity in [`deembed`] and [`embed`]:
/// `|A² − BC − 1| ≤ RECIPROCITY_TOL · max(1, |A|², |BC|)`.
pub const RECIPROCITY_TOL: f64 = 1e-9;

/// Errors of calibration and de-embedding.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum DeembedError {
    /// A matrix is not of the required size, or the port list does not match it.
    #[error("size mismatch: {what} is {got}, expected {expected}")]
    SizeMismatch {
        /// Which operand.
        what: &'static str,
        /// Expected count.
        expected: usize,
        /// Count received.
        got: usize,
    },
    /// An input entry is NaN or infinite.
    #[error(
        "entry ({row}, {col}) of the {what} is {value}; entries must be finite (rows and columns counted from 1)"
    )]
    NonFinite {
        /// Which input.
        what: &'static str,
        /// Row, counted from 1.
        row: usize,
        /// Column, counted from 1.
        col: usize,
        /// The value received.
        value: Complex64,
    },
    /// A matrix (or scalar) to invert is singular to working precision.
    #[error(
        "the {what} ({n}×{n}) is singular to working precision (reciprocal condition number {rcond:e}); {hint}"
    )]
    Singular {
        /// Which matrix.
        what: &'static str,
        /// Its order.
        n: usize,
        /// Its reciprocal condition number (0 for an exact zero).
        rcond: f64,
        /// What this means physically.
        hint: &'static str,
    },
    /// A port discontinuity given to [`deembed`] or [`embed`] is not reciprocal.
    #[error(
        "port {port}: the discontinuity has A² − B·C = {det}, not 1; only reciprocal symmetric \
         discontinuities (A = D, AD − BC = 1) are supported"
    )]
    NotReciprocal {
        /// Port number, counted from 1.
        port: usize,
        /// The value of `A² − BC`.
        det: Complex64,
    },
    /// The standards differ by (nearly) a multiple of half a guided wavelength.
    #[error(
        "the standards of length l and 2l are degenerate: |sinh γl| = {sinh_gamma_l:e} < {limit:e} \
         (βl is a multiple of π); Z₀ and γ are indeterminate — choose another l or skip this frequency",
        limit = MIN_SINH_GAMMA_L
    )]
    Degenerate {
        /// `|sinh γl|` found.
        sinh_gamma_l: f64,
    },
    /// The standards admit no (unique) solution of the model.
    #[error("no physical solution: {0}")]
    NoPhysicalSolution(String),
    /// The feed-line length is not finite and positive.
    #[error("feed-line length {0} must be finite and positive")]
    BadLength(f64),
    /// A dense kernel failed.
    #[error(transparent)]
    Linalg(#[from] LinalgError),
}

/// A two-port in chain form: `[V₁; I₁] = [[a, b], [c, d]] [V₂; I₂]`, `I₁` into port 1, `I₂`
/// out of port 2; `b` in ohms, `c` in siemens, `a`, `d` dimensionless. Reciprocal when
/// `ad − bc = 1`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Abcd {
    /// `A = V₁/V₂` with port 2 open.
    pub a: Complex64,
    /// `B = V₁/I₂` with port 2 shorted (ohms).
    pub b: Complex64,
    /// `C = I₁/V₂` with port 2 open (siemens).
    pub c: Complex64,
    /// `D = I₁/I₂` with port 2 shorted.
    pub d: Complex64,
}

impl Abcd {
    /// The through connection (identity).
    pub const IDENTITY: Abcd = Abcd { a: ONE, b: ZERO, c: ZERO, d: ONE };

    /// A series impedance `z` (ohms): `[[1, z], [0, 1]]`.
    pub fn series(z: Complex64) -> Abcd {
        Abcd { a: ONE, b: z, c: ZERO, d: ONE }
    }

    /// A shunt admittance `y` (siemens): `[[1, 0], [y, 1]]`.
    pub fn shunt(y: Complex64) -> Abcd {
        Abcd { a: ONE, b: ZERO, c: y, d: ONE }
    }

    /// A uniform line of characteristic impedance `z0` (ohms), propagation constant `gamma`
    /// (per unit length) and length `len` (same unit):
    /// `[[cosh γx, Z₀ sinh γx], [sinh γx / Z₀, cosh γx]]`.
    pub fn line(z0: Complex64, gamma: Complex64, len: f64) -> Abcd {
        let g = gamma * len;
        let (ch, sh) = (g.cosh(), g.sinh());
        Abcd { a: ch, b: z0 * sh, c: sh / z0, d: ch }
    }

    /// The cascade `self` followed by `next` (the matrix product `self · next`).
    pub fn then(&self, next: &Abcd) -> Abcd {
        Abcd {
            a: self.a * next.a + self.b * next.c,
            b: self.a * next.b + self.b * next.d,
            c: self.c * next.a + self.d * next.c,
            d: self.c * next.b + self.d * next.d,
        }
    }

    /// `AD − BC` (1 for a reciprocal two-port).
    pub fn det(&self) -> Complex64 {
        self.a * self.d - self.b * self.c
    }

    /// The 2 × 2 admittance matrix (siemens): `Y₁₁ = D/B`, `Y₁₂ = −(AD − BC)/B`,
    /// `Y₂₁ = −1/B`, `Y₂₂ = A/B` (Pozar, *Microwave Engineering*, 2012, ch. 4, table of
    /// two-port conversions — from memory). Computed as written: a reciprocal section whose
    /// `AD − BC` rounds away from 1 gives `Y₁₂ ≠ Y₂₁` at the rounding level.
    ///
    /// # Errors
    /// Non-finite entries; `B = 0` (a two-port with a zero series path, e.g. a lone shunt
    /// element, has no admittance matrix).
    pub fn to_y(&self) -> Result<NetMatrix, DeembedError> {
        for (k, v) in [self.a, self.b, self.c, self.d].into_iter().enumerate() {
            finite(v, "ABCD matrix", k / 2 + 1, k % 2 + 1)?;
        }
        if self.b == ZERO {
            return Err(DeembedError::Singular {
                what: "entry B of an ABCD matrix",
                n: 1,
                rcond: 0.0,
                hint: "a two-port without series path (a lone shunt element) has no admittance matrix",
            });
        }
        let y11 = self.d / self.b;
        let y12 = -self.det() / self.b;
        let y21 = -ONE / self.b;
        let y22 = self.a / self.b;
        Ok(DenseMatrix::from_fn(2, 2, |i, j| [[y11, y12], [y21, y22]][i][j]))
    }

    /// The chain matrix of a 2 × 2 admittance matrix `y` (siemens): `A = −Y₂₂/Y₂₁`,
    /// `B = −1/Y₂₁`, `C = −(Y₁₁Y₂₂ − Y₁₂Y₂₁)/Y₂₁`, `D = −Y₁₁/Y₂₁` (the inverse of
    /// [`Abcd::to_y`]).
    ///
    /// # Errors
    /// A matrix that is not 2 × 2, non-finite entries, or `Y₂₁ = 0` (uncoupled ports: no
    /// chain matrix).
    pub fn from_y(y: &NetMatrix) -> Result<Abcd, DeembedError> {
        check_two_port(y, "admittance matrix of a two-port")?;
        let (y11, y12, y21, y22) = (y.get(0, 0), y.get(0, 1), y.get(1, 0), y.get(1, 1));
        if y21 == ZERO {
            return Err(uncoupled(0.0));
        }
        Ok(Abcd { a: -y22 / y21, b: -ONE / y21, c: -(y11 * y22 - y12 * y21) / y21, d: -y11 / y21 })
    }
}

/// A reciprocal symmetric port discontinuity in chain form `[[a, b], [c, a]]` (`D = A`,
/// `A² − BC = 1`), from the external port (port 1) to the internal reference plane (port 2);
/// `b` in ohms, `c` in siemens, `a` dimensionless. Such a section looks the same from both
/// sides.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PortDiscontinuity {
    /// `A = D` (dimensionless; close to 1 for a small discontinuity).
    pub a: Complex64,
    /// `B` (ohms; roughly the series feed impedance).
    pub b: Complex64,
    /// `C` (siemens; roughly the shunt fringing admittance).
    pub c: Complex64,
}

impl PortDiscontinuity {
    /// No discontinuity (the identity two-port).
    pub const NONE: PortDiscontinuity = PortDiscontinuity { a: ONE, b: ZERO, c: ZERO };

    /// The chain matrix `[[a, b], [c, a]]`.
    pub fn abcd(&self) -> Abcd {
        Abcd { a: self.a, b: self.b, c: self.c, d: self.a }
    }

    /// `A² − BC`, which is 1 for a reciprocal discontinuity.
    pub fn det(&self) -> Complex64 {
        self.a * self.a - self.b * self.c
    }
}

/// The result of [`calibrate`]: the port discontinuity and the feed line found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FeedCalibration {
    /// The port discontinuity `P` (chain form, `A = D`, `A² − BC = 1` to rounding).
    pub port: PortDiscontinuity,
    /// Characteristic impedance of the feed line (ohms), `Re Z₀ > 0`.
    pub z0: Complex64,
    /// Propagation constant `γ = α + jβ` of the feed line (nepers and radians per unit of the
    /// length `l` passed in); branch as described in the module notes.
    pub gamma: Complex64,
    /// Largest departure of the two standards from a symmetric reciprocal two-port,
    /// `(|Y₁₁ − Y₂₂| + |Y₁₂ − Y₂₁|) / ‖Y‖_F` (dimensionless; 0 for exact standards). The
    /// calibration uses the symmetric reciprocal part `(Y₁₁ + Y₂₂)/2`, `(Y₁₂ + Y₂₁)/2` of each
    /// standard; a large value means the standards do not fit the model.
    pub standard_asymmetry: f64,
}

/// Finds the port discontinuity `P` and the feed line (`Z₀`, `γ`) from the admittance
/// matrices (siemens) of two standards: the feed line of length `l` (`y1`) and of length
/// `2l` (`y2`), each with the port at both ends, i.e. `T₁ = P L(l) P`, `T₂ = P L(2l) P` in
/// chain form. Closed form (module notes): `cosh γl = ½ tr(T₂T₁⁻¹)`, `P = √(2 cosh γl · T₁ − T₂)`,
/// `Z₀` from `P⁻¹ (cosh γl · T₂ − cosh 2γl · T₁) P⁻¹ / sinh γl = [[0, Z₀], [1/Z₀, 0]]`.
///
/// `l` is in any length unit (`γ` comes out per that unit). `previous_gamma` selects the
/// branch of `γ l` (modulo `2πj`) nearest to `previous_gamma · l`; without it the principal
/// value `−π < Im(γl) ≤ π` is returned, right for `βl < π`. The sign of `(γ, Z₀)` is fixed by
/// `Re Z₀ > 0` (hence `Re γ ≥ 0` for a passive line). Each standard is replaced by its
/// symmetric reciprocal part; the departure is reported in
/// [`FeedCalibration::standard_asymmetry`].
///
/// # Errors
/// A matrix that is not 2 × 2 or has non-finite entries; a bad `l` or non-finite
/// `previous_gamma`; uncoupled ports in a standard; `|sinh γl| <` [`MIN_SINH_GAMMA_L`]
/// ([`DeembedError::Degenerate`]); `|A| <` [`MIN_PORT_A`] or `J₂₁ = 0`
/// ([`DeembedError::NoPhysicalSolution`]).
pub fn calibrate(
    y1: &NetMatrix,
    y2: &NetMatrix,
    l: f64,
    previous_gamma: Option<Complex64>,
) -> Result<FeedCalibration, DeembedError> {
    if !(l.is_finite() && l > 0.0) {
        return Err(DeembedError::BadLength(l));
    }
    if let Some(g) = previous_gamma {
        finite(g, "previous propagation constant", 1, 1)?;
    }
    let (t1, asym1) = symmetric_standard(y1, "admittance matrix of the length-l standard")?;
    let (t2, asym2) = symmetric_standard(y2, "admittance matrix of the length-2l standard")?;

    // cosh γl = ½ tr(T₂ T₁⁻¹), with T₁⁻¹ = [[A₁, −B₁], [−C₁, A₁]].
    let ch = t1.a * t2.a - (t2.b * t1.c + t1.b * t2.c).scale(0.5);

    // Q = 2 cosh γl · T₁ − T₂ = P² (determinant 1), P = (Q + I)/√(tr Q + 2).
    let two_ch = ch.scale(2.0);
    let (qa, qb, qc) = (two_ch * t1.a - t2.a, two_ch * t1.b - t2.b, two_ch * t1.c - t2.c);
    let a = ((qa + ONE).scale(0.5)).sqrt(); // principal root: Re A ≥ 0
    if a.norm().is_nan() || a.norm() < MIN_PORT_A {
        return Err(DeembedError::NoPhysicalSolution(format!(
            "the port discontinuity has |A| = {:e} < {MIN_PORT_A:e} (P² ≈ −I, an impedance inverter, \
             not a small lumped section); two line standards do not determine it",
            a.norm()
        )));
    }
    let port = PortDiscontinuity { a, b: qb / a.scale(2.0), c: qc / a.scale(2.0) };

    // γl up to sign and 2πj; sinh γl must not vanish.
    let w = ch.acosh();
    let sh = w.sinh();
    if sh.norm().is_nan() || sh.norm() < MIN_SINH_GAMMA_L {
        return Err(DeembedError::Degenerate { sinh_gamma_l: sh.norm() });
    }
    let ch2 = ch * two_ch - ONE; // cosh 2γl

    // R = (cosh γl · T₂ − cosh 2γl · T₁)/sinh γl = P J P, J = P⁻¹ R P⁻¹ = [[0, Z₀], [1/Z₀, 0]].
    let ra = (ch * t2.a - ch2 * t1.a) / sh;
    let rb = (ch * t2.b - ch2 * t1.b) / sh;
    let rc = (ch * t2.c - ch2 * t1.c) / sh;
    let (pa, pb, pc) = (port.a, port.b, port.c);
    let j12 = pa * pa * rb + pb * pb * rc - (pa * pb * ra).scale(2.0);
    let j21 = pa * pa * rc + pc * pc * rb - (pa * pc * ra).scale(2.0);
    if j21 == ZERO || j12 == ZERO || !Scalar::is_finite(j12 / j21) {
        return Err(DeembedError::NoPhysicalSolution(format!(
            "the feed line's characteristic impedance is indeterminate (J₁₂ = {j12}, J₂₁ = {j21})"
        )));
    }
    let mut z0 = (j12 / j21).sqrt();
    if (z0 * j12.conj()).re < 0.0 {
        z0 = -z0; // the root nearer J₁₂
    }
    // The pair (γ, Z₀) ~ (−γ, −Z₀): take Re Z₀ > 0.
    let mut gl = w;
    if z0.re < 0.0 {
        z0 = -z0;
        gl = -gl;
    }
    match previous_gamma {
        Some(prev) => {
            let n = ((prev.im * l - gl.im) / (2.0 * PI)).round();
            gl += Complex64::new(0.0, 2.0 * PI * n);
        }
        None => {
            if gl.im <= -PI {
                gl += Complex64::new(0.0, 2.0 * PI);
            } else if gl.im > PI {
                gl -= Complex64::new(0.0, 2.0 * PI);
            }
        }
    }
    Ok(FeedCalibration { port, z0, gamma: gl.scale(1.0 / l), standard_asymmetry: asym1.max(asym2) })
}

/// Removes the port discontinuity at every port that has one (`None` leaves the port as it
/// is): given the admittance matrix `y` (siemens) at the external ports, returns the matrix
/// `Y′ = (D − Y B)⁻¹ (Y A − C)` at the internal reference planes, `A = D`, `B`, `C` diagonal
/// over ports. Exactly symmetric when `y` is (module notes).
///
/// # Errors
/// A non-square `y`, a port list of another length, non-finite entries, a non-reciprocal
/// discontinuity ([`RECIPROCITY_TOL`]), or a singular `D − Y B` (the de-embedded network has
/// no admittance matrix at this frequency, e.g. a short circuit at an inner plane).
pub fn deembed(y: &NetMatrix, ports: &[Option<PortDiscontinuity>]) -> Result<NetMatrix, DeembedError> {
    let n = check_square(y, "admittance matrix Y")?;
    let p = port_list(ports, n)?;
    let m = DenseMatrix::from_fn(n, n, |i, j| delta(i, j) * p[i].a - y.get(i, j) * p[j].b);
    let r = DenseMatrix::from_fn(n, n, |i, j| y.get(i, j) * p[j].a - delta(i, j) * p[i].c);
    let w = invert(
        &m,
        "matrix D − Y·B",
        "the de-embedded network has no admittance matrix at this frequency (e.g. a short circuit at an inner port plane)",
    )?;
    let mut out = w.matmul(&r)?;
    if exactly_symmetric(y) {
        symmetrize(&mut out);
    }
    Ok(out)
}

/// Adds the port discontinuities (the inverse of [`deembed`]): given the admittance matrix
/// `y_inner` (siemens) at the internal reference planes, returns
/// `Y = (C + D Y′)(A + B Y′)⁻¹` at the external ports. Exactly symmetric when `y_inner` is.
///
/// # Errors
/// As [`deembed`], with a singular `A + B Y′` (the embedded network has no admittance
/// matrix, e.g. a series resonance that opens an external port's path completely).
pub fn embed(y_inner: &NetMatrix, ports: &[Option<PortDiscontinuity>]) -> Result<NetMatrix, DeembedError> {
    let n = check_square(y_inner, "inner admittance matrix Y′")?;
    let p = port_list(ports, n)?;
    let m = DenseMatrix::from_fn(n, n, |i, j| delta(i, j) * p[i].a + p[i].b * y_inner.get(i, j));
    let r = DenseMatrix::from_fn(n, n, |i, j| delta(i, j) * p[i].c + p[i].a * y_inner.get(i, j));
    let w = invert(&m, "matrix A + B·Y′", "the embedded network has no admittance matrix at this frequency")?;
    let mut out = r.matmul(&w)?;
    if exactly_symmetric(y_inner) {
        symmetrize(&mut out);
    }
    Ok(out)
}

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

const ZERO: Complex64 = Complex64::new(0.0, 0.0);
const ONE: Complex64 = Complex64::new(1.0, 0.0);

fn delta(i: usize, j: usize) -> Complex64 {
    if i == j { ONE } else { ZERO }
}

fn finite(v: Complex64, what: &'static str, row: usize, col: usize) -> Result<(), DeembedError> {
    if Scalar::is_finite(v) { Ok(()) } else { Err(DeembedError::NonFinite { what, row, col, value: v }) }
}

fn uncoupled(rcond: f64) -> DeembedError {
    DeembedError::Singular {
        what: "transfer admittance Y₂₁ of a two-port",
        n: 1,
        rcond,
        hint: "the two ports are uncoupled, so the two-port has no chain (ABCD) matrix",
    }
}

/// Checks that `m` is square with finite entries; returns its order.
fn check_square(m: &NetMatrix, what: &'static str) -> Result<usize, DeembedError> {
    let n = m.nrows();
    if m.ncols() != n {
        return Err(DeembedError::SizeMismatch {
            what: "column count of a square matrix",
            expected: n,
            got: m.ncols(),
        });
    }
    for j in 0..n {
        for i in 0..n {
            finite(m.get(i, j), what, i + 1, j + 1)?;
        }
    }
    Ok(n)
}

fn check_two_port(m: &NetMatrix, what: &'static str) -> Result<(), DeembedError> {
    if m.nrows() != 2 {
        return Err(DeembedError::SizeMismatch {
            what: "row count of a two-port matrix",
            expected: 2,
            got: m.nrows(),
        });
    }
    check_square(m, what).map(|_| ())
}

/// The symmetric reciprocal part of a standard, in chain form (`A = D`, `A² − BC = 1`
/// algebraically), and the standard's departure from symmetry and reciprocity.
fn symmetric_standard(y: &NetMatrix, what: &'static str) -> Result<(PortDiscontinuity, f64), DeembedError> {
    check_two_port(y, what)?;
    let (y11, y12, y21, y22) = (y.get(0, 0), y.get(0, 1), y.get(1, 0), y.get(1, 1));
    let norm = y.frobenius_norm();
    let asym = if norm > 0.0 { ((y11 - y22).norm() + (y12 - y21).norm()) / norm } else { 0.0 };
    let ys = (y11 + y22).scale(0.5);
    let yt = (y12 + y21).scale(0.5);
    if yt.norm().is_nan() || yt.norm() <= f64::EPSILON * ys.norm() {
        let rcond = if ys.norm() > 0.0 { yt.norm() / ys.norm() } else { 0.0 };
        return Err(uncoupled(rcond));
    }
    // A = −Y₁₁/Y₁₂, B = −1/Y₁₂, C = (Y₁₂² − Y₁₁²)/Y₁₂ (from Abcd::from_y with Y₁₁ = Y₂₂).
    let t = PortDiscontinuity { a: -ys / yt, b: -ONE / yt, c: (yt - ys) * (yt + ys) / yt };
    Ok((t, asym))
}

/// The port discontinuities per port (identity for `None`), checked.
fn port_list(ports: &[Option<PortDiscontinuity>], n: usize) -> Result<Vec<PortDiscontinuity>, DeembedError> {
    if ports.len() != n {
        return Err(DeembedError::SizeMismatch {
            what: "number of port entries (one per port)",
            expected: n,
            got: ports.len(),
        });
    }
    ports
        .iter()
        .enumerate()
        .map(|(k, p)| {
            let p = p.unwrap_or(PortDiscontinuity::NONE);
            for (col, v) in [p.a, p.b, p.c].into_iter().enumerate() {
                finite(v, "port discontinuity (a, b, c)", k + 1, col + 1)?;
            }
            let det = p.det();
            let scale = 1f64.max(p.a.norm_sqr()).max((p.b * p.c).norm());
            if (det - ONE).norm() > RECIPROCITY_TOL * scale {
                return Err(DeembedError::NotReciprocal { port: k + 1, det });
            }
            Ok(p)
        })
        .collect()
}

/// `m⁻¹` through the network module's checked inverse (LU with partial pivoting, refused
/// when the reciprocal condition number is below `n·ε`), with this module's wording.
fn invert(m: &NetMatrix, what: &'static str, hint: &'static str) -> Result<NetMatrix, DeembedError> {
    network::z_from_y(m).map_err(|e| match e {
        NetworkError::Singular { n, rcond, .. } => DeembedError::Singular { what, n, rcond, hint },
        NetworkError::NonFinite { row, col, value, .. } => DeembedError::NonFinite { what, row, col, value },
        NetworkError::SizeMismatch { what, expected, got } => {
            DeembedError::SizeMismatch { what, expected, got }
        }
        NetworkError::Linalg(e) => DeembedError::Linalg(e),
        NetworkError::BadReference { .. } => {
            DeembedError::NoPhysicalSolution("unexpected reference-impedance error".into())
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::network::{reciprocity_error, z_from_y};

    type C = Complex64;
    const J: C = C::new(0.0, 1.0);
    /// Speed of light in vacuum (m/s), exact by the SI definition.
    const C0: f64 = 299_792_458.0;

    fn c(re: f64, im: f64) -> C {
        C::new(re, im)
    }

    fn mat(n: usize, rows: &[C]) -> NetMatrix {
        DenseMatrix::from_fn(n, n, |i, j| rows[i * n + j])
    }

    fn max_diff(a: &NetMatrix, b: &NetMatrix) -> f64 {
        assert_eq!((a.nrows(), a.ncols()), (b.nrows(), b.ncols()));
        a.as_slice().iter().zip(b.as_slice()).map(|(x, y)| (x - y).norm()).fold(0.0, f64::max)
    }

    fn max_abs(a: &NetMatrix) -> f64 {
        a.as_slice().iter().map(|x| x.norm()).fold(0.0, f64::max)
    }

    /// Deterministic pseudo-random numbers in [-1, 1) (a 64-bit LCG, Knuth's MMIX constants).
    struct Lcg(u64);
    impl Lcg {
        fn next(&mut self) -> f64 {
            self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (self.0 >> 11) as f64 / (1u64 << 52) as f64 - 1.0
        }
    }

    /// A random reciprocal n-port admittance (siemens, of order 1/50), exactly symmetric.
    fn random_symmetric_y(n: usize, seed: u64) -> NetMatrix {
        let mut r = Lcg(seed);
        let mut y = DenseMatrix::zeros(n, n);
        for j in 0..n {
            for i in 0..=j {
                let v = c(0.01 * r.next(), 0.02 * r.next());
                y.set(i, j, v);
                y.set(j, i, v);
            }
        }
        for i in 0..n {
            y.set(i, i, y.get(i, i) + c(0.01 * n as f64 + 0.002, 0.0));
        }
        y
    }

    // The synthetic feed line: Z₀ = 48 − 0.5j Ω, ε_eff = 4.5, conductor-like loss
    // α = 0.6 Np/m · √(f / 1 GHz); standards of l = 4 mm and 8 mm.
    const L: f64 = 4e-3;
    const EPS_EFF: f64 = 4.5;
    fn z0_true() -> C {
        c(48.0, -0.5)
    }
    fn gamma_true(f: f64) -> C {
        c(0.6 * (f / 1e9).sqrt(), 2.0 * std::f64::consts::PI * f * EPS_EFF.sqrt() / C0)
    }
    /// Frequency (Hz) at which βl = θ.
    fn freq_for(theta: f64) -> f64 {
        theta * C0 / (2.0 * PI * EPS_EFF.sqrt() * L)
    }

    /// π section: shunt C, series L, shunt C, written in closed form
    /// `[[1 + ZY, Z], [Y(2 + ZY), 1 + ZY]]` (the product of the three element matrices,
    /// Pozar ch. 4 — from memory; checked against the cascade below).
    fn pi_port(f: f64) -> PortDiscontinuity {
        let w = 2.0 * PI * f;
        let (z, y) = (J * w * 0.25e-9, J * w * 30e-15);
        PortDiscontinuity { a: ONE + z * y, b: z, c: y * (2.0 + z * y) }
    }

    /// T section: series L, shunt C, series L: `[[1 + ZY, Z(2 + ZY)], [Y, 1 + ZY]]`.
    fn tee_port(f: f64) -> PortDiscontinuity {
        let w = 2.0 * PI * f;
        let (z, y) = (J * w * 0.12e-9 + 0.3, J * w * 45e-15);
        PortDiscontinuity { a: ONE + z * y, b: z * (2.0 + z * y), c: y }
    }

    /// Admittance matrix of the standard P · L(len) · P.
    fn standard(p: &PortDiscontinuity, z0: C, gamma: C, len: f64) -> NetMatrix {
        p.abcd().then(&Abcd::line(z0, gamma, len)).then(&p.abcd()).to_y().unwrap()
    }

    /// Error of a recovered discontinuity, in the normalised units a, B/Z₀, C·Z₀.
    fn port_error(got: &PortDiscontinuity, want: &PortDiscontinuity, z0: C) -> f64 {
        let d = [(got.a - want.a).norm(), ((got.b - want.b) / z0).norm(), ((got.c - want.c) * z0).norm()];
        let s = [want.a.norm(), (want.b / z0).norm(), (want.c * z0).norm()];
        d.iter().copied().fold(0.0, f64::max) / s.iter().copied().fold(1.0, f64::max)
    }

    /// Admittance of an ideal line: `Y₁₁ = Y₂₂ = coth(γx)/Z₀`, `Y₁₂ = Y₂₁ = −csch(γx)/Z₀`
    /// (D. M. Pozar, *Microwave Engineering*, 4th ed., 2012, ch. 4 — from memory).
    fn line_y(z0: C, gamma: C, len: f64) -> NetMatrix {
        let g = gamma * len;
        let y11 = g.cosh() / (g.sinh() * z0);
        let y12 = -ONE / (g.sinh() * z0);
        mat(2, &[y11, y12, y12, y11])
    }

    // Chain matrices against textbook admittances/impedances: the π network has
    // Y₁₁ = Y₂₂ = Y + 1/Z, Y₁₂ = −1/Z (nodal analysis); the T network has Z₁₁ = Z₂₂ = Z + 1/Y,
    // Z₁₂ = 1/Y (mesh analysis); the line as in `line_y` (D. M. Pozar, Microwave Engineering,
    // 4th ed., 2012, ch. 4 — from memory).
    #[test]
    fn deembed_abcd_matches_textbook_two_ports() {
        let (z, y) = (c(3.0, 40.0), c(1e-4, 6e-3));
        let pi = Abcd::shunt(y).then(&Abcd::series(z)).then(&Abcd::shunt(y));
        let yy = pi.to_y().unwrap();
        let want = mat(2, &[y + 1.0 / z, -1.0 / z, -1.0 / z, y + 1.0 / z]);
        assert!(max_diff(&yy, &want) < 1e-15 * max_abs(&want) * 10.0, "{yy:?}");
        let tee = Abcd::series(z).then(&Abcd::shunt(y)).then(&Abcd::series(z));
        let zz = z_from_y(&tee.to_y().unwrap()).unwrap();
        let want = mat(2, &[z + 1.0 / y, 1.0 / y, 1.0 / y, z + 1.0 / y]);
        assert!(max_diff(&zz, &want) < 1e-13 * max_abs(&want), "{zz:?}");
        // The closed forms used by the synthetic ports equal the cascades.
        for f in [1e9, 7e9, 20e9] {
            let w = 2.0 * PI * f;
            let (z, y) = (J * w * 0.25e-9, J * w * 30e-15);
            let cas = Abcd::shunt(y).then(&Abcd::series(z)).then(&Abcd::shunt(y));
            let p = pi_port(f).abcd();
            assert!(
                (cas.a - p.a).norm() + (cas.b - p.b).norm() + (cas.c - p.c).norm() + (cas.d - p.d).norm()
                    < 1e-14
            );
            assert!((pi_port(f).det() - 1.0).norm() < 1e-15 && (tee_port(f).det() - 1.0).norm() < 1e-15);
        }
        for x in [1e-3, 4e-3, 2.5e-2] {
            let f = 9e9;
            let got = Abcd::line(z0_true(), gamma_true(f), x).to_y().unwrap();
            let want = line_y(z0_true(), gamma_true(f), x);
            assert!(max_diff(&got, &want) < 1e-13 * max_abs(&want), "x = {x}");
            let back = Abcd::from_y(&got).unwrap().to_y().unwrap();
            assert!(max_diff(&back, &got) < 1e-13 * max_abs(&got));
        }
    }

    fn check_calibration(
        port_of: fn(f64) -> PortDiscontinuity,
        thetas: &[f64],
        chained: bool,
    ) -> (f64, f64, f64) {
        let (mut ep, mut ez, mut eg) = (0.0f64, 0.0f64, 0.0f64);
        let mut prev = None;
        for &theta in thetas {
            let f = freq_for(theta);
            let (p, z0, g) = (port_of(f), z0_true(), gamma_true(f));
            let y1 = standard(&p, z0, g, L);
            let y2 = standard(&p, z0, g, 2.0 * L);
            let cal = calibrate(&y1, &y2, L, if chained { prev } else { None }).unwrap();
            ep = ep.max(port_error(&cal.port, &p, z0));
            ez = ez.max(((cal.z0 - z0) / z0).norm());
            eg = eg.max(((cal.gamma - g) / g).norm());
            assert!(cal.gamma.re > 0.0 && cal.z0.re > 0.0, "θ = {theta}: {cal:?}");
            assert!((cal.port.det() - 1.0).norm() < 1e-12);
            assert!(cal.standard_asymmetry < 1e-13, "{}", cal.standard_asymmetry);
            prev = Some(cal.gamma);
        }
        (ep, ez, eg)
    }

    // Synthetic standards P·L(l)·P and P·L(2l)·P built from the textbook chain matrices
    // (Pozar ch. 4 — from memory); the calibration (Engen & Hoer 1979 line-standard
    // eigenvalues; Eisenstadt & Eo 1992 for γ, Z₀ — from memory) must return the P, Z₀, γ
    // used to build them, to 1e-10 relative, for βl from 0.03π to 0.9π.
    #[test]
    fn deembed_calibration_recovers_pi_and_tee_ports() {
        let thetas: Vec<f64> = (0..=29).map(|k| PI * (0.03 + 0.03 * k as f64)).collect();
        for (name, port_of) in [("π", pi_port as fn(f64) -> PortDiscontinuity), ("T", tee_port)] {
            let (ep, ez, eg) = check_calibration(port_of, &thetas, false);
            eprintln!("{name} section, βl ≤ 0.9π: max rel. error P {ep:.1e}, Z₀ {ez:.1e}, γ {eg:.1e}");
            assert!(ep < 1e-10 && ez < 1e-10 && eg < 1e-10, "{name}: {ep:e} {ez:e} {eg:e}");
        }
        // A reciprocal port with A ≠ D, P = P_s·N (N = diag(n, 1/n), an ideal transformer):
        // the standards P·L·P̃ equal P_s·L(n²Z₀)·P_s (module notes), so the calibration
        // returns P_s and n²Z₀. P̃ = [[D, B], [C, A]] is P seen from the other side
        // (reversed reciprocal two-port, Pozar ch. 4 — from memory).
        let n = 1.1;
        for theta in [0.2 * PI, 0.7 * PI] {
            let f = freq_for(theta);
            let (ps, z0, g) = (pi_port(f), z0_true(), gamma_true(f));
            let p = Abcd { a: ps.a * n, b: ps.b / n, c: ps.c * n, d: ps.a / n };
            let pr = Abcd { a: p.d, b: p.b, c: p.c, d: p.a };
            let std = |x: f64| p.then(&Abcd::line(z0, g, x)).then(&pr).to_y().unwrap();
            let cal = calibrate(&std(L), &std(2.0 * L), L, None).unwrap();
            let z0n = z0 * (n * n);
            assert!(
                port_error(&cal.port, &ps, z0) < 1e-10 && ((cal.z0 - z0n) / z0n).norm() < 1e-10,
                "{cal:?}"
            );
            assert!(((cal.gamma - g) / g).norm() < 1e-10);
        }
        // No discontinuity at all: P = I, B = C = 0 found to rounding.
        let (ep, ez, eg) = check_calibration(|_| PortDiscontinuity::NONE, &thetas, false);
        assert!(ep < 1e-10 && ez < 1e-10 && eg < 1e-10, "identity: {ep:e} {ez:e} {eg:e}");
    }

    // Beyond βl = π: with the previous γ of an ordered sweep the phase of e^{−γl} continues
    // (same sources); without it the principal value Im(γl) ∈ (−π, π] is returned, the
    // same e^{−γl} with γl shifted by −2πj.
    #[test]
    fn deembed_calibration_branch_beyond_half_wavelength() {
        let thetas: Vec<f64> = (0..=22).map(|k| PI * (0.1 + 0.08 * k as f64)).collect();
        assert!(thetas.iter().all(|t| (t / PI - 1.0).abs() > 0.01) && *thetas.last().unwrap() > 1.8 * PI);
        for port_of in [pi_port as fn(f64) -> PortDiscontinuity, tee_port] {
            let (ep, ez, eg) = check_calibration(port_of, &thetas, true);
            eprintln!("βl up to 1.86π, chained: max rel. error P {ep:.1e}, Z₀ {ez:.1e}, γ {eg:.1e}");
            assert!(ep < 1e-10 && ez < 1e-10 && eg < 1e-10, "{ep:e} {ez:e} {eg:e}");
        }
        let theta = 1.4 * PI;
        let f = freq_for(theta);
        let (p, z0, g) = (pi_port(f), z0_true(), gamma_true(f));
        let cal = calibrate(&standard(&p, z0, g, L), &standard(&p, z0, g, 2.0 * L), L, None).unwrap();
        let want = g * L - J * (2.0 * PI);
        assert!((cal.gamma * L - want).norm() < 1e-10 * want.norm(), "{} vs {want}", cal.gamma * L);
        assert!(((cal.z0 - z0) / z0).norm() < 1e-10 && port_error(&cal.port, &p, z0) < 1e-10);
        // A lossless line keeps the right sign (Re Z₀ > 0 decides, not Re γ ≈ 0).
        let g0 = c(0.0, g.im);
        let cal = calibrate(&standard(&p, z0, g0, L), &standard(&p, z0, g0, 2.0 * L), L, Some(g0)).unwrap();
        assert!(((cal.gamma - g0) / g0).norm() < 1e-10 && ((cal.z0 - z0) / z0).norm() < 1e-10, "{cal:?}");
    }

    // De-embedding the calibrated ports from P·L(x)·P, a line of another length with the same
    // ports, gives the ideal line's Y (Pozar, Microwave Engineering, 2012, ch. 4 — from
    // memory): the uniform line shows the line itself.
    #[test]
    fn deembed_line_of_other_length_gives_ideal_line() {
        let mut worst = 0.0f64;
        for theta in [0.2 * PI, 0.5 * PI, 0.85 * PI] {
            let f = freq_for(theta);
            for p in [pi_port(f), tee_port(f)] {
                let (z0, g) = (z0_true(), gamma_true(f));
                let cal = calibrate(&standard(&p, z0, g, L), &standard(&p, z0, g, 2.0 * L), L, None).unwrap();
                for x in [1.3 * L, 3.7 * L, 11.0 * L] {
                    let y = standard(&p, z0, g, x);
                    let got = deembed(&y, &[Some(cal.port), Some(cal.port)]).unwrap();
                    let want = line_y(z0, g, x);
                    let e = max_diff(&got, &want) / max_abs(&want);
                    worst = worst.max(e);
                    assert!(e < 1e-10, "θ = {theta}, x = {x}: {e:e}");
                    // Without de-embedding the port is visible (the test can fail).
                    assert!(max_diff(&y, &want) / max_abs(&want) > 1e-3);
                }
            }
        }
        eprintln!("de-embedded line vs ideal line: max rel. error {worst:.1e}");
    }

    /// Embeds by nodal analysis instead of chain matrices: each discontinuity is a two-port
    /// with `Y = [[A/B, −1/B], [−1/B, A/B]]` between its external node and a new internal
    /// node; the internal nodes are eliminated by Kron reduction (Schur complement,
    /// `Y_EE − Y_EI Y_II⁻¹ Y_IE`; G. Kron, *Tensor Analysis of Networks*, 1939 — from memory).
    fn embed_by_kron(inner: &NetMatrix, ports: &[Option<PortDiscontinuity>]) -> NetMatrix {
        let n = inner.nrows();
        let mut node = Vec::new(); // node of the inner network's port k
        let mut extra = 0;
        for p in ports {
            node.push(if p.is_some() {
                extra += 1;
                n + extra - 1
            } else {
                node.len()
            });
        }
        let m = n + extra;
        let mut yn = DenseMatrix::<C>::zeros(m, m);
        let add = |yn: &mut NetMatrix, i: usize, j: usize, v: C| yn.set(i, j, yn.get(i, j) + v);
        for (k, p) in ports.iter().enumerate() {
            if let Some(p) = p {
                let (s, t) = (p.a / p.b, -ONE / p.b);
                let (e, i) = (k, node[k]);
                add(&mut yn, e, e, s);
                add(&mut yn, i, i, s);
                add(&mut yn, e, i, t);
                add(&mut yn, i, e, t);
            }
        }
        for a in 0..n {
            for b in 0..n {
                add(&mut yn, node[a], node[b], inner.get(a, b));
            }
        }
        let yii = DenseMatrix::from_fn(extra, extra, |i, j| yn.get(n + i, n + j));
        let zii = z_from_y(&yii).unwrap();
        let yie = DenseMatrix::from_fn(extra, n, |i, j| yn.get(n + i, j));
        let yei = DenseMatrix::from_fn(n, extra, |i, j| yn.get(i, n + j));
        let corr = yei.matmul(&zii.matmul(&yie).unwrap()).unwrap();
        DenseMatrix::from_fn(n, n, |i, j| yn.get(i, j) - corr.get(i, j))
    }

    // A 3-port with discontinuities at ports 1 and 3 and none at port 2: `embed` agrees with
    // nodal analysis plus Kron reduction, and `deembed` recovers the inner network; embed
    // then deembed round-trips random symmetric Y.
    #[test]
    fn deembed_three_port_mixed_ports_and_round_trips() {
        let f = 12e9;
        let ports = [Some(pi_port(f)), None, Some(tee_port(f))];
        let mut worst = 0.0f64;
        for seed in 1..8 {
            let inner = random_symmetric_y(3, seed);
            let kron = embed_by_kron(&inner, &ports);
            let outer = embed(&inner, &ports).unwrap();
            let e1 = max_diff(&outer, &kron) / max_abs(&kron);
            let back = deembed(&kron, &ports).unwrap();
            let e2 = max_diff(&back, &inner) / max_abs(&inner);
            worst = worst.max(e1).max(e2);
            assert!(e1 < 1e-12 && e2 < 1e-12, "seed {seed}: {e1:e} {e2:e}");
            // The embedding does change the matrix (the checks above can fail).
            assert!(max_diff(&outer, &inner) > 1e-3 * max_abs(&inner));
        }
        for (n, seed) in [(1, 3), (2, 4), (5, 5), (8, 6)] {
            let inner = random_symmetric_y(n, seed);
            let ps: Vec<_> = (0..n)
                .map(|k| match k % 3 {
                    0 => Some(pi_port(3e9 * (k + 1) as f64)),
                    1 => None,
                    _ => Some(tee_port(2e9 * (k + 1) as f64)),
                })
                .collect();
            let back = deembed(&embed(&inner, &ps).unwrap(), &ps).unwrap();
            let e = max_diff(&back, &inner) / max_abs(&inner);
            worst = worst.max(e);
            assert!(e < 1e-12, "n = {n}: {e:e}");
        }
        eprintln!("3-port embed vs Kron reduction and round trips: max rel. error {worst:.1e}");
        // All ports None: the identity.
        let y = random_symmetric_y(4, 9);
        assert_eq!(deembed(&y, &[None; 4]).unwrap(), y);
    }

    // Reciprocity is kept (a reciprocal network stays reciprocal after removing reciprocal
    // two-ports): an exactly symmetric input gives an exactly symmetric output. A
    // non-reciprocal input is left non-reciprocal (no symmetrisation applies).
    #[test]
    fn deembed_symmetric_in_symmetric_out() {
        let f = 15e9;
        for seed in 20..25 {
            let y = random_symmetric_y(4, seed);
            let ps = [Some(pi_port(f)), Some(tee_port(f)), None, Some(pi_port(2.0 * f))];
            assert_eq!(reciprocity_error(&deembed(&y, &ps).unwrap()), 0.0);
            assert_eq!(reciprocity_error(&embed(&y, &ps).unwrap()), 0.0);
        }
        let mut y = random_symmetric_y(3, 30);
        y.set(0, 2, y.get(0, 2) + c(0.004, -0.002));
        let ps = [Some(pi_port(f)), None, Some(tee_port(f))];
        let yp = deembed(&y, &ps).unwrap();
        assert!(reciprocity_error(&yp) > 1e-3);
        assert!(max_diff(&embed(&yp, &ps).unwrap(), &y) < 1e-12 * max_abs(&y));
    }

    #[test]
    fn deembed_errors_are_typed() {
        let f = 5e9;
        let p = pi_port(f);
        let y = random_symmetric_y(3, 1);
        // Port list of another length; non-square matrix; non-finite entry.
        assert!(matches!(
            deembed(&y, &[None, None]),
            Err(DeembedError::SizeMismatch { expected: 3, got: 2, .. })
        ));
        let rect = DenseMatrix::<C>::zeros(2, 3);
        assert!(matches!(deembed(&rect, &[None, None]), Err(DeembedError::SizeMismatch { .. })));
        let mut nan = y.clone();
        nan.set(1, 0, c(f64::NAN, 0.0));
        let e = embed(&nan, &[None; 3]).unwrap_err();
        assert!(matches!(e, DeembedError::NonFinite { row: 2, col: 1, .. }), "{e}");
        // A non-reciprocal discontinuity (A² − BC = 1.21).
        let bad = PortDiscontinuity { a: c(1.1, 0.0), b: ZERO, c: ZERO };
        let e = deembed(&y, &[None, Some(bad), None]).unwrap_err();
        assert!(matches!(e, DeembedError::NotReciprocal { port: 2, .. }), "{e}");
        // A series impedance Z in front of an admittance 1/Z leaves a short at the inner
        // plane: y′ = y/(1 − yZ) does not exist (Z = 32j Ω, so that 1 − (1/Z)·Z is exactly 0).
        let z = c(0.0, 32.0);
        let series = PortDiscontinuity { a: ONE, b: z, c: ZERO };
        let e = deembed(&mat(1, &[1.0 / z]), &[Some(series)]).unwrap_err();
        assert!(matches!(e, DeembedError::Singular { .. }), "{e}");
        // Calibration: wrong sizes, bad lengths, uncoupled ports.
        let (z0, g) = (z0_true(), gamma_true(f));
        let (y1, y2) = (standard(&p, z0, g, L), standard(&p, z0, g, 2.0 * L));
        assert!(matches!(calibrate(&y, &y2, L, None), Err(DeembedError::SizeMismatch { .. })));
        for l in [0.0, -L, f64::NAN, f64::INFINITY] {
            assert!(matches!(calibrate(&y1, &y2, l, None), Err(DeembedError::BadLength(_))));
        }
        assert!(matches!(
            calibrate(&y1, &y2, L, Some(c(f64::NAN, 1.0))),
            Err(DeembedError::NonFinite { .. })
        ));
        let open = mat(2, &[c(0.0, 0.01), ZERO, ZERO, c(0.0, 0.01)]);
        assert!(matches!(calibrate(&open, &y2, L, None), Err(DeembedError::Singular { .. })));
        assert!(matches!(Abcd::from_y(&open), Err(DeembedError::Singular { .. })));
        assert!(matches!(Abcd::shunt(c(0.0, 0.01)).to_y(), Err(DeembedError::Singular { .. })));
        // Lossless standards exactly half a wavelength apart: degenerate.
        let g0 = c(0.0, PI / L);
        let e = calibrate(&standard(&p, z0, g0, L), &standard(&p, z0, g0, 2.0 * L), L, None).unwrap_err();
        assert!(matches!(e, DeembedError::Degenerate { .. }), "{e}");
        // An impedance inverter as "port" (P² = −I): not determined by two lines.
        let inv = PortDiscontinuity { a: ZERO, b: c(0.0, 50.0), c: c(0.0, 0.02) };
        let e = calibrate(&standard(&inv, z0, g, L), &standard(&inv, z0, g, 2.0 * L), L, None).unwrap_err();
        assert!(matches!(e, DeembedError::NoPhysicalSolution(_)), "{e}");
    }
}
