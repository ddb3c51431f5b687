//! Point-kernel entry sources for testing and benchmarking the engine.
//!
//! A square plate `[0, L]²` in the plane `z = 0` is cut into a regular `s × s` grid of square
//! cells of side `h = L/s`; unknown `i` is the uniform charge (per unit charge, not density) on
//! cell `i`, collocated at the cell centre `x_i`. The matrix is that of a real collocation
//! problem, so iterative solvers meet a realistic condition number:
//!
//! - Laplace, `A_ij = 1 / (4π |x_i − x_j|)` for `i ≠ j` (point approximation of the far cell), and
//!   the self term `A_ii = ln(1 + √2) / (π h)`, the exact potential at the centre of a square of
//!   side `h` carrying unit total charge spread uniformly: `∫∫ dA / (4π r) = h ln(1+√2)/π` for
//!   unit density (integrate `1/r` in polar coordinates over the eight triangles of the square),
//!   divided by the area `h²`.
//! - Helmholtz, `A_ij = exp(−j k r) / (4π r)` for `i ≠ j` and
//!   `A_ii = ln(1 + √2)/(π h) − j k / (4π)`: the static self term plus the first term of the
//!   expansion `(e^{−jkr} − 1)/r = −jk + O(k² r)`, whose cell average is `−jk` (error
//!   `O(k² h)`, below 1e-3 relative for cells smaller than a tenth of a wavelength).
//!
//! These sources know nothing of the engine: they only implement [`EntrySource`].

#![warn(missing_docs)]

use rafter_linalg::{Complex64, EntrySource};
use std::f64::consts::PI;

/// Errors in the description of a plate problem.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum PlateError {
    /// Requested point count is zero.
    #[error("the plate needs at least one point (got n = 0); pass --n 1 or more")]
    Empty,
    /// Side length not positive and finite.
    #[error("plate side must be positive and finite (got {0}); use a value such as 1.0")]
    BadSide(f64),
    /// Wave number negative or not finite.
    #[error("wave number must be finite and ≥ 0 (got {0}); give the plate size in wavelengths, e.g. 2")]
    BadWaveNumber(f64),
}

/// Cell centres of a regular grid on the square `[0, side]²` at `z = 0`.
#[derive(Clone, Debug)]
pub struct Plate {
    /// Cells per side `s`.
    pub per_side: usize,
    /// Side of the plate `L` (length units of the caller).
    pub side: f64,
    /// Cell side `h = L / s`.
    pub h: f64,
    /// Cell centres, row after row (`x` fastest).
    pub points: Vec<[f64; 3]>,
}

impl Plate {
    /// A plate of side `side` with about `n` cells: `s = round(√n)` per side (so `s²` points,
    /// the nearest square to `n`; at least one).
    pub fn new(n: usize, side: f64) -> Result<Self, PlateError> {
        if n == 0 {
            return Err(PlateError::Empty);
        }
        if !(side.is_finite() && side > 0.0) {
            return Err(PlateError::BadSide(side));
        }
        let per_side = ((n as f64).sqrt().round() as usize).max(1);
        let h = side / per_side as f64;
        let mut points = Vec::with_capacity(per_side * per_side);
        for iy in 0..per_side {
            for ix in 0..per_side {
                points.push([(ix as f64 + 0.5) * h, (iy as f64 + 0.5) * h, 0.0]);
            }
        }
        Ok(Self { per_side, side, h, points })
    }

    /// Number of cells `s²`.
    pub fn len(&self) -> usize {
        self.points.len()
    }

    /// `true` when the plate has no cells (never, for a plate made by [`Plate::new`]).
    pub fn is_empty(&self) -> bool {
        self.points.is_empty()
    }
}

/// `ln(1 + √2)/π`: potential at the centre of a unit square per unit surface density, divided by
/// the side, times 4π·(1/4π) (see the module docs).
pub fn square_self_potential(h: f64) -> f64 {
    (1.0 + 2f64.sqrt()).ln() / (PI * h)
}

#[inline(always)]
fn dist(a: &[f64; 3], b: &[f64; 3]) -> f64 {
    let dx = a[0] - b[0];
    let dy = a[1] - b[1];
    let dz = a[2] - b[2];
    (dx * dx + dy * dy + dz * dz).sqrt()
}

/// Laplace collocation matrix on a [`Plate`] (see the module docs): real, symmetric, positive
/// definite.
#[derive(Clone, Debug)]
pub struct LaplacePlate {
    plate: Plate,
    self_term: f64,
}

impl LaplacePlate {
    /// The Laplace source on `plate`.
    pub fn new(plate: Plate) -> Self {
        let self_term = square_self_potential(plate.h);
        Self { plate, self_term }
    }
    /// The plate (its points are the cluster-tree input).
    pub fn plate(&self) -> &Plate {
        &self.plate
    }
}

const INV_4PI: f64 = 1.0 / (4.0 * PI);

impl EntrySource<f64> for LaplacePlate {
    fn nrows(&self) -> usize {
        self.plate.len()
    }
    fn ncols(&self) -> usize {
        self.plate.len()
    }
    #[inline]
    fn entry(&self, i: usize, j: usize) -> f64 {
        if i == j { self.self_term } else { INV_4PI / dist(&self.plate.points[i], &self.plate.points[j]) }
    }
    fn fill_block(&self, rows: &[usize], cols: &[usize], out: &mut [f64]) {
        let m = rows.len();
        let p = &self.plate.points;
        for (b, &j) in cols.iter().enumerate() {
            let pj = p[j];
            let col = &mut out[b * m..(b + 1) * m];
            for (o, &i) in col.iter_mut().zip(rows) {
                let d = dist(&p[i], &pj);
                *o = if i == j { self.self_term } else { INV_4PI / d };
            }
        }
    }
}

/// Helmholtz collocation matrix `exp(−jkr)/(4πr)` on a [`Plate`] (see the module docs): complex
/// symmetric (not Hermitian).
#[derive(Clone, Debug)]
pub struct HelmholtzPlate {
    plate: Plate,
    k: f64,
    self_term: Complex64,
}

impl HelmholtzPlate {
    /// The Helmholtz source on `plate` with wave number `k` (radians per length unit).
    pub fn new(plate: Plate, k: f64) -> Result<Self, PlateError> {
        if !(k.is_finite() && k >= 0.0) {
            return Err(PlateError::BadWaveNumber(k));
        }
        let self_term = Complex64::new(square_self_potential(plate.h), -k * INV_4PI);
        Ok(Self { plate, k, self_term })
    }
    /// A plate `wavelengths` wavelengths across: `k = 2π · wavelengths / side`.
    pub fn with_wavelengths(plate: Plate, wavelengths: f64) -> Result<Self, PlateError> {
        let k = 2.0 * PI * wavelengths / plate.side;
        Self::new(plate, k)
    }
    /// The plate.
    pub fn plate(&self) -> &Plate {
        &self.plate
    }
    /// Wave number `k`.
    pub fn wave_number(&self) -> f64 {
        self.k
    }
    #[inline(always)]
    fn kernel(&self, r: f64) -> Complex64 {
        let (s, c) = (self.k * r).sin_cos();
        let a = INV_4PI / r;
        Complex64::new(a * c, -a * s)
    }
}

impl EntrySource<Complex64> for HelmholtzPlate {
    fn nrows(&self) -> usize {
        self.plate.len()
    }
    fn ncols(&self) -> usize {
        self.plate.len()
    }
    #[inline]
    fn entry(&self, i: usize, j: usize) -> Complex64 {
        if i == j { self.self_term } else { self.kernel(dist(&self.plate.points[i], &self.plate.points[j])) }
    }
    fn fill_block(&self, rows: &[usize], cols: &[usize], out: &mut [Complex64]) {
        let m = rows.len();
        let p = &self.plate.points;
        for (b, &j) in cols.iter().enumerate() {
            let pj = p[j];
            let col = &mut out[b * m..(b + 1) * m];
            for (o, &i) in col.iter_mut().zip(rows) {
                *o = if i == j { self.self_term } else { self.kernel(dist(&p[i], &pj)) };
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The self term against brute-force quadrature of `∫∫ dA/(4π r)` over the unit square,
    /// split into four quadrants integrated in polar coordinates (each quadrant's two
    /// triangles with the radial integral done exactly: `∫ secθ dθ`), here evaluated with a
    /// fine midpoint rule in θ. Reference: the closed form `4 h ln(1+√2)` for `∫∫ dA/r` over a
    /// square of side `h` seen from its centre (Durand, Électrostatique, 1964 — from memory; the
    /// quadrature below is the independent check).
    #[test]
    fn self_term_matches_quadrature() {
        let h = 0.37;
        let n = 200_000;
        let dth = (PI / 4.0) / n as f64;
        // 8 triangles, each ∫_0^{π/4} (h/2) secθ dθ.
        let tri: f64 = (0..n).map(|k| (h / 2.0) / ((k as f64 + 0.5) * dth).cos() * dth).sum();
        let integral = 8.0 * tri; // ∫∫ dA / r
        let per_unit_charge = integral / (4.0 * PI) / (h * h);
        assert!((per_unit_charge - square_self_potential(h)).abs() < 1e-9 * per_unit_charge);
    }

    #[test]
    fn plate_rejects_bad_input() {
        assert_eq!(Plate::new(0, 1.0).unwrap_err(), PlateError::Empty);
        assert!(matches!(Plate::new(4, f64::NAN), Err(PlateError::BadSide(_))));
        let p = Plate::new(9, 1.0).unwrap();
        assert!(HelmholtzPlate::new(p, -1.0).is_err());
    }

    #[test]
    fn block_fill_agrees_with_entries() {
        let src = HelmholtzPlate::with_wavelengths(Plate::new(49, 1.0).unwrap(), 2.0).unwrap();
        let rows = [3, 0, 48];
        let cols = [0, 7, 3, 12];
        let mut out = vec![Complex64::new(0.0, 0.0); 12];
        src.fill_block(&rows, &cols, &mut out);
        for (b, &j) in cols.iter().enumerate() {
            for (a, &i) in rows.iter().enumerate() {
                assert_eq!(out[a + b * 3], src.entry(i, j));
            }
        }
    }
}
