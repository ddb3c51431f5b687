//! Network parameters of a multiport: admittance `Y`, impedance `Z` and power-wave scattering
//! `S` matrices, their conversions, reference-impedance changes and two checks (reciprocity,
//! passivity through the largest singular value).
//!
//! Conventions:
//! - port `i` has voltage `V_i` (terminal against the common reference) and current `I_i`
//!   flowing *into* the network; `I = Y V`, `V = Z I` (siemens, ohms);
//! - every port has a real, positive reference impedance `R_i` (ohms), given per port in
//!   port order (`z_ref[i]`);
//! - scattering parameters are the power waves of K. Kurokawa, "Power waves and the scattering
//!   matrix", IEEE Trans. MTT-13(2), 1965, specialised to real references:
//!   `a_i = (V_i + R_i I_i) / (2 √R_i)`, `b_i = (V_i − R_i I_i) / (2 √R_i)`, `b = S a`.
//!   With `G = diag(√R_i)` and the normalised matrices `ỹ = G Y G`, `z̃ = G⁻¹ Z G⁻¹`:
//!   `S = (I − ỹ)(I + ỹ)⁻¹ = (z̃ − I)(z̃ + I)⁻¹`.
//!   When every `R_i` equals one `Z0`, these are the usual travelling-wave S-parameters.
//!
//! Symmetry: a reciprocal network has `Yᵀ = Y`, and then `Sᵀ = S`. Each conversion here
//! computes one inverse of a normalised matrix by LU with partial pivoting; pivoting breaks
//! the symmetry at the rounding level, so when the input matrix is *exactly* symmetric (bit
//! for bit) the computed inverse is replaced by `½ (W + Wᵀ)` — a change of the order of the
//! rounding error — and the result is exactly symmetric. Inputs that are symmetric only to
//! rounding are converted as they are.
//!
//! All functions check their input (square matrices, matching port counts, finite entries,
//! finite positive references) and return a [`NetworkError`] instead of panicking.

use rafter_linalg::{Complex64, DenseLu, DenseMatrix, LinalgError, Scalar};

/// Complex matrix of network parameters (column-major, ports in order).
pub type NetMatrix = DenseMatrix<Complex64>;

/// Errors of the network-parameter conversions.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum NetworkError {
    /// The matrix to invert is singular to working precision.
    #[error(
        "the {what} ({n}×{n}) is singular to working precision (reciprocal condition number {rcond:e}, \
         below n·ε = {limit:e}); {hint}",
        limit = *n as f64 * f64::EPSILON
    )]
    Singular {
        /// Which matrix was inverted.
        what: &'static str,
        /// Number of ports.
        n: usize,
        /// Its reciprocal condition number `1 / (‖A‖₁ ‖A⁻¹‖₁)` (0 for an exactly zero pivot).
        rcond: f64,
        /// What a singular matrix means physically.
        hint: &'static str,
    },
    /// A matrix is not square or the port counts of two operands disagree.
    #[error("size mismatch: {what} is {got}, expected {expected}")]
    SizeMismatch {
        /// Which operand.
        what: &'static str,
        /// Expected count.
        expected: usize,
        /// Count received.
        got: usize,
    },
    /// A reference impedance is not finite and positive.
    #[error("reference impedance of port {port} is {value} Ω; it must be finite and positive")]
    BadReference {
        /// Port number, counted from 1.
        port: usize,
        /// The value received (ohms).
        value: f64,
    },
    /// A matrix entry is NaN or infinite.
    #[error(
        "entry ({row}, {col}) of the {what} is {value}; entries must be finite (rows and columns counted from 1)"
    )]
    NonFinite {
        /// Which matrix.
        what: &'static str,
        /// Row, counted from 1.
        row: usize,
        /// Column, counted from 1.
        col: usize,
        /// The value received.
        value: Complex64,
    },
    /// A dense kernel failed otherwise.
    #[error(transparent)]
    Linalg(#[from] LinalgError),
}

/// Power-wave scattering matrix `S` of a network with admittance matrix `y` (siemens) and
/// real positive reference impedances `z_ref` (ohms, one per port):
/// `S = (I − G Y G)(I + G Y G)⁻¹ = 2 (I + G Y G)⁻¹ − I`, `G = diag(√R_i)` (Kurokawa 1965 with
/// `F = diag(1 / (2 √R_i))`). Exactly symmetric when `y` is (see the module notes).
///
/// # Errors
/// A non-square `y`, `z_ref` of another length, a bad reference, a non-finite entry, or a
/// singular `I + G Y G` (only possible for an active network).
pub fn s_from_y(y: &NetMatrix, z_ref: &[f64]) -> Result<NetMatrix, NetworkError> {
    let n = square(y, "admittance matrix Y")?;
    let g = sqrt_refs(z_ref, n)?;
    let a = DenseMatrix::from_fn(n, n, |i, j| y.get(i, j).scale(g[i] * g[j]) + delta(i, j));
    let w = inverse(
        &a,
        "matrix I + G Y G",
        "the network is active (it has a natural resonance) at this frequency",
    )?;
    Ok(DenseMatrix::from_fn(n, n, |i, j| w.get(i, j).scale(2.0) - delta(i, j)))
}

/// Admittance matrix `Y` (siemens) of a network with power-wave scattering matrix `s` and
/// real positive references `z_ref` (ohms): `Y = G⁻¹ (2 (I + S)⁻¹ − I) G⁻¹`, the inverse of
/// [`s_from_y`].
///
/// # Errors
/// As [`s_from_y`]; a singular `I + S` (a short circuit at a port or a combination of ports:
/// no admittance matrix).
pub fn y_from_s(s: &NetMatrix, z_ref: &[f64]) -> Result<NetMatrix, NetworkError> {
    let n = square(s, "scattering matrix S")?;
    let g = sqrt_refs(z_ref, n)?;
    let a = DenseMatrix::from_fn(n, n, |i, j| s.get(i, j) + delta(i, j));
    let w = inverse(&a, "matrix I + S", "the network has no admittance matrix (a short circuit)")?;
    Ok(DenseMatrix::from_fn(n, n, |i, j| (w.get(i, j).scale(2.0) - delta(i, j)).scale(1.0 / (g[i] * g[j]))))
}

/// Impedance matrix `Z = Y⁻¹` (ohms) of an admittance matrix `y` (siemens).
///
/// # Errors
/// A non-square `y`, a non-finite entry, or a singular `y` — e.g. a port left open at DC, or a
/// floating conductor between ports: such a network has no impedance matrix.
pub fn z_from_y(y: &NetMatrix) -> Result<NetMatrix, NetworkError> {
    square(y, "admittance matrix Y")?;
    inverse(y, "admittance matrix Y", "the network has no impedance matrix (e.g. an open port at DC)")
}

/// Admittance matrix `Y = Z⁻¹` (siemens) of an impedance matrix `z` (ohms).
///
/// # Errors
/// A non-square `z`, a non-finite entry, or a singular `z` — e.g. two ports joined by a wire
/// (a lone shunt element across both): such a network has no admittance matrix.
pub fn y_from_z(z: &NetMatrix) -> Result<NetMatrix, NetworkError> {
    square(z, "impedance matrix Z")?;
    inverse(z, "impedance matrix Z", "the network has no admittance matrix (e.g. two ports joined by a wire)")
}

/// Power-wave scattering matrix of an impedance matrix `z` (ohms) with references `z_ref`:
/// `S = (z̃ − I)(z̃ + I)⁻¹ = I − 2 (z̃ + I)⁻¹`, `z̃ = G⁻¹ Z G⁻¹`, `G = diag(√R_i)`.
///
/// # Errors
/// As [`s_from_y`], with `I + z̃` in place of `I + G Y G`.
pub fn s_from_z(z: &NetMatrix, z_ref: &[f64]) -> Result<NetMatrix, NetworkError> {
    let n = square(z, "impedance matrix Z")?;
    let g = sqrt_refs(z_ref, n)?;
    let a = DenseMatrix::from_fn(n, n, |i, j| z.get(i, j).scale(1.0 / (g[i] * g[j])) + delta(i, j));
    let w = inverse(
        &a,
        "matrix I + G⁻¹ Z G⁻¹",
        "the network is active (it has a natural resonance) at this frequency",
    )?;
    Ok(DenseMatrix::from_fn(n, n, |i, j| delta(i, j) - w.get(i, j).scale(2.0)))
}

/// Impedance matrix `Z` (ohms) of a power-wave scattering matrix `s` with references `z_ref`:
/// `Z = G (2 (I − S)⁻¹ − I) G`, `G = diag(√R_i)` — the inverse of [`s_from_z`].
///
/// # Errors
/// As [`s_from_y`]; a singular `I − S` (an open port: no impedance matrix).
pub fn z_from_s(s: &NetMatrix, z_ref: &[f64]) -> Result<NetMatrix, NetworkError> {
    let n = square(s, "scattering matrix S")?;
    let g = sqrt_refs(z_ref, n)?;
    let a = DenseMatrix::from_fn(n, n, |i, j| delta(i, j) - s.get(i, j));
    let w = inverse(&a, "matrix I − S", "the network has no impedance matrix (an open circuit)")?;
    Ok(DenseMatrix::from_fn(n, n, |i, j| (w.get(i, j).scale(2.0) - delta(i, j)).scale(g[i] * g[j])))
}

/// The power-wave scattering matrix `s`, given for references `from`, re-expressed for
/// references `to` (ohms, real positive, one per port):
/// `S′ = C (S − ρ)(I − ρ S)⁻¹ C⁻¹` with the diagonal matrices
/// `ρ_i = (R′_i − R_i) / (R′_i + R_i)` and `c_i = (R_i + R′_i) / (2 √(R_i R′_i))`.
/// (From the wave definitions: `a′ = C (a − ρ b)`, `b′ = C (b − ρ a)`; one port gives the
/// familiar `Γ′ = (Γ − ρ) / (1 − ρ Γ)`.) Works also where `Z` or `Y` does not exist (opens,
/// shorts). Exactly symmetric when `s` is.
///
/// # Errors
/// Size mismatches, bad references, non-finite entries, or a singular `I − ρ S` (an active
/// network only).
pub fn renormalize(s: &NetMatrix, from: &[f64], to: &[f64]) -> Result<NetMatrix, NetworkError> {
    let n = square(s, "scattering matrix S")?;
    let gf = sqrt_refs(from, n)?;
    let gt = sqrt_refs(to, n)?;
    let rho: Vec<f64> = (0..n).map(|i| (to[i] - from[i]) / (to[i] + from[i])).collect();
    let c: Vec<f64> = (0..n).map(|i| (from[i] + to[i]) / (2.0 * gf[i] * gt[i])).collect();
    let m = DenseMatrix::from_fn(n, n, |i, j| delta(i, j) - s.get(i, j).scale(rho[i]));
    let b = DenseMatrix::from_fn(n, n, |i, j| s.get(i, j) - delta(i, j).scale(rho[i]));
    let w = inverse(
        &m,
        "matrix I − ρ S",
        "the network is active (it has a natural resonance) at this frequency",
    )?;
    let x = b.matmul(&w)?;
    let mut out = DenseMatrix::from_fn(n, n, |i, j| x.get(i, j).scale(c[i] / c[j]));
    if exactly_symmetric(s) {
        symmetrize(&mut out);
    }
    Ok(out)
}

/// Relative departure from reciprocity `‖M − Mᵀ‖_F / ‖M‖_F` (plain transpose, Frobenius
/// norms); 0 for a zero matrix, NaN for a non-square matrix or non-finite entries. A
/// reciprocal network's `Y`, `Z` and (real references) `S` give 0 up to rounding.
pub fn reciprocity_error(m: &NetMatrix) -> f64 {
    let n = m.nrows();
    if m.ncols() != n {
        return f64::NAN;
    }
    let norm = m.frobenius_norm();
    if norm == 0.0 {
        return 0.0;
    }
    let mut d = 0.0;
    for j in 0..n {
        for i in 0..n {
            d += (m.get(i, j) - m.get(j, i)).norm_sqr();
        }
    }
    d.sqrt() / norm
}

/// Largest singular value `σ_max(S) = ‖S‖₂` (faer's singular values). For power-wave `S`,
/// the network is passive at this frequency iff `σ_max ≤ 1`; a lossless network has every
/// singular value 1 (`S` unitary). 0 for an empty matrix; NaN when the SVD fails (non-finite
/// entries).
pub fn largest_singular_value(s: &NetMatrix) -> f64 {
    if s.nrows() == 0 || s.ncols() == 0 {
        return 0.0;
    }
    match Complex64::singular_values(s) {
        Ok(sv) => sv.iter().copied().fold(0.0, f64::max),
        Err(_) => f64::NAN,
    }
}

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

fn delta(i: usize, j: usize) -> Complex64 {
    Complex64::new(if i == j { 1.0 } else { 0.0 }, 0.0)
}

/// Checks that `m` is square with finite entries; returns its order.
fn square(m: &NetMatrix, what: &'static str) -> Result<usize, NetworkError> {
    let n = m.nrows();
    if m.ncols() != n {
        return Err(NetworkError::SizeMismatch {
            what: "column count of a square matrix",
            expected: n,
            got: m.ncols(),
        });
    }
    for j in 0..n {
        for i in 0..n {
            let v = m.get(i, j);
            if !Scalar::is_finite(v) {
                return Err(NetworkError::NonFinite { what, row: i + 1, col: j + 1, value: v });
            }
        }
    }
    Ok(n)
}

/// `√R_i` of `n` finite positive references.
fn sqrt_refs(z_ref: &[f64], n: usize) -> Result<Vec<f64>, NetworkError> {
    if z_ref.len() != n {
        return Err(NetworkError::SizeMismatch {
            what: "number of reference impedances (one per port)",
            expected: n,
            got: z_ref.len(),
        });
    }
    z_ref
        .iter()
        .enumerate()
        .map(|(i, &r)| {
            if r.is_finite() && r > 0.0 {
                Ok(r.sqrt())
            } else {
                Err(NetworkError::BadReference { port: i + 1, value: r })
            }
        })
        .collect()
}

/// Maximum column sum `‖A‖₁ = max_j Σ_i |a_ij|`.
fn norm1(a: &NetMatrix) -> f64 {
    (0..a.ncols()).map(|j| a.col(j).iter().map(|v| v.norm()).sum::<f64>()).fold(0.0, f64::max)
}

/// `a⁻¹` by LU with partial pivoting; symmetrised when `a` is exactly symmetric. Refused as
/// singular when the reciprocal condition number `1 / (‖A‖₁ ‖A⁻¹‖₁)` is below `n·ε` (the
/// inverse would carry no correct digit), or on an exactly zero pivot.
fn inverse(a: &NetMatrix, what: &'static str, hint: &'static str) -> Result<NetMatrix, NetworkError> {
    let n = a.nrows();
    let lu = DenseLu::factor(a).map_err(|e| match e {
        LinalgError::Singular { .. } => NetworkError::Singular { what, n, rcond: 0.0, hint },
        other => NetworkError::Linalg(other),
    })?;
    let mut w = DenseMatrix::from_fn(n, n, delta);
    lu.solve_in_place(w.as_mut_slice())?;
    if n > 0 {
        let rcond = 1.0 / (norm1(a) * norm1(&w));
        // NaN (overflow in the solve) is refused too.
        if rcond.is_nan() || rcond < n as f64 * f64::EPSILON {
            return Err(NetworkError::Singular {
                what,
                n,
                rcond: if rcond.is_nan() { 0.0 } else { rcond },
                hint,
            });
        }
    }
    if exactly_symmetric(a) {
        symmetrize(&mut w);
    }
    Ok(w)
}

pub(crate) fn exactly_symmetric(m: &NetMatrix) -> bool {
    let n = m.nrows();
    m.ncols() == n && (0..n).all(|j| (0..j).all(|i| m.get(i, j) == m.get(j, i)))
}

/// `W ← ½ (W + Wᵀ)`; exactly symmetric since floating-point addition commutes.
pub(crate) fn symmetrize(w: &mut NetMatrix) {
    let n = w.nrows();
    for j in 0..n {
        for i in 0..j {
            let v = (w.get(i, j) + w.get(j, i)).scale(0.5);
            w.set(i, j, v);
            w.set(j, i, v);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    type C = Complex64;
    const J: C = C::new(0.0, 1.0);

    fn c(re: f64, im: f64) -> C {
        C::new(re, im)
    }

    fn mat(n: usize, rows: &[C]) -> NetMatrix {
        DenseMatrix::from_fn(n, n, |i, j| rows[i * n + j])
    }

    /// Largest entry modulus of `a − b`.
    fn max_diff(a: &NetMatrix, b: &NetMatrix) -> f64 {
        assert_eq!((a.nrows(), a.ncols()), (b.nrows(), b.ncols()));
        a.as_slice().iter().zip(b.as_slice()).map(|(x, y)| (x - y).norm()).fold(0.0, f64::max)
    }

    /// Deterministic pseudo-random numbers in [-1, 1) (a 64-bit LCG, Knuth's MMIX constants).
    struct Lcg(u64);
    impl Lcg {
        fn next(&mut self) -> f64 {
            self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (self.0 >> 11) as f64 / (1u64 << 52) as f64 - 1.0
        }
    }

    /// A reciprocal passive n-port: `Y = Yᵀ` with positive definite real part (a random
    /// symmetric conductance matrix made diagonally dominant, plus a random symmetric
    /// susceptance), in siemens of order 1/50.
    fn passive_symmetric_y(n: usize, seed: u64) -> NetMatrix {
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
            let v = y.get(i, i) + c(0.01 * n as f64 + 0.001, 0.0);
            y.set(i, i, v);
        }
        y
    }

    /// Y of an ideal lossless TEM line (characteristic impedance `zc`, electrical length
    /// `theta`): `Y11 = Y22 = −j cot θ / Zc`, `Y12 = Y21 = j csc θ / Zc` (D. M. Pozar,
    /// *Microwave Engineering*, 4th ed., 2012, ch. 4 — from memory).
    fn line_y(zc: f64, theta: f64) -> NetMatrix {
        let y11 = -J / (theta.tan() * zc);
        let y12 = J / (theta.sin() * zc);
        mat(2, &[y11, y12, y12, y11])
    }

    // Series impedance Z between port 1 and port 2: S11 = Z/(Z + 2Z0), S21 = 2Z0/(Z + 2Z0)
    // (D. M. Pozar, Microwave Engineering, 4th ed., 2012, ch. 4, two-port conversions — from
    // memory).
    #[test]
    fn network_series_impedance_matches_textbook() {
        let z0 = 50.0;
        for z in [c(30.0, 40.0), c(0.0, -120.0), c(5.0, 0.0), c(1e4, 3e3)] {
            let y = mat(2, &[1.0 / z, -1.0 / z, -1.0 / z, 1.0 / z]);
            let s = s_from_y(&y, &[z0, z0]).unwrap();
            let s11 = z / (z + 2.0 * z0);
            let s21 = 2.0 * z0 / (z + 2.0 * z0);
            let want = mat(2, &[s11, s21, s21, s11]);
            assert!(max_diff(&s, &want) < 1e-14, "Z = {z}: {s:?}");
        }
    }

    // Shunt admittance Y across both ports (ports joined at one node, so only Z exists:
    // Z11 = Z12 = Z21 = Z22 = 1/Y): S11 = −Y Z0/(2 + Y Z0), S21 = 2/(2 + Y Z0) (D. M. Pozar,
    // Microwave Engineering, 4th ed., 2012, ch. 4 — from memory).
    #[test]
    fn network_shunt_admittance_matches_textbook() {
        let z0 = 50.0;
        for ysh in [c(0.02, 0.0), c(0.0, 0.05), c(1e-3, -4e-3)] {
            let zz = 1.0 / ysh;
            let z = mat(2, &[zz, zz, zz, zz]);
            let s = s_from_z(&z, &[z0, z0]).unwrap();
            let s11 = -ysh * z0 / (2.0 + ysh * z0);
            let s21 = 2.0 / (2.0 + ysh * z0);
            assert!(max_diff(&s, &mat(2, &[s11, s21, s21, s11])) < 1e-14, "Y = {ysh}");
            // The admittance matrix of two joined ports does not exist.
            assert!(matches!(y_from_z(&z), Err(NetworkError::Singular { .. })));
        }
    }

    // Matched lossless line: S = [[0, e^{−jθ}], [e^{−jθ}, 0]]; mismatched (Zc ≠ Z0):
    // S11 = j(Zc² − Z0²) sin θ / (2 Zc Z0 cos θ + j(Zc² + Z0²) sin θ),
    // S21 = 2 Zc Z0 / (2 Zc Z0 cos θ + j(Zc² + Z0²) sin θ) (D. M. Pozar, Microwave
    // Engineering, 4th ed., 2012, ch. 4, ABCD of a line and the ABCD-to-S conversion — from
    // memory).
    #[test]
    fn network_lossless_line_matches_textbook() {
        let z0 = 50.0;
        for theta in [0.1, 0.7, PI / 2.0, 2.0, 3.0, 4.5] {
            let s = s_from_y(&line_y(z0, theta), &[z0, z0]).unwrap();
            let e = (-J * theta).exp();
            assert!(
                max_diff(&s, &mat(2, &[C::new(0.0, 0.0), e, e, C::new(0.0, 0.0)])) < 1e-14,
                "θ = {theta}"
            );
            for zc in [20.0, 75.0, 120.0] {
                let s = s_from_y(&line_y(zc, theta), &[z0, z0]).unwrap();
                let den = 2.0 * zc * z0 * theta.cos() + J * (zc * zc + z0 * z0) * theta.sin();
                let s11 = J * (zc * zc - z0 * z0) * theta.sin() / den;
                let s21 = 2.0 * zc * z0 / den;
                assert!(max_diff(&s, &mat(2, &[s11, s21, s21, s11])) < 1e-13, "θ = {theta}, Zc = {zc}");
            }
        }
    }

    // One-port load ZL against reference Zr: Γ = (ZL − Zr)/(ZL + Zr) (D. M. Pozar, Microwave
    // Engineering, 4th ed., 2012, ch. 2 — from memory; power waves reduce to it for real Zr,
    // K. Kurokawa, IEEE Trans. MTT-13(2), 1965).
    #[test]
    fn network_one_port_reflection_coefficient() {
        for (zl, zr) in
            [(c(100.0, 0.0), 50.0), (c(25.0, -60.0), 75.0), (c(1e-3, 0.0), 10.0), (c(3.0, 400.0), 1.0)]
        {
            let s = s_from_y(&mat(1, &[1.0 / zl]), &[zr]).unwrap();
            let gamma = (zl - zr) / (zl + zr);
            assert!((s.get(0, 0) - gamma).norm() < 1e-14, "ZL = {zl}, Zr = {zr}");
            let s = s_from_z(&mat(1, &[zl]), &[zr]).unwrap();
            assert!((s.get(0, 0) - gamma).norm() < 1e-14);
        }
    }

    // Series impedance between ports with unequal references R1, R2 (power waves, derived
    // from K. Kurokawa, IEEE Trans. MTT-13(2), 1965 with the port-2 load R2):
    // S11 = (Z + R2 − R1)/(Z + R1 + R2), S22 = (Z + R1 − R2)/(Z + R1 + R2),
    // S21 = S12 = 2 √(R1 R2)/(Z + R1 + R2).
    #[test]
    fn network_unequal_references_series_impedance() {
        let (r1, r2) = (50.0, 75.0);
        for z in [c(10.0, 20.0), c(0.0, 300.0), c(80.0, 0.0)] {
            let y = mat(2, &[1.0 / z, -1.0 / z, -1.0 / z, 1.0 / z]);
            let s = s_from_y(&y, &[r1, r2]).unwrap();
            let d = z + r1 + r2;
            let s21 = 2.0 * (r1 * r2).sqrt() / d;
            let want = mat(2, &[(z + r2 - r1) / d, s21, s21, (z + r1 - r2) / d]);
            assert!(max_diff(&s, &want) < 1e-14, "Z = {z}");
            // Renormalising from 50/50 reaches the same matrix (the wave transformation of
            // `renormalize`, derived from the same definitions).
            let s50 = s_from_y(&y, &[50.0, 50.0]).unwrap();
            assert!(max_diff(&renormalize(&s50, &[50.0, 50.0], &[r1, r2]).unwrap(), &want) < 1e-14);
        }
    }

    // Round trips Y → Z → Y, Y → S → Z against Z = Y⁻¹, S → Y, and renormalisation there and
    // back (the conversions are mutually inverse by their definitions, Kurokawa 1965).
    #[test]
    fn network_round_trips() {
        let refs = [50.0, 25.0, 75.0, 100.0, 50.0];
        for seed in 1..6 {
            let y = passive_symmetric_y(5, seed);
            let z = z_from_y(&y).unwrap();
            let y2 = y_from_z(&z).unwrap();
            assert!(max_diff(&y, &y2) < 1e-13 * y.frobenius_norm(), "seed {seed}");
            let s = s_from_y(&y, &refs).unwrap();
            let z_s = z_from_s(&s, &refs).unwrap();
            assert!(max_diff(&z, &z_s) < 1e-12 * z.frobenius_norm(), "seed {seed}");
            assert!(max_diff(&s, &s_from_z(&z, &refs).unwrap()) < 1e-12);
            assert!(max_diff(&y, &y_from_s(&s, &refs).unwrap()) < 1e-12 * y.frobenius_norm());
            let other = [10.0, 200.0, 50.0, 33.0, 60.0];
            let s_other = renormalize(&s, &refs, &other).unwrap();
            assert!(max_diff(&s_other, &s_from_y(&y, &other).unwrap()) < 1e-13);
            assert!(max_diff(&s, &renormalize(&s_other, &other, &refs).unwrap()) < 1e-13);
        }
        // A non-reciprocal matrix survives the round trips as well (no symmetrisation applies).
        let mut y = passive_symmetric_y(3, 9);
        y.set(0, 2, y.get(0, 2) + c(0.003, 0.001));
        let s = s_from_y(&y, &[50.0, 50.0, 50.0]).unwrap();
        assert!(max_diff(&y, &y_from_s(&s, &[50.0, 50.0, 50.0]).unwrap()) < 1e-13 * y.frobenius_norm());
        assert!(reciprocity_error(&s) > 1e-3);
    }

    // A lossless network has a unitary S (every singular value 1), a passive lossy one
    // σ_max < 1 (D. M. Pozar, Microwave Engineering, 4th ed., 2012, ch. 4 — from memory).
    #[test]
    fn network_lossless_unitary_and_lossy_contractive() {
        for theta in [0.3, 1.1, 2.9] {
            for zc in [30.0, 50.0, 90.0] {
                let s = s_from_y(&line_y(zc, theta), &[50.0, 50.0]).unwrap();
                assert!((largest_singular_value(&s) - 1.0).abs() < 1e-12, "θ = {theta}, Zc = {zc}");
                // Unitary, not only of norm 1: Sᴴ S = I.
                let sh = DenseMatrix::from_fn(2, 2, |i, j| s.get(j, i).conj());
                let shs = sh.matmul(&s).unwrap();
                assert!(max_diff(&shs, &DenseMatrix::from_fn(2, 2, delta)) < 1e-13);
            }
        }
        // A lossless 4-port: purely imaginary symmetric Y, unequal references.
        let mut r = Lcg(7);
        let mut y = DenseMatrix::zeros(4, 4);
        for j in 0..4 {
            for i in 0..=j {
                let v = c(0.0, 0.03 * r.next());
                y.set(i, j, v);
                y.set(j, i, v);
            }
        }
        let s = s_from_y(&y, &[50.0, 20.0, 75.0, 50.0]).unwrap();
        assert!((largest_singular_value(&s) - 1.0).abs() < 1e-12);
        // Resistive π network (shunt Rsh at each port, series Rs between them): by symmetry
        // its S has the even- and odd-mode reflections as eigenvalues,
        // s_e = (1 − Z0/Rsh)/(1 + Z0/Rsh), s_o = (1 − ỹ_o)/(1 + ỹ_o) with
        // ỹ_o = Z0 (1/Rsh + 2/Rs) (even/odd-mode analysis of a symmetric two-port, Pozar ch. 7
        // — from memory); S is real symmetric, so σ_max = max(|s_e|, |s_o|) < 1.
        let (z0, rsh, rs) = (50.0, 300.0, 40.0);
        let (a, b) = (1.0 / rsh + 1.0 / rs, -1.0 / rs);
        let y = mat(2, &[c(a, 0.0), c(b, 0.0), c(b, 0.0), c(a, 0.0)]);
        let s = s_from_y(&y, &[z0, z0]).unwrap();
        let (ye, yo) = (z0 / rsh, z0 * (1.0 / rsh + 2.0 / rs));
        let want = ((1.0 - ye) / (1.0 + ye)).abs().max(((1.0 - yo) / (1.0 + yo)).abs());
        let got = largest_singular_value(&s);
        assert!((got - want).abs() < 1e-14 && got < 1.0, "σ_max {got}, expected {want}");
        // A lone series resistor keeps σ_max = 1: equal waves at both ports see an open.
        let g = c(1.0 / 40.0, 0.0);
        let s = s_from_y(&mat(2, &[g, -g, -g, g]), &[z0, z0]).unwrap();
        assert!((largest_singular_value(&s) - 1.0).abs() < 1e-14);
        assert_eq!(largest_singular_value(&DenseMatrix::zeros(0, 0)), 0.0);
    }

    // Reciprocity (Yᵀ = Y ⇒ Sᵀ = S for real references; Kurokawa 1965): the computed S of an
    // exactly symmetric Y is symmetric to ≤ 1e-15 (exactly, by the symmetrised inverse).
    #[test]
    fn network_reciprocity_preserved_and_measured() {
        for seed in 11..16 {
            let y = passive_symmetric_y(6, seed);
            let refs = [50.0, 10.0, 75.0, 50.0, 120.0, 33.0];
            let s = s_from_y(&y, &refs).unwrap();
            assert!(reciprocity_error(&s) <= 1e-15);
            assert!(reciprocity_error(&z_from_y(&y).unwrap()) <= 1e-15);
            assert!(reciprocity_error(&renormalize(&s, &refs, &[50.0; 6]).unwrap()) <= 1e-15);
        }
        // ‖M − Mᵀ‖_F/‖M‖_F by hand: M = [[1, 2], [0, 1]] gives √8/√6.
        let m = mat(2, &[c(1.0, 0.0), c(2.0, 0.0), c(0.0, 0.0), c(1.0, 0.0)]);
        assert!((reciprocity_error(&m) - (8.0f64 / 6.0).sqrt()).abs() < 1e-15);
        assert_eq!(reciprocity_error(&DenseMatrix::zeros(3, 3)), 0.0);
        assert!(reciprocity_error(&DenseMatrix::zeros(2, 3)).is_nan());
    }

    #[test]
    fn network_errors_are_typed() {
        // An open port at DC (Y = 0) has no impedance matrix.
        let open = mat(1, &[c(0.0, 0.0)]);
        assert!(matches!(z_from_y(&open), Err(NetworkError::Singular { .. })));
        // …but has an S: Γ = 1.
        assert!((s_from_y(&open, &[50.0]).unwrap().get(0, 0) - 1.0).norm() < 1e-15);
        // A floating series element at DC: Y singular.
        let g = c(0.02, 0.0);
        assert!(matches!(z_from_y(&mat(2, &[g, -g, -g, g])), Err(NetworkError::Singular { .. })));
        let y = passive_symmetric_y(3, 3);
        assert!(matches!(
            s_from_y(&y, &[50.0, 50.0]),
            Err(NetworkError::SizeMismatch { expected: 3, got: 2, .. })
        ));
        for bad in [0.0, -50.0, f64::NAN, f64::INFINITY] {
            let e = s_from_y(&y, &[50.0, bad, 50.0]).unwrap_err();
            assert!(matches!(e, NetworkError::BadReference { port: 2, .. }), "{e}");
            assert!(renormalize(&y, &[50.0; 3], &[bad, 50.0, 50.0]).is_err());
        }
        let rect = DenseMatrix::<C>::zeros(2, 3);
        assert!(matches!(s_from_y(&rect, &[50.0, 50.0]), Err(NetworkError::SizeMismatch { .. })));
        let mut nan = y.clone();
        nan.set(1, 2, c(f64::NAN, 0.0));
        let e = s_from_y(&nan, &[50.0; 3]).unwrap_err();
        assert!(matches!(e, NetworkError::NonFinite { row: 2, col: 3, .. }), "{e}");
        assert!(e.to_string().contains("admittance matrix Y"));
        // An open port has no Z from S either: S = [[1]].
        assert!(matches!(z_from_s(&mat(1, &[c(1.0, 0.0)]), &[50.0]), Err(NetworkError::Singular { .. })));
    }
}
