//! Quasi-Helmholtz projectors of a current basis: the split into a divergence-free part (loops)
//! and its complement (stars) that keeps the full-wave solve accurate down to low frequency.
//!
//! With the divergence matrix `D` (functions × panels, `D_np = ∫_p ∇·f_n = ±l_n`), the star
//! projector is the orthogonal projector on the range of `D`,
//!
//! `P_Σ = D (DᵀD)⁺ Dᵀ`,  `P_Λ = I − P_Σ` (onto `ker Dᵀ`, the currents that carry no charge),
//!
//! (F. P. Andriulli, K. Cools, I. Bogaert and E. Michielssen, "On a well-conditioned electric
//! field integral operator for multiply connected geometries", IEEE Trans. Antennas Propag.
//! 61(4), 2013). `DᵀD` is a weighted graph Laplacian of the panels (neighbours joined by an
//! edge of weight `l²`); it is factorised once, sparse (faer's supernodal Cholesky), and reused
//! at every frequency. Panels joined to a ground by a port feed make their component definite;
//! a component without one (a floating conductor, or two nets joined only by a gap bridge) has
//! the constants as null space, removed by pinning one panel — `Dᵀx` always sums to zero over
//! such a component, so the pinned system is consistent and `D y` is unchanged.
//! Unlike loop–tree bases, nothing needs finding: holes, ground loops through two ports and
//! differential feeds are all in `ker Dᵀ` by construction.

use crate::MomError;
use crate::current::CurrentBasis;
use faer::prelude::*;
use faer::sparse::{SparseColMat, Triplet};
use num_complex::Complex64;
use std::collections::HashMap;

type C = Complex64;

/// `D`, `Dᵀ` and `(DᵀD)⁺` of a basis (see the module docs).
pub struct StarProjector {
    /// Per function: up to two `(panel, D_np)` entries.
    rows: Vec<[(usize, f64); 2]>,
    /// Entries used per function (1 or 2).
    count: Vec<u8>,
    panels: usize,
    /// Panel → index in the factorised (pinned) system; `None` when pinned.
    reduced: Vec<Option<usize>>,
    /// Order of the factorised system.
    order: usize,
    llt: Option<faer::sparse::linalg::solvers::Llt<usize, f64>>,
}

fn find(parent: &mut [usize], mut i: usize) -> usize {
    while parent[i] != i {
        parent[i] = parent[parent[i]];
        i = parent[i];
    }
    i
}

impl StarProjector {
    /// Builds `D` and factorises `DᵀD` for `basis` on `panels` panels.
    pub fn new(basis: &CurrentBasis, panels: usize) -> Result<Self, MomError> {
        let nf = basis.functions.len();
        let mut rows = vec![[(0usize, 0.0f64); 2]; nf];
        let mut count = vec![0u8; nf];
        let mut parent: Vec<usize> = (0..panels).collect();
        let mut grounded = vec![false; panels];
        for (n, f) in basis.functions.iter().enumerate() {
            for h in f.iter() {
                rows[n][count[n] as usize] = (h.panel, f.charge(h));
                count[n] += 1;
            }
            if count[n] == 2 {
                let (a, b) = (find(&mut parent, rows[n][0].0), find(&mut parent, rows[n][1].0));
                parent[a] = b;
            }
        }
        for n in 0..nf {
            if count[n] == 1 {
                let r = find(&mut parent, rows[n][0].0);
                grounded[r] = true;
            }
        }
        // Pin the first panel of every floating component.
        let mut pinned_root = vec![false; panels];
        let mut reduced = vec![None; panels];
        let mut next = 0;
        for (p, slot) in reduced.iter_mut().enumerate() {
            let r = find(&mut parent, p);
            if !grounded[r] && !pinned_root[r] {
                pinned_root[r] = true;
                continue;
            }
            *slot = Some(next);
            next += 1;
        }
        let mut acc: HashMap<(usize, usize), f64> = HashMap::new();
        for n in 0..nf {
            let c = count[n] as usize;
            for a in 0..c {
                for b in 0..c {
                    let (pa, va) = rows[n][a];
                    let (pb, vb) = rows[n][b];
                    if let (Some(ia), Some(ib)) = (reduced[pa], reduced[pb])
                        && ia >= ib
                    {
                        *acc.entry((ia, ib)).or_insert(0.0) += va * vb;
                    }
                }
            }
        }
        let llt = if next > 0 {
            let triplets: Vec<Triplet<usize, usize, f64>> =
                acc.into_iter().map(|((i, j), v)| Triplet::new(i, j, v)).collect();
            let m = SparseColMat::<usize, f64>::try_new_from_triplets(next, next, &triplets)
                .map_err(|e| MomError::Input(format!("star projector: building DᵀD failed ({e:?})")))?;
            Some(m.sp_cholesky(faer::Side::Lower).map_err(|e| {
                MomError::Input(format!(
                    "star projector: DᵀD is not positive definite ({e:?}); is the mesh degenerate?"
                ))
            })?)
        } else {
            None
        };
        Ok(Self { rows, count, panels, reduced, order: next, llt })
    }

    /// Number of functions.
    pub fn functions(&self) -> usize {
        self.rows.len()
    }

    /// Number of panels.
    pub fn panels(&self) -> usize {
        self.panels
    }

    /// `q = Dᵀ x` (panel charges times `−jω`, per unit of the coefficients).
    pub fn divergence(&self, x: &[C], q: &mut [C]) {
        q.iter_mut().for_each(|v| *v = C::new(0.0, 0.0));
        for (n, &xn) in x.iter().enumerate() {
            for &(p, v) in &self.rows[n][..self.count[n] as usize] {
                q[p] += xn * v;
            }
        }
    }

    /// `y = D q`.
    pub fn gradient(&self, q: &[C], y: &mut [C]) {
        for (n, yn) in y.iter_mut().enumerate() {
            *yn = self.rows[n][..self.count[n] as usize].iter().map(|&(p, v)| q[p] * v).sum();
        }
    }

    /// `q ← (DᵀD)⁺ q` on the range of `Dᵀ` (pinned panels come out 0).
    pub fn laplacian_solve(&self, q: &mut [C]) {
        let Some(llt) = &self.llt else {
            q.iter_mut().for_each(|v| *v = C::new(0.0, 0.0));
            return;
        };
        let n = self.order;
        let mut rhs = Mat::<f64>::zeros(n, 2);
        for (p, v) in q.iter().enumerate() {
            if let Some(i) = self.reduced[p] {
                rhs[(i, 0)] = v.re;
                rhs[(i, 1)] = v.im;
            }
        }
        llt.solve_in_place(rhs.as_mut());
        for (p, v) in q.iter_mut().enumerate() {
            *v = match self.reduced[p] {
                Some(i) => C::new(rhs[(i, 0)], rhs[(i, 1)]),
                None => C::new(0.0, 0.0),
            };
        }
    }

    /// `P_Σ x = D (DᵀD)⁺ Dᵀ x`.
    pub fn star(&self, x: &[C], out: &mut [C]) {
        let mut q = vec![C::new(0.0, 0.0); self.panels];
        self.divergence(x, &mut q);
        self.laplacian_solve(&mut q);
        self.gradient(&q, out);
    }
}
