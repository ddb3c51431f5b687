//! Figures: each rendered from a small synthetic case, checked in both outputs (SVG element
//! counts and colours, PNG size and pixels), and bad input refused with an error.

use rafter::cluster::{Admissibility, BlockKind, BlockTree, ClusterTree};
use rafter::hmatrix::BlockStats;
use rafter::layout::{Cell, CellShape, Rect};
use rafter::pictures::{
    DENSE_BLOCK_RGB, Rendered, block_partition, charge_density, convergence, current_density, diverging_rgb,
    sequential_rgb,
};

// ---------------------------------------------------------------------------------------------
// Helpers: a little SVG and PNG reading
// ---------------------------------------------------------------------------------------------

/// Checks that the SVG is one `<svg>` element with properly nested tags.
fn assert_well_formed(svg: &str) {
    assert!(svg.trim_start().starts_with("<svg"), "SVG does not start with <svg");
    let mut stack: Vec<String> = Vec::new();
    let mut rest = svg;
    while let Some(open) = rest.find('<') {
        let close = rest[open..].find('>').expect("unterminated tag") + open;
        let tag = &rest[open + 1..close];
        if let Some(name) = tag.strip_prefix('/') {
            assert_eq!(stack.pop().as_deref(), Some(name.trim()), "mismatched closing tag </{name}>");
        } else if !tag.ends_with('/') && !tag.starts_with('?') && !tag.starts_with('!') {
            stack.push(tag.split_whitespace().next().unwrap_or("").to_string());
        }
        rest = &rest[close + 1..];
    }
    assert!(stack.is_empty(), "unclosed tags: {stack:?}");
}

fn attr<'a>(tag: &'a str, name: &str) -> Option<&'a str> {
    let key = format!(" {name}=\"");
    let start = tag.find(&key)? + key.len();
    let end = tag[start..].find('"')? + start;
    Some(&tag[start..end])
}

/// Every `<NAME .../>` element's text.
fn elements<'a>(svg: &'a str, name: &str) -> Vec<&'a str> {
    let open = format!("<{name} ");
    svg.match_indices(&open).map(|(i, _)| &svg[i..i + svg[i..].find('>').unwrap()]).collect()
}

/// Filled rectangles: (x, y, width, height, fill).
fn filled_rects(svg: &str) -> Vec<(i32, i32, i32, i32, String)> {
    elements(svg, "rect")
        .into_iter()
        .filter(|t| attr(t, "fill") != Some("none"))
        .map(|t| {
            let n = |a| attr(t, a).unwrap().parse::<i32>().unwrap();
            (n("x"), n("y"), n("width"), n("height"), attr(t, "fill").unwrap().to_string())
        })
        .collect()
}

fn hex(c: [u8; 3]) -> String {
    format!("#{:02X}{:02X}{:02X}", c[0], c[1], c[2])
}

fn svg_size(svg: &str) -> (u32, u32) {
    let tag = elements(svg, "svg")[0];
    (attr(tag, "width").unwrap().parse().unwrap(), attr(tag, "height").unwrap().parse().unwrap())
}

struct Image {
    w: u32,
    h: u32,
    rgb: Vec<u8>,
}

impl Image {
    fn at(&self, x: i32, y: i32) -> [u8; 3] {
        let i = (y as usize * self.w as usize + x as usize) * 3;
        [self.rgb[i], self.rgb[i + 1], self.rgb[i + 2]]
    }
}

/// Decodes the PNG (checking its signature first) into 8-bit RGB.
fn decode(png_bytes: &[u8]) -> Image {
    assert!(png_bytes.starts_with(&[0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A]), "no PNG signature");
    let mut reader = png::Decoder::new(std::io::Cursor::new(png_bytes)).read_info().expect("PNG header");
    let mut rgb = vec![0; reader.output_buffer_size().expect("PNG buffer size")];
    let info = reader.next_frame(&mut rgb).expect("PNG data");
    assert_eq!((info.color_type, info.bit_depth), (png::ColorType::Rgb, png::BitDepth::Eight));
    rgb.truncate(info.buffer_size());
    Image { w: info.width, h: info.height, rgb }
}

/// Both outputs well formed and of the same size; the decoded PNG.
fn check_outputs(r: &Rendered) -> Image {
    assert_well_formed(&r.svg);
    let img = decode(&r.png);
    assert_eq!((img.w, img.h), svg_size(&r.svg), "PNG and SVG sizes differ");
    img
}

/// Pixels in rows `y0..y1` that are clearly not white (text drawn there).
fn inked(img: &Image, y0: u32, y1: u32) -> usize {
    (y0..y1)
        .flat_map(|y| (0..img.w).map(move |x| (x, y)))
        .filter(|&(x, y)| img.at(x as i32, y as i32)[0] < 160)
        .count()
}

fn err_text<T>(r: anyhow::Result<T>) -> String {
    match r {
        Ok(_) => panic!("bad input was accepted"),
        Err(e) => format!("{e:#}"),
    }
}

// ---------------------------------------------------------------------------------------------
// Colour scales
// ---------------------------------------------------------------------------------------------

#[test]
fn colour_scales_are_ordered_and_the_dense_grey_is_off_the_scale() {
    let luminance =
        |c: [u8; 3]| 0.2126 * f64::from(c[0]) + 0.7152 * f64::from(c[1]) + 0.0722 * f64::from(c[2]);
    // Sequential: lightness rises monotonically from 0 to 1.
    let seq: Vec<f64> = (0..=20).map(|i| luminance(sequential_rgb(i as f64 / 20.0))).collect();
    assert!(seq.windows(2).all(|w| w[1] > w[0]), "sequential scale not monotone in lightness: {seq:?}");
    // Dense grey is far from every colour of the scale.
    let dist = |a: [u8; 3], b: [u8; 3]| {
        a.iter().zip(b).map(|(&x, y)| (f64::from(x) - f64::from(y)).powi(2)).sum::<f64>().sqrt()
    };
    let nearest =
        (0..=200).map(|i| dist(DENSE_BLOCK_RGB, sequential_rgb(i as f64 / 200.0))).fold(f64::MAX, f64::min);
    assert!(nearest > 40.0, "dense grey is within {nearest} of the sequential scale");
    // Diverging: near-white at 0, red for positive, blue for negative, darker away from 0.
    assert!(diverging_rgb(0.0).iter().all(|&c| c >= 240), "{:?}", diverging_rgb(0.0));
    let (pos, neg) = (diverging_rgb(1.0), diverging_rgb(-1.0));
    assert!(pos[0] > pos[2] + 50 && neg[2] > neg[0] + 50, "{pos:?} {neg:?}");
    for side in [1.0, -1.0] {
        let l: Vec<f64> = (0..=10).map(|i| luminance(diverging_rgb(side * i as f64 / 10.0))).collect();
        assert!(l.windows(2).all(|w| w[1] < w[0]), "diverging scale not darkening away from 0: {l:?}");
    }
    // Out-of-range and NaN inputs are clamped, not a panic.
    assert_eq!(sequential_rgb(7.0), sequential_rgb(1.0));
    assert_eq!(diverging_rgb(-3.0), diverging_rgb(-1.0));
    assert_eq!(diverging_rgb(f64::NAN), diverging_rgb(0.0));
}

// ---------------------------------------------------------------------------------------------
// Block partition
// ---------------------------------------------------------------------------------------------

fn block(id: usize, rows: (usize, usize), cols: (usize, usize), ratio: Option<f64>) -> BlockStats {
    let (m, n) = (rows.1 - rows.0, cols.1 - cols.0);
    let dense_bytes = 8 * m * n;
    let (kind, rank, bytes) = match ratio {
        Some(r) => ("low-rank", Some(2), (r * dense_bytes as f64) as usize),
        None => ("dense", None, dense_bytes),
    };
    BlockStats {
        id,
        row_start: rows.0,
        row_end: rows.1,
        col_start: cols.0,
        col_end: cols.1,
        rows: m,
        cols: n,
        kind,
        rank,
        bytes,
        dense_bytes,
        ratio: ratio.unwrap_or(1.0),
        aca_steps: 0,
        admissible: ratio.is_some(),
        row_diameter: 1.0,
        col_diameter: 1.0,
        distance: 1.0,
    }
}

/// A 64 × 64 matrix in 16 blocks of 16 × 16: dense on the diagonal, low-rank elsewhere with
/// ratios from 0.01 (top right) to 0.5 (bottom left).
fn small_partition() -> Vec<BlockStats> {
    let mut blocks = Vec::new();
    let mut off = 0;
    for i in 0..4 {
        for j in 0..4 {
            let ratio = if i == j {
                None
            } else if (i, j) == (0, 3) {
                Some(0.01)
            } else if (i, j) == (3, 0) {
                Some(0.5)
            } else {
                off += 1;
                Some(0.02 + 0.04 * off as f64)
            };
            blocks.push(block(blocks.len(), (16 * i, 16 * i + 16), (16 * j, 16 * j + 16), ratio));
        }
    }
    blocks
}

#[test]
fn block_partition_draws_every_block_in_place_with_its_colour() {
    let blocks = small_partition();
    let r = block_partition(&blocks, 64, 64, "Blocks, N = 64, tolerance 1e-4, stored/dense 0.23").unwrap();
    let img = check_outputs(&r);

    let rects = filled_rects(&r.svg);
    assert!(rects.len() >= blocks.len(), "{} filled rectangles for {} blocks", rects.len(), blocks.len());
    let big = |fill: &str| -> Vec<(i32, i32, i32, i32)> {
        rects.iter().filter(|q| q.4 == fill && q.2 > 50 && q.3 > 50).map(|q| (q.0, q.1, q.2, q.3)).collect()
    };
    // Four dense blocks in the distinct grey, along the diagonal from the top left.
    let dense = big(&hex(DENSE_BLOCK_RGB));
    assert_eq!(dense.len(), 4, "dense blocks: {dense:?}");
    assert!(
        dense.windows(2).all(|w| w[1].0 > w[0].0 && w[1].1 > w[0].1),
        "diagonal not descending: {dense:?}"
    );
    // The extreme ratios take the two ends of the scale: lowest in the top-right corner
    // (row 0 at the top), highest bottom left.
    let low = big(&hex(sequential_rgb(0.0)));
    let high = big(&hex(sequential_rgb(1.0)));
    assert_ne!(hex(sequential_rgb(0.0)), hex(sequential_rgb(1.0)));
    assert_eq!((low.len(), high.len()), (1, 1), "low {low:?} high {high:?}");
    let (low, high) = (low[0], high[0]);
    assert!(
        low.1 < dense[0].1 + 5 && low.0 > high.0 && high.1 > low.1,
        "low {low:?} high {high:?} dense {dense:?}"
    );
    // The other low-rank blocks are on the scale strictly inside its ends (white: the canvas).
    let scale_ends =
        [hex(sequential_rgb(0.0)), hex(sequential_rgb(1.0)), hex(DENSE_BLOCK_RGB), hex([255; 3])];
    let inner = rects.iter().filter(|q| q.2 > 50 && q.3 > 50 && !scale_ends.contains(&q.4)).count();
    assert_eq!(inner, 10);

    // The PNG has the same colours at the same places.
    let centre = |q: (i32, i32, i32, i32)| (q.0 + q.2 / 2, q.1 + q.3 / 2);
    for q in &dense {
        let (x, y) = centre(*q);
        assert_eq!(img.at(x, y), DENSE_BLOCK_RGB);
    }
    assert_eq!(img.at(centre(low).0, centre(low).1), sequential_rgb(0.0));
    assert_eq!(img.at(centre(high).0, centre(high).1), sequential_rgb(1.0));

    // Texts: title, colour bar, legend; and the bundled font really drew the title.
    for text in ["Blocks, N = 64, tolerance 1e-4", "stored / dense", "dense (near field)", "column", "row"] {
        assert!(r.svg.contains(text), "missing text {text:?}");
    }
    assert!(inked(&img, 0, 40) > 200, "no title text in the PNG");
}

#[test]
fn block_partition_of_a_large_matrix_stays_compact() {
    // 100 000 points on a plane, leaf size 32: the partition of a planar problem's matrix.
    let n = 100_000;
    let side = 317;
    let pts: Vec<[f64; 3]> = (0..n).map(|i| [(i % side) as f64, (i / side) as f64 * 1.3, 0.0]).collect();
    let tree = ClusterTree::new(&pts, 32).unwrap();
    let bt = BlockTree::new(&tree, &tree, &Admissibility::new(2.0).unwrap());
    let blocks: Vec<BlockStats> = bt
        .leaves()
        .iter()
        .enumerate()
        .map(|(id, &leaf)| {
            let b = &bt.blocks()[leaf];
            let (r, c) = (tree.node(b.row), tree.node(b.col));
            let far = b.kind == BlockKind::Far;
            let ratio =
                far.then(|| (20.0 * (r.len() + c.len()) as f64 / (r.len() * c.len()) as f64).min(0.9));
            block(id, (r.start, r.end), (c.start, c.end), ratio)
        })
        .collect();
    assert!(blocks.len() > 50_000, "only {} blocks", blocks.len());
    let start = std::time::Instant::now();
    let r = block_partition(&blocks, n, n, "N = 100 000").unwrap();
    let took = start.elapsed();
    check_outputs(&r);
    assert!(r.svg.len() < 2_000_000, "SVG of {} bytes for {} blocks", r.svg.len(), blocks.len());
    assert!(took.as_secs_f64() < 5.0, "rendering took {took:?}");
    // Near the diagonal the blocks are far below a pixel: they are merged into tiles, and the
    // dense grey still shows there (besides the one legend square).
    let grey = filled_rects(&r.svg).into_iter().filter(|q| q.4 == hex(DENSE_BLOCK_RGB)).count();
    assert!(grey > 50, "only {grey} grey rectangles");
}

#[test]
fn block_partition_refuses_bad_input() {
    let good = small_partition();
    assert!(err_text(block_partition(&[], 64, 64, "t")).contains("no blocks"));
    assert!(err_text(block_partition(&good, 0, 64, "t")).contains("0 × 64"));
    let e = err_text(block_partition(&good, 48, 64, "t"));
    assert!(e.contains("outside the 48 × 64 matrix"), "{e}");
    let mut bad = good.clone();
    bad[1].ratio = f64::NAN;
    let e = err_text(block_partition(&bad, 64, 64, "t"));
    assert!(e.contains("block 1") && e.contains("NaN"), "{e}");
    let mut bad = good.clone();
    bad[2].ratio = -0.5;
    assert!(err_text(block_partition(&bad, 64, 64, "t")).contains("-0.5"));
    let mut bad = good.clone();
    bad[3].kind = "sparse";
    assert!(err_text(block_partition(&bad, 64, 64, "t")).contains("\"sparse\""));
    let mut bad = good;
    bad[0].row_end = bad[0].row_start;
    assert!(err_text(block_partition(&bad, 64, 64, "t")).contains("empty or outside"));
}

// ---------------------------------------------------------------------------------------------
// Charge density
// ---------------------------------------------------------------------------------------------

fn rect_cell(net: usize, x0: f64, x1: f64, y0: f64, y1: f64, z: f64) -> Cell {
    Cell { net, shape: CellShape::Rect(Rect { x0, x1, y0, y1 }), z }
}

/// Two nets on the face z = 0 (rectangles), one on the face z = 0.2 mm (two triangles).
fn small_mesh() -> (Vec<Cell>, Vec<f64>) {
    let mm = 1e-3;
    let cells = vec![
        rect_cell(0, 0.0, 0.4 * mm, 0.0, 1.0 * mm, 0.0),
        rect_cell(1, 0.6 * mm, 1.0 * mm, 0.0, 1.0 * mm, 0.0),
        Cell { net: 2, shape: CellShape::Triangle([[0.0, 0.0], [mm, 0.0], [0.0, mm]]), z: 0.2 * mm },
        Cell { net: 2, shape: CellShape::Triangle([[mm, 0.0], [mm, mm], [0.0, mm]]), z: 0.2 * mm },
    ];
    (cells, vec![3e-6, -3e-6, -1e-6, 0.0])
}

#[test]
fn charge_density_draws_one_panel_per_face_on_a_diverging_scale() {
    let (cells, density) = small_mesh();
    let r = charge_density(&cells, &density, 1e-3, "mm", "Charge density, net 0 at 1 V").unwrap();
    let img = check_outputs(&r);

    let polygons = elements(&r.svg, "polygon");
    assert_eq!(polygons.len(), 2, "one polygon per triangle");
    let rects = filled_rects(&r.svg);
    assert!(rects.len() + polygons.len() >= cells.len());
    for text in ["face z = 0.00 mm", "face z = 0.20 mm", "x (mm)", "y (mm)", "σ (10⁻⁶ C/m²)", "net 0 at 1 V"]
    {
        assert!(r.svg.contains(text), "missing text {text:?}");
    }
    // The positive and negative cells take the two ends of the diverging scale.
    let (pos, neg) = (hex(diverging_rgb(1.0)), hex(diverging_rgb(-1.0)));
    assert_ne!(pos, neg);
    let find = |fill: &str| rects.iter().find(|q| q.4 == fill && q.2 > 40 && q.3 > 40).expect(fill).clone();
    let (p, q) = (find(&pos), find(&neg));
    assert!(p.0 < q.0, "positive cell (left in the layout) is drawn right of the negative one");
    assert_eq!(img.at(p.0 + p.2 / 2, p.1 + p.3 / 2), diverging_rgb(1.0));
    assert_eq!(img.at(q.0 + q.2 / 2, q.1 + q.3 / 2), diverging_rgb(-1.0));
    // The triangles: -1/3 of the scale and zero.
    let fills: Vec<&str> = polygons.iter().map(|t| attr(t, "fill").unwrap()).collect();
    assert!(fills.contains(&hex(diverging_rgb(-1.0 / 3.0)).as_str()), "{fills:?}");
    assert!(fills.contains(&hex(diverging_rgb(0.0)).as_str()), "{fills:?}");
    assert!(inked(&img, 0, 40) > 200, "no title text in the PNG");
}

#[test]
fn charge_density_saturates_the_scale_at_rare_edge_values() {
    // 100 equal cells of 1 µC/m² and one tiny cell of 1 mC/m²: the scale spans the bulk.
    let mm = 1e-3;
    let mut cells: Vec<Cell> = (0..100)
        .map(|i| rect_cell(0, i as f64 * 0.1 * mm, (i + 1) as f64 * 0.1 * mm, 0.0, mm, 0.0))
        .collect();
    cells.push(rect_cell(0, 0.0, 0.001 * mm, 0.0, 0.001 * mm, 0.0));
    let mut density = vec![1e-6; 100];
    density.push(1e-3);
    let r = charge_density(&cells, &density, mm, "mm", "edge").unwrap();
    assert!(r.svg.contains(&format!("fill=\"{}\"", hex(diverging_rgb(1.0)))));
    assert!(r.svg.contains("σ (10⁻⁶ C/m²)"), "colour bar not scaled to the bulk");
    assert!(r.svg.contains("max |σ| = 0.001 C/m²"));
}

#[test]
fn charge_density_merges_sub_pixel_cells_but_keeps_them_visible() {
    // A 1 mm square cut into 2000 strips of 0.5 µm (well under a pixel), positive on the left
    // half and negative on the right; and a separate hair-thin conductor.
    let mm = 1e-3;
    let mut cells: Vec<Cell> = (0..2000)
        .map(|i| rect_cell(0, i as f64 * 0.0005 * mm, (i + 1) as f64 * 0.0005 * mm, 0.0, mm, 0.0))
        .collect();
    let mut density: Vec<f64> = (0..2000).map(|i| if i < 1000 { 2e-6 } else { -2e-6 }).collect();
    cells.push(rect_cell(1, 0.0, mm, 1.2 * mm, 1.2001 * mm, 0.0));
    density.push(-2e-6);
    let r = charge_density(&cells, &density, mm, "mm", "strips").unwrap();
    check_outputs(&r);
    let rects = filled_rects(&r.svg);
    assert!(rects.len() < 1000, "{} rectangles for 2001 sub-pixel cells: not merged", rects.len());
    let ends = |c: [u8; 3]| rects.iter().filter(|q| q.4 == hex(c)).map(|q| q.2 * q.3).sum::<i32>();
    let (pos, neg) = (ends(diverging_rgb(1.0)), ends(diverging_rgb(-1.0)));
    // Left and right halves about equal in area (the tile on the boundary takes one side).
    assert!(pos > 10_000 && (pos - neg).abs() < pos / 20, "positive area {pos} px², negative {neg} px²");
    let thin = rects.iter().filter(|q| q.4 == hex(diverging_rgb(-1.0)) && q.2 > 300 && q.3 <= 2).count();
    assert!(thin > 0, "hair-thin conductor vanished");
}

#[test]
fn charge_density_refuses_bad_input() {
    let (cells, density) = small_mesh();
    assert!(err_text(charge_density(&[], &[], 1e-3, "mm", "t")).contains("no cells"));
    let e = err_text(charge_density(&cells, &density[..3], 1e-3, "mm", "t"));
    assert!(e.contains("3 density values for 4 cells"), "{e}");
    let mut bad = density.clone();
    bad[2] = f64::INFINITY;
    let e = err_text(charge_density(&cells, &bad, 1e-3, "mm", "t"));
    assert!(e.contains("cell 2") && e.contains("inf"), "{e}");
    let mut bad_cells = cells.clone();
    bad_cells[1].z = f64::NAN;
    assert!(err_text(charge_density(&bad_cells, &density, 1e-3, "mm", "t")).contains("cell 1"));
    assert!(err_text(charge_density(&cells, &density, 0.0, "mm", "t")).contains("layout unit"));
    assert!(err_text(charge_density(&cells, &density, f64::NAN, "mm", "t")).contains("layout unit"));
}

// ---------------------------------------------------------------------------------------------
// Convergence
// ---------------------------------------------------------------------------------------------

fn history(rate: f64, len: usize) -> Vec<f64> {
    (0..len).map(|i| rate.powi(i as i32)).collect()
}

#[test]
fn convergence_draws_one_line_per_right_hand_side_and_the_tolerance() {
    let hs = vec![
        ("GND".to_string(), history(0.3, 14)),
        ("clk".to_string(), history(0.2, 10)),
        ("data<0>".to_string(), vec![1.0, 0.1, 0.0]),
    ];
    let r = convergence(&hs, 1e-6, "GMRES, 3 right-hand sides").unwrap();
    let img = check_outputs(&r);
    assert_eq!((img.w, img.h), (900, 600));
    let lines = elements(&r.svg, "polyline");
    let strokes: std::collections::BTreeSet<&str> = lines
        .iter()
        .filter(|t| attr(t, "stroke-width") == Some("2"))
        .map(|t| attr(t, "stroke").unwrap())
        .collect();
    assert!(strokes.len() >= 3, "expected three line colours, got {strokes:?}");
    for text in ["GND", "clk", "data&lt;0&gt;", "tolerance 1e-6", "iteration", "relative residual"] {
        assert!(r.svg.contains(text), "missing text {text:?}");
    }
    // The tolerance line is dashed: many short black segments.
    let black = lines.iter().filter(|t| attr(t, "stroke") == Some("#000000")).count();
    assert!(black > 20, "only {black} black segments");
    assert!(inked(&img, 0, 40) > 200, "no title text in the PNG");
}

#[test]
fn convergence_legend_stays_short_with_many_nets() {
    let hs: Vec<(String, Vec<f64>)> =
        (0..32).map(|k| (format!("net{k}"), history(0.1 + 0.01 * k as f64, 9))).collect();
    let r = convergence(&hs, 1e-6, "32 nets").unwrap();
    check_outputs(&r);
    assert!(r.svg.contains("\nnet8\n") && !r.svg.contains("\nnet9\n"), "legend not cut after nine nets");
    assert!(r.svg.contains("… and 23 more"));
    let colours: std::collections::BTreeSet<&str> = elements(&r.svg, "polyline")
        .into_iter()
        .filter(|t| attr(t, "stroke-width") == Some("2"))
        .map(|t| attr(t, "stroke").unwrap())
        .collect();
    assert!(colours.len() >= 30, "only {} distinct line colours for 32 nets", colours.len());
}

#[test]
fn convergence_refuses_bad_input() {
    let ok = vec![("a".to_string(), history(0.5, 5))];
    assert!(err_text(convergence(&[], 1e-6, "t")).contains("no residual histories"));
    assert!(err_text(convergence(&[("b".into(), vec![])], 1e-6, "t")).contains("\"b\" is empty"));
    let e = err_text(convergence(&[("c".into(), vec![1.0, f64::NAN])], 1e-6, "t"));
    assert!(e.contains("NaN") && e.contains("iteration 1"), "{e}");
    assert!(err_text(convergence(&[("d".into(), vec![1.0, -0.1])], 1e-6, "t")).contains("-0.1"));
    assert!(err_text(convergence(&ok, 0.0, "t")).contains("tolerance 0"));
    assert!(err_text(convergence(&ok, f64::INFINITY, "t")).contains("tolerance inf"));
}

// ---------------------------------------------------------------------------------------------
// Current density
// ---------------------------------------------------------------------------------------------

/// Big filled rectangles (cells, not colour-bar steps or tiles) of one colour.
fn big_rects(svg: &str, c: [u8; 3]) -> Vec<(i32, i32, i32, i32, String)> {
    filled_rects(svg).into_iter().filter(|q| q.4 == hex(c) && q.2 > 40 && q.3 > 40).collect()
}

#[test]
fn current_density_draws_one_panel_per_face_on_a_sequential_scale_from_zero() {
    // |J| of 2, 0, 0.5 and 1 A/m: the 99th area-percentile is the largest value (2 A/m), so
    // the cells take the sequential colours of 1, 0, 1/4 and 1/2 and no saturation note shows.
    let (cells, _) = small_mesh();
    let magnitude = [2.0, 0.0, 0.5, 1.0];
    let r = current_density(&cells, &magnitude, 1e-3, "mm", "|J| at 1 GHz, port 1 driven").unwrap();
    let img = check_outputs(&r);
    for text in ["face z = 0.00 mm", "face z = 0.20 mm", "x (mm)", "y (mm)", "|J| (A/m)", "port 1 driven"] {
        assert!(r.svg.contains(text), "missing text {text:?}");
    }
    assert!(!r.svg.contains("max |J|"), "saturation note without saturation");
    let (top, zero) = (big_rects(&r.svg, sequential_rgb(1.0)), big_rects(&r.svg, sequential_rgb(0.0)));
    assert_eq!((top.len(), zero.len()), (1, 1), "top {top:?} zero {zero:?}");
    let (p, q) = (&top[0], &zero[0]);
    assert!(p.0 < q.0, "the 2 A/m cell (left in the layout) is drawn right of the 0 A/m one");
    assert_eq!(img.at(p.0 + p.2 / 2, p.1 + p.3 / 2), sequential_rgb(1.0));
    assert_eq!(img.at(q.0 + q.2 / 2, q.1 + q.3 / 2), sequential_rgb(0.0));
    let fills: Vec<&str> = elements(&r.svg, "polygon").iter().map(|t| attr(t, "fill").unwrap()).collect();
    assert_eq!(fills.len(), 2, "one polygon per triangle");
    assert!(fills.contains(&hex(sequential_rgb(0.25)).as_str()), "{fills:?}");
    assert!(fills.contains(&hex(sequential_rgb(0.5)).as_str()), "{fills:?}");
    // The colour bar runs along the sequential scale (its first and last steps), and nothing
    // is drawn in the diverging colours.
    let all = filled_rects(&r.svg);
    for t in [0.5 / 64.0, 63.5 / 64.0] {
        assert!(all.iter().any(|q| q.4 == hex(sequential_rgb(t))), "no colour-bar step at {t}");
    }
    assert!(!all.iter().any(|q| q.4 == hex(diverging_rgb(1.0)) || q.4 == hex(diverging_rgb(-1.0))));
    assert!(inked(&img, 0, 40) > 200, "no title text in the PNG");

    // A map of zeros is drawn (on 0 to 1 A/m), every cell in the bottom colour.
    let r = current_density(&cells, &[0.0; 4], 1e-3, "mm", "zero").unwrap();
    check_outputs(&r);
    assert_eq!(big_rects(&r.svg, sequential_rgb(0.0)).len(), 2);
}

#[test]
fn current_density_saturates_the_scale_at_rare_edge_values() {
    // 100 equal cells of 5 mA/m and one tiny cell of 2 A/m (the edge singularity): the scale
    // spans the bulk, the tiny cell takes the end colour and the note gives the maximum.
    let mm = 1e-3;
    let mut cells: Vec<Cell> = (0..100)
        .map(|i| rect_cell(0, i as f64 * 0.1 * mm, (i + 1) as f64 * 0.1 * mm, 0.0, mm, 0.0))
        .collect();
    cells.push(rect_cell(0, 0.0, 0.001 * mm, 0.0, 0.001 * mm, 0.0));
    let mut magnitude = vec![5e-3; 100];
    magnitude.push(2.0);
    let r = current_density(&cells, &magnitude, mm, "mm", "edge").unwrap();
    check_outputs(&r);
    assert!(r.svg.contains(&format!("fill=\"{}\"", hex(sequential_rgb(1.0)))));
    assert!(r.svg.contains("|J| (10⁻³ A/m)"), "colour bar not scaled to the bulk");
    assert!(r.svg.contains("end colour: |J| ≥ 0.005 A/m"));
    assert!(r.svg.contains("max |J| = 2 A/m"));
}

/// End to end with the current map of the MoM crate: a strip of 6 × 2 rectangles carrying
/// rooftop coefficients of 1 across its length and no feeds. The rooftops give |J| = 1 A/m
/// at the centroids of the inner columns and 1/2 A/m on the end columns, where the open
/// conductor end forces the normal current to zero and the rooftop falls linearly to it
/// (rooftop basis: Glisson & Wilton 1980, IEEE Trans. Antennas Propag. 28(5), from memory).
#[test]
fn current_density_of_rooftops_on_a_strip() {
    use num_complex::Complex64;
    use rafter::green::Panel;
    use rafter::mom::{current::current_basis, current_map, edges::edge_basis};
    let mm = 1e-3;
    let mut cells = Vec::new();
    let mut panels = Vec::new();
    for i in 0..6 {
        for j in 0..2 {
            let (x0, x1, y0, y1) =
                (i as f64 * mm, (i + 1) as f64 * mm, j as f64 * 0.5 * mm, (j + 1) as f64 * 0.5 * mm);
            cells.push(rect_cell(0, x0, x1, y0, y1, 0.0));
            panels.push(Panel::Rect { x0, x1, y0, y1, z: 0.0 });
        }
    }
    let net_of = vec![0; panels.len()];
    let edges = edge_basis(&panels, &net_of).unwrap();
    let basis = current_basis(&panels, &net_of, &edges, &[]).unwrap();
    // Coefficient ±1 on the edges across the length, oriented so that the current flows
    // toward +x (from the `+` panel to the `−` panel), 0 on the edges along it.
    let coef: Vec<Complex64> = edges
        .functions
        .iter()
        .map(|f| {
            let across = f.ends[0][0] == f.ends[1][0];
            let dx = panels[f.minus.panel].center()[0] - panels[f.plus.panel].center()[0];
            Complex64::new(if across { dx.signum() } else { 0.0 }, 0.0)
        })
        .collect();
    let j = current_map::panel_currents(&basis, &panels, &coef).unwrap();
    let magnitude: Vec<f64> = j.iter().map(current_map::magnitude).collect();
    for (k, m) in magnitude.iter().enumerate() {
        let end = k / 2 == 0 || k / 2 == 5;
        assert!((m - if end { 0.5 } else { 1.0 }).abs() < 1e-12, "cell {k}: |J| = {m}");
    }
    let r = current_density(&cells, &magnitude, mm, "mm", "rooftops").unwrap();
    let img = check_outputs(&r);
    let (inner, ends) = (big_rects(&r.svg, sequential_rgb(1.0)), big_rects(&r.svg, sequential_rgb(0.5)));
    assert_eq!((inner.len(), ends.len()), (8, 4), "inner {inner:?} ends {ends:?}");
    // The half-current cells are the two leftmost and the two rightmost.
    let (lo, hi) = (inner.iter().map(|p| p.0).min().unwrap(), inner.iter().map(|p| p.0).max().unwrap());
    assert_eq!(ends.iter().filter(|q| q.0 < lo).count(), 2, "{ends:?}");
    assert_eq!(ends.iter().filter(|q| q.0 > hi).count(), 2, "{ends:?}");
    for q in &ends {
        assert_eq!(img.at(q.0 + q.2 / 2, q.1 + q.3 / 2), sequential_rgb(0.5));
    }
}

#[test]
fn current_density_refuses_bad_input() {
    let (cells, _) = small_mesh();
    let good = [1.0, 0.0, 2.0, 0.5];
    assert!(err_text(current_density(&[], &[], 1e-3, "mm", "t")).contains("current density: no cells"));
    let e = err_text(current_density(&cells, &good[..3], 1e-3, "mm", "t"));
    assert!(e.contains("3 |J| values for 4 cells"), "{e}");
    let e = err_text(current_density(&cells, &[1.0, 2.0, 3.0, 4.0, 5.0], 1e-3, "mm", "t"));
    assert!(e.contains("5 |J| values for 4 cells"), "{e}");
    for (k, bad) in [(1, -0.5), (2, f64::NAN), (3, f64::INFINITY)] {
        let mut m = good;
        m[k] = bad;
        let e = err_text(current_density(&cells, &m, 1e-3, "mm", "t"));
        assert!(e.contains(&format!("cell {k} is {bad}")) && e.contains("non-negative"), "{e}");
    }
    let mut bad_cells = cells.clone();
    bad_cells[0].z = f64::INFINITY;
    assert!(err_text(current_density(&bad_cells, &good, 1e-3, "mm", "t")).contains("cell 0"));
    assert!(err_text(current_density(&cells, &good, -1.0, "mm", "t")).contains("layout unit"));
}
