//! Figures of a run, each rendered in memory both as SVG text and as PNG bytes through the
//! `plotters` crate.
//!
//! - [`block_partition`]: the leaf blocks of an H-matrix at their places in the matrix,
//!   low-rank blocks coloured by their compression ratio (stored bytes / dense bytes) on the
//!   viridis sequential scale (logarithmic), dense near-field blocks in a neutral grey that is
//!   not on the scale;
//! - [`charge_density`]: the surface charge density of every mesh cell in plan view, one
//!   panel per face height, on a diverging blue–white–red scale centred on zero;
//! - [`current_density`]: the magnitude of the surface current density of every mesh cell,
//!   laid out like the charge density, on the viridis sequential scale from zero;
//! - [`convergence`]: GMRES relative residual against iteration on a logarithmic axis, one
//!   line per right-hand side, with the tolerance as a dashed line.
//!
//! Text is set in the DejaVu Sans font bundled with the crate (`assets/fonts/`), registered
//! with plotters before the first drawing, so the PNG needs no font installed on the machine.
//! The SVG names the font family `sans-serif` and leaves the choice to the viewer.
//!
//! The SVG and the PNG of one figure are drawn by the same code at the same pixel size.
//! Items smaller than a couple of pixels (the near-diagonal blocks of a large matrix, the
//! thin edge cells of a graded mesh) are merged into 2-pixel tiles — coloured by their
//! area-weighted mean for blocks, by the value of largest magnitude for charge densities (so
//! equal narrow peaks look equal) — so that a 100 000-unknown partition stays a sub-megabyte
//! SVG.
//!
//! Every function checks its input first and returns an error that says what was wrong
//! (empty input, mismatched lengths, non-finite values) instead of drawing nonsense.

use std::sync::{LazyLock, OnceLock};

use anyhow::{Context, Result, bail, ensure};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use rafter_hmatrix::BlockStats;
use rafter_layout::{Cell, CellShape};

/// A figure rendered twice at the same pixel size.
#[derive(Clone, Debug)]
pub struct Rendered {
    /// The figure as a standalone SVG document (UTF-8 text).
    pub svg: String,
    /// The figure as a PNG file (8-bit RGB), encoded in memory.
    pub png: Vec<u8>,
}

/// Fill of dense (near-field) blocks in [`block_partition`]: a neutral dark grey, not on the
/// sequential scale of the low-rank blocks.
pub const DENSE_BLOCK_RGB: [u8; 3] = [88, 88, 88];

/// Colour of `t` in `[0, 1]` on the sequential scale of [`block_partition`] and
/// [`current_density`]: viridis (as
/// shipped by plotters), dark purple at 0 through blue and green to yellow at 1. Perceptually
/// uniform and readable with the common colour-vision deficiencies. `t` is clamped to
/// `[0, 1]`; a NaN gives the colour of 0.
pub fn sequential_rgb(t: f64) -> [u8; 3] {
    let t = if t.is_nan() { 0.0 } else { t.clamp(0.0, 1.0) };
    let c = ViridisRGB::get_color(t);
    [c.0, c.1, c.2]
}

/// Colour of `t` in `[-1, 1]` on the diverging scale of [`charge_density`]: dark blue at -1,
/// near-white at 0, dark red at +1 (the eleven-step ColorBrewer red–blue scheme, reversed so
/// that positive is red, interpolated linearly). Symmetric in lightness about zero and
/// readable with the common colour-vision deficiencies. `t` is clamped to `[-1, 1]`; a NaN
/// gives the colour of 0.
pub fn diverging_rgb(t: f64) -> [u8; 3] {
    let t = if t.is_nan() { 0.0 } else { t.clamp(-1.0, 1.0) };
    let c: RGBColor = DIVERGING.get_color(0.5 * (t + 1.0));
    [c.0, c.1, c.2]
}

/// Blue (negative) – white – red (positive).
static DIVERGING: LazyLock<DerivedColorMap<RGBColor>> = LazyLock::new(|| {
    DerivedColorMap::new(&[
        RGBColor(5, 48, 97),
        RGBColor(33, 102, 172),
        RGBColor(67, 147, 195),
        RGBColor(146, 197, 222),
        RGBColor(209, 229, 240),
        RGBColor(247, 247, 247),
        RGBColor(253, 219, 199),
        RGBColor(244, 165, 130),
        RGBColor(214, 96, 77),
        RGBColor(178, 24, 43),
        RGBColor(103, 0, 31),
    ])
});

// ---------------------------------------------------------------------------------------------
// Rendering plumbing
// ---------------------------------------------------------------------------------------------

/// Font family name under which the bundled font is registered.
pub const FONT: &str = "sans-serif";

/// DejaVu Sans (Bitstream Vera licence, see `assets/fonts/LICENSE-DejaVu.txt`).
static FONT_BYTES: &[u8] = include_bytes!("../assets/fonts/DejaVuSans.ttf");

/// Registers the bundled font once; text on the bitmap backend cannot be drawn without it.
fn ensure_font() -> Result<()> {
    static REGISTERED: OnceLock<bool> = OnceLock::new();
    let ok = *REGISTERED
        .get_or_init(|| plotters::style::register_font(FONT, FontStyle::Normal, FONT_BYTES).is_ok());
    ensure!(ok, "the bundled font assets/fonts/DejaVuSans.ttf is not a readable TrueType font");
    Ok(())
}

/// A figure that can draw itself on any plotters backend.
pub trait Figure {
    /// Canvas size in pixels.
    fn size(&self) -> (u32, u32);
    /// Draws the whole figure on `root` (the full canvas).
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<()>
    where
        DB::ErrorType: 'static;
}

/// Draws `fig` as SVG and as PNG.
pub fn render(fig: &impl Figure, what: &str) -> Result<Rendered> {
    ensure_font()?;
    let (w, h) = fig.size();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (w, h)).into_drawing_area();
        fig.draw(&root).with_context(|| format!("drawing the {what} as SVG"))?;
        root.present().with_context(|| format!("finishing the {what} SVG"))?;
    }
    let mut rgb = vec![0u8; w as usize * h as usize * 3];
    {
        let root = BitMapBackend::with_buffer(&mut rgb, (w, h)).into_drawing_area();
        fig.draw(&root).with_context(|| format!("drawing the {what} as a bitmap"))?;
        root.present().with_context(|| format!("finishing the {what} bitmap"))?;
    }
    let png = encode_png(&rgb, w, h).with_context(|| format!("encoding the {what} as PNG"))?;
    Ok(Rendered { svg, png })
}

/// PNG file bytes of an 8-bit RGB buffer.
fn encode_png(rgb: &[u8], w: u32, h: u32) -> Result<Vec<u8>> {
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, w, h);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        let mut writer = enc.write_header()?;
        writer.write_image_data(rgb)?;
        writer.finish()?;
    }
    Ok(out)
}

fn rgb(c: [u8; 3]) -> RGBColor {
    RGBColor(c[0], c[1], c[2])
}

fn font(size: u32) -> TextStyle<'static> {
    (FONT, size).into_font().into()
}

/// Light grey behind the conductors of a per-cell map, so that near-zero cells (white on the
/// charge scale) stay visible.
const PANEL_BACKGROUND: RGBColor = RGBColor(222, 222, 222);

/// Items whose pixel box is smaller than this on either side are merged into tiles.
const SMALL_PX: f64 = 2.0;
/// Side of a tile (pixels).
const TILE_PX: f64 = 2.0;
/// Blocks at least this large on both sides are drawn with a 1-pixel gap (the outline).
const OUTLINE_PX: f64 = 5.0;

/// Area-weighted accumulation of sub-pixel items on a grid of `TILE_PX` tiles.
struct Tiles {
    nx: usize,
    ny: usize,
    /// Per tile: area of "special" items (dense blocks), area of valued items, Σ value·area,
    /// and the value of largest magnitude.
    acc: Vec<[f64; 4]>,
}

impl Tiles {
    fn new(w_px: u32, h_px: u32) -> Self {
        let nx = (f64::from(w_px) / TILE_PX).ceil() as usize;
        let ny = (f64::from(h_px) / TILE_PX).ceil() as usize;
        Self { nx, ny, acc: vec![[0.0; 4]; nx * ny] }
    }

    /// Adds an item with pixel box `[x0, x1] × [y0, y1]` and pixel area `area` (at most the
    /// box's), spread over the tiles by their overlap with the box. `value` `None` marks a
    /// special item.
    fn add(&mut self, [x0, x1, y0, y1]: [f64; 4], area: f64, value: Option<f64>) {
        let box_area = (x1 - x0) * (y1 - y0);
        if box_area <= 0.0 || area <= 0.0 || self.nx == 0 || self.ny == 0 {
            return;
        }
        let scale = area / box_area;
        let tx0 = ((x0 / TILE_PX).floor().max(0.0) as usize).min(self.nx - 1);
        let tx1 = ((x1 / TILE_PX).ceil().max(1.0) as usize).min(self.nx);
        let ty0 = ((y0 / TILE_PX).floor().max(0.0) as usize).min(self.ny - 1);
        let ty1 = ((y1 / TILE_PX).ceil().max(1.0) as usize).min(self.ny);
        for ty in ty0..ty1 {
            let oy = (y1.min((ty + 1) as f64 * TILE_PX) - y0.max(ty as f64 * TILE_PX)).max(0.0);
            for tx in tx0..tx1 {
                let ox = (x1.min((tx + 1) as f64 * TILE_PX) - x0.max(tx as f64 * TILE_PX)).max(0.0);
                let a = ox * oy * scale;
                let t = &mut self.acc[ty * self.nx + tx];
                match value {
                    None => t[0] += a,
                    Some(v) => {
                        t[1] += a;
                        t[2] += a * v;
                        if a > 0.0 && v.abs() > t[3].abs() {
                            t[3] = v;
                        }
                    }
                }
            }
        }
    }

    /// Pixel rectangles `(x0, y0, x1, y1)` with their colours: each tile row merged into runs
    /// of one colour. `colour(special_area, valued_area, mean_value, extreme_value)` gives a
    /// tile's colour or `None` to leave it empty.
    fn runs(&self, colour: impl Fn(f64, f64, f64, f64) -> Option<RGBColor>) -> Vec<([i32; 4], RGBColor)> {
        let mut out = Vec::new();
        let t = TILE_PX as i32;
        for ty in 0..self.ny {
            let mut open: Option<(usize, RGBColor)> = None;
            for tx in 0..=self.nx {
                let c = if tx < self.nx {
                    let [s, a, va, ext] = self.acc[ty * self.nx + tx];
                    if s + a > 0.0 { colour(s, a, if a > 0.0 { va / a } else { 0.0 }, ext) } else { None }
                } else {
                    None
                };
                if let Some((start, oc)) = open
                    && c != Some(oc)
                {
                    out.push(([start as i32 * t, ty as i32 * t, tx as i32 * t, (ty as i32 + 1) * t], oc));
                    open = None;
                }
                if open.is_none()
                    && let Some(c) = c
                {
                    open = Some((tx, c));
                }
            }
        }
        out
    }
}

/// Text of `v` rounded to about three significant digits, for tick labels.
fn tick(v: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let a = v.abs();
    if (1e-3..1e4).contains(&a) {
        let decimals = (2 - a.log10().floor() as i32).clamp(0, 5) as usize;
        let s = format!("{v:.decimals$}");
        if s.contains('.') { s.trim_end_matches('0').trim_end_matches('.').to_string() } else { s }
    } else {
        format!("{v:.1e}").replace(".0e", "e")
    }
}

/// Tick values for a logarithmic axis over `[lo, hi]` (both
/// positive): the powers of ten inside, with the 2 and 5 multiples when that gives at most
/// ten ticks, and every integer multiple when the range holds fewer than three 1-2-5 values.
fn log_ticks(lo: f64, hi: f64) -> Vec<f64> {
    let inside = |mantissas: &[f64]| -> Vec<f64> {
        let (k0, k1) = (lo.log10().floor() as i32, hi.log10().ceil() as i32);
        let mut out = Vec::new();
        for k in k0..=k1 {
            for m in mantissas {
                let v = m * 10f64.powi(k);
                if v >= lo * (1.0 - 1e-9) && v <= hi * (1.0 + 1e-9) {
                    out.push(v);
                }
            }
        }
        out
    };
    let decades = inside(&[1.0]);
    let steps = inside(&[1.0, 2.0, 5.0]);
    if steps.len() < 3 {
        inside(&[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0])
    } else if steps.len() <= 10 || decades.len() < 2 {
        steps
    } else {
        decades
    }
}

/// `10` to the power `e` written with superscript digits, e.g. `10⁻⁶`.
fn power_of_ten(e: i32) -> String {
    const SUP: [char; 10] = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let mut s = String::from("10");
    if e < 0 {
        s.push('⁻');
    }
    for d in e.unsigned_abs().to_string().bytes() {
        s.push(SUP[usize::from(d - b'0')]);
    }
    s
}

// ---------------------------------------------------------------------------------------------
// Block partition
// ---------------------------------------------------------------------------------------------

/// Draws the leaf-block partition of an H-matrix with `rows × cols` entries (tree order).
///
/// Every block is drawn at its place in the matrix, row 0 at the top and column 0 on the
/// left (matrix convention; column indices along the top edge, row indices down the left).
/// Low-rank blocks are filled by their compression ratio `ratio` = stored bytes / dense
/// bytes on the viridis sequential scale ([`sequential_rgb`]) with a logarithmic colour bar
/// labelled "stored / dense" spanning the smallest to the largest ratio; a block of ratio 0
/// (rank 0) takes the bottom colour. Dense blocks are filled with [`DENSE_BLOCK_RGB`] (legend
/// entry "dense (near field)"), which is not on the scale. Blocks of at least 5 pixels on
/// both sides are separated by 1-pixel white gaps, which outline the partition; blocks
/// smaller than 2 pixels are merged into 2-pixel tiles coloured by their area-weighted mean
/// log ratio, or grey where dense blocks cover most of a tile.
///
/// `title` is printed above the matrix as given.
///
/// # Errors
/// No blocks, an empty matrix, a block outside `rows × cols` or empty, a `kind` other than
/// `"low-rank"` or `"dense"`, a negative or non-finite ratio, or a failure of the backends.
pub fn block_partition(blocks: &[BlockStats], rows: usize, cols: usize, title: &str) -> Result<Rendered> {
    let fig = Partition::new(blocks, rows, cols, title)?;
    render(&fig, "block partition")
}

struct Partition<'a> {
    blocks: &'a [BlockStats],
    rows: usize,
    cols: usize,
    title: &'a str,
    /// Range of positive low-rank ratios (log scale ends).
    lo: f64,
    hi: f64,
    /// Plotting area of the matrix (pixels).
    plot: (u32, u32),
}

/// Longer side of the matrix drawing (pixels).
const MATRIX_PX: f64 = 760.0;
const PART_LEFT: u32 = 80;
const PART_TOP: u32 = 50;
const PART_MARGIN: u32 = 15;
const PART_TITLE: u32 = 44;
const PART_LEGEND: u32 = 190;

impl<'a> Partition<'a> {
    fn new(blocks: &'a [BlockStats], rows: usize, cols: usize, title: &'a str) -> Result<Self> {
        ensure!(
            !blocks.is_empty(),
            "block partition: no blocks to draw (hint: pass the statistics of every leaf block)"
        );
        ensure!(rows > 0 && cols > 0, "block partition: the matrix is {rows} × {cols}; it must not be empty");
        let (mut lo, mut hi) = (f64::INFINITY, 0.0f64);
        for (k, b) in blocks.iter().enumerate() {
            ensure!(
                b.row_start < b.row_end && b.row_end <= rows && b.col_start < b.col_end && b.col_end <= cols,
                "block partition: block {k} (id {}) covers rows {}..{} × columns {}..{}, which is empty or \
                 outside the {rows} × {cols} matrix (hint: pass the matrix's own size)",
                b.id,
                b.row_start,
                b.row_end,
                b.col_start,
                b.col_end
            );
            match b.kind {
                "dense" => {}
                "low-rank" => {
                    ensure!(
                        b.ratio.is_finite() && b.ratio >= 0.0,
                        "block partition: low-rank block {k} (id {}) has compression ratio {}; it must be \
                         finite and non-negative",
                        b.id,
                        b.ratio
                    );
                    if b.ratio > 0.0 {
                        lo = lo.min(b.ratio);
                        hi = hi.max(b.ratio);
                    }
                }
                other => bail!(
                    "block partition: block {k} (id {}) has kind {other:?}; expected \"low-rank\" or \"dense\"",
                    b.id
                ),
            }
        }
        if lo > hi {
            // No low-rank block with a positive ratio: a nominal scale for the colour bar.
            (lo, hi) = (1e-3, 1.0);
        }
        if hi / lo < 1.5 {
            let mid = (lo * hi).sqrt();
            (lo, hi) = (mid / 1.5, mid * 1.5);
        }
        let aspect = rows as f64 / cols as f64;
        let (pw, ph) = if aspect <= 1.0 {
            (MATRIX_PX, (MATRIX_PX * aspect).max(MATRIX_PX / 4.0))
        } else {
            ((MATRIX_PX / aspect).max(MATRIX_PX / 4.0), MATRIX_PX)
        };
        Ok(Self { blocks, rows, cols, title, lo, hi, plot: (pw.round() as u32, ph.round() as u32) })
    }

    /// Position of `ratio` on the colour scale, in `[0, 1]`.
    fn scale(&self, ratio: f64) -> f64 {
        if ratio <= 0.0 { 0.0 } else { (ratio / self.lo).log10() / (self.hi / self.lo).log10() }
    }
}

impl Figure for Partition<'_> {
    fn size(&self) -> (u32, u32) {
        let w = PART_LEFT + self.plot.0 + 2 * PART_MARGIN + PART_LEGEND;
        let h = PART_TITLE + PART_TOP + self.plot.1 + 2 * PART_MARGIN;
        (w, h.max(PART_TITLE + 420))
    }

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<()>
    where
        DB::ErrorType: 'static,
    {
        root.fill(&WHITE)?;
        let (title_area, body) = root.split_vertically(PART_TITLE);
        title_area.draw_text(
            self.title,
            &font(20).pos(Pos::new(HPos::Center, VPos::Center)),
            ((title_area.dim_in_pixel().0 / 2) as i32, (PART_TITLE / 2) as i32),
        )?;
        let (left, right) = body.split_horizontally(PART_LEFT + self.plot.0 + 2 * PART_MARGIN);

        // The matrix, row 0 at the top.
        let mut chart = ChartBuilder::on(&left)
            .margin(PART_MARGIN)
            .set_label_area_size(LabelAreaPosition::Top, PART_TOP)
            .set_label_area_size(LabelAreaPosition::Left, PART_LEFT)
            .build_cartesian_2d(0f64..self.cols as f64, self.rows as f64..0f64)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_labels(6)
            .y_labels(6)
            .x_label_formatter(&|v| format!("{v:.0}"))
            .y_label_formatter(&|v| format!("{v:.0}"))
            .x_desc("column")
            .y_desc("row")
            .label_style(font(13))
            .axis_desc_style(font(15))
            .draw()?;
        let area = chart.plotting_area().strip_coord_spec();
        let (w, h) = area.dim_in_pixel();
        let (sx, sy) = (f64::from(w) / self.cols as f64, f64::from(h) / self.rows as f64);
        let mut tiles = Tiles::new(w, h);
        let mut big = Vec::new();
        for b in self.blocks {
            let bx = [
                b.col_start as f64 * sx,
                b.col_end as f64 * sx,
                b.row_start as f64 * sy,
                b.row_end as f64 * sy,
            ];
            let value = (b.kind == "low-rank").then(|| self.scale(b.ratio));
            if bx[1] - bx[0] < SMALL_PX || bx[3] - bx[2] < SMALL_PX {
                tiles.add(bx, (bx[1] - bx[0]) * (bx[3] - bx[2]), value);
            } else {
                big.push((bx, value));
            }
        }
        let dense = rgb(DENSE_BLOCK_RGB);
        for ([x0, y0, x1, y1], c) in
            tiles.runs(|s, a, mean, _| Some(if s >= a { dense } else { rgb(sequential_rgb(mean)) }))
        {
            area.draw(&Rectangle::new([(x0, y0), (x1.min(w as i32), y1.min(h as i32))], c.filled()))?;
        }
        for ([x0, x1, y0, y1], value) in big {
            let gap = if x1 - x0 >= OUTLINE_PX && y1 - y0 >= OUTLINE_PX { 1 } else { 0 };
            let c = value.map_or(dense, |t| rgb(sequential_rgb(t)));
            let (px0, py0) = (x0.round() as i32, y0.round() as i32);
            let (px1, py1) = (x1.round() as i32 - gap, y1.round() as i32 - gap);
            area.draw(&Rectangle::new([(px0, py0), (px1, py1)], c.filled()))?;
        }
        area.draw(&Rectangle::new([(0, 0), (w as i32, h as i32)], BLACK.stroke_width(1)))?;

        // Colour bar (log scale) and the dense-block legend entry.
        let bar_h = (self.plot.1.max(300)).min(right.dim_in_pixel().1.saturating_sub(PART_TOP + 120));
        let bar_area = right.margin(PART_TOP + PART_MARGIN, 0, 0, 0).split_vertically(bar_h).0;
        // Logarithmic axis labelled at 1-2-5 steps.
        let mut bar = ChartBuilder::on(&bar_area)
            .margin_left(20)
            .margin_right(10)
            .set_label_area_size(LabelAreaPosition::Right, 80)
            .build_cartesian_2d(
                0f64..1f64,
                (self.lo..self.hi).log_scale().with_key_points(log_ticks(self.lo, self.hi)),
            )?;
        bar.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_label_formatter(&|v| tick(*v))
            .y_desc("stored / dense")
            .label_style(font(13))
            .axis_desc_style(font(15))
            .draw()?;
        const STEPS: usize = 64;
        let at = |i: usize| self.lo * (self.hi / self.lo).powf(i as f64 / STEPS as f64);
        bar.draw_series((0..STEPS).map(|i| {
            let c = rgb(sequential_rgb((i as f64 + 0.5) / STEPS as f64));
            Rectangle::new([(0.0, at(i)), (1.0, at(i + 1))], c.filled())
        }))?;
        let bar_px = bar.plotting_area().strip_coord_spec();
        let (bw, bh) = bar_px.dim_in_pixel();
        bar_px.draw(&Rectangle::new([(0, 0), (bw as i32, bh as i32)], BLACK.stroke_width(1)))?;

        let key = right.margin(PART_TOP + PART_MARGIN + bar_h + 30, 0, 20, 0);
        key.draw(&Rectangle::new([(0, 0), (18, 18)], dense.filled()))?;
        key.draw(&Rectangle::new([(0, 0), (18, 18)], BLACK.stroke_width(1)))?;
        key.draw_text("dense (near field)", &font(14).pos(Pos::new(HPos::Left, VPos::Center)), (26, 9))?;
        Ok(())
    }
}

// ---------------------------------------------------------------------------------------------
// Charge density
// ---------------------------------------------------------------------------------------------

/// Draws the surface charge density of every mesh cell on the layout, in plan view.
///
/// `cells` are in metres; `density[k]` is the surface charge density of cell `k` in C/m²
/// (signed). Axes are in layout units: coordinates divided by `unit_m` (metres per unit),
/// labelled `x (unit_name)` and `y (unit_name)`. Cells at different face heights `z` overlap
/// in plan view, so each distinct height gets its own panel, titled with the height in layout
/// units (`face z = 0.20 mm`); the panels are side by side or in a grid (stacked for wide
/// layouts), share the same x and y ranges, keep equal x and y scales unless the layout is
/// extremely elongated, and share one colour scale.
///
/// Colours: the diverging blue–white–red scale of [`diverging_rgb`], centred on zero and
/// symmetric, spanning ±L where L is the |σ| exceeded on only 1 % of the conductor area (the
/// density is singular at conductor edges, and the thin edge cells would otherwise wash out
/// the rest); denser cells take the end colours and a note under the colour bar gives the
/// largest |σ|.
/// The colour bar is labelled in C/m² with a power-of-ten factor. The panel background is
/// light grey, so cells near zero stay visible. Cells smaller than 2 pixels are merged into
/// 2-pixel tiles coloured by the density of largest magnitude among them.
///
/// # Errors
/// No cells, `density.len() != cells.len()`, a non-finite density or coordinate, a
/// `unit_m` that is not finite and positive, or a failure of the backends.
pub fn charge_density(
    cells: &[Cell],
    density: &[f64],
    unit_m: f64,
    unit_name: &str,
    title: &str,
) -> Result<Rendered> {
    let fig = CellMap::new(CellScale::Charge, cells, density, unit_m, unit_name, title)?;
    render(&fig, "charge density figure")
}

// ---------------------------------------------------------------------------------------------
// Current density
// ---------------------------------------------------------------------------------------------

/// Draws the magnitude of the surface current density of every mesh cell on the layout, in
/// plan view.
///
/// `cells` are in metres; `magnitude[k]` is `|J|` of cell `k` in A/m (non-negative, e.g. the
/// phasor norm `√(|Jx|² + |Jy|²)` at the cell's centroid from
/// `rafter_mom::current_map`). The layout is that of [`charge_density`]: axes in layout units
/// (coordinates divided by `unit_m`, labelled with `unit_name`), one panel per face height,
/// shared x and y ranges and one shared colour scale, sub-pixel cells merged into 2-pixel
/// tiles coloured by the largest `|J|` among them.
///
/// Colours: the viridis sequential scale of [`sequential_rgb`] from 0 (dark purple) to L
/// (yellow), where L is the `|J|` exceeded on only 1 % of the conductor area (the current
/// density is singular at conductor edges too); denser cells take the end colour and a note
/// under the colour bar gives the largest `|J|`. The colour bar is labelled `|J| (A/m)`, with
/// a power-of-ten factor where needed. A map of zeros is drawn on the scale 0 to 1 A/m.
///
/// # Errors
/// No cells, `magnitude.len() != cells.len()`, a negative or non-finite value, a non-finite
/// coordinate, a `unit_m` that is not finite and positive, or a failure of the backends.
pub fn current_density(
    cells: &[Cell],
    magnitude: &[f64],
    unit_m: f64,
    unit_name: &str,
    title: &str,
) -> Result<Rendered> {
    let fig = CellMap::new(CellScale::Current, cells, magnitude, unit_m, unit_name, title)?;
    render(&fig, "current density figure")
}

// ---------------------------------------------------------------------------------------------
// Per-cell maps (charge and current density)
// ---------------------------------------------------------------------------------------------

/// What a per-cell map shows, and so its colour scale.
#[derive(Clone, Copy, Debug, PartialEq)]
enum CellScale {
    /// Signed surface charge density (C/m²): diverging scale, symmetric about zero.
    Charge,
    /// Current density magnitude (A/m, non-negative): sequential scale from zero.
    Current,
}

impl CellScale {
    /// Name of the figure in messages.
    fn what(self) -> &'static str {
        match self {
            CellScale::Charge => "charge density",
            CellScale::Current => "current density",
        }
    }
    /// What one value is called in messages.
    fn value_name(self) -> &'static str {
        match self {
            CellScale::Charge => "density",
            CellScale::Current => "|J|",
        }
    }
    /// Symbol on the colour bar, and of the magnitude in the note.
    fn symbols(self) -> (&'static str, &'static str) {
        match self {
            CellScale::Charge => ("σ", "|σ|"),
            CellScale::Current => ("|J|", "|J|"),
        }
    }
    /// SI unit of the values.
    fn unit(self) -> &'static str {
        match self {
            CellScale::Charge => "C/m²",
            CellScale::Current => "A/m",
        }
    }
    /// Lower end of the scale as a fraction of its upper end.
    fn bottom(self) -> f64 {
        match self {
            CellScale::Charge => -1.0,
            CellScale::Current => 0.0,
        }
    }
    /// Colour of `t` = value / upper end.
    fn rgb(self, t: f64) -> [u8; 3] {
        match self {
            CellScale::Charge => diverging_rgb(t),
            CellScale::Current => sequential_rgb(t),
        }
    }
}

struct CellMap<'a> {
    scale: CellScale,
    cells: &'a [Cell],
    density: &'a [f64],
    unit_m: f64,
    unit_name: &'a str,
    title: &'a str,
    /// Face heights (m) with their panel labels and cell indices.
    faces: Vec<(String, Vec<usize>)>,
    /// Plot extent in layout units: x0, x1, y0, y1.
    extent: [f64; 4],
    /// Upper end of the colour scale (the half-range for a diverging scale) and the largest
    /// magnitude.
    limit: f64,
    max_abs: f64,
    /// Panel grid (columns, rows) and plotting-area size of a panel (pixels).
    grid: (usize, usize),
    plot: (u32, u32),
}

const PANEL_LEFT: u32 = 70;
const PANEL_BOTTOM: u32 = 48;
const PANEL_CAPTION: u32 = 34;
const PANEL_MARGIN: u32 = 12;
const CHARGE_TITLE: u32 = 44;
const CHARGE_LEGEND: u32 = 200;

impl<'a> CellMap<'a> {
    fn new(
        scale: CellScale,
        cells: &'a [Cell],
        density: &'a [f64],
        unit_m: f64,
        unit_name: &'a str,
        title: &'a str,
    ) -> Result<Self> {
        let (what, value) = (scale.what(), scale.value_name());
        ensure!(!cells.is_empty(), "{what}: no cells to draw (hint: pass the mesh's cells)");
        ensure!(
            density.len() == cells.len(),
            "{what}: {} {value} values for {} cells; there must be one value per cell, in cell order",
            density.len(),
            cells.len()
        );
        ensure!(
            unit_m.is_finite() && unit_m > 0.0,
            "{what}: layout unit of {unit_m} m; it must be finite and positive (e.g. 1e-3 for mm)"
        );
        let signed = scale.bottom() < 0.0;
        if let Some(k) = density.iter().position(|d| !d.is_finite() || (!signed && *d < 0.0)) {
            let rule = if signed { "finite" } else { "finite and non-negative" };
            bail!(
                "{what}: {value} of cell {k} is {} (of {} cells); all must be {rule}",
                density[k],
                cells.len()
            );
        }
        let [mut x0, mut x1, mut y0, mut y1] =
            [f64::INFINITY, f64::NEG_INFINITY, f64::INFINITY, f64::NEG_INFINITY];
        for (k, c) in cells.iter().enumerate() {
            let pts = corners(&c.shape);
            ensure!(
                c.z.is_finite() && pts.iter().flatten().all(|v| v.is_finite()),
                "{what}: cell {k} (of {}) has a non-finite coordinate",
                cells.len()
            );
            for [x, y] in pts {
                (x0, x1, y0, y1) = (x0.min(x), x1.max(x), y0.min(y), y1.max(y));
            }
        }
        let [x0, x1, y0, y1] = [x0 / unit_m, x1 / unit_m, y0 / unit_m, y1 / unit_m];
        let span = (x1 - x0).max(y1 - y0);
        let span = if span > 0.0 { span } else { 1.0 };
        let pad = 0.04 * span;
        let (mut x0, mut x1, mut y0, mut y1) = (x0 - pad, x1 + pad, y0 - pad, y1 + pad);
        // Degenerate extents (all cells on a line): widen to a square.
        if x1 - x0 < 0.05 * span {
            let c = 0.5 * (x0 + x1);
            (x0, x1) = (c - 0.5 * span, c + 0.5 * span);
        }
        if y1 - y0 < 0.05 * span {
            let c = 0.5 * (y0 + y1);
            (y0, y1) = (c - 0.5 * span, c + 0.5 * span);
        }

        let faces = group_faces(cells, unit_m, unit_name);

        let max_abs = density.iter().fold(0.0f64, |m, d| m.max(d.abs()));
        let limit = area_quantile(cells, density, 0.99);
        let limit = if limit > 0.0 {
            limit
        } else if max_abs > 0.0 {
            max_abs
        } else {
            1.0
        };

        // Panel grid and size.
        let n = faces.len();
        let aspect = (y1 - y0) / (x1 - x0);
        let cols = if aspect < 0.6 { 1 } else { (n as f64).sqrt().ceil() as usize };
        let rows = n.div_ceil(cols);
        let max_w = match cols {
            1 => 760.0,
            2 => 480.0,
            _ => 360.0,
        };
        let max_h = (720.0 / rows as f64).max(220.0);
        let s = (max_w / (x1 - x0)).min(max_h / (y1 - y0));
        let pw = ((x1 - x0) * s).max(120.0);
        let ph = ((y1 - y0) * s).max(80.0);
        Ok(Self {
            scale,
            cells,
            density,
            unit_m,
            unit_name,
            title,
            faces,
            extent: [x0, x1, y0, y1],
            limit,
            max_abs,
            grid: (cols, rows),
            plot: (pw.round() as u32, ph.round() as u32),
        })
    }

    fn panel_size(&self) -> (u32, u32) {
        (
            PANEL_LEFT + self.plot.0 + 2 * PANEL_MARGIN,
            PANEL_BOTTOM + PANEL_CAPTION + self.plot.1 + 2 * PANEL_MARGIN,
        )
    }

    fn draw_panel<DB: DrawingBackend>(
        &self,
        area: &DrawingArea<DB, Shift>,
        face: &(String, Vec<usize>),
    ) -> Result<()>
    where
        DB::ErrorType: 'static,
    {
        let [x0, x1, y0, y1] = self.extent;
        let mut chart = ChartBuilder::on(area)
            .margin(PANEL_MARGIN)
            .caption(&face.0, font(16))
            .set_label_area_size(LabelAreaPosition::Left, PANEL_LEFT)
            .set_label_area_size(LabelAreaPosition::Bottom, PANEL_BOTTOM)
            .build_cartesian_2d(x0..x1, y0..y1)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_labels(6)
            .y_labels(6)
            .x_label_formatter(&|v| tick(*v))
            .y_label_formatter(&|v| tick(*v))
            .x_desc(format!("x ({})", self.unit_name))
            .y_desc(format!("y ({})", self.unit_name))
            .label_style(font(13))
            .axis_desc_style(font(15))
            .draw()?;
        let pa = chart.plotting_area().strip_coord_spec();
        let (w, h) = pa.dim_in_pixel();
        pa.fill(&PANEL_BACKGROUND)?;
        let (sx, sy) = (f64::from(w) / (x1 - x0), f64::from(h) / (y1 - y0));
        let to_px = |[x, y]: [f64; 2]| [(x / self.unit_m - x0) * sx, (y1 - y / self.unit_m) * sy];
        let colour = |d: f64| rgb(self.scale.rgb(d / self.limit));
        let mut tiles = Tiles::new(w, h);
        let mut big: Vec<(PixelShape, RGBColor)> = Vec::new();
        for &k in &face.1 {
            let pts: Vec<[f64; 2]> = corners(&self.cells[k].shape).into_iter().map(to_px).collect();
            let (mut bx0, mut bx1, mut by0, mut by1) =
                (f64::INFINITY, f64::NEG_INFINITY, f64::INFINITY, f64::NEG_INFINITY);
            for p in &pts {
                (bx0, bx1, by0, by1) = (bx0.min(p[0]), bx1.max(p[0]), by0.min(p[1]), by1.max(p[1]));
            }
            if bx1 - bx0 < SMALL_PX || by1 - by0 < SMALL_PX {
                let area = self.cells[k].area().abs() / (self.unit_m * self.unit_m) * sx * sy;
                tiles.add([bx0, bx1, by0, by1], area, Some(self.density[k]));
            } else {
                let px: Vec<(i32, i32)> =
                    pts.iter().map(|p| (p[0].round() as i32, p[1].round() as i32)).collect();
                let shape = match self.cells[k].shape {
                    CellShape::Rect(_) => PixelShape::Rect([px[0], px[2]]),
                    CellShape::Triangle(_) => PixelShape::Polygon(px),
                };
                big.push((shape, colour(self.density[k])));
            }
        }
        // Every touched tile is drawn, so that conductors thinner than a pixel stay visible
        // (at the price of edges up to one tile wide of bloat). A tile shows the density of
        // largest magnitude among its cells, not their mean: a narrow peak (charge induced
        // where lines cross) then keeps its colour wherever it falls on the pixel grid, where
        // a mean would make equal peaks look unequal.
        for ([tx0, ty0, tx1, ty1], c) in tiles.runs(|_, a, _, ext| (a > 0.0).then(|| colour(ext))) {
            pa.draw(&Rectangle::new([(tx0, ty0), (tx1.min(w as i32), ty1.min(h as i32))], c.filled()))?;
        }
        for (shape, c) in big {
            match shape {
                PixelShape::Rect(corners) => pa.draw(&Rectangle::new(corners, c.filled()))?,
                PixelShape::Polygon(px) => pa.draw(&Polygon::new(px, c.filled()))?,
            }
        }
        pa.draw(&Rectangle::new([(0, 0), (w as i32, h as i32)], BLACK.stroke_width(1)))?;
        Ok(())
    }
}

/// A cell in pixels: two opposite corners of a rectangle, or a polygon's vertices.
enum PixelShape {
    Rect([(i32, i32); 2]),
    Polygon(Vec<(i32, i32)>),
}

/// The |σ| below which `q` of the total cell area lies (the largest |σ| when the areas are
/// degenerate).
fn area_quantile(cells: &[Cell], density: &[f64], q: f64) -> f64 {
    let mut pairs: Vec<(f64, f64)> =
        cells.iter().zip(density).map(|(c, d)| (d.abs(), c.area().abs())).collect();
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
    let total: f64 = pairs.iter().map(|p| p.1).sum();
    let max = pairs.last().map_or(0.0, |p| p.0);
    if !(total.is_finite() && total > 0.0) {
        return max;
    }
    let mut acc = 0.0;
    for (v, a) in &pairs {
        acc += a;
        if acc >= q * total {
            return *v;
        }
    }
    max
}

/// Corners of a cell's shape (m): a rectangle's lower-left, lower-right, upper-right and
/// upper-left, or the triangle's vertices.
fn corners(shape: &CellShape) -> Vec<[f64; 2]> {
    match shape {
        CellShape::Rect(r) => vec![[r.x0, r.y0], [r.x1, r.y0], [r.x1, r.y1], [r.x0, r.y1]],
        CellShape::Triangle(t) => t.to_vec(),
    }
}

/// The distinct face heights, lowest first, each with its panel title and its cells. Heights
/// closer than a millionth of the largest coordinate are one face.
fn group_faces(cells: &[Cell], unit_m: f64, unit_name: &str) -> Vec<(String, Vec<usize>)> {
    let scale = cells
        .iter()
        .flat_map(|c| corners(&c.shape).into_iter().flatten().chain([c.z]))
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let tol = 1e-6 * scale.max(f64::MIN_POSITIVE);
    let mut order: Vec<usize> = (0..cells.len()).collect();
    order.sort_by(|&a, &b| cells[a].z.total_cmp(&cells[b].z));
    let mut faces: Vec<(f64, Vec<usize>)> = Vec::new();
    for k in order {
        match faces.last_mut() {
            Some((z, members)) if cells[k].z - *z <= tol => members.push(k),
            _ => faces.push((cells[k].z, vec![k])),
        }
    }
    for (_, members) in &mut faces {
        members.sort_unstable();
    }
    // Fewest decimals (at least two) that tell the heights apart and round each by < 0.5 %.
    let heights: Vec<f64> = faces.iter().map(|(z, _)| z / unit_m).collect();
    let label = |d: usize, h: f64| format!("{h:.d$}");
    let decimals = (2..=8)
        .find(|&d| {
            let labels: Vec<String> = heights.iter().map(|&h| label(d, h)).collect();
            let distinct = labels.windows(2).all(|w| w[0] != w[1]);
            let close = heights
                .iter()
                .zip(&labels)
                .all(|(&h, l)| l.parse::<f64>().is_ok_and(|v| (v - h).abs() <= 0.005 * h.abs()));
            distinct && close
        })
        .unwrap_or(8);
    faces
        .into_iter()
        .zip(heights)
        .map(|((_, members), h)| (format!("face z = {} {unit_name}", label(decimals, h)), members))
        .collect()
}

impl Figure for CellMap<'_> {
    fn size(&self) -> (u32, u32) {
        let (pw, ph) = self.panel_size();
        let w = self.grid.0 as u32 * pw + CHARGE_LEGEND;
        let h = CHARGE_TITLE + (self.grid.1 as u32 * ph).max(380);
        (w, h)
    }

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<()>
    where
        DB::ErrorType: 'static,
    {
        root.fill(&WHITE)?;
        let (title_area, body) = root.split_vertically(CHARGE_TITLE);
        title_area.draw_text(
            self.title,
            &font(20).pos(Pos::new(HPos::Center, VPos::Center)),
            ((title_area.dim_in_pixel().0 / 2) as i32, (CHARGE_TITLE / 2) as i32),
        )?;
        let (pw, ph) = self.panel_size();
        let (panels, legend) = body.split_horizontally(self.grid.0 as u32 * pw);
        for (i, face) in self.faces.iter().enumerate() {
            let (c, r) = ((i % self.grid.0) as u32, (i / self.grid.0) as u32);
            let area = panels.margin(r * ph, 0, c * pw, 0);
            let area = area.split_vertically(ph).0.split_horizontally(pw).0;
            self.draw_panel(&area, face)?;
        }

        // Colour bar: values in units of 10^e (C/m² or A/m).
        let (symbol, abs_symbol) = self.scale.symbols();
        let si = self.scale.unit();
        let e = self.limit.log10().floor() as i32;
        let unit = 10f64.powi(e);
        let l = self.limit / unit;
        let (lo, t0) = (self.scale.bottom() * l, self.scale.bottom());
        let bar_h =
            (body.dim_in_pixel().1.saturating_sub(PANEL_MARGIN + PANEL_CAPTION + 110)).clamp(200, 600);
        let bar_area = legend.margin(PANEL_MARGIN + PANEL_CAPTION, 0, 0, 0).split_vertically(bar_h).0;
        let mut bar = ChartBuilder::on(&bar_area)
            .margin_left(20)
            .margin_right(10)
            .set_label_area_size(LabelAreaPosition::Right, 80)
            .build_cartesian_2d(0f64..1f64, lo..l)?;
        let desc =
            if e == 0 { format!("{symbol} ({si})") } else { format!("{symbol} ({} {si})", power_of_ten(e)) };
        bar.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_labels(9)
            .y_label_formatter(&|v| tick(*v))
            .y_desc(desc)
            .label_style(font(13))
            .axis_desc_style(font(15))
            .draw()?;
        const STEPS: usize = 64;
        let at = |i: usize| lo + (l - lo) * i as f64 / STEPS as f64;
        bar.draw_series((0..STEPS).map(|i| {
            let c = rgb(self.scale.rgb((1.0 - t0) * (i as f64 + 0.5) / STEPS as f64 + t0));
            Rectangle::new([(0.0, at(i)), (1.0, at(i + 1))], c.filled())
        }))?;
        let bar_px = bar.plotting_area().strip_coord_spec();
        let (bw, bh) = bar_px.dim_in_pixel();
        bar_px.draw(&Rectangle::new([(0, 0), (bw as i32, bh as i32)], BLACK.stroke_width(1)))?;
        if self.max_abs > self.limit * (1.0 + 1e-9) {
            let note = legend.margin(PANEL_MARGIN + PANEL_CAPTION + bar_h + 16, 0, 12, 0);
            let style = font(12).pos(Pos::new(HPos::Left, VPos::Top));
            let ends = if t0 < 0.0 { "end colours" } else { "end colour" };
            note.draw_text(&format!("{ends}: {abs_symbol} ≥ {} {si}", tick(self.limit)), &style, (0, 0))?;
            note.draw_text("(on 1 % of the conductor area)", &style, (0, 16))?;
            note.draw_text(&format!("max {abs_symbol} = {} {si}", tick(self.max_abs)), &style, (0, 32))?;
        }
        Ok(())
    }
}

// ---------------------------------------------------------------------------------------------
// Convergence
// ---------------------------------------------------------------------------------------------

/// Most nets named in the convergence legend; the rest are summed up in one entry.
const LEGEND_MAX: usize = 10;

/// Line colours for up to six histories (a colour-blind-safe qualitative set).
const LINE_COLOURS: [[u8; 3]; 6] =
    [[0, 114, 178], [213, 94, 0], [0, 158, 115], [204, 121, 167], [86, 180, 233], [230, 159, 0]];

/// Draws GMRES convergence: relative residual ‖b − A x‖ / ‖b‖ (dimensionless) against
/// iteration, on a logarithmic y axis.
///
/// Each entry of `histories` is one right-hand side: its name (the net's) and its residual
/// after each iteration, entry 0 being the initial residual. Each is one line; up to six take
/// distinct colours of a colour-blind-safe qualitative set, more are coloured along the
/// viridis scale in order. The legend names at most ten nets and sums up the rest in an
/// entry "… and N more". The `tolerance` is a dashed black line. Zero residuals (exact
/// convergence) cannot be shown on a log axis: the line breaks there.
///
/// # Errors
/// No histories, an empty history, a negative or non-finite residual, a tolerance that is
/// not finite and positive, or a failure of the backends.
pub fn convergence(histories: &[(String, Vec<f64>)], tolerance: f64, title: &str) -> Result<Rendered> {
    let fig = Convergence::new(histories, tolerance, title)?;
    render(&fig, "convergence figure")
}

struct Convergence<'a> {
    histories: &'a [(String, Vec<f64>)],
    tolerance: f64,
    title: &'a str,
    /// Log axis range.
    lo: f64,
    hi: f64,
    /// Last iteration shown.
    last: usize,
}

impl<'a> Convergence<'a> {
    fn new(histories: &'a [(String, Vec<f64>)], tolerance: f64, title: &'a str) -> Result<Self> {
        ensure!(
            !histories.is_empty(),
            "convergence: no residual histories to draw (hint: one per right-hand side)"
        );
        ensure!(
            tolerance.is_finite() && tolerance > 0.0,
            "convergence: tolerance {tolerance}; it must be finite and positive"
        );
        let (mut lo, mut hi) = (tolerance, tolerance);
        for (name, h) in histories {
            ensure!(
                !h.is_empty(),
                "convergence: the history of {name:?} is empty (of {} histories); entry 0 is the initial residual",
                histories.len()
            );
            if let Some(k) = h.iter().position(|r| !r.is_finite() || *r < 0.0) {
                bail!(
                    "convergence: residual {} of {name:?} at iteration {k} (of {}); residuals must be finite and \
                     non-negative",
                    h[k],
                    h.len()
                );
            }
            for &r in h.iter().filter(|&&r| r > 0.0) {
                (lo, hi) = (lo.min(r), hi.max(r));
            }
        }
        let lo = 10f64.powf((lo.log10() - 0.3).floor());
        let hi = 10f64.powf((hi.max(1.0).log10() + 0.15).ceil());
        let last = histories.iter().map(|(_, h)| h.len() - 1).max().unwrap_or(0).max(1);
        Ok(Self { histories, tolerance, title, lo, hi, last })
    }

    fn colour(&self, i: usize) -> RGBColor {
        let n = self.histories.len();
        if n <= LINE_COLOURS.len() {
            rgb(LINE_COLOURS[i])
        } else {
            rgb(sequential_rgb(0.85 * i as f64 / (n - 1) as f64))
        }
    }
}

impl Figure for Convergence<'_> {
    fn size(&self) -> (u32, u32) {
        (900, 600)
    }

    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<()>
    where
        DB::ErrorType: 'static,
    {
        root.fill(&WHITE)?;
        let mut chart = ChartBuilder::on(root)
            .margin(18)
            .caption(self.title, font(20))
            .set_label_area_size(LabelAreaPosition::Left, 80)
            .set_label_area_size(LabelAreaPosition::Bottom, 50)
            .build_cartesian_2d(0usize..self.last, (self.lo..self.hi).log_scale())?;
        chart
            .configure_mesh()
            .light_line_style(RGBColor(235, 235, 235))
            .bold_line_style(RGBColor(210, 210, 210))
            .x_desc("iteration")
            .y_desc("relative residual ‖b − Ax‖ / ‖b‖")
            .y_label_formatter(&|v| format!("{v:.0e}"))
            .label_style(font(13))
            .axis_desc_style(font(15))
            .draw()?;

        let named = if self.histories.len() <= LEGEND_MAX { self.histories.len() } else { LEGEND_MAX - 1 };
        for (i, (name, h)) in self.histories.iter().enumerate() {
            let style = self.colour(i).stroke_width(2);
            let mut labelled = false;
            // Runs of positive residuals (a zero cannot be placed on the log axis).
            let mut k = 0;
            while k < h.len() {
                if h[k] <= 0.0 {
                    k += 1;
                    continue;
                }
                let start = k;
                while k < h.len() && h[k] > 0.0 {
                    k += 1;
                }
                let pts: Vec<(usize, f64)> = (start..k).map(|j| (j, h[j])).collect();
                let single = pts.len() == 1;
                let series =
                    chart.draw_series(LineSeries::new(pts, style).point_size(if single { 3 } else { 0 }))?;
                if i < named && !labelled {
                    series
                        .label(name.as_str())
                        .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], style));
                    labelled = true;
                }
            }
        }
        if named < self.histories.len() {
            chart
                .draw_series(std::iter::empty::<PathElement<(usize, f64)>>())?
                .label(format!("… and {} more", self.histories.len() - named))
                .legend(|(x, y)| EmptyElement::at((x, y)));
        }
        let tol_style = BLACK.stroke_width(1);
        chart
            .draw_series(DashedLineSeries::new(
                [(0, self.tolerance), (self.last, self.tolerance)],
                8,
                5,
                tol_style,
            ))?
            .label(format!("tolerance {:e}", self.tolerance))
            .legend(move |(x, y)| {
                plotters::element::DashedPathElement::new(vec![(x, y), (x + 20, y)], 6, 3, tol_style)
            });
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperRight)
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(160, 160, 160))
            .label_font(font(13))
            .draw()?;
        Ok(())
    }
}
