//! Axis-aligned bounding boxes.

use serde::Serialize;

/// The axis-aligned box `[min_x, max_x] × [min_y, max_y] × [min_z, max_z]`.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct BoundingBox {
    /// Lower corner.
    pub min: [f64; 3],
    /// Upper corner.
    pub max: [f64; 3],
}

impl BoundingBox {
    /// The smallest box holding all `points` (the empty box, min = +∞ and max = −∞, for none).
    pub fn from_points<'a>(points: impl IntoIterator<Item = &'a [f64; 3]>) -> Self {
        let mut b = Self { min: [f64::INFINITY; 3], max: [f64::NEG_INFINITY; 3] };
        for p in points {
            for (a, &x) in p.iter().enumerate() {
                b.min[a] = b.min[a].min(x);
                b.max[a] = b.max[a].max(x);
            }
        }
        b
    }

    /// Side length along axis `a` (0 = x, 1 = y, 2 = z).
    #[inline]
    pub fn side(&self, a: usize) -> f64 {
        (self.max[a] - self.min[a]).max(0.0)
    }

    /// The axis of the longest side (the first such axis on ties).
    pub fn longest_axis(&self) -> usize {
        let mut best = 0;
        for a in 1..3 {
            if self.side(a) > self.side(best) {
                best = a;
            }
        }
        best
    }

    /// Diameter: the length of the box diagonal `(Σ side_a²)^½`.
    pub fn diameter(&self) -> f64 {
        (0..3).map(|a| self.side(a).powi(2)).sum::<f64>().sqrt()
    }

    /// Euclidean distance between the two boxes (0 when they touch or overlap):
    /// `(Σ_a gap_a²)^½` with `gap_a = max(0, min_a(other) − max_a(self), min_a(self) − max_a(other))`.
    pub fn distance(&self, other: &Self) -> f64 {
        (0..3)
            .map(|a| {
                let gap = (other.min[a] - self.max[a]).max(self.min[a] - other.max[a]).max(0.0);
                gap * gap
            })
            .sum::<f64>()
            .sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Reference: elementary Euclidean geometry (distance between separated unit cubes).
    #[test]
    fn distance_and_diameter() {
        let a = BoundingBox { min: [0.0; 3], max: [1.0; 3] };
        let b = BoundingBox { min: [4.0, 5.0, 0.5], max: [5.0, 6.0, 0.7] };
        assert!((a.distance(&b) - (9.0f64 + 16.0).sqrt()).abs() < 1e-15);
        assert_eq!(a.distance(&a), 0.0);
        assert!((a.diameter() - 3f64.sqrt()).abs() < 1e-15);
        assert_eq!(b.longest_axis(), 0);
    }
}
