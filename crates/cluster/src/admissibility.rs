//! The admissibility condition for far-field block pairs.

use crate::{BoundingBox, ClusterError};

/// The standard admissibility condition on bounding boxes,
/// `min(diam τ, diam σ) ≤ η · dist(τ, σ)` with `dist > 0`.
///
/// A pair that satisfies it is far enough apart, compared with its smaller member, that an
/// asymptotically smooth kernel restricted to it is well approximated by a low-rank matrix
/// (its error decays like `(η/(1+η))^k`-ish with the rank `k`). Larger `η` admits more, larger,
/// blocks (fewer dense entries, higher ranks). Boxes that touch (`dist = 0`) are never
/// admissible.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Admissibility {
    eta: f64,
}

impl Admissibility {
    /// The condition with parameter `η`; fails unless `η` is positive and finite.
    pub fn new(eta: f64) -> Result<Self, ClusterError> {
        if eta.is_finite() && eta > 0.0 { Ok(Self { eta }) } else { Err(ClusterError::BadEta(eta)) }
    }

    /// The parameter `η`.
    pub fn eta(&self) -> f64 {
        self.eta
    }

    /// `true` when the pair is admissible (far field).
    pub fn is_admissible(&self, a: &BoundingBox, b: &BoundingBox) -> bool {
        let dist = a.distance(b);
        dist > 0.0 && a.diameter().min(b.diameter()) <= self.eta * dist
    }
}

impl Default for Admissibility {
    /// `η = 2`, the value the engine's benchmarks are tuned for.
    fn default() -> Self {
        Self { eta: 2.0 }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn eta_is_validated_and_used() {
        assert!(Admissibility::new(0.0).is_err());
        assert!(Admissibility::new(f64::NAN).is_err());
        let a = BoundingBox { min: [0.0; 3], max: [1.0, 1.0, 0.0] }; // diam √2
        let b = BoundingBox { min: [2.0, 0.0, 0.0], max: [3.0, 1.0, 0.0] }; // dist 1
        assert!(Admissibility::new(1.5).unwrap().is_admissible(&a, &b));
        assert!(!Admissibility::new(1.4).unwrap().is_admissible(&a, &b));
        assert!(!Admissibility::new(1e9).unwrap().is_admissible(&a, &a));
    }
}
