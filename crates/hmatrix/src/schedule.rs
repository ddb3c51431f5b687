//! Row bands: the parallel schedule of the H-matrix product.
//!
//! The rows (tree order) are cut into disjoint *bands*, each a cluster of the row tree, chosen
//! by splitting the largest band until there are enough for all threads. A band owns its slice
//! of the output, so bands run in parallel without locks or per-thread copies of the result.
//! A block whose rows lie inside one band is applied whole by that band; a block that spans
//! several bands (a large admissible block near the root) is applied in row slices, and when
//! it is low-rank its product `Vᵀ x` is computed once, before the bands start.
//!
//! In a symmetric H-matrix every stored off-diagonal block `B` (rows `s`, columns `t`) is also
//! placed, as `Bᵀ`, at rows `t` and columns `s`: that *mirror* is scheduled in the band(s) of
//! its own rows `t` exactly like a stored block, with the flag `transposed`.

use crate::{BlockData, HBlock};
use rafter_cluster::ClusterTree;
use rafter_linalg::Scalar;
use std::ops::Range;

/// What a band does with one block. `transposed` marks the mirror of a stored block of a
/// symmetric H-matrix: the stored block `B` applied as `Bᵀ` at the swapped place.
#[derive(Clone, Debug)]
pub(crate) enum Item {
    /// The block lies inside the band: apply it whole.
    Whole { block: usize, transposed: bool },
    /// The block spans several bands: apply its rows `rows` (tree order, within the band; the
    /// rows of `Bᵀ` for a mirror). `wide` indexes the precomputed `Vᵀ x` (`Uᵀ x` for a mirror)
    /// of a low-rank block (`None` for a dense one).
    Part { block: usize, transposed: bool, rows: Range<usize>, wide: Option<usize> },
}

/// One band: a row range and the block work that writes into it.
#[derive(Clone, Debug)]
pub(crate) struct Band {
    pub rows: Range<usize>,
    pub items: Vec<Item>,
}

/// The matvec schedule.
#[derive(Clone, Debug)]
pub(crate) struct Schedule {
    pub bands: Vec<Band>,
    /// Low-rank blocks spanning several bands, with their `transposed` flag (their `Vᵀ x`, or
    /// `Uᵀ x` for a mirror, is computed up front).
    pub wide: Vec<(usize, bool)>,
}

/// Bands over `tree` (about `target` of them) and the assignment of `blocks` to them; with
/// `symmetric`, every block with `rows ≠ cols` is also assigned, transposed, to the bands of
/// its columns.
pub(crate) fn schedule<T: Scalar>(
    tree: &ClusterTree,
    blocks: &[HBlock<T>],
    symmetric: bool,
    target: usize,
) -> Schedule {
    let mut bands = vec![tree.root()];
    while bands.len() < target {
        let Some((pos, _)) = bands
            .iter()
            .enumerate()
            .filter(|&(_, &c)| !tree.node(c).is_leaf())
            .max_by_key(|&(_, &c)| tree.node(c).len())
        else {
            break;
        };
        let [l, r] = tree.node(bands[pos]).children.expect("not a leaf");
        bands.splice(pos..=pos, [l, r]);
    }
    let mut bands: Vec<Band> = bands
        .iter()
        .map(|&c| Band { rows: tree.node(c).start..tree.node(c).end, items: Vec::new() })
        .collect();
    bands.sort_by_key(|b| b.rows.start);

    let mut wide = Vec::new();
    // Each stored block at its own rows, then (symmetric only) its mirror at the rows it covers
    // as a transpose, which are the stored block's columns.
    let placements = blocks.iter().enumerate().flat_map(|(id, b)| {
        let mirror = (symmetric && b.rows != b.cols).then(|| (id, true, b.cols.clone()));
        std::iter::once((id, false, b.rows.clone())).chain(mirror)
    });
    for (id, transposed, r) in placements {
        let first = bands.partition_point(|band| band.rows.end <= r.start);
        let last = bands.partition_point(|band| band.rows.start < r.end);
        if last - first == 1 && bands[first].rows.start <= r.start && r.end <= bands[first].rows.end {
            bands[first].items.push(Item::Whole { block: id, transposed });
            continue;
        }
        let w = matches!(blocks[id].data, BlockData::LowRank(_)).then(|| {
            wide.push((id, transposed));
            wide.len() - 1
        });
        for band in &mut bands[first..last] {
            let rows = band.rows.start.max(r.start)..band.rows.end.min(r.end);
            band.items.push(Item::Part { block: id, transposed, rows, wide: w });
        }
    }
    Schedule { bands, wide }
}

#[cfg(test)]
mod tests {
    use super::Item;
    use crate::{HMatrix, HOptions, reference};
    use rafter_pointkernel::{LaplacePlate, Plate};

    /// Blocks that span several bands (sliced by rows, `Vᵀ x` shared) give the same product as
    /// the dense matrix assembled entry by entry; every row lies in exactly one band.
    #[test]
    fn wide_blocks_are_sliced_correctly() {
        let p = Plate::new(1600, 1.0).unwrap();
        let src = LaplacePlate::new(p.clone());
        let opts = HOptions { tolerance: 1e-8, eta: 8.0, leaf_size: 8 };
        let h = HMatrix::build_square(&src, &p.points, &opts, None).unwrap();
        assert!(!h.schedule.wide.is_empty(), "the test needs blocks spanning several bands");
        let mut covered = vec![0u8; h.nrows()];
        for band in &h.schedule.bands {
            for r in band.rows.clone() {
                covered[r] += 1;
            }
        }
        assert!(covered.iter().all(|&c| c == 1));
        let a = reference::assemble_dense(&src).unwrap();
        let x: Vec<f64> = (0..p.len()).map(|i| ((i * 37) % 101) as f64 / 50.0 - 1.0).collect();
        let mut y = vec![0.0; p.len()];
        h.matvec(&x, &mut y).unwrap();
        let mut yd = vec![0.0; p.len()];
        a.gemv_add(&x, &mut yd);
        let err = y.iter().zip(&yd).map(|(u, v)| (u - v).powi(2)).sum::<f64>().sqrt();
        let xn = x.iter().map(|v| v * v).sum::<f64>().sqrt();
        assert!(err <= 2e-8 * a.frobenius_norm() * xn, "error {err}");
    }

    /// The same on a symmetric build of a complex-symmetric source: mirrored blocks (applied
    /// transposed) include dense and low-rank blocks spanning several bands, and the product
    /// still agrees with the dense matrix within the tolerance.
    #[test]
    fn mirrored_wide_blocks_are_sliced_correctly() {
        use rafter_linalg::Complex64;
        use rafter_pointkernel::HelmholtzPlate;
        let p = Plate::new(1600, 1.0).unwrap();
        let src = HelmholtzPlate::with_wavelengths(p.clone(), 2.0).unwrap();
        let opts = HOptions { tolerance: 1e-8, eta: 8.0, leaf_size: 8 };
        let h = HMatrix::build_symmetric(&src, &p.points, &opts, None).unwrap();
        assert!(h.schedule.wide.iter().any(|&(_, t)| t), "the test needs mirrored wide low-rank blocks");
        let parts = |t: bool| {
            h.schedule
                .bands
                .iter()
                .flat_map(|b| &b.items)
                .any(|i| matches!(i, Item::Part { transposed, .. } if *transposed == t))
        };
        assert!(parts(true) && parts(false));
        let a = reference::assemble_dense(&src).unwrap();
        let x: Vec<Complex64> = (0..p.len())
            .map(|i| Complex64::new(((i * 37) % 101) as f64 / 50.0 - 1.0, ((i * 13) % 7) as f64))
            .collect();
        let mut y = vec![Complex64::default(); p.len()];
        h.matvec(&x, &mut y).unwrap();
        let mut yd = vec![Complex64::default(); p.len()];
        a.gemv_add(&x, &mut yd);
        let err = y.iter().zip(&yd).map(|(u, v)| (u - v).norm_sqr()).sum::<f64>().sqrt();
        let xn = x.iter().map(|v| v.norm_sqr()).sum::<f64>().sqrt();
        assert!(err <= 2e-8 * a.frobenius_norm() * xn, "error {err}");
    }
}
