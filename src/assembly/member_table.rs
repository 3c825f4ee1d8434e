//! The members' kernel data, stored as a struct of arrays: one array per
//! quantity, indexed by member. A bar or cable is 49 bytes here (chord, rest
//! length, L² − Lr², EA and a one-byte kind) where an enum of the two kernel
//! structs took 64 for every member; the kernel pass streams through the
//! arrays in member order.
//!
//! Catenary members are rare and carry more data: their rows hold the chord,
//! rest length and EA like any member (so lengths and counts need no
//! special case), and their kernels sit in a small array of their own, sorted
//! by member index. The maths stays in `element`: a row is handed to the
//! kernel as a `Bar` (or the stored `Catenary`) built on the stack.

use crate::element::{AxialState, Bar, Catenary};
use crate::model::StrainMeasure;

/// What kernel a member's row feeds.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[repr(u8)]
pub enum MemberKernel {
    /// Axial bar, tension and compression.
    Bar,
    /// Tension only: slack when shorter than its rest length.
    Cable,
    /// Elastic catenary; its kernel is in the catenary array.
    Catenary,
}

#[derive(Clone, Debug, Default)]
pub struct MemberTable {
    /// Initial chord, node j − node i, m.
    chord: Vec<[f64; 3]>,
    /// Unstressed length, m.
    rest: Vec<f64>,
    /// L² − Lr², computed without cancellation (see `element::bar`).
    c0: Vec<f64>,
    /// Axial rigidity, N.
    ea: Vec<f64>,
    kernel: Vec<MemberKernel>,
    /// The catenary members' kernels, ascending in member index.
    catenaries: Vec<(u32, Catenary)>,
}

impl MemberTable {
    pub fn with_capacity(n: usize) -> MemberTable {
        MemberTable {
            chord: Vec::with_capacity(n),
            rest: Vec::with_capacity(n),
            c0: Vec::with_capacity(n),
            ea: Vec::with_capacity(n),
            kernel: Vec::with_capacity(n),
            catenaries: Vec::new(),
        }
    }

    /// Appends a bar (`cable`: tension only) as the next member.
    pub fn push_bar(&mut self, bar: Bar) {
        self.push_row(bar.d, bar.rest, bar.c0, bar.ea, if bar.cable { MemberKernel::Cable } else { MemberKernel::Bar });
    }

    /// Appends a catenary as the next member.
    pub fn push_catenary(&mut self, c: Catenary) {
        let m = self.len() as u32;
        let row = Bar::with_rest_length(c.d, c.rest, c.ea, true);
        self.push_row(row.d, row.rest, row.c0, row.ea, MemberKernel::Catenary);
        self.catenaries.push((m, c));
    }

    fn push_row(&mut self, d: [f64; 3], rest: f64, c0: f64, ea: f64, kernel: MemberKernel) {
        self.chord.push(d);
        self.rest.push(rest);
        self.c0.push(c0);
        self.ea.push(ea);
        self.kernel.push(kernel);
    }

    pub fn len(&self) -> usize {
        self.kernel.len()
    }

    pub fn is_empty(&self) -> bool {
        self.kernel.is_empty()
    }

    /// Unstressed length of each member, m.
    pub fn rest_lengths(&self) -> &[f64] {
        &self.rest
    }

    /// Chord of member `m` in the given geometry and its elastic stiffness
    /// EA/Lr (N/m): the axial stiffness it has once taut.
    pub fn taut_axial(&self, m: usize) -> ([f64; 3], f64) {
        (self.chord[m], self.ea[m] / self.rest[m])
    }

    /// Force and tangent block of member `m` for the end displacement
    /// difference `du` (node j minus node i).
    #[inline]
    pub fn state(&self, m: usize, du: &[f64; 3], strain: StrainMeasure) -> AxialState {
        let kernel = self.kernel[m];
        if kernel == MemberKernel::Catenary {
            return self.catenary(m).state(du);
        }
        let bar = Bar {
            d: self.chord[m],
            rest: self.rest[m],
            c0: self.c0[m],
            ea: self.ea[m],
            cable: kernel == MemberKernel::Cable,
        };
        bar.state(du, strain)
    }

    fn catenary(&self, m: usize) -> &Catenary {
        let k = self
            .catenaries
            .binary_search_by_key(&(m as u32), |&(member, _)| member)
            .expect("every catenary row has its kernel");
        &self.catenaries[k].1
    }

    /// Bytes held by the arrays.
    pub fn bytes(&self) -> usize {
        self.len() * (std::mem::size_of::<[f64; 3]>() + 3 * 8 + std::mem::size_of::<MemberKernel>())
            + self.catenaries.len() * std::mem::size_of::<(u32, Catenary)>()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Each row gives the state of the kernel it was built from, bit for bit,
    /// with catenaries between bars and cables.
    #[test]
    fn rows_give_their_kernels_state() {
        let bar = Bar::with_rest_length([3.0, 0.5, 1.0], 3.1, 2.0e6, false);
        let cable = Bar::with_rest_length([0.0, 2.0, 0.2], 1.9, 1.0e6, true);
        let cat = Catenary::new([40.0, 0.0, 10.0], 42.0, 1.0e7, 15.0);
        let mut t = MemberTable::with_capacity(5);
        t.push_bar(bar);
        t.push_catenary(cat);
        t.push_bar(cable);
        t.push_catenary(Catenary::new([10.0, 5.0, -2.0], 11.0, 1.0e7, 0.0));
        t.push_bar(bar);
        assert_eq!(t.len(), 5);
        assert_eq!(t.rest_lengths(), &[3.1, 42.0, 1.9, 11.0, 3.1]);
        let du = [0.05, -0.3, 0.02];
        let bits = |s: AxialState| {
            let mut v = vec![s.force.to_bits(), s.strain.to_bits(), s.length.to_bits(), s.slack as u64];
            v.extend(s.f.iter().chain(s.k.iter().flatten()).map(|x| x.to_bits()));
            v
        };
        for strain in [StrainMeasure::Green, StrainMeasure::Engineering] {
            assert_eq!(bits(t.state(0, &du, strain)), bits(bar.state(&du, strain)));
            assert_eq!(bits(t.state(1, &du, strain)), bits(cat.state(&du)));
            assert_eq!(bits(t.state(2, &du, strain)), bits(cable.state(&du, strain)));
            assert_eq!(bits(t.state(4, &du, strain)), bits(bar.state(&du, strain)));
        }
        // The cable pushed shorter than its rest length is slack; the bar is not.
        let short = [0.0, -0.5, 0.0];
        assert!(t.state(2, &short, StrainMeasure::Green).slack);
        assert!(t.state(2, &short, StrainMeasure::Green).force == 0.0);
    }
}
