//! Axis-aligned rectangles in the plane of a conductor face.

/// An axis-aligned rectangle `[x0, x1] × [y0, y1]` with `x0 < x1` and `y0 < y1`, in metres
/// (inside the geometry modules, in layout units before conversion).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Rect {
    /// Smallest x.
    pub x0: f64,
    /// Largest x.
    pub x1: f64,
    /// Smallest y.
    pub y0: f64,
    /// Largest y.
    pub y1: f64,
}

impl Rect {
    /// Extent along x, `x1 - x0`.
    pub fn width(&self) -> f64 {
        self.x1 - self.x0
    }

    /// Extent along y, `y1 - y0`.
    pub fn height(&self) -> f64 {
        self.y1 - self.y0
    }

    /// Area `(x1 - x0)(y1 - y0)` (m² for a rectangle in metres).
    pub fn area(&self) -> f64 {
        self.width() * self.height()
    }

    /// Centre `[(x0 + x1)/2, (y0 + y1)/2]`.
    pub fn center(&self) -> [f64; 2] {
        [0.5 * (self.x0 + self.x1), 0.5 * (self.y0 + self.y1)]
    }

    /// Whether the closed rectangles intersect: they overlap, share a piece of boundary, or
    /// touch at a corner.
    pub fn touches(&self, other: &Rect) -> bool {
        self.x0 <= other.x1 && other.x0 <= self.x1 && self.y0 <= other.y1 && other.y0 <= self.y1
    }

    /// Whether the point lies in the closed rectangle.
    pub fn contains(&self, p: [f64; 2]) -> bool {
        self.x0 <= p[0] && p[0] <= self.x1 && self.y0 <= p[1] && p[1] <= self.y1
    }

    /// The rectangle with every coordinate multiplied by `s > 0` (e.g. layout units → metres).
    pub fn scaled(&self, s: f64) -> Rect {
        Rect { x0: self.x0 * s, x1: self.x1 * s, y0: self.y0 * s, y1: self.y1 * s }
    }

    /// Whether all four coordinates are finite and the extents positive.
    pub fn is_proper(&self) -> bool {
        [self.x0, self.x1, self.y0, self.y1].iter().all(|v| v.is_finite())
            && self.x0 < self.x1
            && self.y0 < self.y1
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn area_center_and_touching() {
        let a = Rect { x0: 0.0, x1: 2.0, y0: 0.0, y1: 1.0 };
        assert_eq!(a.area(), 2.0);
        assert_eq!(a.center(), [1.0, 0.5]);
        // Sharing an edge, sharing a corner, and separated.
        assert!(a.touches(&Rect { x0: 2.0, x1: 3.0, y0: 0.5, y1: 2.0 }));
        assert!(a.touches(&Rect { x0: 2.0, x1: 3.0, y0: 1.0, y1: 2.0 }));
        assert!(!a.touches(&Rect { x0: 2.0 + 1e-9, x1: 3.0, y0: 0.0, y1: 1.0 }));
        assert!(!Rect { x0: 1.0, x1: 1.0, y0: 0.0, y1: 1.0 }.is_proper());
    }
}
