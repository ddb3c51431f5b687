//! The block tree: a partition of `rows × cols` into admissible and near-field leaf blocks.

use crate::{Admissibility, ClusterTree};
use serde::Serialize;

/// What a leaf of the block tree holds.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum BlockKind {
    /// Admissible pair: a candidate for low-rank storage.
    Far,
    /// Inadmissible pair of leaf clusters: stored dense.
    Near,
    /// Inner node: split into children.
    Split,
}

/// A node of the block tree: the pair (row cluster, column cluster) and how it was treated.
#[derive(Clone, Debug, Serialize)]
pub struct Block {
    /// Row cluster id (in the row tree).
    pub row: usize,
    /// Column cluster id (in the column tree).
    pub col: usize,
    /// Leaf kind, or [`BlockKind::Split`].
    pub kind: BlockKind,
    /// Children block ids (empty for leaves).
    pub children: Vec<usize>,
    /// Diameter of the row cluster's box.
    pub row_diameter: f64,
    /// Diameter of the column cluster's box.
    pub col_diameter: f64,
    /// Distance between the two boxes.
    pub distance: f64,
}

/// The block partition of a row and a column cluster tree.
///
/// Built top-down from (root, root): an admissible pair becomes a [`BlockKind::Far`] leaf; an
/// inadmissible pair is split into the pairs of its clusters' children (only the non-leaf side
/// is split when one side is a leaf) until both clusters are leaves, which makes a
/// [`BlockKind::Near`] leaf. The leaves tile `rows × cols` exactly once.
#[derive(Clone, Debug)]
pub struct BlockTree {
    blocks: Vec<Block>,
    leaves: Vec<usize>,
}

impl BlockTree {
    /// The partition of `rows × cols` under `adm`.
    pub fn new(rows: &ClusterTree, cols: &ClusterTree, adm: &Admissibility) -> Self {
        let mut blocks = Vec::new();
        let mut leaves = Vec::new();
        let mut stack = vec![(rows.root(), cols.root(), None::<usize>)];
        while let Some((r, c, parent)) = stack.pop() {
            let (rc, cc) = (rows.node(r), cols.node(c));
            let id = blocks.len();
            let distance = rc.bbox.distance(&cc.bbox);
            let kind = if adm.is_admissible(&rc.bbox, &cc.bbox) {
                BlockKind::Far
            } else if rc.is_leaf() && cc.is_leaf() {
                BlockKind::Near
            } else {
                BlockKind::Split
            };
            blocks.push(Block {
                row: r,
                col: c,
                kind,
                children: Vec::new(),
                row_diameter: rc.bbox.diameter(),
                col_diameter: cc.bbox.diameter(),
                distance,
            });
            if let Some(p) = parent {
                blocks[p].children.push(id);
            }
            if kind == BlockKind::Split {
                let rs = rc.children.map_or(vec![r], |ch| ch.to_vec());
                let cs = cc.children.map_or(vec![c], |ch| ch.to_vec());
                for &rr in rs.iter().rev() {
                    for &ccc in cs.iter().rev() {
                        stack.push((rr, ccc, Some(id)));
                    }
                }
            } else {
                leaves.push(id);
            }
        }
        Self { blocks, leaves }
    }

    /// All nodes; node 0 is the root pair.
    pub fn blocks(&self) -> &[Block] {
        &self.blocks
    }
    /// Ids of the leaf blocks (Far or Near), in depth-first order.
    pub fn leaves(&self) -> &[usize] {
        &self.leaves
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        // Property: every (row, column) pair of tree positions is covered by exactly one leaf;
        // far leaves satisfy the admissibility condition and near leaves are leaf pairs.
        #[test]
        fn leaves_tile_the_matrix_once(
            pts in prop::collection::vec(prop::array::uniform3(0.0f64..1.0), 1..150),
            cpts in prop::collection::vec(prop::array::uniform3(0.5f64..2.0), 1..120),
            leaf in 1usize..20,
            eta in 0.3f64..4.0,
        ) {
            let rt = ClusterTree::new(&pts, leaf).unwrap();
            let ct = ClusterTree::new(&cpts, leaf).unwrap();
            let adm = Admissibility::new(eta).unwrap();
            let bt = BlockTree::new(&rt, &ct, &adm);
            let mut cover = vec![0u8; pts.len() * cpts.len()];
            for &l in bt.leaves() {
                let b = &bt.blocks()[l];
                let (r, c) = (rt.node(b.row), ct.node(b.col));
                match b.kind {
                    BlockKind::Far => prop_assert!(adm.is_admissible(&r.bbox, &c.bbox)),
                    BlockKind::Near => prop_assert!(r.is_leaf() && c.is_leaf()),
                    BlockKind::Split => prop_assert!(false, "split node listed as leaf"),
                }
                for i in r.start..r.end { for j in c.start..c.end { cover[i * cpts.len() + j] += 1; } }
            }
            prop_assert!(cover.iter().all(|&k| k == 1));
        }
    }
}
