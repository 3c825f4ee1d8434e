//! Fixed-order gather lists: how per-member results become node forces and
//! tangent values, so that assembly runs in parallel and still gives
//! bit-identical sums on any number of threads.
//!
//! A serial scatter adds member contributions into shared entries one member
//! after another. Run in parallel, the order of those additions would depend
//! on the thread schedule, and floating-point addition is not associative.
//! Here every output entry (a node's force, a tangent value slot) owns the
//! list of its contributions in ascending member order, and one task sums one
//! entry: the sum is the serial one whatever the number of threads.

use super::pattern::{NO_SLOT, Pattern, UPPER_6};

/// Marks a contribution that enters with a minus sign.
const NEGATIVE: u32 = 1 << 31;

/// Index into the symmetric 3×3 block of a member, stored as its upper
/// triangle `[k00, k01, k02, k11, k12, k22]`.
pub const fn sym_index(a: usize, b: usize) -> usize {
    let (a, b) = if a <= b { (a, b) } else { (b, a) };
    match (a, b) {
        (0, 0) => 0,
        (0, 1) => 1,
        (0, 2) => 2,
        (1, 1) => 3,
        (1, 2) => 4,
        _ => 5,
    }
}

/// A compressed list of lists with u32 offsets.
#[derive(Clone, Debug, Default)]
struct Lists {
    ptr: Vec<u32>,
    entries: Vec<u32>,
}

impl Lists {
    /// Counting sort of `(owner, entry)` pairs given in the order they must be
    /// summed; the order within each owner's list is kept.
    fn build(n_owners: usize, pairs: impl Iterator<Item = (usize, u32)> + Clone) -> Option<Lists> {
        let mut ptr = vec![0u32; n_owners + 1];
        for (o, _) in pairs.clone() {
            ptr[o + 1] = ptr[o + 1].checked_add(1)?;
        }
        for i in 0..n_owners {
            ptr[i + 1] = ptr[i + 1].checked_add(ptr[i])?;
        }
        let mut fill: Vec<u32> = ptr[..n_owners].to_vec();
        let mut entries = vec![0u32; ptr[n_owners] as usize];
        for (o, e) in pairs {
            entries[fill[o] as usize] = e;
            fill[o] += 1;
        }
        Some(Lists { ptr, entries })
    }

    #[inline]
    fn of(&self, owner: usize) -> &[u32] {
        &self.entries[self.ptr[owner] as usize..self.ptr[owner + 1] as usize]
    }
}

/// The gather lists of one structure, built once.
#[derive(Clone, Debug, Default)]
pub struct Gather {
    /// For each node, `2·m + end` of its members (end 0: node i, force −f;
    /// end 1: node j, force +f), ascending in m.
    node: Lists,
    /// For each tangent value slot, `6·m + sym_index(a, b)` of its
    /// contributions, [`NEGATIVE`] set for the off-diagonal node block.
    slot: Lists,
}

/// Why the gather lists do not fit their u32 indices.
#[derive(Clone, Debug, PartialEq)]
pub struct TooLarge;

impl Gather {
    pub fn new(ends: &[[u32; 2]], n_nodes: usize, pattern: &Pattern) -> Result<Gather, TooLarge> {
        let n_members = ends.len();
        if 6 * n_members as u64 >= NEGATIVE as u64 {
            return Err(TooLarge);
        }
        let node_pairs = (0..n_members).flat_map(|m| {
            let [i, j] = ends[m];
            [(i as usize, 2 * m as u32), (j as usize, 2 * m as u32 + 1)]
        });
        let node = Lists::build(n_nodes, node_pairs).ok_or(TooLarge)?;
        let slot_pairs = (0..n_members).flat_map(|m| {
            let slots = &pattern.member_slots[21 * m..21 * m + 21];
            UPPER_6.iter().zip(slots).filter(|&(_, &s)| s != NO_SLOT).map(move |(&(a, b), &s)| {
                let same_node = (a < 3) == (b < 3);
                let e = 6 * m as u32 + sym_index((a % 3) as usize, (b % 3) as usize) as u32;
                (s as usize, if same_node { e } else { e | NEGATIVE })
            })
        });
        let slot = Lists::build(pattern.nnz(), slot_pairs).ok_or(TooLarge)?;
        Ok(Gather { node, slot })
    }

    /// Sum of the member end forces on `node`, in ascending member order.
    #[inline]
    pub fn node_force(&self, node: usize, member_f: &[[f64; 3]]) -> [f64; 3] {
        let mut s = [0.0; 3];
        for &e in self.node.of(node) {
            let f = &member_f[(e / 2) as usize];
            let sign = if e % 2 == 0 { -1.0 } else { 1.0 };
            for a in 0..3 {
                s[a] += sign * f[a];
            }
        }
        s
    }

    /// Tangent value of `slot`, in ascending member order.
    #[inline]
    pub fn slot_value(&self, slot: usize, member_k: &[[f64; 6]]) -> f64 {
        let mut s = 0.0;
        for &e in self.slot.of(slot) {
            let idx = e & !NEGATIVE;
            let v = member_k[(idx / 6) as usize][(idx % 6) as usize];
            s += if e & NEGATIVE == 0 { v } else { -v };
        }
        s
    }

    /// Bytes held by the lists.
    pub fn bytes(&self) -> usize {
        4 * (self.node.ptr.len() + self.node.entries.len() + self.slot.ptr.len() + self.slot.entries.len())
    }
}
