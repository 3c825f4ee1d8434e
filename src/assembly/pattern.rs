//! The symmetric sparsity pattern of the tangent (upper triangle, CSC) and the
//! scatter map from element matrix entries to its value slots, both built once
//! per structure. Slack cables keep their slots; they are refilled with zeros.
//!
//! Every index is a u32: half the bytes of a usize, and faer's symbolic and
//! numeric LDLᵀ take u32 indices as they are, so no wider copy is kept. faer
//! checks dimensions and entry counts against the signed type (i32), so a
//! pattern holds at most [`MAX_INDEX`] entries; the model size caps
//! (`model::MAX_NODES`, `MAX_MEMBERS`) keep every model well inside it.

use super::dofs::{DofMap, FIXED};
use crate::model::Model;

/// The most rows, columns or stored entries a pattern may have: i32::MAX,
/// the bound faer checks u32 indices against.
pub const MAX_INDEX: usize = i32::MAX as usize;

/// A pattern with more than [`MAX_INDEX`] rows or entries.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PatternTooLarge;

impl std::fmt::Display for PatternTooLarge {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "the tangent has more than {MAX_INDEX} free DOFs or stored entries, \
             more than the 32-bit sparse indices hold; split the model or use fewer members"
        )
    }
}

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
    pub col_ptr: Vec<u32>,
    /// Row indices, sorted within each column, diagonal last.
    pub row_idx: Vec<u32>,
    /// For member m, `member_slots[21·m + k]` is the value slot of element entry
    /// `UPPER_6[k]`, or [`NO_SLOT`].
    pub member_slots: Vec<u32>,
    /// Slot of each diagonal entry (every free DOF has one, kept even if zero).
    pub diag_slot: Vec<u32>,
}

impl Pattern {
    pub fn new(model: &Model, dofs: &DofMap) -> Result<Pattern, PatternTooLarge> {
        let n = dofs.n_free();
        if n > MAX_INDEX {
            return Err(PatternTooLarge);
        }
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
        let mut rows: Vec<u32> = Vec::new();
        for (node, neighbours) in adj.iter_mut().enumerate() {
            neighbours.push(node as u32);
            neighbours.sort_unstable();
            neighbours.dedup();
            for axis in 0..3 {
                let col = raw[3 * node + axis];
                if col == FIXED {
                    continue;
                }
                rows.clear();
                for &nb in neighbours.iter() {
                    for a in 0..3 {
                        let r = raw[3 * nb as usize + a];
                        if r != FIXED && r <= col {
                            rows.push(r);
                        }
                    }
                }
                rows.sort_unstable();
                row_idx.extend_from_slice(&rows);
                if row_idx.len() > MAX_INDEX {
                    return Err(PatternTooLarge);
                }
                col_ptr.push(row_idx.len() as u32);
            }
        }
        let mut pattern = Pattern { n, col_ptr, row_idx, member_slots: Vec::new(), diag_slot: Vec::new() };
        let slot_of = |r: u32, c: u32| pattern.slot(r as usize, c as usize).expect("pattern holds every element entry");
        let mut member_slots = Vec::with_capacity(21 * model.n_members());
        for m in &model.members {
            let [i, j] = m.ends;
            let g = |local: u8| {
                let (node, axis) = if local < 3 { (i, local) } else { (j, local - 3) };
                raw[3 * node + axis as usize]
            };
            for (a, b) in UPPER_6 {
                let (ga, gb) = (g(a), g(b));
                member_slots.push(if ga == FIXED || gb == FIXED { NO_SLOT } else { slot_of(ga, gb) });
            }
        }
        let diag_slot = (0..n as u32).map(|d| slot_of(d, d)).collect();
        pattern.member_slots = member_slots;
        pattern.diag_slot = diag_slot;
        Ok(pattern)
    }

    /// A pattern with no members from the CSC arrays of an upper triangle
    /// (rows sorted within each column, diagonal last), as the force density
    /// method builds one.
    pub fn from_upper_csc(n: usize, col_ptr: &[usize], row_idx: &[usize]) -> Result<Pattern, PatternTooLarge> {
        if n > MAX_INDEX || row_idx.len() > MAX_INDEX {
            return Err(PatternTooLarge);
        }
        let diag_slot = (0..n).map(|d| (col_ptr[d + 1] - 1) as u32).collect();
        Ok(Pattern {
            n,
            col_ptr: col_ptr.iter().map(|&p| p as u32).collect(),
            row_idx: row_idx.iter().map(|&r| r as u32).collect(),
            member_slots: Vec::new(),
            diag_slot,
        })
    }

    /// Value slot of entry (r, c) or (c, r), if the pattern holds it.
    pub fn slot(&self, r: usize, c: usize) -> Option<u32> {
        let (r, c) = if r <= c { (r, c) } else { (c, r) };
        let start = self.col_ptr[c] as usize;
        let col = &self.row_idx[start..self.col_ptr[c + 1] as usize];
        col.binary_search(&(r as u32)).ok().map(|p| (start + p) as u32)
    }

    /// Range of value slots of column `c`.
    #[inline]
    pub fn column(&self, c: usize) -> std::ops::Range<usize> {
        self.col_ptr[c] as usize..self.col_ptr[c + 1] as usize
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
                    diag_slot.push(row_idx.len() as u32);
                }
                row_idx.push(r as u32);
                vals.push(row[c]);
            }
            col_ptr.push(row_idx.len() as u32);
        }
        (Pattern { n, col_ptr, row_idx, member_slots: vec![], diag_slot }, vals)
    }

    pub fn nnz(&self) -> usize {
        self.row_idx.len()
    }

    /// Bytes held by the index arrays.
    pub fn bytes(&self) -> usize {
        4 * (self.col_ptr.len() + self.row_idx.len() + self.member_slots.len() + self.diag_slot.len())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Too many rows for u32 indices is an error, checked before any array
    /// is read or allocated.
    #[test]
    fn oversized_pattern_is_refused() {
        let refused = Pattern::from_upper_csc(MAX_INDEX + 1, &[0], &[]);
        assert!(matches!(refused, Err(PatternTooLarge)));
        assert!(PatternTooLarge.to_string().contains("32-bit"));
    }

    /// The slot lookup finds each stored entry from either side of the
    /// diagonal and nothing else.
    #[test]
    fn slot_finds_stored_entries_only() {
        let a = vec![vec![4.0, 1.0, 0.0], vec![1.0, 5.0, 2.0], vec![0.0, 2.0, 6.0]];
        let (full, _) = Pattern::from_dense_upper(&a);
        let p = Pattern::from_upper_csc(3, &[0, 1, 3, 5], &[0, 0, 1, 1, 2]).unwrap();
        assert_eq!(p.diag_slot, vec![0, 2, 4]);
        assert_eq!((p.slot(0, 1), p.slot(1, 0), p.slot(2, 1), p.slot(0, 2)), (Some(1), Some(1), Some(3), None));
        assert_eq!(full.slot(0, 2), Some(3));
        assert_eq!(p.bytes(), 4 * (4 + 5 + 3));
    }
}
