//! `rafter blocks`: how much each block of a layout's H-matrix was compressed, as a table
//! (CSV, JSON) and a picture of the block partition.
//!
//! The H-matrix is the one `rafter extract` builds (pulse-basis collocation, the stack-up's
//! Green's function, tolerance `solve.tolerance`). Per block: its row and column ranges in the
//! cluster tree's order, size, storage (low-rank `U Vᵀ` or dense), rank, bytes stored and dense,
//! their ratio, ACA steps, and the cluster diameters and distance that made the pair
//! admissible (`min(diam) ≤ η dist`). Totals: memory, compression, near-field share, a rank
//! histogram.

use crate::extract::{green_for, panels};
use crate::output::Staging;
use rafter_hmatrix::{BlockStats, HMatrix};
use rafter_layout::Layout;
use rafter_mom::{CapacitanceOptions, PanelCollocation};
use serde::Serialize;
use std::collections::BTreeMap;
use std::time::Instant;

/// How many low-rank blocks have a given rank.
#[derive(Clone, Debug, Serialize)]
pub struct RankCount {
    /// Rank.
    pub rank: usize,
    /// Low-rank blocks of that rank.
    pub blocks: usize,
}

/// Totals over the blocks.
#[derive(Clone, Debug, Serialize)]
pub struct Totals {
    /// Bytes stored.
    pub memory_bytes: u64,
    /// Bytes of the dense matrix (8 per entry).
    pub dense_bytes: u64,
    /// `memory_bytes / dense_bytes`.
    pub compression: f64,
    /// Share of `memory_bytes` held in dense blocks (the near field).
    pub near_field_share: f64,
    /// Leaf blocks.
    pub blocks: usize,
    /// Blocks stored low-rank.
    pub low_rank_blocks: usize,
    /// Blocks stored dense.
    pub dense_blocks: usize,
    /// Admissible blocks stored dense because the factors would not be smaller.
    pub admissible_stored_dense: usize,
    /// Largest rank.
    pub max_rank: usize,
    /// Mean rank of the low-rank blocks.
    pub mean_rank: f64,
    /// Low-rank blocks per rank, increasing rank.
    pub rank_histogram: Vec<RankCount>,
    /// H-matrix build time (s).
    pub build_s: f64,
}

/// The report of `rafter blocks` (written as `blocks.json`).
#[derive(Clone, Debug, Serialize)]
pub struct BlocksReport {
    /// Layout name.
    pub layout: String,
    /// Layout file.
    pub file: String,
    /// Unknowns.
    pub unknowns: usize,
    /// Relative per-block Frobenius tolerance ε.
    pub tolerance: f64,
    /// Admissibility parameter η.
    pub eta: f64,
    /// Totals.
    pub totals: Totals,
    /// Every leaf block.
    pub blocks: Vec<BlockStats>,
}

/// Builds the layout's H-matrix and collects the report.
pub fn blocks(layout: &Layout) -> anyhow::Result<BlocksReport> {
    let mesh = rafter_layout::mesh(layout)?;
    let (p, _) = panels(&mesh);
    let green = green_for(layout)?;
    let src = PanelCollocation::new(&p, green.as_ref());
    let opts = CapacitanceOptions::for_tolerance(layout.solve.tolerance);
    let t = Instant::now();
    let h = HMatrix::build_square(&src, src.centres(), &opts.hmatrix, None)?;
    let build_s = t.elapsed().as_secs_f64();
    let s = h.summary();
    let stats = h.block_stats();
    let mut hist: BTreeMap<usize, usize> = BTreeMap::new();
    for r in stats.iter().filter_map(|b| b.rank) {
        *hist.entry(r).or_default() += 1;
    }
    Ok(BlocksReport {
        layout: layout.name.clone(),
        file: layout.file.clone(),
        unknowns: p.len(),
        tolerance: s.tolerance,
        eta: s.eta,
        totals: Totals {
            memory_bytes: s.memory_bytes,
            dense_bytes: s.dense_bytes,
            compression: s.compression,
            near_field_share: s.near_field_share,
            blocks: s.blocks,
            low_rank_blocks: s.low_rank_blocks,
            dense_blocks: s.dense_blocks,
            admissible_stored_dense: s.admissible_stored_dense,
            max_rank: s.max_rank,
            mean_rank: s.mean_rank,
            rank_histogram: hist.into_iter().map(|(rank, blocks)| RankCount { rank, blocks }).collect(),
            build_s,
        },
        blocks: stats,
    })
}

/// The per-block table as CSV (one header line, one line per block; lengths in metres).
pub fn csv(r: &BlocksReport) -> String {
    let mut s = String::from(
        "id,row_start,row_end,col_start,col_end,rows,cols,kind,rank,bytes,dense_bytes,ratio,aca_steps,\
         admissible,row_diameter_m,col_diameter_m,distance_m\n",
    );
    for b in &r.blocks {
        s += &format!(
            "{},{},{},{},{},{},{},{},{},{},{},{:.6e},{},{},{:.6e},{:.6e},{:.6e}\n",
            b.id,
            b.row_start,
            b.row_end,
            b.col_start,
            b.col_end,
            b.rows,
            b.cols,
            b.kind,
            b.rank.map_or(String::new(), |k| k.to_string()),
            b.bytes,
            b.dense_bytes,
            b.ratio,
            b.aca_steps,
            b.admissible,
            b.row_diameter,
            b.col_diameter,
            b.distance
        );
    }
    s
}

/// The picture's title: layout, N, tolerance and total compression.
pub fn title(r: &BlocksReport) -> String {
    format!(
        "{}: N = {}, ε = {:e}, stored {:.2} % of dense ({} blocks)",
        r.layout,
        r.unknowns,
        r.tolerance,
        100.0 * r.totals.compression,
        r.totals.blocks
    )
}

/// Writes `blocks.csv`, `blocks.json`, `blocks.svg` and `blocks.png` through `st` (all or
/// nothing).
pub fn write(mut st: Staging, r: &BlocksReport) -> anyhow::Result<()> {
    let pic = crate::pictures::block_partition(&r.blocks, r.unknowns, r.unknowns, &title(r))?;
    st.add("blocks.csv", csv(r).as_bytes())?;
    st.add("blocks.json", serde_json::to_string_pretty(r)?.as_bytes())?;
    st.add("blocks.svg", pic.svg.as_bytes())?;
    st.add("blocks.png", &pic.png)?;
    st.commit()
}

/// Totals as text for the terminal.
pub fn summary_text(r: &BlocksReport) -> String {
    let t = &r.totals;
    let hist: Vec<String> = t.rank_histogram.iter().map(|c| format!("{}:{}", c.rank, c.blocks)).collect();
    format!(
        "{}: {} unknowns, ε = {:e}, η = {}\n  {} blocks ({} low-rank, {} dense), {:.1} MB = {:.2} % of dense, \
         near field {:.1} % of the memory, max rank {}, mean rank {:.1}\n  ranks (rank:blocks) {}\n",
        r.layout,
        r.unknowns,
        r.tolerance,
        r.eta,
        t.blocks,
        t.low_rank_blocks,
        t.dense_blocks,
        t.memory_bytes as f64 / 1e6,
        100.0 * t.compression,
        100.0 * t.near_field_share,
        t.max_rank,
        t.mean_rank,
        hist.join(" ")
    )
}
