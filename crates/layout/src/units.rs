//! Length units of a layout file and their size in metres.

/// A length unit accepted in `units = "..."`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Unit {
    /// Metre, `m`.
    Metre,
    /// Millimetre, `mm` (1e-3 m).
    Millimetre,
    /// Micrometre, `um` (1e-6 m).
    Micrometre,
    /// Thousandth of an inch, `mil` (25.4e-6 m).
    Mil,
    /// Inch, `in` (25.4e-3 m).
    Inch,
}

impl Unit {
    /// Every unit, in the order listed in messages.
    pub const ALL: [Unit; 5] = [Unit::Metre, Unit::Millimetre, Unit::Micrometre, Unit::Mil, Unit::Inch];

    /// The unit written as `name` in a layout file, if it is one of [`Unit::ALL`].
    pub fn from_name(name: &str) -> Option<Unit> {
        Self::ALL.into_iter().find(|u| u.name() == name)
    }

    /// The name used in layout files (`m`, `mm`, `um`, `mil`, `in`).
    pub fn name(self) -> &'static str {
        match self {
            Unit::Metre => "m",
            Unit::Millimetre => "mm",
            Unit::Micrometre => "um",
            Unit::Mil => "mil",
            Unit::Inch => "in",
        }
    }

    /// Size of one unit in metres (the inch is exactly 25.4 mm by international definition).
    pub fn metres(self) -> f64 {
        match self {
            Unit::Metre => 1.0,
            Unit::Millimetre => 1e-3,
            Unit::Micrometre => 1e-6,
            Unit::Mil => 25.4e-6,
            Unit::Inch => 25.4e-3,
        }
    }

    /// `v` layout units in metres. Decimal units divide by an exact power of ten, so that
    /// e.g. 0.2 mm becomes the double nearest to 0.2e-3 m.
    pub fn to_metres(self, v: f64) -> f64 {
        match self {
            Unit::Metre => v,
            Unit::Millimetre => v / 1e3,
            Unit::Micrometre => v / 1e6,
            Unit::Mil => v * 25.4 / 1e6,
            Unit::Inch => v * 25.4 / 1e3,
        }
    }

    /// The accepted names, for hints: `m, mm, um, mil, in`.
    pub fn names() -> String {
        Self::ALL.map(Unit::name).join(", ")
    }
}

/// Formats a length given in metres in layout units (`unit_m` metres per unit), with the
/// fewest significant digits (at most 12) that reproduce it to 1e-12 relative, so that values
/// converted back from metres print as the user wrote them (e.g. `0.05`, not `0.049999999999999996`).
pub fn format_in_units(metres: f64, unit_m: f64) -> String {
    let v = metres / unit_m;
    if !v.is_finite() || v == 0.0 {
        return format!("{v}");
    }
    for digits in 1..=12usize {
        let s = format!("{:.*e}", digits - 1, v);
        if let Ok(back) = s.parse::<f64>()
            && ((back - v) / v).abs() <= 1e-12
        {
            // Print the rounded value in plain notation.
            return format!("{back}");
        }
    }
    format!("{v}")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_sizes() {
        for u in Unit::ALL {
            assert_eq!(Unit::from_name(u.name()), Some(u));
        }
        assert_eq!(Unit::from_name("cm"), None);
        // International yard and pound agreement (1959): 1 in = 25.4 mm exactly; 1 mil = 1/1000 in.
        assert_eq!(Unit::Inch.metres(), 0.0254);
        assert!((Unit::Mil.metres() * 1000.0 / Unit::Inch.metres() - 1.0).abs() < 1e-15);
    }

    #[test]
    fn format_recovers_written_values() {
        assert_eq!(format_in_units(0.05 * 1e-3, 1e-3), "0.05");
        assert_eq!(format_in_units(0.3e-3, 1e-3), "0.3");
        assert_eq!(format_in_units(-2.5 * 25.4e-6, 25.4e-6), "-2.5");
        assert_eq!(format_in_units(0.0, 1e-3), "0");
    }
}
