//! The symmetric sparsity pattern of the tangent (upper triangle, CSC) and the
//! scatter map from element matrix entries to its value slots, both built once
//! per structure. Slack cables keep their slots; they are refilled with zeros.

use super::dofs::{DofMap, FIXED};
use crate::model::Model;

/// Marks an element entry with no slot (a supported DOF is involved).
pub const NO_SLOT: u32 = u32::MAX;

/// Upper triangle of the 6×6 element matrix, row-major: (a, b) with a ≤ b.
pub const UPPER_6: [(u8, u8); 21] = {
    let mut t = [(0u8, 0u8); 21];
    let mut k = 0;
    let mut a = 0;
    while a < 6 {
        let mut b = a;
        while b < 6 {
            t[k] = (a as u8, b as u8);
            k += 1;
            b += 1;
        }
        a += 1;
    }
    t
};

#[derive(Clone, Debug)]
pub struct Pattern {
    pub n: usize,
    /// CSC column pointers of the upper triangle.
    pub col_ptr: Vec<usize>,
    /// Row indices, sorted within each column, diagonal last.
    pub row_idx: Vec<usize>,
    /// For member m, `member_slots[21·m + k]` is the value slot of element entry
    /// `UPPER_6[k]`, or [`NO_SLOT`].
    pub member_slots: Vec<u32>,
    /// Slot of each diagonal entry (every free DOF has one, kept even if zero).
    pub diag_slot: Vec<usize>,
}

impl Pattern {
    pub fn new(model: &Model, dofs: &DofMap) -> Pattern {
        let n = dofs.n_free();
        // Node adjacency through members; each node also couples to itself.
        let mut adj: Vec<Vec<u32>> = vec![Vec::new(); model.n_nodes()];
        for m in &model.members {
            let [i, j] = m.ends;
            adj[i].push(j as u32);
            adj[j].push(i as u32);
        }
        let raw = dofs.raw();
        let mut col_ptr = Vec::with_capacity(n + 1);
        let mut row_idx = Vec::new();
        col_ptr.push(0);
        let mut rows: Vec<usize> = Vec::new();
        for (node, neighbours) in adj.iter_mut().enumerate() {
            neighbours.push(node as u32);
            neighbours.sort_unstable();
            neighbours.dedup();
            for axis in 0..3 {
                let col = raw[3 * node + axis];
                if col == FIXED {
                    continue;
                }
                let col = col as usize;
                rows.clear();
                for &nb in neighbours.iter() {
                    for a in 0..3 {
                        let r = raw[3 * nb as usize + a];
                        if r != FIXED && (r as usize) <= col {
                            rows.push(r as usize);
                        }
                    }
                }
                rows.sort_unstable();
                row_idx.extend_from_slice(&rows);
                col_ptr.push(row_idx.len());
            }
        }
        let slot_of = |r: usize, c: usize| -> usize {
            let (r, c) = if r <= c { (r, c) } else { (c, r) };
            let col = &row_idx[col_ptr[c]..col_ptr[c + 1]];
            col_ptr[c] + col.binary_search(&r).expect("pattern holds every element entry")
        };
        let mut member_slots = Vec::with_capacity(21 * model.n_members());
        for m in &model.members {
            let [i, j] = m.ends;
            let g = |local: u8| {
                let (node, axis) = if local < 3 { (i, local) } else { (j, local - 3) };
                raw[3 * node + axis as usize]
            };
            for (a, b) in UPPER_6 {
                let (ga, gb) = (g(a), g(b));
                member_slots.push(if ga == FIXED || gb == FIXED {
                    NO_SLOT
                } else {
                    slot_of(ga as usize, gb as usize) as u32
                });
            }
        }
        let diag_slot = (0..n).map(|d| slot_of(d, d)).collect();
        Pattern { n, col_ptr, row_idx, member_slots, diag_slot }
    }

    /// The full upper triangle of a small dense symmetric matrix as a
    /// pattern and its values (no members): for checks of the linear algebra
    /// and the correctors on hand-made systems.
    pub fn from_dense_upper(a: &[Vec<f64>]) -> (Pattern, Vec<f64>) {
        let n = a.len();
        let (mut col_ptr, mut row_idx, mut vals, mut diag_slot) = (vec![0], vec![], vec![], vec![]);
        for c in 0..n {
            for (r, row) in a.iter().enumerate().take(c + 1) {
                if r == c {
                    diag_slot.push(row_idx.len());
                }
                row_idx.push(r);
                vals.push(row[c]);
            }
            col_ptr.push(row_idx.len());
        }
        (Pattern { n, col_ptr, row_idx, member_slots: vec![], diag_slot }, vals)
    }

    pub fn nnz(&self) -> usize {
        self.row_idx.len()
    }
}
