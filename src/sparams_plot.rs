//! The S-parameter figure of a frequency sweep: magnitude in dB and phase in degrees against
//! frequency, one curve per matrix entry of the lower triangle, as SVG and PNG (drawn by the
//! machinery of [`crate::pictures`]).

use crate::linalg::{Complex64, DenseMatrix};
use crate::pictures::{FONT, Figure, Rendered, render};
use anyhow::{Result, bail, ensure};
use plotters::coord::Shift;
use plotters::coord::ranged1d::{KeyPointHint, KeyPointWeight, NoDefaultFormatting, ValueFormatter};
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// Lowest magnitude drawn (dB): `20 log10 |S|` is clamped here, so exact zeros stay on the
/// axis.
pub const DB_FLOOR: f64 = -200.0;

/// Most ports for which the legend names entries by port numbers (`S21`); above, the
/// numbers would run together (`S1011`), so entries are named by the ports' names.
pub const NUMBERED_PORTS_MAX: usize = 9;

/// Draws the scattering parameters of a sweep in two stacked panels against frequency:
/// above, the magnitude `20 log10 |S_ij|` in dB (clamped at [`DB_FLOOR`]); below, the phase
/// `arg S_ij` in degrees on `[−180°, 180°]`.
///
/// `freqs_hz` are the frequencies (Hz, finite, non-negative, strictly increasing), `s` one
/// `n × n` matrix per frequency, `port_names` the `n` port names in matrix order. One curve
/// per entry with `i ≥ j` (the lower triangle; a reciprocal network's upper triangle repeats
/// it), each in its own colour, named `S21` (row, column, counted from 1) for up to nine
/// ports and `S(name_i, name_j)` beyond; for up to nine ports the legend also lists the port
/// numbers with their names. The frequency axis is in GHz, MHz, kHz or Hz after the largest
/// frequency. Phase lines break where the phase wraps (a jump of more than 180° between
/// neighbouring points) and where `|S_ij| = 0` (no phase). A single frequency is drawn as
/// markers. The legend names up to about 150 curves and sums up the rest.
///
/// # Errors
/// An empty sweep, counts that disagree (frequencies, matrices, port names), a matrix that is
/// not `n × n`, no port, a bad frequency, a non-finite entry, or a failure of the backends.
pub fn s_parameter_plot(
    freqs_hz: &[f64],
    s: &[DenseMatrix<Complex64>],
    port_names: &[String],
    title: &str,
) -> Result<Rendered> {
    let fig = SPlot::new(freqs_hz, s, port_names, title)?;
    render(&fig, "S-parameter figure")
}

/// One curve: legend label, colour, dB values and phases (degrees; `None` where `|S| = 0`).
struct Curve {
    label: String,
    colour: RGBColor,
    db: Vec<f64>,
    deg: Vec<Option<f64>>,
}

/// A legend row: a curve (by index) or a line of text.
enum Row {
    Curve(usize),
    Text(String),
}

struct SPlot<'a> {
    title: &'a str,
    /// Frequencies in the axis unit.
    x: Vec<f64>,
    unit: &'static str,
    x_range: (f64, f64),
    db_range: (f64, f64),
    curves: Vec<Curve>,
    rows: Vec<Row>,
    /// Legend geometry: columns and the width of one (pixels).
    columns: u32,
    column_px: u32,
}

const PANELS_W: u32 = 900;
const HEIGHT: u32 = 820;
const TITLE_H: u32 = 44;
const ROW_PX: u32 = 20;
const LEGEND_TOP: u32 = 24;
const LEGEND_COLUMNS_MAX: usize = 4;

impl<'a> SPlot<'a> {
    fn new(freqs: &[f64], s: &[DenseMatrix<Complex64>], names: &[String], title: &'a str) -> Result<Self> {
        ensure!(!freqs.is_empty(), "S-parameter figure: the sweep is empty (no frequency to draw)");
        ensure!(
            freqs.len() == s.len(),
            "S-parameter figure: {} frequencies but {} matrices; there must be one matrix per frequency",
            freqs.len(),
            s.len()
        );
        let n = names.len();
        ensure!(n > 0, "S-parameter figure: no ports (pass one name per port)");
        let mut previous = f64::NEG_INFINITY;
        for (k, (&f, m)) in freqs.iter().zip(s).enumerate() {
            ensure!(
                m.nrows() == n && m.ncols() == n,
                "S-parameter figure: the matrix at point {} is {}×{}; expected {n}×{n} ({n} port names)",
                k + 1,
                m.nrows(),
                m.ncols()
            );
            ensure!(
                f.is_finite() && f >= 0.0 && f > previous,
                "S-parameter figure: frequency {f} Hz at point {}; frequencies must be finite, non-negative and \
                 strictly increasing (previous {previous} Hz)",
                k + 1
            );
            previous = f;
            if let Some(p) = m.as_slice().iter().position(|v| !(v.re.is_finite() && v.im.is_finite())) {
                bail!(
                    "S-parameter figure: S{},{} at point {} is {}; entries must be finite",
                    p % n + 1,
                    p / n + 1,
                    k + 1,
                    m.as_slice()[p]
                );
            }
        }

        // Frequency axis unit after the largest frequency.
        let fmax = freqs[freqs.len() - 1];
        let (scale, unit) = [(1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz")]
            .into_iter()
            .find(|&(u, _)| fmax >= u)
            .unwrap_or((1.0, "Hz"));
        let x: Vec<f64> = freqs.iter().map(|f| f / scale).collect();
        let (x0, x1) = (x[0], x[x.len() - 1]);
        let x_range = if x1 > x0 {
            (x0, x1)
        } else if x0 > 0.0 {
            (0.9 * x0, 1.1 * x0)
        } else {
            (0.0, 1.0)
        };

        // Curves of the lower triangle, column by column: S11, S21, …, Sn1, S22, ….
        let pairs: Vec<(usize, usize)> = (0..n).flat_map(|j| (j..n).map(move |i| (i, j))).collect();
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        let curves: Vec<Curve> = pairs
            .iter()
            .enumerate()
            .map(|(k, &(i, j))| {
                let values: Vec<Complex64> = s.iter().map(|m| m.get(i, j)).collect();
                let db: Vec<f64> = values.iter().map(|v| magnitude_db(*v)).collect();
                for &d in &db {
                    (lo, hi) = (lo.min(d), hi.max(d));
                }
                let deg =
                    values.iter().map(|v| (v.norm() > 0.0).then(|| v.im.atan2(v.re).to_degrees())).collect();
                let label = if n <= NUMBERED_PORTS_MAX {
                    format!("S{}{}", i + 1, j + 1)
                } else {
                    format!("S({}, {})", short(&names[i]), short(&names[j]))
                };
                Curve { label, colour: curve_colour(k, pairs.len()), db, deg }
            })
            .collect();
        let db_range = ((lo / 10.0 - 0.1).floor() * 10.0, (hi / 10.0 + 0.1).ceil() * 10.0);

        // Legend rows: the port names (numbered legends only), then the curves; what does not
        // fit in the columns is summed up in a last row.
        let mut rows = Vec::new();
        if n <= NUMBERED_PORTS_MAX {
            rows.push(Row::Text("ports:".into()));
            rows.extend(
                names.iter().enumerate().map(|(p, name)| Row::Text(format!("{} = {}", p + 1, short(name)))),
            );
            rows.push(Row::Text(String::new()));
        }
        let per_column = ((HEIGHT - TITLE_H - LEGEND_TOP - 30) / ROW_PX) as usize;
        let capacity = per_column * LEGEND_COLUMNS_MAX;
        let fit = curves.len().min(capacity - rows.len());
        let fit = if fit < curves.len() { fit.saturating_sub(1) } else { fit };
        rows.extend((0..fit).map(Row::Curve));
        if fit < curves.len() {
            rows.push(Row::Text(format!("… and {} more", curves.len() - fit)));
        }
        let columns = rows.len().div_ceil(per_column).max(1) as u32;
        let widest = rows
            .iter()
            .map(|r| match r {
                Row::Curve(k) => curves[*k].label.chars().count() + 4,
                Row::Text(t) => t.chars().count(),
            })
            .max()
            .unwrap_or(0);
        let column_px = (widest as u32 * 8 + 24).clamp(100, 300);
        Ok(Self { title, x, unit, x_range, db_range, curves, rows, columns, column_px })
    }

    /// Points of one curve as runs to join by lines: consecutive points, broken where a
    /// value is missing or (`wrap`) jumps by more than 180.
    fn runs(&self, values: &[Option<f64>], wrap: bool) -> Vec<Vec<(f64, f64)>> {
        let mut runs: Vec<Vec<(f64, f64)>> = Vec::new();
        let mut last: Option<f64> = None;
        for (&x, v) in self.x.iter().zip(values) {
            match *v {
                None => last = None,
                Some(y) => {
                    let joined = last.is_some_and(|l| !(wrap && (y - l).abs() > 180.0));
                    if !joined {
                        runs.push(Vec::new());
                    }
                    if let Some(run) = runs.last_mut() {
                        run.push((x, y));
                    }
                    last = Some(y);
                }
            }
        }
        runs
    }

    fn draw_panel<DB: DrawingBackend>(&self, area: &DrawingArea<DB, Shift>, phase: bool) -> Result<()>
    where
        DB::ErrorType: 'static,
    {
        let (x0, x1) = self.x_range;
        // plotters puts at most ten labels a 1-2-5 step apart, so the step is at least a
        // twentieth of the range: enough decimals for that, trailing zeros trimmed.
        let decimals = (-nice_step((x1 - x0) / 20.0).log10().floor()).clamp(0.0, 9.0) as usize;
        let x_fmt = move |v: &f64| trim_zeros(format!("{v:.decimals$}"));
        if phase {
            let mut chart = chart_builder(area).build_cartesian_2d(x0..x1, PhaseAxis)?;
            chart
                .configure_mesh()
                .light_line_style(RGBColor(235, 235, 235))
                .bold_line_style(RGBColor(210, 210, 210))
                .x_labels(10)
                .x_label_formatter(&x_fmt)
                .y_label_formatter(&|v| format!("{v:.0}"))
                .x_desc(format!("frequency ({})", self.unit))
                .y_desc("phase of S (degrees)")
                .label_style(font(13))
                .axis_desc_style(font(15))
                .draw()?;
            for c in &self.curves {
                for run in self.runs(&c.deg, true) {
                    self.draw_run(&mut chart, run, c.colour)?;
                }
            }
        } else {
            let (lo, hi) = self.db_range;
            let mut chart = chart_builder(area).build_cartesian_2d(x0..x1, lo..hi)?;
            chart
                .configure_mesh()
                .light_line_style(RGBColor(235, 235, 235))
                .bold_line_style(RGBColor(210, 210, 210))
                .x_labels(10)
                .y_labels(10)
                .x_label_formatter(&x_fmt)
                .y_label_formatter(&|v| format!("{v:.0}"))
                .y_desc("|S| (dB)")
                .label_style(font(13))
                .axis_desc_style(font(15))
                .draw()?;
            for c in &self.curves {
                let values: Vec<Option<f64>> = c.db.iter().map(|&d| Some(d)).collect();
                for run in self.runs(&values, false) {
                    self.draw_run(&mut chart, run, c.colour)?;
                }
            }
        }
        Ok(())
    }

    /// A run of points: a line, or a marker when it is a single point.
    fn draw_run<DB: DrawingBackend, Y: Ranged<ValueType = f64>>(
        &self,
        chart: &mut ChartContext<'_, DB, Cartesian2d<RangedCoordf64, Y>>,
        run: Vec<(f64, f64)>,
        colour: RGBColor,
    ) -> Result<()>
    where
        DB::ErrorType: 'static,
    {
        if run.len() == 1 {
            chart.draw_series(run.into_iter().map(|p| Circle::new(p, 4, colour.filled())))?;
        } else {
            chart.draw_series(LineSeries::new(run, colour.stroke_width(2)))?;
        }
        Ok(())
    }
}

impl Figure for SPlot<'_> {
    fn size(&self) -> (u32, u32) {
        (PANELS_W + self.columns * self.column_px + 10, HEIGHT)
    }

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<()>
    where
        DB::ErrorType: 'static,
    {
        root.fill(&WHITE)?;
        let (title_area, body) = root.split_vertically(TITLE_H);
        title_area.draw_text(
            self.title,
            &font(20).pos(Pos::new(HPos::Center, VPos::Center)),
            ((title_area.dim_in_pixel().0 / 2) as i32, (TITLE_H / 2) as i32),
        )?;
        let (panels, legend) = body.split_horizontally(PANELS_W);
        let half = panels.dim_in_pixel().1 / 2;
        let (upper, lower) = panels.split_vertically(half);
        self.draw_panel(&upper, false)?;
        self.draw_panel(&lower, true)?;

        // Legend: rows in columns, top to bottom then left to right.
        let per_column = ((HEIGHT - TITLE_H - LEGEND_TOP - 30) / ROW_PX) as usize;
        let single = self.x.len() == 1;
        let text = font(13).pos(Pos::new(HPos::Left, VPos::Center));
        for (r, row) in self.rows.iter().enumerate() {
            let x = ((r / per_column) as u32 * self.column_px + 8) as i32;
            let y = (LEGEND_TOP + (r % per_column) as u32 * ROW_PX + ROW_PX / 2) as i32;
            match row {
                Row::Text(t) => legend.draw_text(t, &text, (x, y))?,
                Row::Curve(k) => {
                    let c = &self.curves[*k];
                    if single {
                        legend.draw(&Circle::new((x + 12, y), 4, c.colour.filled()))?;
                    } else {
                        legend
                            .draw(&PathElement::new(vec![(x, y), (x + 24, y)], c.colour.stroke_width(2)))?;
                    }
                    legend.draw_text(&c.label, &text, (x + 32, y))?;
                }
            }
        }
        Ok(())
    }
}

/// The phase axis, −180° to 180°, with grid lines every 90° (labelled) and 45° (light).
struct PhaseAxis;

impl Ranged for PhaseAxis {
    type ValueType = f64;
    type FormatOption = NoDefaultFormatting;

    fn map(&self, v: &f64, limit: (i32, i32)) -> i32 {
        RangedCoordf64::from(-180.0..180.0).map(v, limit)
    }

    fn key_points<H: KeyPointHint>(&self, hint: H) -> Vec<f64> {
        let step = match (hint.weight(), hint.max_num_points()) {
            (KeyPointWeight::Any, m) if m >= 9 => 45.0,
            (_, m) if m >= 5 => 90.0,
            (_, m) if m >= 3 => 180.0,
            _ => return Vec::new(),
        };
        let k = (360.0 / step) as i32;
        (0..=k).map(|i| -180.0 + step * f64::from(i)).collect()
    }

    fn range(&self) -> std::ops::Range<f64> {
        -180.0..180.0
    }
}

impl ValueFormatter<f64> for PhaseAxis {
    fn format(v: &f64) -> String {
        format!("{v:.0}")
    }
}

/// The frame of one panel: margins and label areas.
fn chart_builder<'a, 'b, DB: DrawingBackend>(area: &'a DrawingArea<DB, Shift>) -> ChartBuilder<'a, 'b, DB> {
    let mut b = ChartBuilder::on(area);
    b.margin(12)
        .margin_right(20)
        .set_label_area_size(LabelAreaPosition::Left, 80)
        .set_label_area_size(LabelAreaPosition::Bottom, 48);
    b
}

fn font(size: u32) -> TextStyle<'static> {
    (FONT, size).into_font().into()
}

/// `20 log10 |v|` (dB), clamped below at [`DB_FLOOR`].
fn magnitude_db(v: Complex64) -> f64 {
    let m = v.norm();
    if m > 0.0 { (20.0 * m.log10()).max(DB_FLOOR) } else { DB_FLOOR }
}

/// A name cut to 24 characters for the legend.
fn short(name: &str) -> String {
    if name.chars().count() <= 24 { name.to_string() } else { name.chars().take(23).chain(['…']).collect() }
}

/// `text` of a decimal number without trailing zeros after the point (`"1.50"` → `"1.5"`,
/// `"2.0"` → `"2"`).
fn trim_zeros(text: String) -> String {
    if text.contains('.') { text.trim_end_matches('0').trim_end_matches('.').to_string() } else { text }
}

/// The 1-2-5 step at or above `raw` (positive), for choosing tick-label decimals.
fn nice_step(raw: f64) -> f64 {
    if !(raw.is_finite() && raw > 0.0) {
        return 1.0;
    }
    let p = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0].into_iter().map(|m| m * p).find(|&s| s >= raw * (1.0 - 1e-12)).unwrap_or(10.0 * p)
}

/// Colour of curve `k` of `total`. Up to ten curves: hues 108° apart (3/10 of the circle, so
/// the ten hues are distinct multiples of 36° and consecutive curves differ strongly); more:
/// hues a golden angle (≈ 137.5°) apart, which keeps neighbours well separated for any
/// count. Two alternating lightnesses, dark enough for thin lines on white.
fn curve_colour(k: usize, total: usize) -> RGBColor {
    const GOLDEN_ANGLE: f64 = 137.507_764_050_037_85;
    let step = if total <= 10 { 108.0 } else { GOLDEN_ANGLE };
    let hue = (12.0 + step * k as f64).rem_euclid(360.0);
    let lightness = if k.is_multiple_of(2) { 0.32 } else { 0.42 };
    let [r, g, b] = hsl_to_rgb(hue, 0.8, lightness);
    RGBColor(r, g, b)
}

/// HSL (hue in degrees, saturation and lightness in `[0, 1]`) to 8-bit RGB (the standard
/// hexcone formulas of CSS Color Module Level 3, W3C 2011 — from memory).
fn hsl_to_rgb(h: f64, s: f64, l: f64) -> [u8; 3] {
    let c = (1.0 - (2.0 * l - 1.0).abs()) * s;
    let hp = h.rem_euclid(360.0) / 60.0;
    let x = c * (1.0 - (hp.rem_euclid(2.0) - 1.0).abs());
    let (r, g, b) = match hp as u32 {
        0 => (c, x, 0.0),
        1 => (x, c, 0.0),
        2 => (0.0, c, x),
        3 => (0.0, x, c),
        4 => (x, 0.0, c),
        _ => (c, 0.0, x),
    };
    let m = l - c / 2.0;
    let to8 = |v: f64| ((v + m) * 255.0).round().clamp(0.0, 255.0) as u8;
    [to8(r), to8(g), to8(b)]
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    type C = Complex64;

    /// PNG file signature (ISO/IEC 15948:2004 / W3C PNG specification, section 5.2).
    const PNG_SIGNATURE: [u8; 8] = [0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A];

    /// The text of every `<text>` element of an SVG document, trimmed.
    fn texts(svg: &str) -> Vec<String> {
        svg.split("<text")
            .skip(1)
            .filter_map(|t| {
                let body = &t[t.find('>')? + 1..];
                Some(body[..body.find("</text>")?].trim().to_string())
            })
            .collect()
    }

    fn has_text(svg: &str, label: &str) -> bool {
        texts(svg).iter().any(|t| t == label)
    }

    /// Lines drawn 2 pixels wide: the curves and their legend samples (axes and grid are
    /// 1 pixel wide).
    fn curve_lines(svg: &str) -> usize {
        svg.split("<polyline")
            .skip(1)
            .filter(|p| p[..p.find("/>").unwrap_or(p.len())].contains("stroke-width=\"2\""))
            .count()
    }

    fn names(n: usize) -> Vec<String> {
        (0..n).map(|p| format!("port{}", p + 1)).collect()
    }

    /// A matched lossless line of electrical length θ = 2π f / f₁ (f₁ = 3 GHz):
    /// S = [[0, e^{−jθ}], [e^{−jθ}, 0]] (D. M. Pozar, Microwave Engineering, 4th ed., 2012,
    /// ch. 4 — from memory), with a small reflection so that S11 has a finite dB value.
    fn line_sweep(nf: usize) -> (Vec<f64>, Vec<DenseMatrix<C>>) {
        let freqs: Vec<f64> = (0..nf).map(|k| 1e8 + 5e7 * k as f64).collect();
        let mats = freqs
            .iter()
            .map(|f| {
                let theta = 2.0 * PI * f / 3e9;
                let t = C::from_polar(1.0, -theta);
                let r = C::from_polar(0.05, -2.0 * theta);
                DenseMatrix::from_fn(2, 2, |i, j| if i == j { r } else { t })
            })
            .collect();
        (freqs, mats)
    }

    #[test]
    fn sparams_two_port_renders() {
        let (f, s) = line_sweep(100);
        let out = s_parameter_plot(&f, &s, &names(2), "two-port").unwrap();
        assert!(out.png.starts_with(&PNG_SIGNATURE));
        assert!(out.svg.starts_with("<svg"));
        for label in ["S11", "S21", "S22", "1 = port1", "2 = port2", "frequency (GHz)", "two-port"] {
            assert!(has_text(&out.svg, label), "{label} missing from the SVG");
        }
        // Frequency tick labels (0.1 to 5.05 GHz, plotters' 1-2-5 choice: every 0.5 GHz) on
        // both panels, each printed with the decimal it needs ("0.5", "1", "1.5", …).
        let labels: Vec<String> = texts(&out.svg);
        let want: Vec<String> = (1..=10).map(|k| trim_zeros(format!("{:.1}", 0.5 * k as f64))).collect();
        assert_eq!(labels.windows(10).filter(|w| *w == want.as_slice()).count(), 2, "{labels:?}");
        // The lower triangle only.
        assert!(!has_text(&out.svg, "S12"));
        // Three curves in both panels and three legend samples.
        assert!(curve_lines(&out.svg) >= 9);
    }

    #[test]
    fn sparams_four_port_renders_with_ten_curves() {
        let nf = 40;
        let freqs: Vec<f64> = (0..nf).map(|k| 1e6 * (1.0 + k as f64)).collect();
        let s: Vec<DenseMatrix<C>> = freqs
            .iter()
            .map(|f| {
                DenseMatrix::from_fn(4, 4, |i, j| {
                    if i == 0 && j == 3 || i == 3 && j == 0 {
                        C::new(0.0, 0.0) // exact zeros: drawn at the floor, phase omitted
                    } else {
                        C::from_polar(0.5 / (1 + i + j) as f64, f * 1e-7 * (1 + i * j) as f64)
                    }
                })
            })
            .collect();
        let out = s_parameter_plot(&freqs, &s, &names(4), "four-port").unwrap();
        assert!(out.png.starts_with(&PNG_SIGNATURE));
        let labels: Vec<String> =
            (0..4).flat_map(|j| (j..4).map(move |i| format!("S{}{}", i + 1, j + 1))).collect();
        assert_eq!(labels.len(), 10);
        for l in &labels {
            assert!(has_text(&out.svg, l), "{l} missing");
        }
        assert!(has_text(&out.svg, "frequency (MHz)"));
        // The floor (−200 dB) sets the bottom of the magnitude axis.
        assert!(has_text(&out.svg, "-200"));
    }

    #[test]
    fn sparams_many_ports_use_names() {
        let n = 10;
        let names: Vec<String> = (0..n).map(|p| format!("net{p}")).collect();
        let s = vec![DenseMatrix::from_fn(n, n, |i, j| C::new(0.1 / (1 + i + j) as f64, 0.0)); 3];
        let out = s_parameter_plot(&[1e9, 2e9, 3e9], &s, &names, "ten ports").unwrap();
        assert!(has_text(&out.svg, "S(net1, net0)"));
        assert!(has_text(&out.svg, "S(net9, net9)"));
        assert!(!has_text(&out.svg, "S21"));
    }

    #[test]
    fn sparams_single_frequency_draws_markers() {
        let (f, s) = line_sweep(1);
        let out = s_parameter_plot(&f, &s, &names(2), "one point").unwrap();
        assert!(out.png.starts_with(&PNG_SIGNATURE));
        assert!(out.svg.contains("<circle"), "markers expected");
        assert_eq!(curve_lines(&out.svg), 0, "no lines expected for one point");
        assert!(has_text(&out.svg, "S21"));
    }

    #[test]
    fn sparams_refuses_bad_input() {
        let e = s_parameter_plot(&[], &[], &names(2), "empty").unwrap_err();
        assert!(e.to_string().contains("empty"), "{e}");
        let (f, s) = line_sweep(3);
        assert!(s_parameter_plot(&f[..2], &s, &names(2), "t").is_err());
        assert!(s_parameter_plot(&f, &s, &names(3), "t").is_err());
        let down = [f[0], f[2], f[1]];
        assert!(s_parameter_plot(&down, &s, &names(2), "t").is_err());
        let mut bad = s.clone();
        bad[1].set(1, 0, C::new(f64::INFINITY, 0.0));
        let e = s_parameter_plot(&f, &bad, &names(2), "t").unwrap_err();
        assert!(e.to_string().contains("S2,1 at point 2"), "{e}");
    }

    #[test]
    fn sparams_helpers() {
        // 20 log10 |S|: |S| = 0.1 is −20 dB, 1 is 0 dB; zero and tiny values sit at the floor.
        assert!((magnitude_db(C::new(0.0, 0.1)) + 20.0).abs() < 1e-12);
        assert_eq!(magnitude_db(C::new(1.0, 0.0)), 0.0);
        assert_eq!(magnitude_db(C::new(0.0, 0.0)), DB_FLOOR);
        assert_eq!(magnitude_db(C::new(1e-300, 0.0)), DB_FLOOR);
        // HSL primaries (CSS Color Module Level 3, W3C 2011 — from memory).
        assert_eq!(hsl_to_rgb(0.0, 1.0, 0.5), [255, 0, 0]);
        assert_eq!(hsl_to_rgb(120.0, 1.0, 0.5), [0, 255, 0]);
        assert_eq!(hsl_to_rgb(240.0, 1.0, 0.5), [0, 0, 255]);
        assert_eq!(hsl_to_rgb(0.0, 0.0, 0.5), [128, 128, 128]);
        // Up to ten curves (four ports): every pair of colours at least 60 apart in 8-bit RGB
        // (Euclidean; a rule of thumb, common practice); up to 210 curves (20 ports): distinct.
        for total in [3, 6, 10] {
            let colours: Vec<RGBColor> = (0..total).map(|k| curve_colour(k, total)).collect();
            for a in 0..total {
                for b in 0..a {
                    let (x, y) = (colours[a], colours[b]);
                    let d = [(x.0, y.0), (x.1, y.1), (x.2, y.2)]
                        .iter()
                        .map(|&(p, q)| (f64::from(p) - f64::from(q)).powi(2))
                        .sum::<f64>()
                        .sqrt();
                    assert!(d >= 60.0, "{total} curves: colours {a} and {b} only {d:.0} apart");
                }
            }
        }
        let colours: Vec<RGBColor> = (0..210).map(|k| curve_colour(k, 210)).collect();
        for a in 0..colours.len() {
            for b in 0..a {
                assert_ne!(colours[a], colours[b], "curves {a} and {b}");
            }
        }
        assert_eq!(trim_zeros("1.50".into()), "1.5");
        assert_eq!(trim_zeros("2.000".into()), "2");
        assert_eq!(trim_zeros("100".into()), "100");
        assert_eq!(nice_step(0.3), 0.5);
        assert_eq!(nice_step(1.0), 1.0);
        assert_eq!(nice_step(0.011), 0.02);
    }
}
