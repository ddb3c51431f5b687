//! Touchstone 1.1 files of scattering parameters (`.s1p`, `.s2p`, … `.snp`), written and read
//! back, following the open Touchstone File Format Specification, version 1.1 (EIA/IBIS Open
//! Forum, 2002 — from memory):
//!
//! - `!` starts a comment, which runs to the end of the line;
//! - one option line `# <unit> <parameter> <format> R <ohms>` precedes the data; this writer
//!   emits `# HZ S RI R 50` or `# HZ S MA R 50` (frequencies in hertz, scattering parameters,
//!   real/imaginary or magnitude/angle pairs, one real reference resistance for all ports);
//! - one data block per frequency, frequencies increasing: the frequency, then the matrix as
//!   number pairs. One port: one pair. Two ports: `S11 S21 S12 S22` on one line (column by
//!   column, the one exception). Three ports and more: row by row (`S11 S12 … S1n`, then
//!   `S21 …`), at most four pairs per line, each matrix row starting a new line;
//! - angles in degrees.
//!
//! Numbers are written as `%.12e` would print them (13 significant digits), so a round trip
//! through [`parse_touchstone`] keeps every entry to about 1e-12 relative to the largest
//! entry of its matrix (magnitude/angle pairs lose a little more than real/imaginary ones).

use crate::linalg::{Complex64, DenseMatrix};

/// How each complex number is written as a pair.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum NumberFormat {
    /// Real and imaginary part (`RI`).
    RealImag,
    /// Magnitude and angle in degrees, in `(−180, 180]` (`MA`).
    MagAngle,
}

impl NumberFormat {
    fn keyword(self) -> &'static str {
        match self {
            Self::RealImag => "RI",
            Self::MagAngle => "MA",
        }
    }
}

/// Why a Touchstone file could not be written.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
pub enum TouchstoneError {
    /// No frequency points.
    #[error("Touchstone: no frequency points to write")]
    Empty,
    /// Frequencies and matrices differ in number.
    #[error(
        "Touchstone: {freqs} frequencies but {matrices} scattering matrices; there must be one matrix per frequency"
    )]
    CountMismatch {
        /// Number of frequencies.
        freqs: usize,
        /// Number of matrices.
        matrices: usize,
    },
    /// A matrix is not `n × n` with the port count of the first one (or has no port).
    #[error(
        "Touchstone: the scattering matrix at point {point} is {rows}×{cols}; every matrix must be \
         n×n with the same n ≥ 1 (the first is {n}×{n})"
    )]
    BadShape {
        /// Frequency point, counted from 1.
        point: usize,
        /// Rows of that matrix.
        rows: usize,
        /// Columns of that matrix.
        cols: usize,
        /// Port count of the first matrix.
        n: usize,
    },
    /// A frequency is negative, not finite, or not above the previous one.
    #[error(
        "Touchstone: frequency {value} Hz at point {point} is invalid; frequencies must be finite, \
         non-negative and strictly increasing (previous: {previous} Hz)"
    )]
    BadFrequency {
        /// Frequency point, counted from 1.
        point: usize,
        /// The value (Hz).
        value: f64,
        /// The previous frequency (Hz), or −∞ for the first point.
        previous: f64,
    },
    /// A matrix entry is NaN or infinite.
    #[error("Touchstone: S{row},{col} at point {point} is {value}; entries must be finite")]
    NonFinite {
        /// Frequency point, counted from 1.
        point: usize,
        /// Row (port), counted from 1.
        row: usize,
        /// Column (port), counted from 1.
        col: usize,
        /// The value.
        value: Complex64,
    },
    /// The reference resistance is not finite and positive.
    #[error("Touchstone: reference resistance {0} Ω; it must be finite and positive")]
    BadReference(f64),
}

/// Most number pairs on one data line (Touchstone 1.1, for three ports and more).
pub const PAIRS_PER_LINE: usize = 4;

/// The text of a Touchstone 1.1 file of the scattering matrices `s` (one `n × n` matrix per
/// frequency, dimensionless, referenced to the real resistance `z_ref` in ohms at every port)
/// at the frequencies `freqs_hz` (hertz, strictly increasing).
///
/// The file starts with the `header` lines as comments (`! ` prefixed; a string holding line
/// breaks gives several comment lines; keep them ASCII, as the rest of the file is), then the option line (`# HZ S RI R 50` style), a
/// comment naming the data layout, and one block per frequency as described in the module
/// notes. Numbers carry 13 significant digits in `%.12e` style. The file holds one reference
/// for all ports: matrices computed for other or unequal references must be renormalised
/// to `z_ref` first.
///
/// # Errors
/// No frequency, a count mismatch, non-square or unequal matrices, a bad frequency (negative,
/// non-finite, not increasing), a non-finite entry, or a bad reference.
pub fn touchstone(
    freqs_hz: &[f64],
    s: &[DenseMatrix<Complex64>],
    z_ref: f64,
    format: NumberFormat,
    header: &[String],
) -> Result<String, TouchstoneError> {
    let n = check(freqs_hz, s, z_ref)?;
    let mut out = String::new();
    for h in header {
        for line in h.lines() {
            out.push_str(if line.is_empty() { "!" } else { "! " });
            out.push_str(line);
            out.push('\n');
        }
        if h.is_empty() {
            out.push_str("!\n");
        }
    }
    out.push_str(&format!("# HZ S {} R {}\n", format.keyword(), z_ref));
    let pair = match format {
        NumberFormat::RealImag => "real, imaginary",
        NumberFormat::MagAngle => "magnitude, angle (degrees)",
    };
    let layout = match n {
        1 => "S11".to_string(),
        2 => "S11 S21 S12 S22".to_string(),
        _ => format!(
            "S11 ... S1{n}, S21 ... S{n}{n}; each row on new lines, at most {PAIRS_PER_LINE} pairs a line"
        ),
    };
    out.push_str(&format!("! frequency (Hz), then {layout}; each a pair: {pair}\n"));
    // Width of the frequency column, so that continuation lines line up under the first pair.
    let fw = sci(freqs_hz[freqs_hz.len() - 1]).len().max(sci(freqs_hz[0]).len());
    for (f, m) in freqs_hz.iter().zip(s) {
        let mut lines: Vec<Vec<Complex64>> = Vec::new();
        match n {
            1 | 2 => lines
                .push((0..n).flat_map(|j| (0..n).map(move |i| (i, j))).map(|(i, j)| m.get(i, j)).collect()),
            _ => {
                for i in 0..n {
                    let row: Vec<Complex64> = (0..n).map(|j| m.get(i, j)).collect();
                    lines.extend(row.chunks(PAIRS_PER_LINE).map(<[Complex64]>::to_vec));
                }
            }
        }
        for (k, line) in lines.iter().enumerate() {
            let lead = if k == 0 { sci(*f) } else { String::new() };
            out.push_str(&format!("{lead:>fw$}"));
            for v in line {
                let (a, b) = match format {
                    NumberFormat::RealImag => (v.re, v.im),
                    NumberFormat::MagAngle => (v.norm(), angle_deg(*v)),
                };
                out.push_str(&format!(" {:>19} {:>19}", sci(a), sci(b)));
            }
            out.push('\n');
        }
    }
    Ok(out)
}

/// Checks the input of [`touchstone`]; returns the port count.
fn check(freqs: &[f64], s: &[DenseMatrix<Complex64>], z_ref: f64) -> Result<usize, TouchstoneError> {
    if freqs.is_empty() && s.is_empty() {
        return Err(TouchstoneError::Empty);
    }
    if freqs.len() != s.len() {
        return Err(TouchstoneError::CountMismatch { freqs: freqs.len(), matrices: s.len() });
    }
    if !(z_ref.is_finite() && z_ref > 0.0) {
        return Err(TouchstoneError::BadReference(z_ref));
    }
    let n = s[0].nrows();
    let mut previous = f64::NEG_INFINITY;
    for (k, (&f, m)) in freqs.iter().zip(s).enumerate() {
        if n == 0 || m.nrows() != n || m.ncols() != n {
            return Err(TouchstoneError::BadShape { point: k + 1, rows: m.nrows(), cols: m.ncols(), n });
        }
        if !(f.is_finite() && f >= 0.0 && f > previous) {
            return Err(TouchstoneError::BadFrequency { point: k + 1, value: f, previous });
        }
        previous = f;
        for j in 0..n {
            for i in 0..n {
                let v = m.get(i, j);
                if !(v.re.is_finite() && v.im.is_finite()) {
                    return Err(TouchstoneError::NonFinite {
                        point: k + 1,
                        row: i + 1,
                        col: j + 1,
                        value: v,
                    });
                }
            }
        }
    }
    Ok(n)
}

/// Angle of `v` in degrees, in `(−180, 180]` (0 for zero).
fn angle_deg(v: Complex64) -> f64 {
    let a = v.im.atan2(v.re).to_degrees();
    if a <= -180.0 { a + 360.0 } else { a }
}

/// `x` as C's `%.12e` prints it: `-1.234567890123e-05`, `0.000000000000e+00`.
fn sci(x: f64) -> String {
    let s = format!("{x:.12e}");
    match s.split_once('e') {
        Some((mantissa, exp)) => {
            let (sign, digits) = match exp.strip_prefix('-') {
                Some(d) => ('-', d),
                None => ('+', exp),
            };
            format!("{mantissa}e{sign}{digits:0>2}")
        }
        None => s,
    }
}

/// What [`parse_touchstone`] returns: frequencies (Hz), one S matrix per frequency, and the
/// reference resistance (Ω).
pub type TouchstoneData = (Vec<f64>, Vec<DenseMatrix<Complex64>>, f64);

/// Reads back a Touchstone 1.x file of `nports` ports holding S-parameters: returns the
/// frequencies (converted to hertz), the matrices and the reference resistance (ohms).
///
/// Accepts what [`touchstone`] writes and the same variations the format allows in such
/// files: comments after `!` anywhere, blank lines, any spacing and line breaking of the
/// numbers, the units `HZ`, `KHZ`, `MHZ`, `GHZ`, the formats `RI`, `MA` and `DB` (in any
/// case), and omitted option fields (defaults `GHZ S MA R 50`). Only the first option line
/// counts. Not supported: parameters other than S, and the noise data of two-port files.
///
/// # Errors
/// A message naming the line for: no option line before the data, an unknown option, a
/// non-number, a number count that is not a whole number of blocks, or `nports` of 0.
// the writer's check; not (yet) used by the CLI
pub fn parse_touchstone(text: &str, nports: usize) -> Result<TouchstoneData, String> {
    if nports == 0 {
        return Err("Touchstone: a file has at least one port".into());
    }
    let (mut unit, mut format, mut r) = (1e9, "MA".to_string(), 50.0);
    let mut seen_option = false;
    let mut numbers: Vec<f64> = Vec::new();
    for (no, raw) in text.lines().enumerate() {
        let line = raw.split('!').next().unwrap_or("").trim();
        if line.is_empty() {
            continue;
        }
        if let Some(opts) = line.strip_prefix('#') {
            if seen_option {
                continue;
            }
            seen_option = true;
            let mut tokens = opts.split_whitespace().map(str::to_ascii_uppercase);
            while let Some(t) = tokens.next() {
                match t.as_str() {
                    "HZ" => unit = 1.0,
                    "KHZ" => unit = 1e3,
                    "MHZ" => unit = 1e6,
                    "GHZ" => unit = 1e9,
                    "S" => {}
                    "Y" | "Z" | "H" | "G" => {
                        return Err(format!(
                            "Touchstone line {}: only S-parameters are read, not {t}",
                            no + 1
                        ));
                    }
                    "RI" | "MA" | "DB" => format = t,
                    "R" => {
                        let v =
                            tokens.next().ok_or(format!("Touchstone line {}: R without a value", no + 1))?;
                        r = v.parse().map_err(|_| {
                            format!("Touchstone line {}: reference {v:?} is not a number", no + 1)
                        })?;
                    }
                    other => return Err(format!("Touchstone line {}: unknown option {other:?}", no + 1)),
                }
            }
            continue;
        }
        if !seen_option {
            return Err(format!("Touchstone line {}: data before the option line", no + 1));
        }
        for t in line.split_whitespace() {
            numbers
                .push(t.parse().map_err(|_| format!("Touchstone line {}: {t:?} is not a number", no + 1))?);
        }
    }
    let block = 1 + 2 * nports * nports;
    if !numbers.len().is_multiple_of(block) {
        return Err(format!(
            "Touchstone: {} numbers are not a whole number of {nports}-port blocks ({block} numbers each)",
            numbers.len()
        ));
    }
    let mut freqs = Vec::new();
    let mut mats = Vec::new();
    for b in numbers.chunks(block) {
        freqs.push(b[0] * unit);
        let mut m = DenseMatrix::zeros(nports, nports);
        for (k, p) in b[1..].chunks(2).enumerate() {
            let v = match format.as_str() {
                "RI" => Complex64::new(p[0], p[1]),
                "MA" => Complex64::from_polar(p[0], p[1].to_radians()),
                _ => Complex64::from_polar(10f64.powf(p[0] / 20.0), p[1].to_radians()),
            };
            // Two ports: column by column; otherwise row by row.
            let (i, j) = if nports == 2 { (k % 2, k / 2) } else { (k / nports, k % nports) };
            m.set(i, j, v);
        }
        mats.push(m);
    }
    Ok((freqs, mats, r))
}

#[cfg(test)]
mod tests {
    use super::*;

    type C = Complex64;

    /// Deterministic pseudo-random numbers in [-1, 1) (a 64-bit LCG, Knuth's MMIX constants).
    struct Lcg(u64);
    impl Lcg {
        fn next(&mut self) -> f64 {
            self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (self.0 >> 11) as f64 / (1u64 << 52) as f64 - 1.0
        }
    }

    /// A sweep of `nf` points from 1 MHz, with entries of varied size (including exact zeros,
    /// pure reals and imaginaries, and tiny values).
    fn sweep(n: usize, nf: usize, seed: u64) -> (Vec<f64>, Vec<DenseMatrix<C>>) {
        let mut r = Lcg(seed);
        let freqs: Vec<f64> = (0..nf).map(|k| 1e6 + 2.5e8 * k as f64 + 0.125).collect();
        let mats = (0..nf)
            .map(|k| {
                DenseMatrix::from_fn(n, n, |i, j| match (i + 2 * j + k) % 7 {
                    0 => C::new(0.0, 0.0),
                    1 => C::new(r.next(), 0.0),
                    2 => C::new(0.0, -r.next().abs()),
                    3 => C::new(1e-9 * r.next(), 3e-10 * r.next()),
                    _ => C::new(r.next(), r.next()),
                })
            })
            .collect();
        (freqs, mats)
    }

    fn data_lines(text: &str) -> Vec<&str> {
        text.lines().filter(|l| !l.starts_with('!') && !l.starts_with('#') && !l.trim().is_empty()).collect()
    }

    fn round_trip(n: usize, format: NumberFormat) {
        let (freqs, mats) = sweep(n, 4, 17 + n as u64);
        let header = vec!["rafter test".to_string()];
        let text = touchstone(&freqs, &mats, 50.0, format, &header).unwrap();
        let (f2, m2, r) = parse_touchstone(&text, n).unwrap();
        assert_eq!(r, 50.0);
        assert_eq!(f2.len(), freqs.len());
        for (a, b) in freqs.iter().zip(&f2) {
            assert!((a - b).abs() <= 1e-12 * a.abs(), "{a} vs {b}");
        }
        for (a, b) in mats.iter().zip(&m2) {
            let scale = a.as_slice().iter().map(|v| v.norm()).fold(0.0, f64::max);
            for (x, y) in a.as_slice().iter().zip(b.as_slice()) {
                assert!((x - y).norm() <= 1e-11 * scale, "{n} ports {format:?}: {x} vs {y}");
            }
        }
    }

    // Round trips of 1-, 2-, 3- and 5-port files, real/imaginary and magnitude/angle: what is
    // written is read back to 1e-11 of the matrix's largest entry (13 significant digits).
    #[test]
    fn touchstone_round_trips() {
        for n in [1, 2, 3, 5] {
            round_trip(n, NumberFormat::RealImag);
            round_trip(n, NumberFormat::MagAngle);
        }
    }

    // Touchstone 1.1 (EIA/IBIS Open Forum, 2002 — from memory): a 2-port line reads
    // `f S11 S21 S12 S22`, the one exception to row order.
    #[test]
    fn touchstone_two_port_order_is_s11_s21_s12_s22() {
        let m = DenseMatrix::from_fn(2, 2, |i, j| C::new(0.1 * (i + 1) as f64 + 0.01 * (j + 1) as f64, -0.5));
        let text = touchstone(&[1e9], &[m], 50.0, NumberFormat::RealImag, &[]).unwrap();
        let lines = data_lines(&text);
        assert_eq!(lines.len(), 1);
        let v: Vec<f64> = lines[0].split_whitespace().map(|t| t.parse().unwrap()).collect();
        assert_eq!(v.len(), 9);
        assert_eq!(v[0], 1e9);
        let re: Vec<f64> = v[1..].chunks(2).map(|p| p[0]).collect();
        // S11 = 0.11, S21 = 0.21, S12 = 0.12, S22 = 0.22 (row i + 1, column j + 1).
        for (got, want) in re.iter().zip([0.11, 0.21, 0.12, 0.22]) {
            assert!((got - want).abs() < 1e-15, "{re:?}");
        }
        assert!(v[2..].iter().step_by(2).all(|&im| im == -0.5));
    }

    // Touchstone 1.1 (from memory): three ports and more row by row, at most four pairs a
    // line, each matrix row on a new line. 3 ports: 3 lines a block (frequency + 3 pairs,
    // then 3 pairs twice); 5 ports: each row a line of 4 pairs and one of 1 pair.
    #[test]
    fn touchstone_row_layout_and_wrapping() {
        let code = |i: usize, j: usize| C::new((10 * (i + 1) + j + 1) as f64, 0.0);
        let m3 = DenseMatrix::from_fn(3, 3, code);
        let text = touchstone(&[2e9, 3e9], &[m3.clone(), m3], 50.0, NumberFormat::RealImag, &[]).unwrap();
        let counts: Vec<usize> = data_lines(&text).iter().map(|l| l.split_whitespace().count()).collect();
        assert_eq!(counts, [7, 6, 6, 7, 6, 6]);

        let m5 = DenseMatrix::from_fn(5, 5, code);
        let text = touchstone(&[1e6, 2e6], &[m5.clone(), m5], 75.0, NumberFormat::RealImag, &[]).unwrap();
        let lines = data_lines(&text);
        assert_eq!(lines.len(), 20);
        for (k, line) in lines.iter().enumerate() {
            let v: Vec<f64> = line.split_whitespace().map(|t| t.parse().unwrap()).collect();
            let (block_start, first_of_row) = (k % 10 == 0, k % 2 == 0);
            let pairs = if first_of_row { 4 } else { 1 };
            assert_eq!(v.len(), 2 * pairs + usize::from(block_start), "line {k}: {line}");
            let data = if block_start { &v[1..] } else { &v[..] };
            // Row (k % 10) / 2 + 1; columns 1–4 on the first line, 5 on the second.
            let row = (k % 10) / 2 + 1;
            for (p, pair) in data.chunks(2).enumerate() {
                let col = if first_of_row { p + 1 } else { 5 };
                assert_eq!(pair[0], (10 * row + col) as f64, "line {k}");
            }
            assert!(pairs <= PAIRS_PER_LINE);
        }
        assert!(text.contains("# HZ S RI R 75\n"));
    }

    // Touchstone 1.1 (from memory): comments begin with `!`; the option line begins with `#`.
    #[test]
    fn touchstone_header_lines_are_comments() {
        let (freqs, mats) = sweep(2, 3, 5);
        let header = vec!["layout: demo.toml".to_string(), "two\nlines".to_string(), String::new()];
        let text = touchstone(&freqs, &mats, 50.0, NumberFormat::MagAngle, &header).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        let option = lines.iter().position(|l| l.starts_with('#')).unwrap();
        assert_eq!(lines[option], "# HZ S MA R 50");
        assert_eq!(&lines[..option], ["! layout: demo.toml", "! two", "! lines", "!"]);
        assert_eq!(lines.iter().filter(|l| l.starts_with('#')).count(), 1);
        // What the writer adds itself is plain ASCII (the format is an ASCII text format).
        assert!(lines[option..].iter().all(|l| l.is_ascii()));
        // Everything else is a comment or a data line of numbers.
        for l in &lines[option + 1..] {
            assert!(l.starts_with('!') || l.split_whitespace().all(|t| t.parse::<f64>().is_ok()), "{l}");
        }
        // Magnitudes are non-negative and angles within (−180, 180].
        for l in data_lines(&text) {
            let v: Vec<f64> = l.split_whitespace().map(|t| t.parse().unwrap()).collect();
            for p in v[1..].chunks(2) {
                assert!(p[0] >= 0.0 && p[1] > -180.0 && p[1] <= 180.0, "{l}");
            }
        }
    }

    #[test]
    fn touchstone_numbers_in_c_style() {
        assert_eq!(sci(0.0), "0.000000000000e+00");
        assert_eq!(sci(-1.5e-7), "-1.500000000000e-07");
        assert_eq!(sci(2.5e9), "2.500000000000e+09");
        assert_eq!(sci(1e-300), "1.000000000000e-300");
        assert_eq!(angle_deg(C::new(-1.0, -0.0)), 180.0);
    }

    #[test]
    fn touchstone_refuses_bad_input() {
        let (freqs, mats) = sweep(2, 3, 1);
        let ri = NumberFormat::RealImag;
        assert_eq!(touchstone(&[], &[], 50.0, ri, &[]), Err(TouchstoneError::Empty));
        assert!(matches!(
            touchstone(&freqs[..2], &mats, 50.0, ri, &[]),
            Err(TouchstoneError::CountMismatch { .. })
        ));
        assert!(matches!(touchstone(&freqs, &mats, 0.0, ri, &[]), Err(TouchstoneError::BadReference(_))));
        let down = [freqs[0], freqs[2], freqs[1]];
        let e = touchstone(&down, &mats, 50.0, ri, &[]).unwrap_err();
        assert!(matches!(e, TouchstoneError::BadFrequency { point: 3, .. }), "{e}");
        let same = [freqs[0], freqs[0], freqs[1]];
        assert!(matches!(
            touchstone(&same, &mats, 50.0, ri, &[]),
            Err(TouchstoneError::BadFrequency { point: 2, .. })
        ));
        let mut mixed = mats.clone();
        mixed[1] = DenseMatrix::zeros(3, 3);
        assert!(matches!(
            touchstone(&freqs, &mixed, 50.0, ri, &[]),
            Err(TouchstoneError::BadShape { point: 2, .. })
        ));
        let mut nan = mats.clone();
        nan[2].set(0, 1, C::new(f64::NAN, 0.0));
        let e = touchstone(&freqs, &nan, 50.0, ri, &[]).unwrap_err();
        assert!(matches!(e, TouchstoneError::NonFinite { point: 3, row: 1, col: 2, .. }), "{e}");
        // The reader: the wrong port count leaves a partial block.
        let text = touchstone(&freqs, &mats, 50.0, ri, &[]).unwrap();
        assert!(parse_touchstone(&text, 3).is_err());
        assert!(parse_touchstone("1 2 3", 1).is_err());
    }

    // The option-line defaults and units of Touchstone 1.1 (from memory): `# MHZ S DB R 75`
    // and `#` alone (GHZ S MA R 50).
    #[test]
    fn touchstone_reader_units_and_formats() {
        let (f, m, r) =
            parse_touchstone("! c\n# MHZ S DB R 75\n100 -6.020599913279624 90 ! note\n", 1).unwrap();
        assert_eq!((f[0], r), (1e8, 75.0));
        assert!((m[0].get(0, 0) - C::new(0.0, 0.5)).norm() < 1e-12);
        let (f, m, r) = parse_touchstone("#\n2 0.5 180\n", 1).unwrap();
        assert_eq!((f[0], r), (2e9, 50.0));
        assert!((m[0].get(0, 0) - C::new(-0.5, 0.0)).norm() < 1e-15);
    }
}
