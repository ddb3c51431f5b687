//! Pulse-basis collocation of the electrostatic integral equation on panels.

use rafter_green::{Panel, StaticGreen};
use rafter_linalg::EntrySource;

/// The matrix `P` of `P q = v`: `P_ij` is the potential (V) at the centre of panel `i` due to
/// 1 C spread uniformly over panel `j` ([`StaticGreen::panel_potential`]), so `q` holds panel
/// charges (C) and `v` panel potentials (V).
///
/// Collocation rather than Galerkin: one Green's-function panel integral per entry instead of
/// two nested ones. The matrix is then not exactly symmetric; the asymmetry of the resulting
/// capacitance matrix is reported as a quality figure.
pub struct PanelCollocation<'a> {
    panels: &'a [Panel],
    centres: Vec<[f64; 3]>,
    green: &'a dyn StaticGreen,
}

impl<'a> PanelCollocation<'a> {
    /// The collocation matrix of `panels` in the medium `green`.
    pub fn new(panels: &'a [Panel], green: &'a dyn StaticGreen) -> Self {
        Self { panels, centres: panels.iter().map(Panel::center).collect(), green }
    }
    /// Collocation points (panel centres): the cluster-tree input.
    pub fn centres(&self) -> &[[f64; 3]] {
        &self.centres
    }
}

impl EntrySource<f64> for PanelCollocation<'_> {
    fn nrows(&self) -> usize {
        self.panels.len()
    }
    fn ncols(&self) -> usize {
        self.panels.len()
    }
    fn entry(&self, i: usize, j: usize) -> f64 {
        self.green.panel_potential(self.centres[i], &self.panels[j])
    }
    fn fill_block(&self, rows: &[usize], cols: &[usize], out: &mut [f64]) {
        let m = rows.len();
        for (b, &j) in cols.iter().enumerate() {
            let panel = &self.panels[j];
            for (a, &i) in rows.iter().enumerate() {
                out[a + b * m] = self.green.panel_potential(self.centres[i], panel);
            }
        }
    }
}
